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


def demo_grid(args, folder: Path, study_folder: Path) -> float:
    """The grid part of the demo: write the invented Tallowmere section and map it.

    Returns its run time (s). The map uses the per-level fast path (tabulated where a level
    has one sigma).
    """
    from ..config.grid import parse_grid_study
    from ..grid.synthetic import tallowmere_section
    from .grid import do_map

    t0 = time.perf_counter()
    tallowmere_section().to_netcdf(study_folder / "tallowmere_section.nc", engine="h5netcdf")
    text = demo_text("tallowmere_section.toml")
    write_text(study_folder / "tallowmere_section.toml", text)
    study = parse_grid_study(text, source=str(study_folder / "tallowmere_section.toml"),
                             base=study_folder)
    map_args = argparse.Namespace(seed=args.seed, quiet=True, scheduler=None, workers=None)
    do_map(map_args, study, folder, figures=True,
           maps=("p_mantle", "p_hot_mantle", "p_melt_present"), dpi=110)
    return time.perf_counter() - t0


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
        do_invert(args, study, tmp / "invert", method=method, figures=True)
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
        say(args, "demo: probability map of an invented section across the ridge (fast path)")
        (tmp / "map").mkdir()
        t_grid = demo_grid(args, tmp / "map", tmp / "study")
        elapsed = time.perf_counter() - t0
        write_text(tmp / "README.md", "\n".join([
            "# bayescrust demo (invented data)", "",
            "The Tallowmere Ridge, segment TM-3 and lines TL-07 / TL-12 are fictional; every "
            "velocity in `study/` was made up to exercise the software.", "",
            caution_text(assumptions(study)),
            "## Contents", "",
            "- `study/`: the demo study files (edit them and run `bayescrust invert`)",
            f"- `invert/`: every layer inverted ({method}); start with `invert/report.md`",
            f"- `compare/`: the deep layers under three thermal-state priors ({compare_method})",
            "- `chart/`: probability of each interpretation against observed Vp",
            "- `map/`: probability maps of an invented 2-D section across the ridge "
            "(`study/tallowmere_section.nc`, written by the package), by the per-level fast "
            f"path (one prior design per depth level, tabulated over Vp; {t_grid:.1f} s)", "",
            "Reproduce from the shell:", "",
            "    bayescrust invert study/tallowmere_ridge.toml --out my_run",
            "    bayescrust compare study/tallowmere_ridge.toml --out my_compare "
            f"--layer '{_DEMO_COMPARE_LAYERS[0]}'",
            f"    bayescrust chart study/tallowmere_ridge.toml --layer '{_DEMO_CHART_LAYER}' "
            "--out my_chart",
            "    bayescrust map study/tallowmere_section.toml --out my_map", "",
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
