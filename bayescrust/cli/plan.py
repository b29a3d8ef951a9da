"""``bayescrust plan``: which extra observation would settle a layer's interpretation, or the
open questions of a whole profile (a ``[profile]`` study file)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

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

__all__ = ["add_parser", "cmd_plan", "do_plan", "do_plan_profile", "plan_study_layer",
           "parse_candidate"]


def parse_candidate(text: str, *, profile=False):
    """``OBSERVABLE:SIGMA`` (e.g. ``vs:0.1``) -> ``(observable, sigma)``; InputError if bad.

    For a profile: ``OBSERVABLE:SIGMA@LAYER`` (e.g. ``vs:0.1@3 lower gabbro``) or
    ``heat_flow:SIGMA[:MODE]`` (MODE ``gaussian``, ``lower_bound``, ``off``) -> a Candidate."""
    from ..plan import Candidate
    from ..plan.candidates import HEAT_FLOW_MODES, LAYER_OBSERVABLES, PROFILE_OBSERVABLES

    allowed = LAYER_OBSERVABLES + (PROFILE_OBSERVABLES if profile else ())
    head, _, layer = text.partition("@")
    obs, sep, rest = head.partition(":")
    sig, _, mode = rest.partition(":")
    try:
        s = float(sig)
    except ValueError:
        s = None
    form = ("OBSERVABLE:SIGMA@LAYER or heat_flow:SIGMA[:MODE]" if profile
            else "OBSERVABLE:SIGMA")
    if (not sep or obs not in allowed or s is None or not s > 0
            or (mode and (obs != "heat_flow" or mode not in HEAT_FLOW_MODES))
            or (layer and obs == "heat_flow")):
        raise InputError(f"--candidate: got {text!r}, expected {form} with OBSERVABLE in "
                         f"{', '.join(allowed)} and SIGMA > 0 (e.g. vs:0.1)")
    if not profile:
        return obs, s
    return Candidate(obs, s, layer=layer or None, mode=mode or "gaussian")


def _candidates(study, cli):
    from ..plan import Candidate

    if cli:
        return [parse_candidate(c) for c in cli]
    spec = getattr(study, "plan", None)
    if spec is None or not spec.candidates:
        return None
    return [Candidate(c.observable, c.sigma, c.model_error, c.label, layer=c.layer,
                      mode=c.mode or "gaussian", max_deficit=c.max_deficit)
            for c in spec.candidates]


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
                          rank_by=spec.rank_by or "information_gain_bits", **kw)
    except ValueError as exc:
        raise InputError(f"{study.source}: layer {layer.name!r}: {exc}") from None


def do_plan(args, study, dest: Path, *, layer_name, method, figures: bool):
    """Plan one layer into ``dest``: tables, figure, report and run.toml; returns the plan."""
    from ..report.caution import caution_text, misfit_banner
    from ..report.plan import PLAN_ERROR_PAIRS, misfit_title, plan_figure, plan_table
    from ..report.tables import printable_with_errors, to_csv, to_markdown

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
                f"{layer.name} (ranked by {plan.settings['rank_by']}).",
                printable=printable_with_errors(readable, PLAN_ERROR_PAIRS, general=("sigma",)))
    write_text(dest / "plan.csv", to_csv(plan_table(plan)))  # the full table wins the .csv
    write_text(dest / "calibration.csv", to_csv(plan.calibration, index=False))
    if figures:
        fig = plan_figure(plan, title=misfit_title(f"{layer.name}: value of a new datum", plan))
        save_figure(fig, dest, "plan")
    import pandas as pd

    today = pd.DataFrame({"probability today": plan.today["class_probabilities"]},
                         index=pd.Index(plan.class_names, name="interpretation"))
    s = plan.settings
    lines = [f"# {study.title}: which observation would settle {layer.name!r}?", "",
             *misfit_banner({layer.name: plan.predictive_check}, what=_CONDITIONAL),
             caution_text(assumptions(study, layer)), *_caveat_lines(plan),
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
             f"{'yes' if plan.today['decisive'] else 'no'}"
             + (" (under a model that does not fit the data)" if plan.misfit else "") + ".", "",
             _candidates_heading(plan.misfit), ""]
    lines += [f"{int(plan.table.loc[lab, 'rank'])}. {txt}" for lab, txt in
              plan.sentences.items()]
    lines += ["", "`plan.csv` holds every column (with Monte Carlo errors); `plan.md`/`.tex` "
              "the main ones; `calibration.csv` the law-of-total-probability check (the "
              "average updated probability of each interpretation should equal today's within "
              "its error).", ""]
    if warn.messages:
        lines += ["## Warnings", ""] + [f"- {m}" for m in warn.messages] + [""]
    write_text(dest / "report.md", "\n".join(lines))
    _say_trust(args, f"layer {layer.name!r}", plan.misfit, plan.caveats)
    extra = {"command": "plan", "layer": layer.name, "method": method, "seed": seed,
             "candidates": list(plan.table.index)}
    write_text(dest / "run.toml", run_toml(study, extra))
    return plan


#: What a data misfit makes conditional in a plan (the report's opening warning).
_CONDITIONAL = "today's probabilities and every value of a new datum in this plan"


def _caveat_lines(plan) -> list[str]:
    """The plan's caveats (today's posterior as a starting point) as a report section."""
    if not plan.caveats:
        return []
    return ["## Read this first", ""] + [f"- {c}" for c in plan.caveats] + [""]


def _candidates_heading(misfit: bool, question: str = "") -> str:
    if misfit:
        return ("## Candidates under a model that does not fit today's data (not "
                "recommendations; see above)" + (f": {question}" if question else ""))
    return "## Candidates, best first" + (f" for: {question}" if question else "")


def _say_trust(args, what: str, misfit, caveats):
    """One screen line per caveat of today's posterior (misfit first)."""
    if misfit:
        say(args, f"{what}: DATA MISFIT, see report.md: the model cannot reproduce today's "
                  "data; the plan's values are no recommendations")
    for c in caveats:
        if not c.startswith("DATA MISFIT"):
            say(args, f"{what}: {c}")


