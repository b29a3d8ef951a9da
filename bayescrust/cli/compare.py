"""``bayescrust compare``: compare thermal-state priors (probabilities, evidence)."""

from __future__ import annotations

from pathlib import Path

from .layers import assumptions, build, run_toml, select_layers, study_command, thermal_set
from .shell import (
    InputError,
    Warnings,
    add_common_options,
    layer_seed,
    save_figure,
    say,
    slug,
    write_table,
    write_text,
)

__all__ = ["add_parser", "cmd_compare", "do_compare"]


def do_compare(args, study, dest: Path, *, method, figures: bool, layer_names=None):

    import pandas as pd

    from ..inference import UniformTemperature, compare_priors
    from ..report.caution import caution_text
    from ..report.tables import to_markdown

    seed = study.seed if args.seed is None else args.seed
    chosen = select_layers(study, layer_names)
    thermals = thermal_set(study)
    warn = Warnings(args)
    prob_rows, ev_frames = [], []
    trust = []  # warnings of each (layer, thermal prior) run: misfit, non-convergence
    for i, layer in chosen:
        say(args, f"layer {layer.name!r} under {len(thermals)} thermal-state priors ({method})")
        lay, kw = build(study, layer, thermal=thermals[0])
        pri = dict(kw.pop("priors", {}))
        pri.pop("temperature_c", None)
        tps = {th.name: build(study, layer, thermal=th)[1].get("priors", {}).get(
            "temperature_c", UniformTemperature(0.0, 1400.0)) for th in thermals}
        kw.update(study.sampler.arguments(method))
        if method == "mcmc":
            kw["progress"] = not args.quiet
        with warn.catch(f"layer {layer.name!r}"):
            try:
                cmp = compare_priors(lay, thermal_priors=tps, method=method, priors=pri,
                                     seed=layer_seed(seed, i), **kw)
            except ValueError as exc:
                raise InputError(f"{study.source}: layer {layer.name!r}: {exc}") from None
        for th in thermals:
            trust += [f"{layer.name} under {th.name}: {m}"
                      for m in cmp.results[th.name].warnings()]
            for h, row in cmp.results[th.name].hypotheses.iterrows():
                prob_rows.append({"layer": layer.name, "thermal_prior": th.name, "hypothesis": h,
                                  "prior_probability": row["prior_probability"],
                                  "posterior_probability": row["posterior_probability"],
                                  "posterior_mcse": row["posterior_mcse"],
                                  "data_fit": row.get("data_fit", ""),
                                  "converged": bool(cmp.results[th.name].converged)})
        e = cmp.evidence.rename(columns={
            "posterior_probability": "posterior_probability_equal_odds",
            "posterior_probability_error": "posterior_probability_equal_odds_error"})
        e = e.rename_axis("thermal_prior").reset_index()
        e.insert(0, "layer", layer.name)
        e.insert(2, "kind", [th.kind for th in thermals])
        e["converged"] = [bool(cmp.results[name].converged) for name in e["thermal_prior"]]
        ev_frames.append(e)
    probs = pd.DataFrame(prob_rows)
    ev = pd.concat(ev_frames, ignore_index=True)
    write_table(dest, "comparison", probs.set_index("layer"),
                 caption="Interpretation probabilities under each thermal-state prior")
    write_table(dest, "evidence", ev.set_index("layer"),
                 caption="Marginal likelihood (natural log) of each thermal-state prior")
    if figures:
        from ..report import figures as F  # noqa: N812

        for _, layer in chosen:
            sub = probs[probs["layer"] == layer.name]
            wide = sub.pivot(index="hypothesis", columns="thermal_prior",
                             values="posterior_probability")
            order = (list(dict.fromkeys(sub["hypothesis"])), [t.name for t in thermals])
            wide = wide.loc[order[0], order[1]]
            wide_prior = sub.pivot(index="hypothesis", columns="thermal_prior",
                                   values="prior_probability").loc[order[0], order[1]]
            wide_err = sub.pivot(index="hypothesis", columns="thermal_prior",
                                 values="posterior_mcse").loc[order[0], order[1]]
            e = ev[ev["layer"] == layer.name].set_index("thermal_prior")
            with warn.catch(f"comparison figure of {layer.name!r}"):
                fig = F.comparison_figure(wide, e, prior_probabilities=wide_prior,
                                          errors=wide_err, title=f"{layer.name}")
                save_figure(fig, dest / "figures", f"comparison_{slug(layer.name)}")
    extra = {"command": "compare", "method": method, "seed": seed,
             "thermal_priors_compared": [t.name for t in thermals]}
    write_text(dest / "run.toml", run_toml(study, extra))
    # read first: a comparison of priors under a model that cannot fit the data, or from runs
    # that did not converge, is not a finding (the tables' data_fit column says it too)
    banner = (["> **Warning: some runs cannot be trusted as they stand.** The evidences and "
               "probabilities below are conditional on them:", ">"]
              + [f"> - {m}" for m in trust] + [""]) if trust else []
    lines = [f"# {study.title}: thermal-state priors compared", "", *banner,
             caution_text(assumptions(study, thermal=thermals)),
             "Each interpretation's posterior probability under each thermal-state prior, and "
             "each prior's evidence. A higher evidence means the data are better predicted "
             "under that thermal state; with equal prior odds on the thermal states, "
             "`posterior_probability_equal_odds` is the probability of each. The `_error` "
             "columns are Monte Carlo errors from the log-evidence errors taken as independent: "
             "conservative, as every prior is run with the same seed. A thermal state favoured "
             "by less than its error, or by a log10 Bayes factor below 0.43 (2 ln B < 2; Kass "
             "& Raftery 1995: not worth more than a bare mention), is not a finding.", "",
             "## Evidence", "", to_markdown(ev.set_index("layer")), "",
             "## Interpretations", "", to_markdown(probs.set_index("layer")), ""]
    if warn.messages:
        lines += ["## Warnings", ""] + [f"- {m}" for m in warn.messages] + [""]
    write_text(dest / "report.md", "\n".join(lines))
    return probs, ev


def cmd_compare(args) -> int:
    return study_command(args, do_compare)


def add_parser(sub) -> None:
    """Register the ``compare`` command."""
    sp = sub.add_parser("compare", help="compare thermal-state priors (probabilities, evidence)")
    sp.add_argument("study", metavar="STUDY.toml")
    add_common_options(sp, layer="many")
    sp.set_defaults(func=cmd_compare)
