"""``bayescrust forward``: Vp, Vs and density of one rock or mineral (forward model only)."""

from __future__ import annotations

import json
import re
import sys
from pathlib import Path

from ..config.forward import DEFAULT_ATTENUATION_LAW, FORWARD_KEYS
from .shell import FIG_FORMATS, InputError, use_agg

__all__ = ["add_parser", "cmd_forward"]

_RANGE = re.compile(r"^\s*([-+0-9.eE]+)\s*:\s*([-+0-9.eE]+)\s*:\s*(\d+)\s*$")


def _values(option: str, text: str):
    """A number, or a range ``start:stop:count`` (inclusive)."""
    import numpy as np

    m = _RANGE.match(text)
    try:
        if m:
            a, b, n = float(m.group(1)), float(m.group(2)), int(m.group(3))
            if not 2 <= n <= 10000:
                raise ValueError
            return np.linspace(a, b, n)
        return np.array([float(text)])
    except ValueError:
        raise InputError(f"{option}: got {text!r}, expected a number or start:stop:count "
                         "(count in [2, 10000])") from None


def cmd_forward(args) -> int:
    import numpy as np

    import bayescrust as bc

    inputs = {"temperature_c": ("--temperature", args.temperature),
              "pressure_gpa": ("--pressure", args.pressure),
              "porosity": ("--porosity", args.porosity),
              "aspect_ratio": ("--aspect-ratio", args.aspect_ratio),
              "melt_fraction": ("--melt-fraction", args.melt_fraction),
              "serpentinization": ("--serpentinization", args.serpentinization)}
    if args.list:
        _print_catalogue()
        return 0
    if args.validate:  # the model against the shipped laboratory table
        from ..physics.labdata import lab_misfit, validation_report

        misfit = lab_misfit()
        print(validation_report(misfit))
        if args.plot:
            use_agg()
            from ..report.validation import lab_misfit_figure

            _save_forward_plot(args, lab_misfit_figure(misfit))
        return 0
    for opt, v in (("--rock", args.rock), ("--temperature", args.temperature),
                   ("--pressure", args.pressure)):
        if v is None:
            raise InputError(f"forward: {opt} is required (or use --list)")
    vals = {k: _values(opt, v) for k, (opt, v) in inputs.items() if v is not None}
    ranged = [k for k, v in vals.items() if v.size > 1]
    if len(ranged) > 1:
        raise InputError(f"{inputs[ranged[1]][0]}: only one option may be a range; "
                         f"{inputs[ranged[0]][0]} already is")
    from ..config import known_rocks

    minerals = [m["name"] for m in bc.list_minerals()]
    if args.rock not in known_rocks() and args.rock not in minerals:
        import difflib

        hint = difflib.get_close_matches(args.rock, [*known_rocks(), *minerals], n=1)
        extra = f" (did you mean {hint[0]!r}?)" if hint else ""
        raise InputError(f"--rock: unknown rock or mineral {args.rock!r}{extra}; known rocks: "
                         f"{', '.join(known_rocks())}; minerals: {', '.join(minerals)}")
    rock = args.rock if args.rock in known_rocks() else {args.rock: 1.0}  # one-mineral rock
    kw = {k: (v if v.size > 1 else float(v[0])) for k, v in vals.items()}
    law = args.attenuation_law
    try:
        # melt only above the solidus, serpentine only below its stability (as the inversion)
        from ..inference.layer import PRESSURE_RANGE_GPA

        kw, notes = bc.physics.rocks.apply_stability(rock, **kw)
        p_max = PRESSURE_RANGE_GPA[1]  # a layer's limit
        if np.max(kw["pressure_gpa"]) > p_max:
            notes = [*notes, f"pressure above {p_max:g} GPa, the deepest a layer may be: the "
                     "mineral data are extrapolated there and no mantle phase change is modelled"]
        for note in notes:
            print(f"warning: {note}", file=sys.stderr)
        props = bc.rock_properties(rock, **kw, attenuation_law=law)
    except ValueError as exc:
        raise InputError(f"forward: {exc}") from None
    n = max([v.size for v in vals.values()] + [1])
    # the values computed with: melt and serpentine switched off where not physical (notes)
    table = {k: np.broadcast_to(np.asarray(kw.get(k, v), float), (n,)) for k, v in vals.items()}
    for q in ("vp", "vs", "density"):
        table[q] = np.broadcast_to(np.asarray(getattr(props, q), float), (n,))
    rows = [{k: float(v[i]) for k, v in table.items()} for i in range(n)]
    if args.plot:
        if not ranged:
            raise InputError("--plot: needs one option given as a range start:stop:count")
        import pandas as pd

        use_agg()
        from ..report.figures import forward_figure

        fig = forward_figure(pd.DataFrame(rows), x=ranged[0],
                             title=f"{args.rock} (forward model)")
        _save_forward_plot(args, fig)
    if args.json:
        print(json.dumps({"rock": args.rock, "units": {"temperature_c": "deg C",
                          "pressure_gpa": "GPa", "vp": "km/s", "vs": "km/s",
                          "density": "g/cm^3"}, "rows": rows}, indent=1))
    else:
        cols = list(rows[0])
        print(f"# {args.rock}: forward model (vp, vs in km/s; density in g/cm^3)")
        print("  ".join(f"{c:>14s}" for c in cols))
        for r in rows:
            print("  ".join(f"{r[c]:14.5g}" for c in cols))
    return 0


