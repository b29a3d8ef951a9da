"""``bayescrust demo``: write the invented demo study and run the full job on it."""

from __future__ import annotations

import argparse
import os
import time
from pathlib import Path

from .chart import do_chart
from .compare import do_compare
from .invert import do_invert
from .layers import assumptions
from .plan import do_plan
from .shell import AtomicFolder, add_common_options, say, use_agg, write_text

__all__ = ["add_parser", "cmd_demo", "demo_text", "DEMO_FILES"]

DEMO_FILES = ("tallowmere_ridge.toml", "one_layer.toml", "tallowmere_profile.toml")
_DEMO_CHART_LAYER = "deep layer (TL-07, Vp only)"
_DEMO_COMPARE_LAYERS = ("deep layer (TL-07, Vp only)", "deep layer (TL-12, Vp and Vs)")
_DEMO_MCMC_LAYER = "deep layer (TL-12, Vp and Vs)"


_DEMO_PLAN_SIMULATIONS = 400  # fewer than the study file's 1000, to keep the demo short


def demo_plan(args, study, dest) -> float:
    """The demo's planning part: the study's [plan] candidates for the ambiguous deep layer,
    on the exact path's design (see ``bayescrust plan``); returns its run time in seconds."""
    say(args, "demo: which extra observation would settle the deep layer (plan)")
    t = time.perf_counter()
    dest.mkdir()
    plan_args = argparse.Namespace(seed=args.seed, quiet=args.quiet, candidate=None,
                                   simulations=_DEMO_PLAN_SIMULATIONS)
    do_plan(plan_args, study, dest, layer_name=None, method="exact", figures=True)
    return time.perf_counter() - t


def demo_text(name: str) -> str:
    """Text of a shipped demo study file."""
    from importlib.resources import files

    return files("bayescrust").joinpath("demo", name).read_text(encoding="utf-8")


