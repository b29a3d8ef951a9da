"""``bayescrust demo``: write the invented demo study and run the full job on it."""

from __future__ import annotations

import argparse
import time
from pathlib import Path

from .chart import do_chart
from .compare import do_compare
from .invert import do_invert
from .layers import assumptions
from .shell import AtomicFolder, add_common_options, say, use_agg, write_text

__all__ = ["add_parser", "cmd_demo", "demo_text", "DEMO_FILES"]

DEMO_FILES = ("tallowmere_ridge.toml", "one_layer.toml")
_DEMO_CHART_LAYER = "deep layer (TL-07, Vp only)"
_DEMO_COMPARE_LAYERS = ("deep layer (TL-07, Vp only)", "deep layer (TL-12, Vp and Vs)")


def demo_text(name: str) -> str:
    """Text of a shipped demo study file."""
    from importlib.resources import files

    return files("bayescrust").joinpath("demo", name).read_text(encoding="utf-8")


def cmd_demo(args) -> int:
    from ..config import parse_study
    from ..report.caution import caution_text

    out = Path(args.out)
    use_agg()
    t0 = time.perf_counter()
    with AtomicFolder(out, overwrite=args.overwrite) as tmp:
        (tmp / "study").mkdir()
        for name in DEMO_FILES:
            write_text(tmp / "study" / name, demo_text(name))
        study_path = tmp / "study" / DEMO_FILES[0]
        study = parse_study(study_path.read_text(encoding="utf-8"),
                            source=str(out / "study" / DEMO_FILES[0]))
        # the main job (MCMC) inverts every layer; the prior comparison (six inversions) and
        # the chart (dozens) use the exact reference so that the demo stays under a minute
        method = args.method or "mcmc"
        compare_method = args.method or "exact"
        say(args, f"demo: inverting {len(study.layers)} layers ({method})")
        (tmp / "invert").mkdir()
        results = do_invert(args, study, tmp / "invert", method=method, figures=True)
        misfits = [n for n, r in results.items() if r.misfit]
        say(args, f"demo: comparing thermal-state priors for the deep layers ({compare_method})")
        (tmp / "compare").mkdir()
        do_compare(args, study, tmp / "compare", method=compare_method, figures=True,
                    layer_names=_DEMO_COMPARE_LAYERS)
        say(args, "demo: probability chart for the deep layer")
        (tmp / "chart").mkdir()
        chart_args = argparse.Namespace(vp_min=None, vp_max=None, points=args.points,
                                        seed=args.seed, quiet=args.quiet)
        do_chart(chart_args, study, tmp / "chart", layer_name=_DEMO_CHART_LAYER,
                  method="exact", figures=True)
        elapsed = time.perf_counter() - t0
        write_text(tmp / "README.md", "\n".join([
            "# bayescrust demo (invented data)", "",
            "The Tallowmere Ridge, segment TM-3 and lines TL-07 / TL-12 are fictional; every "
            "velocity in `study/` was made up to exercise the software.", "",
            *([f"> **Warning: DATA MISFIT in layer(s) {', '.join(misfits)}**: the model cannot "
               "reproduce those observations (posterior-predictive check; see "
               "`invert/report.md`). Their probabilities are conditional on a model that does "
               "not fit.", ""] if misfits else []),
            caution_text(assumptions(study)),
            "## Contents", "",
            "- `study/`: the demo study files (edit them and run `bayescrust invert`)",
            f"- `invert/`: every layer inverted ({method}); start with `invert/report.md`",
            f"- `compare/`: the deep layers under three thermal-state priors ({compare_method})",
            "- `chart/`: probability of each interpretation against observed Vp", "",
            "Reproduce from the shell:", "",
            "    bayescrust invert study/tallowmere_ridge.toml --out my_run",
            "    bayescrust compare study/tallowmere_ridge.toml --out my_compare "
            f"--layer '{_DEMO_COMPARE_LAYERS[0]}'",
            f"    bayescrust chart study/tallowmere_ridge.toml --layer '{_DEMO_CHART_LAYER}' "
            "--out my_chart", "",
            f"Run time of this demo: {elapsed:.1f} s.", ""]))
    say(args, f"demo: done in {time.perf_counter() - t0:.1f} s; start with {out}/README.md")
    print(out)
    return 0


def add_parser(sub) -> None:
    """Register the ``demo`` command."""
    sp = sub.add_parser("demo", help="write the demo study and run the full job on it")
    add_common_options(sp, out="bayescrust-demo", figures=False)
    sp.add_argument("--points", type=int, default=13, help="Vp points of the demo chart")
    sp.set_defaults(func=cmd_demo)
