"""``bayescrust invert``: invert every (or the chosen) layer of a study file."""

from __future__ import annotations

import time
from pathlib import Path

from .layers import assumptions, run_one, run_toml, select_layers, study_command
from .shell import (
    Warnings,
    add_common_options,
    alert,
    layer_seed,
    save_figure,
    say,
    slug,
    write_table,
    write_text,
)

__all__ = ["add_parser", "cmd_invert", "do_invert"]


def do_invert(args, study, dest: Path, *, method, figures: bool, layer_names=None) -> dict:
    import pandas as pd

    from ..report.caution import caution_text
    from ..report.layer_report import layer_section
    from ..report.tables import printable_hypotheses, printable_summary

    seed = study.seed if args.seed is None else args.seed
    chosen = select_layers(study, layer_names)
    warn = Warnings(args)
    results = {}
    summaries, hyps, seeds, times = [], [], {}, {}
    shown_summaries, shown_hyps = [], []  # manuscript-ready versions (units, rounding)
    for k, (i, layer) in enumerate(chosen):
        s = layer_seed(seed, i)
        seeds[layer.name] = s
        say(args, f"[{k + 1}/{len(chosen)}] layer {layer.name!r} ({method})")
        t0 = time.perf_counter()
        with warn.catch(f"layer {layer.name!r}"):
            res = run_one(study, layer, method=method, seed=s, progress=not args.quiet)
        times[layer.name] = round(time.perf_counter() - t0, 3)
        results[layer.name] = res
        sub = dest / "layers" / slug(layer.name)
        sub.mkdir(parents=True)
        res.idata.to_netcdf(str(sub / "posterior.nc"), engine="h5netcdf")
        write_table(sub, "summary", res.summary,
                    caption=f"Posterior summary, layer {layer.name} (94 % HDI)",
                    label=f"tab:summary:{slug(layer.name)}",
                    printable=printable_summary(res.summary))
        write_table(sub, "hypotheses", res.hypotheses,
                    caption=f"Interpretations, layer {layer.name}",
                    label=f"tab:hypotheses:{slug(layer.name)}",
                    printable=printable_hypotheses(res.hypotheses))
        sm = res.summary.reset_index()
        sm.insert(0, "layer", layer.name)
        summaries.append(sm)
        for shown, table in ((shown_summaries, printable_summary(res.summary)),
                             (shown_hyps, printable_hypotheses(res.hypotheses))):
            table = table.reset_index()
            table.insert(0, "layer", layer.name)
            shown.append(table)
        hy = res.hypotheses.reset_index()
        hy.insert(0, "layer", layer.name)
        hy["log_evidence"] = res.log_evidence
        hy["log_evidence_error"] = res.log_evidence_error
        hyps.append(hy)
        if figures:
            with warn.catch(f"figures of layer {layer.name!r}"):
                _layer_figures(res, layer, sub / "figures", method)
    summary = pd.concat(summaries, ignore_index=True).set_index("layer")
    hypotheses = pd.concat(hyps, ignore_index=True).set_index("layer")
    write_table(dest, "summary", summary, caption="Posterior summary per layer (94 % HDI)",
                printable=pd.concat(shown_summaries, ignore_index=True).set_index("layer"))
    write_table(dest, "hypotheses", hypotheses,
                caption="Interpretations per layer: prior and posterior probabilities",
                printable=pd.concat(shown_hyps, ignore_index=True).set_index("layer"))
    extra = {"command": "invert", "method": method, "seed": seed,
             "layer_seeds": seeds, "wall_time_s": times}
    write_text(dest / "run.toml", run_toml(study, extra))
    lines = [f"# {study.title}", "", "Results of `bayescrust invert`.", ""]
    misfits = [n for n, r in results.items() if r.misfit]
    if misfits:
        lines += [f"> **Warning: data misfit in layer(s) {', '.join(misfits)}.** The model "
                  "cannot reproduce the observations there (posterior-predictive check); the "
                  "probabilities of those layers are conditional on a model that does not fit.",
                  ""]
    unconverged = [n for n, r in results.items() if not r.converged]
    if unconverged:
        lines += [f"> **Warning: layer(s) {', '.join(unconverged)} did not converge.** Their "
                  "probabilities and ranges are not reliable; run longer (raise `max_steps` "
                  "or `min_ess` in the [sampler] table).", ""]
    lines += [caution_text(assumptions(study)), "## Interpretations", ""]
    for name, res in results.items():
        lines += layer_section(name, res)
        top = res.hypotheses["posterior_probability"].idxmax()
        flag = " -- DATA MISFIT, see report.md" if res.misfit else ""
        flag += "" if res.converged else " -- NOT CONVERGED"
        line = (f"layer {name!r}: most probable {top!r} "
                f"{res.hypotheses.loc[top, 'posterior_probability']:.2f}{flag}")
        if flag:  # printed with or without -q
            alert(line)
        else:
            say(args, line)
    if warn.messages:
        lines += ["## Warnings", ""] + [f"- {m}" for m in warn.messages] + [""]
    lines += ["## Files", "", "- `summary.*`, `hypotheses.*`: all layers (CSV, Markdown, LaTeX)",
              "- `layers/<layer>/posterior.nc`: arviz InferenceData (NetCDF)",
              "- `layers/<layer>/figures/`: corner, trace (MCMC only), predictive check, "
              "prior vs posterior (PNG and PDF)", "- `run.toml`: the resolved configuration", ""]
    write_text(dest / "report.md", "\n".join(lines))
    _write_methods(dest, study, results)
    return results


def _write_methods(dest: Path, study, results: dict):
    """methods.md (a generated methods paragraph with its references) and references.bib."""
    from ..report.citations import bibtex, methods_paragraph, references

    refs = []
    for res in results.values():
        refs += references(res)
    refs = sorted(dict.fromkeys(refs), key=lambda r: (r.casefold(), r))
    text = ["# Methods", "", methods_paragraph(results), "## References", ""]
    text += [f"- {r}" for r in refs]
    write_text(dest / "methods.md", "\n".join(text) + "\n")
    write_text(dest / "references.bib", bibtex(refs))


def _layer_figures(res, layer, folder: Path, method: str):
    from matplotlib.figure import Figure  # noqa: F401  (ensures matplotlib is importable)

    from ..report import figures as F  # noqa: N812

    names = F.free_parameters(res.idata)
    makers = [("predictive", lambda: F.predictive_figure(res.idata))]
    if names:
        # the corner plot leaves out the last rock fraction (one minus the others)
        makers.insert(0, ("corner", lambda: F.corner_figure(res.idata)))
        makers.append(("marginals", lambda: F.marginals_figure(res.idata, var_names=names)))
        if method == "mcmc":
            makers.append(("trace", lambda: F.trace_figure(res.idata, var_names=names)))
    for stem, make in makers:
        fig = make()
        save_figure(fig, folder, stem)


def cmd_invert(args) -> int:
    return study_command(args, do_invert)


def add_parser(sub) -> None:
    """Register the ``invert`` command."""
    sp = sub.add_parser("invert", help="invert every layer of a study file")
    sp.add_argument("study", metavar="STUDY.toml")
    add_common_options(sp, layer="many")
    sp.set_defaults(func=cmd_invert)
