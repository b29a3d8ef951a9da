"""``bayescrust chart``: probability of each interpretation against observed Vp."""

from __future__ import annotations

import contextlib
import sys
from pathlib import Path

from ..config import load_study
from .layers import assumptions, build, run_one, run_toml, select_layers, thermal_set
from .shell import (
    InputError,
    Warnings,
    add_common_options,
    folder_command,
    save_figure,
    say,
    write_text,
)

__all__ = ["add_parser", "cmd_chart", "do_chart", "probability_table", "misfit_ranges",
           "chart_title", "COLUMNS"]


def probability_table(study, layer, vp_values, *, thermals=None, method="exact", seed=0,
                      progress=False, warn=None):
    """Interpretation probabilities for a range of observed Vp (same depth, same error).

    Computed through the public API: with the exact method one prior design per thermal prior,
    weighed against every Vp (:func:`bayescrust.probability_chart`); with MCMC one inversion per
    (thermal prior, Vp). The layer's other observations are unchanged. Returns a long
    DataFrame: thermal_prior, vp, hypothesis, probability, mcse, ppc_p_value and data_fit
    (the posterior-predictive check of the layer's data with that Vp: ``"ok"`` or
    ``"MISFIT (vp, ...)"``, the rule and threshold of every layer result).
    """
    import pandas as pd

    if "vp" not in layer.observations:
        raise InputError(f"{study.source}: layer {layer.name!r}: chart needs an observed vp")
    sigma = layer.observations["vp"].sigma
    thermals = thermals if thermals is not None else thermal_set(study)
    if method == "exact":
        from ..inference import UniformTemperature, probability_chart

        frames = []
        ctx = warn.catch(f"chart of {layer.name!r}") if warn else contextlib.nullcontext()
        with ctx:
            for th in thermals:
                lay, kw = build(study, layer, thermal=th)
                pri = dict(kw.pop("priors", {}))
                tp = pri.pop("temperature_c", UniformTemperature(0.0, 1400.0))
                try:
                    frames.append(probability_chart(
                        lay, vp_values, thermal_priors={th.name: tp}, seed=seed, priors=pri,
                        **kw, **study.sampler.arguments("exact")))
                except ValueError as exc:
                    raise InputError(f"{study.source}: layer {layer.name!r}: {exc}") from None
        return pd.concat(frames, ignore_index=True)[list(COLUMNS)]
    rows = []
    total = len(thermals) * len(vp_values)
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=total, desc="chart", unit="inversion", file=sys.stderr)
    ctx = warn.catch(f"chart of {layer.name!r}") if warn else contextlib.nullcontext()
    with ctx:
        for th in thermals:
            for v in vp_values:
                res = run_one(study, layer, method=method, seed=seed, progress=False,
                               thermal=th, observed={"vp": (float(v), sigma)})
                p_min = min(c["p_value"] for c in
                            res.predictive_check["observables"].values())
                for h, row in res.hypotheses.iterrows():
                    rows.append({"thermal_prior": th.name, "vp": float(v), "hypothesis": h,
                                 "probability": row["posterior_probability"],
                                 "mcse": row["posterior_mcse"], "ppc_p_value": p_min,
                                 "data_fit": row["data_fit"]})
                if bar is not None:
                    bar.update()
    if bar is not None:
        bar.close()
    return pd.DataFrame(rows, columns=list(COLUMNS))


#: Columns of ``chart.csv``.
COLUMNS = ("thermal_prior", "vp", "hypothesis", "probability", "mcse", "ppc_p_value",
           "data_fit")


def misfit_ranges(table) -> dict:
    """``{thermal prior: [(lo, hi), ...]}``: runs of consecutive chart Vp values whose data the
    model cannot reproduce (``data_fit`` not ``"ok"``), km/s."""
    out = {}
    for th, sub in table.groupby("thermal_prior", sort=False):
        per = sub.drop_duplicates("vp").sort_values("vp")
        runs, cur = [], None
        for v, bad in zip(per["vp"], per["data_fit"] != "ok", strict=True):
            if bad:
                cur = [float(v), float(v)] if cur is None else [cur[0], float(v)]
            elif cur is not None:
                runs.append(tuple(cur))
                cur = None
        if cur is not None:
            runs.append(tuple(cur))
        if runs:
            out[str(th)] = runs
    return out


def _spans(runs) -> str:
    return ", ".join(f"{lo:g}-{hi:g}" if hi > lo else f"{lo:g}" for lo, hi in runs)


def _misfit_lines(ranges, vp_obs) -> list[str]:
    """The report's opening warning for the misfit ranges of a chart ([] when none)."""
    if not ranges:
        return []
    span = "; ".join(f"{th}: {_spans(r)}" for th, r in ranges.items())
    inside = any(lo <= vp_obs <= hi for r in ranges.values() for lo, hi in r)
    return [f"> **Warning: data misfit for observed Vp {span} km/s.** There the model cannot "
            "reproduce the layer's data (posterior-predictive check, p < 0.01; `data_fit` in "
            "`chart.csv`, hatched in the figure): the probabilities drawn there are conditional "
            "on a model that does not fit, not evidence for any interpretation."
            + (f" The layer's own Vp ({vp_obs:g} km/s) is among them." if inside else ""), ""]