def _profile_candidates(pstudy, cli):
    if cli:
        return [parse_candidate(c, profile=True) for c in cli]
    return _candidates(pstudy, None)


def do_plan_profile(args, pstudy, dest: Path, *, figures: bool, options=None):
    """Plan a profile study into ``dest`` (tables, figures, report, run.toml); returns the plan.

    ``options`` (keywords of :func:`bayescrust.plan.plan_profile`) override the study's."""
    from ..config.plan import PlanSpec
    from ..plan import plan_profile
    from ..report.caution import caution_text, misfit_banner
    from ..report.plan import (
        PROFILE_PLAN_ERROR_PAIRS,
        data_fit_of,
        misfit_title,
        plan_figure,
        plan_table,
        profile_plan_figure,
        profile_plan_table,
    )
    from ..report.tables import printable_with_errors, to_csv
    from .profile import profile_assumptions

    spec = pstudy.plan or PlanSpec()
    prof = pstudy.profile
    seed = args.seed if getattr(args, "seed", None) is not None else (pstudy.seed or 0)
    warn = Warnings(args)
    say(args, f"plan: profile {prof.name!r} (structured exact path)")
    # one design per layer, a quarter of design_points each: the default 16384 gives
    # plan_profile's own n_layer default (4096); documented in config/plan.py and the docs
    kw = {"n_layer": spec.design_points // 4, "n_simulations": spec.simulations,
          "decisive_probability": spec.decisive_probability,
          "decisive_bayes_factor": spec.decisive_bayes_factor}
    if spec.rank_question:
        kw["rank_question"] = spec.rank_question
    if spec.rank_by:
        kw["rank_by"] = spec.rank_by
    if getattr(args, "simulations", None):
        kw["n_simulations"] = args.simulations
    kw.update(options or {})
    with warn.catch(f"plan of {prof.name!r}"):
        try:
            pp = plan_profile(prof, seed=seed, **kw, candidates=_profile_candidates(
                pstudy, getattr(args, "candidate", None)))
        except ValueError as exc:
            raise InputError(f"{pstudy.source}: {exc}") from None
    rq = pp.settings["rank_question"]
    readable = profile_plan_table(pp, readable=True)
    write_table(dest, "plan", readable,
                caption=f"Value of candidate observations for every question of {prof.name}.",
                printable=printable_with_errors(readable, PROFILE_PLAN_ERROR_PAIRS))
    write_text(dest / "plan.csv", to_csv(profile_plan_table(pp)))  # every column
    fit = data_fit_of(pp)
    write_text(dest / "ranking.csv", to_csv(plan_table(pp.plans[rq]).assign(data_fit=fit)))
    import pandas as pd

    cal = pd.concat([p.calibration.assign(question=q) for q, p in pp.plans.items()
                     if pp.questions[q] != "thermal"], ignore_index=True)
    write_text(dest / "calibration.csv", to_csv(cal, index=False))
    if figures:
        save_figure(profile_plan_figure(pp, title=misfit_title(
            f"{prof.name}: value of a new datum", pp)), dest, "plan")
        save_figure(plan_figure(pp.plans[rq], title=misfit_title(f"{prof.name}: {rq}", pp)),
                    dest, "ranking")
    s = pp.settings
    lines = [f"# {prof.name}: which observation would settle the open questions?", "",
             *misfit_banner(pp.predictive_check, what=_CONDITIONAL),
             caution_text(profile_assumptions(prof)), *_caveat_lines(pp),
             f"Method: preposterior simulation ({s['n_simulations']} simulated data per "
             f"candidate and question) from today's posterior: {s['n_states']} joint states "
             f"drawn from the structured exact path ({s['n_thermal_points']} thermal points x "
             f"{s['states_per_thermal']} states of every layer each); each datum updates them "
             "by importance reweighting. Questions: each layer's interpretations, the "
             "crust-mantle boundary, and the interval of each free thermal parameter. Updates "
             f"with an effective size below {s['min_ess']:g} are degenerate and rerun exactly "
             f"(at most {s['max_reruns']} per candidate and question: new thermal points "
             "weighed with the stored layer designs). Errors are Monte Carlo standard errors "
             "over the simulated data.", "", "## Today", ""]
    for q, p in pp.plans.items():
        u = p.settings["interval_unit"]
        if pp.questions[q] == "thermal":
            lines.append(f"- {q}: 94 % interval {p.today['interval_width']:.3g} {u} wide")
        else:
            top = int(np.argmax(p.today["class_probabilities"]))
            lines.append(f"- {q}: most probable {p.class_names[top]!r} "
                         f"({p.today['class_probabilities'][top]:.2f}); entropy "
                         f"{p.today['entropy_bits']:.2f} bits"
                         + (" -- DATA MISFIT: the model cannot reproduce this layer's data"
                            if q in pp.misfit_layers else ""))
    lines += ["", _candidates_heading(bool(pp.misfit_layers), rq), ""]
    lines += [f"{int(pp.ranking.loc[lab, 'rank'])}. {txt}" for lab, txt in pp.sentences.items()]
    lines += ["", "`plan.csv` holds every (candidate, question) row with Monte Carlo errors; "
              "`ranking.csv` the ranked question's table; `calibration.csv` the "
              "law-of-total-probability check.", ""]
    if warn.messages:
        lines += ["## Warnings", ""] + [f"- {m}" for m in warn.messages] + [""]
    write_text(dest / "report.md", "\n".join(lines))
    _say_trust(args, f"profile {prof.name!r}", pp.misfit_layers, pp.caveats)
    src = Path(pstudy.source)
    text = src.read_text(encoding="utf-8") if src.is_file() else ""
    head = [f"# bayescrust plan of profile {prof.name!r}: the study file as read, with the "
            "seed used", f"# seed used: {seed} (re-run: bayescrust plan run.toml --seed "
            f"{seed} --out NEW_FOLDER)", f"# candidates: {'; '.join(pp.ranking.index)}", ""]
    write_text(dest / "run.toml", "\n".join(head) + text)
    return pp


