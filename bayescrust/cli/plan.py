"""``bayescrust plan``: which extra observation would settle a layer's interpretation."""

from __future__ import annotations

from pathlib import Path

from ..config import load_study
from .layers import assumptions, build, run_one, run_toml, select_layers
from .shell import (
    InputError,
    Warnings,
    add_common_options,
    folder_command,
    save_figure,
    say,
    write_table,
    write_text,
)

__all__ = ["add_parser", "cmd_plan", "do_plan", "plan_study_layer", "parse_candidate"]


def parse_candidate(text: str):
    """``OBSERVABLE:SIGMA`` (e.g. ``vs:0.1``) -> ``(observable, sigma)``; InputError if bad."""
    from ..plan.candidates import LAYER_OBSERVABLES

    obs, sep, sig = text.partition(":")
    try:
        s = float(sig)
    except ValueError:
        s = None
    if not sep or obs not in LAYER_OBSERVABLES or s is None or not s > 0:
        raise InputError(f"--candidate: got {text!r}, expected OBSERVABLE:SIGMA with OBSERVABLE "
                         f"in {', '.join(LAYER_OBSERVABLES)} and SIGMA > 0 (e.g. vs:0.1)")
    return obs, s


def _candidates(study, cli):
    from ..plan import Candidate

    if cli:
        return [parse_candidate(c) for c in cli]
    spec = getattr(study, "plan", None)
    if spec is None or not spec.candidates:
        return None
    return [Candidate(c.observable, c.sigma, c.model_error, c.label) for c in spec.candidates]


def plan_study_layer(study, layer, *, method="exact", seed=0, candidates=None,
                     simulations=None, progress=False):
    """The plan of one layer of a study, through the public API (:func:`bayescrust.plan_layer`).

    ``method="exact"`` weighs the exact path's prior design; ``"mcmc"`` first inverts the
    layer (:func:`bayescrust.invert_layer`) and reweights its posterior draws.
    """
    from ..config.plan import PlanSpec
    from ..plan import plan_layer

    spec = getattr(study, "plan", None) or PlanSpec()
    lay, kw = build(study, layer)
    result = None
    if method == "mcmc":
        result = run_one(study, layer, method="mcmc", seed=seed, progress=progress)
    try:
        return plan_layer(lay, candidates=candidates, result=result, seed=seed,
                          n_points=spec.design_points,
                          n_simulations=simulations or spec.simulations,
                          decisive_probability=spec.decisive_probability,
                          decisive_bayes_factor=spec.decisive_bayes_factor,
                          rank_by=spec.rank_by, **kw)
    except ValueError as exc:
        raise InputError(f"{study.source}: layer {layer.name!r}: {exc}") from None


