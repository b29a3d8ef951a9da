"""``bayescrust map``: probability maps of a velocity grid from a grid study file."""

from __future__ import annotations

import shutil
import time
from pathlib import Path

from .shell import AtomicFolder, InputError, Warnings, add_common_options, say, use_agg, write_text

__all__ = ["add_parser", "cmd_map", "do_map"]


def do_map(args, study, folder: Path, *, store=None, figures=True, validate=0, maps=None,
           dpi=150, source=None):
    """Map ``study`` (a GridStudy) into ``folder``; returns the Dataset. ``source`` (default:
    the path read) is the input's name recorded in ``map.nc``."""
    from ..grid import GridInputError, column_summary, map_grid, read_grid, write_netcdf
    from ..report.caution import caution_text

    warn = Warnings(args)
    try:
        with warn.catch("grid"):
            grid = read_grid(study.file, study.mapping)
    except GridInputError as exc:
        raise InputError(str(exc)) from None
    seed = study.seed if getattr(args, "seed", None) is None else args.seed
    t0 = time.perf_counter()
    with warn.catch("map"):
        ds = map_grid(grid, study.zones, seed=seed, store=store,
                      scheduler=getattr(args, "scheduler", None),
                      n_workers=getattr(args, "workers", None),
                      progress=not getattr(args, "quiet", True), **study.options)
    t_map = time.perf_counter() - t0
    if source is not None:
        ds.attrs["source"] = str(source)
    n_mis = int(ds.attrs["n_misfit"])
    say(args, f"map: {grid.n_nodes} nodes ({ds.attrs['n_masked']} masked), "
              f"{ds.attrs['path_choice']}, {ds.attrs['execution']}, {t_map:.1f} s; "
              f"{ds.attrs['n_refined']} refined, {ds.attrs['n_poor']} below the quality "
              f"threshold, {n_mis} data misfit" + (" -- DATA MISFIT, see README.md"
                                                   if n_mis else ""))
    write_netcdf(ds, folder / "map.nc")
    summary = column_summary(ds)
    write_text(folder / "column_summary.csv", summary.to_csv(index=False))
    lines = [f"# Probability map: {study.title or study.source}", ""]
    if n_mis:
        lines += [f"> **Warning: data misfit at {n_mis} of "
                  f"{grid.n_nodes - int(ds.attrs['n_masked'])} nodes.** The model cannot "
                  "reproduce the observations there (posterior-predictive tail probability "
                  f"`fit_p` < {ds.attrs['misfit_threshold']:g}; quality flag `misfit`, hatched "
                  "on the maps, counted per column in `column_summary.csv`); their "
                  "probabilities are conditional on a model that does not fit (details under "
                  "Warnings).", ""]
    lines += [caution_text(_assumptions(study, ds)), "## This map", "",
              f"- input: `{study.file.name}`, {grid.n_nodes} nodes, {ds.attrs['n_masked']} masked",
             f"- method: {ds.attrs['method']}; {ds.attrs['path_choice']}",
             f"- execution: {ds.attrs['execution']}, {t_map:.1f} s",
             f"- quality: {ds.attrs['n_refined']} nodes refined, {ds.attrs['n_poor']} poor "
             f"(importance ESS < {ds.attrs['min_ess']:g}), {n_mis} data misfit (`fit_p` < "
             f"{ds.attrs['misfit_threshold']:g}: the model cannot produce the data; the flag "
             "wins over good / refined / poor); see the `quality`, `importance_ess` and "
             "`fit_p` variables",
             "- `map.nc`: every probability and posterior summary on the input grid",
             "- `column_summary.csv`: depth below the seafloor where the mantle becomes more "
             "likely than not (P = 0.5), with the depths of P = 0.25 and 0.75, and the "
             "numbers of poor and misfit nodes, per column"
             + (f" (`distance`: the `{ds.attrs['distance']}` coordinate)"
                if "distance" in ds.attrs else " (one column)")]
    if figures:
        use_agg()
        from ..report.grid_maps import write_section_maps

        (folder / "maps").mkdir(exist_ok=True)
        stems = write_section_maps(ds, folder / "maps", variables=maps, dpi=dpi)
        lines.append(f"- `maps/`: {len(stems)} section maps (PNG and PDF)"
                     + ("; misfit nodes grey and hatched" if n_mis else ""))
    if validate:
        from ..grid import validate_nodes, validation_summary

        with warn.catch("validation"):
            df = validate_nodes(grid, study.zones, ds, n_nodes=validate, seed=seed)
        write_text(folder / "validation.csv", df.to_csv(index=False))
        t_node = df.groupby("node")["time_s"].first().mean()
        v = validation_summary(df)
        lines.append(f"- `validation.csv`: {v['n_nodes']} nodes re-inverted by MCMC; "
                     f"largest |dP| {v['max_abs_dp']:.4f}, largest |z| {v['max_abs_z']:.2f} "
                     f"(z: dP over the combined Monte Carlo error; expected below 4), "
                     f"chi-square {v['chi2']:.1f} on {v['chi2_df']} entries (p = "
                     f"{v['chi2_p']:.3g}); |dP| < {v['bound']:g} is testable on "
                     f"{v['n_testable']} entries, largest there "
                     f"{v['max_abs_dp_testable']:.4f}; {t_node:.1f} s a node against "
                     f"{t_map / max(1, grid.n_nodes):.2e} s a node for the map")
    if warn.messages:
        lines += ["", "## Warnings", ""] + [f"- {m}" for m in warn.messages]
    write_text(folder / "README.md", "\n".join(lines) + "\n")
    return ds