def demo_grid(args, folder: Path, study_folder: Path, final_study_folder=None) -> float:
    """The grid part of the demo: write the invented Tallowmere section and map it.

    ``study_folder`` is where the files are written (inside the temporary output folder);
    ``final_study_folder`` (default: the same) is its name once the output folder is in place,
    the name the map records as its ``source``. Returns its run time (s). The map uses the
    per-level fast path (tabulated where a level has one sigma).
    """
    from ..config.grid import parse_grid_study
    from ..grid.synthetic import tallowmere_section
    from .grid import do_map

    t0 = time.perf_counter()
    final = Path(study_folder if final_study_folder is None else final_study_folder)
    tallowmere_section().to_netcdf(study_folder / "tallowmere_section.nc", engine="h5netcdf")
    text = demo_text("tallowmere_section.toml")
    write_text(study_folder / "tallowmere_section.toml", text)
    study = parse_grid_study(text, source=str(final / "tallowmere_section.toml"),
                             base=study_folder)
    map_args = argparse.Namespace(seed=args.seed, quiet=True, scheduler=None, workers=None)
    # the grid is read from the temporary folder; the map records the name the input has once
    # the output folder is in place
    do_map(map_args, study, folder, figures=True,
           maps=("p_mantle", "p_hot_mantle", "p_melt_present"), dpi=110,
           source=final / "tallowmere_section.nc")
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
        # every layer by the exact reference and the ambiguous deep layer by MCMC (emcee) as
        # well, so that the whole demo stays under a minute; comparison, chart, plan, profile
        # and map use the exact or fast paths (--method mcmc runs every layer by MCMC)
        method = args.method or "exact"
        # the MCMC run, the comparison and the chart need nothing from the other parts: they
        # run in a second process beside them (where there are two cores)
        second = _start_second_part(args, study, tmp, method)
        try:
            say(args, f"demo: inverting {len(study.layers)} layers ({method})")
            (tmp / "invert").mkdir()
            results = do_invert(args, study, tmp / "invert", method=method, figures=True)
            misfits = [n for n, r in results.items() if r.misfit]
            plan_s = demo_plan(args, study, tmp / "plan")
            say(args, "demo: whole profile of line TL-12 (structured exact path)")
            profile_s = demo_profile(args, tmp / "study" / "tallowmere_profile.toml",
                                     tmp / "profile",
                                     source=out / "study" / "tallowmere_profile.toml")
            say(args, "demo: which new datum would settle the TL-12 profile's questions (plan)")
            profile_plan_s = demo_profile_plan(args, tmp / "study" / "tallowmere_profile.toml",
                                               tmp / "profile_plan")
            say(args, "demo: probability map of an invented section across the ridge "
                      "(fast path)")
            (tmp / "map").mkdir()
            t_grid = demo_grid(args, tmp / "map", tmp / "study", out / "study")
        except BaseException:
            # wait for the second process, so that the output folder is removed only after it
            # has stopped writing; this process's error is the one reported
            if second[0] is not None:
                second[0].exception()
            raise
        second_s = _finish_second_part(args, *second)
        where = ", in a second process beside the other parts" if second[0] else ""
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
            *(["- `mcmc/`: the deep layer of TL-12 by MCMC (emcee), the main sampler; its "
               "probabilities, with their Monte Carlo errors, can be set beside the exact "
               f"reference in `invert/` ({second_s['mcmc']:.1f} s{where})"]
              if method != "mcmc" else []),
            f"- `compare/`: the deep layers under three thermal-state priors ({method}; "
            f"{second_s['compare']:.1f} s{where})",
            "- `chart/`: probability of each interpretation against observed Vp (exact; "
            f"{second_s['chart']:.1f} s{where})",
            f"- `plan/`: which extra observation would settle the deep layer on TL-07 "
            f"(preposterior simulation on the exact path's design, importance reweighting; "
            f"{_DEMO_PLAN_SIMULATIONS} simulated data per candidate; {plan_s:.1f} s); start "
            "with `plan/report.md`",
            "- `profile/`: the whole TL-12 profile tied by one thermal state: crust-mantle "
            "boundary, crustal thickness and which thermal state (half-space, axial, "
            f"uncoupled) the profile favours (structured exact path, {profile_s:.1f} s); start "
            "with `profile/report.md`",
            "- `profile_plan/`: which new datum (heat flow, Vs or density in the lower gabbro) "
            "would best settle the TL-12 profile's questions: each layer, the crust-mantle "
            "boundary, the crustal age and mantle temperature (preposterior simulation on the "
            "structured exact path's design, reduced for the demo, importance reweighting; "
            f"{_DEMO_PROFILE_PLAN['n_simulations']} simulated data per candidate; "
            f"{profile_plan_s:.1f} s); start with `profile_plan/report.md`",
            "- `map/`: probability maps of an invented 2-D section across the ridge "
            "(`study/tallowmere_section.nc`, written by the package), by the per-level fast "
            f"path (one prior design per depth level, tabulated over Vp; {t_grid:.1f} s)", "",
            "Reproduce from the shell:", "",
            "    bayescrust invert study/tallowmere_ridge.toml --out my_run",
            "    bayescrust compare study/tallowmere_ridge.toml --out my_compare "
            f"--layer '{_DEMO_COMPARE_LAYERS[0]}'",
            f"    bayescrust chart study/tallowmere_ridge.toml --layer '{_DEMO_CHART_LAYER}' "
            "--out my_chart",
            "    bayescrust plan study/tallowmere_ridge.toml --out my_plan",
            "    bayescrust profile study/tallowmere_profile.toml --out my_profile",
            "    bayescrust plan study/tallowmere_profile.toml --out my_profile_plan",
            "    bayescrust map study/tallowmere_section.toml --out my_map", "",
            f"Run time of this demo: {elapsed:.1f} s.", ""]))
    say(args, f"demo: done in {time.perf_counter() - t0:.1f} s; start with {out}/README.md")
    print(out)
    return 0