def do_plan(args, study, dest: Path, *, layer_name, method, figures: bool):
    """Plan one layer into ``dest``: tables, figure, report and run.toml; returns the plan."""
    from ..report.caution import caution_text
    from ..report.plan import plan_figure, plan_table
    from ..report.tables import to_csv, to_markdown

    spec_layer = getattr(getattr(study, "plan", None), "layer", None)
    name = layer_name or spec_layer
    if name is None:
        if len(study.layers) != 1:
            names = ", ".join(repr(lay.name) for lay in study.layers)
            raise InputError(f"{study.source}: --layer: required (the study has "
                             f"{len(study.layers)} layers: {names}; or set plan.layer)")
        layer = study.layers[0]
    else:
        layer = select_layers(study, [name])[0][1]
    seed = study.seed if args.seed is None else args.seed
    warn = Warnings(args)
    say(args, f"plan: layer {layer.name!r} ({method})")
    with warn.catch(f"plan of {layer.name!r}"):
        plan = plan_study_layer(study, layer, method=method, seed=seed,
                                candidates=_candidates(study, getattr(args, "candidate", None)),
                                simulations=getattr(args, "simulations", None),
                                progress=not args.quiet)
    write_text(dest / "plan.csv", to_csv(plan_table(plan)))
    readable = plan_table(plan, readable=True)
    write_table(dest, "plan", readable, caption=f"Value of candidate observations for "
                f"{layer.name} (ranked by {plan.settings['rank_by']}).")
    write_text(dest / "plan.csv", to_csv(plan_table(plan)))  # the full table wins the .csv
    write_text(dest / "calibration.csv", to_csv(plan.calibration, index=False))
    if figures:
        fig = plan_figure(plan, title=f"{layer.name}: value of a new datum")
        save_figure(fig, dest, "plan")
    import pandas as pd

    today = pd.DataFrame({"probability today": plan.today["class_probabilities"]},
                         index=pd.Index(plan.class_names, name="interpretation"))
    s = plan.settings
    lines = [f"# {study.title}: which observation would settle {layer.name!r}?", "",
             caution_text(assumptions(study, layer)),
             f"Method: preposterior simulation ({s['n_simulations']} simulated data per "
             f"candidate) from today's posterior ({s['ensemble']}, {s['ensemble_size']} states"
             + (f", importance effective size {s['ensemble_importance_ess']:.0f}"
                if s["ensemble"] == "exact design" else
                "; MCMC draws are correlated, so fewer are effective")
             + "); each datum "
             "updates the states by importance reweighting; updates with an effective size "
             f"below {s['min_ess']:g} rerun the exact path (at most {s['max_reruns']} per "
             "candidate). A decisive answer: the top interpretation reaches "
             f"{s['decisive_probability']:g}, or its Bayes factor against the second reaches "
             f"{s['decisive_bayes_factor']:g}. Errors are Monte Carlo standard errors over the "
             "simulated data (the design's own error is not included).", "",
             "## Today", "", to_markdown(today),
             f"Entropy {plan.today['entropy_bits']:.2f} bits; 94 % temperature interval "
             f"{plan.today['interval_width']:.0f} °C wide; decisive today: "
             f"{'yes' if plan.today['decisive'] else 'no'}.", "",
             "## Candidates, best first", ""]
    lines += [f"{int(plan.table.loc[lab, 'rank'])}. {txt}" for lab, txt in
              plan.sentences.items()]
    lines += ["", "`plan.csv` holds every column (with Monte Carlo errors); `plan.md`/`.tex` "
              "the main ones; `calibration.csv` the law-of-total-probability check (the "
              "average updated probability of each interpretation should equal today's within "
              "its error).", ""]
    if warn.messages:
        lines += ["## Warnings", ""] + [f"- {m}" for m in warn.messages] + [""]
    write_text(dest / "report.md", "\n".join(lines))
    extra = {"command": "plan", "layer": layer.name, "method": method, "seed": seed,
             "candidates": list(plan.table.index)}
    write_text(dest / "run.toml", run_toml(study, extra))
    return plan


def cmd_plan(args) -> int:
    study = load_study(args.study)
    return folder_command(args, lambda tmp: do_plan(args, study, tmp, layer_name=args.layer,
                                                    method=args.method,
                                                    figures=not args.no_figures))


def add_parser(sub) -> None:
    """Register the ``plan`` command."""
    sp = sub.add_parser("plan", help="which extra observation would settle a layer's "
                                     "interpretation (preposterior simulation)")
    sp.add_argument("study", metavar="STUDY.toml")
    add_common_options(sp, method=False)
    sp.add_argument("--layer", metavar="NAME", help="the layer (required if several and no "
                                                    "plan.layer)")
    sp.add_argument("--candidate", action="append", metavar="OBS:SIGMA",
                    help="a candidate datum, e.g. vs:0.1 (repeatable; default: the study's "
                         "[plan] candidates, else the package defaults)")
    sp.add_argument("--simulations", type=int, default=None,
                    help="simulated data per candidate (default: study file, else 1000)")
    sp.add_argument("--method", choices=("exact", "mcmc"), default="exact",
                    help="today's posterior from the exact path (default, fast) or from MCMC")
    sp.set_defaults(func=cmd_plan)