def cmd_plan(args) -> int:
    from .profile import is_profile_study, load_profile_study

    if is_profile_study(args.study):
        pstudy = load_profile_study(args.study)
        if args.layer or args.method == "mcmc":
            raise InputError(f"{args.study}: --layer and --method mcmc are for layer studies; "
                             "a profile is planned on its structured exact path")
        return folder_command(args, lambda tmp: do_plan_profile(args, pstudy, tmp,
                                                                figures=not args.no_figures))
    study = load_study(args.study)
    return folder_command(args, lambda tmp: do_plan(args, study, tmp, layer_name=args.layer,
                                                    method=args.method,
                                                    figures=not args.no_figures))


def add_parser(sub) -> None:
    """Register the ``plan`` command."""
    sp = sub.add_parser("plan", help="which extra observation would settle a layer's "
                                     "interpretation, or a profile's questions (preposterior "
                                     "simulation)")
    sp.add_argument("study", metavar="STUDY.toml", help="a layer study, or a [profile] study")
    add_common_options(sp, method=False)
    sp.add_argument("--layer", metavar="NAME", help="the layer (required if several and no "
                                                    "plan.layer)")
    sp.add_argument("--candidate", action="append", metavar="OBS:SIGMA",
                    help="a candidate datum, e.g. vs:0.1; for a profile vs:0.1@LAYER or "
                         "heat_flow:10[:lower_bound] (repeatable; default: the study's [plan] "
                         "candidates, else the package defaults)")
    sp.add_argument("--simulations", type=int, default=None,
                    help="simulated data per candidate (default: study file, else 1000)")
    sp.add_argument("--method", choices=("exact", "mcmc"), default="exact",
                    help="today's posterior from the exact path (default, fast) or from MCMC")
    sp.set_defaults(func=cmd_plan)