def _vp_grid(args, layer):
    import numpy as np

    vp = layer.observations.get("vp")
    lo = args.vp_min if args.vp_min is not None else (vp.value - 0.8 if vp else 6.0)
    hi = args.vp_max if args.vp_max is not None else (vp.value + 0.8 if vp else 8.4)
    if not 1.0 <= lo < hi <= 10.0:
        raise InputError(f"--vp-min/--vp-max: got {lo:g}..{hi:g}, expected 1 <= min < max <= 10 "
                         "km/s")
    if not 2 <= args.points <= 500:
        raise InputError(f"--points: got {args.points}, expected an integer in [2, 500]")
    return np.round(np.linspace(lo, hi, args.points), 6)


#: Labels and units of the observations a chart holds fixed, for its title.
_HELD = {"vs": ("Vs", " km/s"), "vp_vs": ("Vp/Vs", ""), "density": ("density", " g/cm^3")}


def chart_title(layer) -> str:
    """The chart figure's title: the layer, the Vp error, and the other data held fixed."""
    obs = layer.observations
    held = [f"{_HELD[k][0]} {o.value:g} ± {o.sigma:g}{_HELD[k][1]}"
            for k, o in obs.items() if k in _HELD]
    return (f"{layer.name}: probability against observed Vp (σ = {obs['vp'].sigma:g} km/s"
            + (f"; {', '.join(held)} held fixed)" if held else ")"))


def do_chart(args, study, dest: Path, *, layer_name, method, figures: bool):
    from ..report.caution import caution_text

    if layer_name is None:
        if len(study.layers) != 1:
            names = ", ".join(repr(lay.name) for lay in study.layers)
            raise InputError(f"{study.source}: --layer: required (the study has "
                             f"{len(study.layers)} layers: {names})")
        layer = study.layers[0]
    else:
        layer = select_layers(study, [layer_name])[0][1]
    grid = _vp_grid(args, layer)
    seed = study.seed if args.seed is None else args.seed
    warn = Warnings(args)
    table = probability_table(study, layer, grid, method=method, seed=seed,
                              progress=not args.quiet, warn=warn)
    from ..report.tables import to_csv

    write_text(dest / "chart.csv", to_csv(table, index=False))
    ranges = misfit_ranges(table)
    if figures:
        from ..report import figures as F  # noqa: N812

        vp = layer.observations["vp"]
        fig = F.probability_chart(table, observed=(vp.value, vp.sigma), misfit=ranges,
                                  title=chart_title(layer))
        save_figure(fig, dest, "chart")
    extra = {"command": "chart", "layer": layer.name, "method": method, "seed": seed,
             "vp_grid": [float(v) for v in grid]}
    write_text(dest / "run.toml", run_toml(study, extra))
    vp_obs = layer.observations["vp"].value
    lines = [f"# {study.title}: probability chart for {layer.name!r}", "",
             *_misfit_lines(ranges, vp_obs),
             caution_text(assumptions(study, layer, thermal=thermal_set(study))),
             "`chart.csv` holds, for each thermal-state prior and each observed Vp (other "
             "observations and errors as in the study file), the posterior probability of each "
             "interpretation, its Monte Carlo standard error, and the posterior-predictive check "
             "of the data with that Vp (`ppc_p_value`, the smallest over the observables, and "
             "`data_fit`). The shaded band in the figure is the layer's observed Vp ± 1σ; "
             "hatched ranges are Vp values the model cannot reproduce.", ""]
    if warn.messages:
        lines += ["## Warnings", ""] + [f"- {m}" for m in warn.messages] + [""]
    write_text(dest / "report.md", "\n".join(lines))
    for th, r in ranges.items():
        say(args, f"chart of {layer.name!r} ({th}): DATA MISFIT for observed Vp {_spans(r)} "
                  "km/s, see report.md")
    return table


def cmd_chart(args) -> int:
    study = load_study(args.study)
    return folder_command(args, lambda tmp: do_chart(args, study, tmp, layer_name=args.layer,
                                                     method=args.method,
                                                     figures=not args.no_figures))


def add_parser(sub) -> None:
    """Register the ``chart`` command."""
    sp = sub.add_parser("chart", help="probability of each interpretation against observed Vp")
    sp.add_argument("study", metavar="STUDY.toml")
    add_common_options(sp, method=False)
    sp.add_argument("--layer", metavar="NAME", help="the layer (required if several)")
    sp.add_argument("--vp-min", type=float, help="lowest Vp (km/s; default observed - 0.8)")
    sp.add_argument("--vp-max", type=float, help="highest Vp (km/s; default observed + 0.8)")
    sp.add_argument("--points", type=int, default=25, help="number of Vp values (default 25)")
    sp.add_argument("--method", choices=("exact", "mcmc"), default="exact",
                    help="exact reference (default, fast) or MCMC")
    sp.set_defaults(func=cmd_chart)