def _save_forward_plot(args, fig) -> None:
    """Write ``fig`` to ``args.plot`` atomically (``forward --plot``)."""
    out = Path(args.plot)
    if out.suffix.lower().lstrip(".") not in FIG_FORMATS:
        raise InputError(f"--plot: got {args.plot!r}, expected a .png or .pdf file name")
    if out.exists() and not args.overwrite:
        raise InputError(f"{out}: --plot: file exists; pass --overwrite to replace it")
    try:
        tmp = out.with_name(f".{out.name}.partial{out.suffix}")
        fig.savefig(tmp, dpi=200, bbox_inches="tight")
        tmp.replace(out)
    except OSError as exc:
        raise InputError(f"{out}: --plot: cannot write ({exc.strerror or exc})") from None


def _print_catalogue() -> None:
    """Print the built-in minerals and rocks with their sources (``forward --list``)."""
    import bayescrust as bc

    print("# minerals: name, density (g/cm^3), Ks, G (GPa) at 25 C and 1 bar; source [tag]")
    for m in bc.list_minerals():
        print(f"{m['name']:<24} {m['rho']:6.3f} {m['ks']:7.1f} {m['g']:6.1f}  "
              f"{m['source']} [{m['tag']}]")
    print("\n# rocks: name, modal mineralogy by volume; source [tag]")
    for r in bc.list_rocks():
        modes = ", ".join(f"{k} {v:.2f}" for k, v in r["modes"].items())
        print(f"{r['name']:<24} {modes}\n{'':<24} {r['source']} [{r['tag']}]")


def add_parser(sub) -> None:
    """Register the ``forward`` command."""
    sp = sub.add_parser("forward", help="forward model: Vp, Vs, density of one rock",
                        description="Values are numbers or ranges start:stop:count (one range "
                                    "at most), e.g. --temperature 0:1200:13.")
    sp.add_argument("--rock", help="rock or mineral name (see --list)")
    sp.add_argument("--temperature", metavar="C", help="temperature (deg C)")
    sp.add_argument("--pressure", metavar="GPA", help="pressure (GPa)")
    sp.add_argument("--list", action="store_true",
                    help="list the built-in minerals and rocks with their sources, then exit")
    sp.add_argument("--validate", action="store_true",
                    help="print the model's misfit against the published laboratory table, "
                         "then exit")
    sp.add_argument("--porosity", metavar="FRAC", help="seawater-filled porosity (fraction)")
    sp.add_argument("--aspect-ratio", metavar="A", help="pore aspect ratio")
    sp.add_argument("--melt-fraction", metavar="FRAC", help="melt volume fraction")
    sp.add_argument("--serpentinization", metavar="FRAC",
                    help="serpentine fraction of the ultramafic volume")
    sp.add_argument("--attenuation-law", default=DEFAULT_ATTENUATION_LAW,
                    choices=FORWARD_KEYS["attenuation_law"],
                    help="anelasticity law (default %(default)s; docs/physics.md)")
    sp.add_argument("--json", action="store_true", help="JSON output")
    sp.add_argument("--plot", metavar="FILE.png|pdf", help="plot against the ranged option")
    sp.add_argument("--overwrite", action="store_true", help="replace an existing --plot file")
    sp.add_argument("-q", "--quiet", action="store_true")
    sp.set_defaults(func=cmd_forward)