def _prior_text(v, ages) -> str:
    """A zone prior as the README states it; with ``ages`` (the (lo, hi) Myr of `[grid] age`)
    a half-space prior's replaced ``age_myr`` is given as those ages."""
    text = v.describe() if hasattr(v, "describe") else str(v)
    if ages is not None and hasattr(v, "age_myr"):
        text = text.replace(f"age_myr={v.age_myr.describe()}",
                            f"crustal age from grid.age: {ages[0]:g}-{ages[1]:g} Myr")
    return text


def _assumptions(study, ds=None) -> dict:
    """The key assumptions of a map, for the caution paragraph (as the layer reports')."""
    a = {"forward model": "package defaults (Hill mixing, DEM inclusions, lizardite, "
                          "anelastic correction)",
         "likelihood": "gaussian (default forward-model error)"}
    ages = None
    if ds is not None and "crustal_age" in ds and getattr(study.mapping, "age", None) is not None:
        import numpy as np

        ages = (float(np.nanmin(ds["crustal_age"])), float(np.nanmax(ds["crustal_age"])))
    for z in study.zones:
        pri = z.priors or {}
        desc = "; ".join(f"{k}: {_prior_text(v, ages)}" for k, v in pri.items()) or "defaults"
        a[f"zone {z.name!r}"] = (f"{z.top_km:g}-{z.bottom_km:g} km below the seafloor, rocks "
                                 f"{', '.join(z.rocks)}; priors: {desc}")
    a["interpretations"] = "the package defaults of each zone's rocks (docs/grid.md)"
    a["fast path"] = ("one prior design per depth level, pressure and thermal prior at the "
                      "level's depth (docs/grid.md, Limitations)")
    return a


def cmd_map(args) -> int:
    from ..config.grid import load_grid_study

    study = load_grid_study(args.study)
    out = Path(args.out)
    store = Path(args.store) if args.store else out.with_name(out.name + ".checkpoint.zarr")
    if not args.no_checkpoint:
        _check_store(store, out, given=bool(args.store))
        try:
            import zarr  # noqa: F401
        except ImportError:
            if args.store:
                raise InputError("--store needs zarr (pip install 'bayescrust[grid]')") from None
            say(args, "map: zarr is not installed; running without a checkpoint store")
            args.no_checkpoint = True
    from ..grid.store import StoreMismatch

    try:
        with AtomicFolder(out, overwrite=args.overwrite,
                          protect=[args.study, study.file, store]) as tmp:
            do_map(args, study, tmp, store=None if args.no_checkpoint else store,
                   figures=not args.no_figures,
                   validate=args.validate if args.validate is not None else study.validate_nodes)
    except StoreMismatch as exc:  # bad input (--store), not a failed run
        raise InputError(f"{exc} (--store)") from None
    if not args.no_checkpoint and store.exists():
        # created by this run or verified by map_grid (same fingerprint): the finished map
        # holds everything it held
        shutil.rmtree(store)
    print(out)
    return 0


def _check_store(store: Path, out: Path, *, given: bool):
    """Refuse a store that overlaps ``--out`` or is not a checkpoint store of this package
    (the store is deleted after a successful run)."""
    from ..grid.store import store_status

    opt = "--store" if given else "--store (default OUT.checkpoint.zarr)"
    s, o = store.resolve(), out.resolve()
    if s == o or s in o.parents or o in s.parents:
        raise InputError(f"{store}: {opt}: is, holds or lies inside the output folder {out} "
                         "(--out); the store is deleted after the run, so choose a path outside "
                         "the output")
    try:
        status = store_status(store)
    except ImportError:
        return  # no zarr: the caller runs without a store
    if status == "foreign":
        raise InputError(f"{store}: {opt}: exists and is not a checkpoint store of bayescrust "
                         "(no fingerprint); it would be deleted after the run, so choose "
                         "another path")


def add_parser(sub) -> None:
    """Register the ``map`` command."""
    sp = sub.add_parser("map", help="probability maps of a 2D/3D velocity grid (fast path)")
    sp.add_argument("study", help="grid study file (TOML with a [grid] table)")
    add_common_options(sp, method=False)
    sp.add_argument("--scheduler", metavar="ADDRESS", default=None,
                    help="run the chunks on this dask.distributed scheduler")
    sp.add_argument("--workers", type=int, default=None, metavar="N",
                    help="start a local dask cluster of N worker processes")
    sp.add_argument("--store", default=None, metavar="PATH",
                    help="zarr checkpoint store (default: OUT.checkpoint.zarr beside the "
                         "output); an interrupted run resumes from it")
    sp.add_argument("--no-checkpoint", action="store_true", help="keep no checkpoint store")
    sp.add_argument("--validate", type=int, default=None, metavar="N",
                    help="re-invert N random nodes by MCMC and compare with the map")
    sp.set_defaults(func=cmd_map)