def _second_part(args, study, tmp, method, capture=False):
    """The parts that need nothing from the others: the ambiguous deep layer by MCMC (unless
    every layer already is), the thermal-state comparison and the chart (module level, so that
    a worker process can run it).

    Returns ``({part: seconds}, warning lines)``; with ``capture`` the messages are kept from
    the terminal (a second process would interleave them, progress bars included) and the
    warnings returned, for the parent to echo.
    """
    import contextlib
    import io

    times = {}
    buf = io.StringIO()
    with contextlib.redirect_stderr(buf) if capture else contextlib.nullcontext():
        t = time.perf_counter()
        if method != "mcmc":
            say(args, f"demo: the deep layer of TL-12 by MCMC ({_DEMO_MCMC_LAYER!r})")
            (tmp / "mcmc").mkdir()
            do_invert(args, study, tmp / "mcmc", method="mcmc", figures=True,
                      layer_names=[_DEMO_MCMC_LAYER])
        times["mcmc"] = time.perf_counter() - t
        t = time.perf_counter()
        say(args, f"demo: comparing thermal-state priors for the deep layers ({method})")
        (tmp / "compare").mkdir()
        do_compare(args, study, tmp / "compare", method=method, figures=True,
                   layer_names=_DEMO_COMPARE_LAYERS)
        times["compare"] = time.perf_counter() - t
        t = time.perf_counter()
        say(args, "demo: probability chart for the deep layer")
        (tmp / "chart").mkdir()
        chart_args = argparse.Namespace(vp_min=None, vp_max=None, points=args.points,
                                        seed=args.seed, quiet=args.quiet)
        do_chart(chart_args, study, tmp / "chart", layer_name=_DEMO_CHART_LAYER,
                 method="exact", figures=True)
        times["chart"] = time.perf_counter() - t
    lines = [ln for ln in buf.getvalue().splitlines() if ln.startswith("bayescrust: warning")]
    return times, lines


def _start_second_part(args, study, tmp, method):
    """Start :func:`_second_part`: in a second process when this process may use two cores or
    more, else at once, in this one. Returns ``(future_or_None, result_or_None)`` for
    :func:`_finish_second_part`."""
    import concurrent.futures as cf
    import multiprocessing as mp

    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    if (cores or 1) < 2:
        return None, _second_part(args, study, tmp, method)
    say(args, "demo: MCMC run, thermal-state comparison and chart in a second process, beside "
              "the other parts")
    # spawn: a clean interpreter (no forked matplotlib or BLAS thread state)
    pool = cf.ProcessPoolExecutor(max_workers=1, mp_context=mp.get_context("spawn"))
    future = pool.submit(_second_part, args, study, tmp, method, True)
    pool.shutdown(wait=False)
    return future, None


def _finish_second_part(args, future, result) -> dict:
    """Wait for the second process (its errors re-raised), echo its warnings; returns the run
    time of each of its parts (s)."""
    if future is None:
        return result[0]
    times, warned = future.result()
    say(args, "demo: second process done (" + ", ".join(f"{k} {v:.1f} s"
                                                         for k, v in times.items()) + ")")
    for line in warned:
        say(args, line)
    return times


#: Reduced designs of the demo's profile plan (the study file's [plan] has the full ones).
_DEMO_PROFILE_PLAN = {"n_layer": 2**12, "n_thermal": 256, "states_per_thermal": 8,
                      "n_simulations": 200}


def demo_profile_plan(args, study_path, dest) -> float:
    """The demo's profile planning part (reduced designs); returns its run time (s)."""
    from .plan import do_plan_profile
    from .profile import load_profile_study

    t0 = time.perf_counter()
    study = load_profile_study(study_path)
    dest.mkdir()
    plan_args = argparse.Namespace(seed=args.seed, quiet=args.quiet, candidate=None,
                                   simulations=None)
    do_plan_profile(plan_args, study, dest, figures=True, options=_DEMO_PROFILE_PLAN)
    return time.perf_counter() - t0


def demo_profile(args, study_path, dest, source=None) -> float:
    """The demo's profile part (exact path, reduced designs); returns its run time (s).
    ``source``: the study file's path once the demo folder is published (outputs name it, not
    the temporary folder's)."""
    from .profile import do_profile, load_profile_study

    t0 = time.perf_counter()
    study = load_profile_study(study_path, source=source)
    dest.mkdir()
    do_profile(args, study, dest, method="exact", figures=True,
               exact_options={"n_layer": 2**12, "n_thermal": 64, "n_replicates": 3})
    return time.perf_counter() - t0


def add_parser(sub) -> None:
    """Register the ``demo`` command."""
    sp = sub.add_parser("demo", help="write the demo study and run the full job on it")
    add_common_options(sp, out="bayescrust-demo", figures=False)
    sp.add_argument("--points", type=int, default=13, help="Vp points of the demo chart")
    sp.set_defaults(func=cmd_demo)
