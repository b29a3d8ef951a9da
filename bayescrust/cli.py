"""Command line: a thin shell over the Python API.

``bayescrust demo | invert | compare | chart | forward | check``; see ``bayescrust -h``.
Exit codes: 0 success, 1 failure of the run, 2 bad input (study file, options, output folder).
Every command has a Python equivalent (``bayescrust.invert_layer`` and friends); this module only
reads settings, calls the API, and writes files atomically.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import re
import shutil
import sys
import tempfile
import time
import warnings
from pathlib import Path

from .config import StudyError, dumps_toml, load_study, study_to_dict

__all__ = ["main"]

_FIG_FORMATS = ("png", "pdf")


class InputError(Exception):
    """Bad input found by the command line (exit code 2)."""


# ---------------------------------------------------------------------------------------------
# Output folders: written into a temporary sibling, renamed into place on success
# ---------------------------------------------------------------------------------------------


class AtomicFolder:
    """Context manager yielding a temporary folder that becomes ``final`` on success.

    Refuses a non-empty existing folder unless ``overwrite``; on any failure the temporary folder
    (and any parent folders it had to create) is removed, so no partial output is left.
    """

    def __init__(self, final, *, overwrite: bool = False, option: str = "--out"):
        self.final = Path(final)
        self.overwrite = overwrite
        self.option = option
        self.tmp: Path | None = None
        self.created: list[Path] = []

    def __enter__(self) -> Path:
        final = self.final
        if final.exists() or final.is_symlink():
            if not final.is_dir():
                raise InputError(f"{final}: {self.option}: exists and is not a folder")
            if any(final.iterdir()) and not self.overwrite:
                raise InputError(f"{final}: {self.option}: folder already holds results; choose "
                                 "another folder or pass --overwrite")
        parent = final.absolute().parent
        missing = []
        p = parent
        while not p.exists():
            missing.append(p)
            p = p.parent
        try:
            for d in reversed(missing):
                d.mkdir()
                self.created.append(d)
            self.tmp = Path(tempfile.mkdtemp(prefix=f".{final.name}.partial-", dir=parent))
        except OSError as exc:
            self._cleanup()
            reason = exc.strerror or str(exc)
            raise InputError(f"{final}: {self.option}: cannot write to this folder ({reason})"
                             ) from None
        return self.tmp

    def _cleanup(self):
        if self.tmp is not None:
            shutil.rmtree(self.tmp, ignore_errors=True)
        for d in reversed(self.created):
            with contextlib.suppress(OSError):
                d.rmdir()

    def __exit__(self, exc_type, exc, tb):
        if exc_type is not None:
            self._cleanup()
            return False
        final = self.final
        if final.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{final.name}.old-", dir=final.absolute().parent))
            final.rename(old / "previous")
            self.tmp.rename(final)
            shutil.rmtree(old, ignore_errors=True)
        else:
            self.tmp.rename(final)
        return False


# ---------------------------------------------------------------------------------------------
# Small helpers
# ---------------------------------------------------------------------------------------------


def _slug(name: str) -> str:
    from .config import layer_slug

    return layer_slug(name)


def _say(args, msg: str):
    if not getattr(args, "quiet", False):
        print(msg, file=sys.stderr)


def _write_text(path: Path, text: str):
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")


def _write_table(folder: Path, stem: str, df, *, caption: str, index: bool = True):
    from .report.tables import to_csv, to_latex, to_markdown

    _write_text(folder / f"{stem}.csv", to_csv(df, index=index))
    _write_text(folder / f"{stem}.md", to_markdown(df, index=index))
    _write_text(folder / f"{stem}.tex", to_latex(df, index=index, caption=caption,
                                                 label=f"tab:{_slug(stem)}"))


def _save_figure(fig, folder: Path, stem: str):
    folder.mkdir(parents=True, exist_ok=True)
    for fmt in _FIG_FORMATS:
        fig.savefig(folder / f"{stem}.{fmt}", dpi=200 if fmt == "png" else None,
                    bbox_inches="tight")


def _use_agg():
    import matplotlib

    matplotlib.use("Agg", force=True)


def _layer_seed(seed: int, index: int) -> int:
    """Seed of layer ``index``: an independent stream spawned from the study seed."""
    import numpy as np

    return int(np.random.SeedSequence(seed, spawn_key=(index,)).generate_state(1, np.uint64)[0]
               % (2**63))


class _Warnings:
    """Collect warnings raised during a run; echo them to stderr once; keep them for the report."""

    def __init__(self, args):
        self.args = args
        self.messages: list[str] = []

    @contextlib.contextmanager
    def catch(self, context: str):
        with warnings.catch_warnings(record=True) as rec:
            warnings.simplefilter("always")
            yield
        for w in rec:
            if issubclass(w.category, (DeprecationWarning, PendingDeprecationWarning)):
                continue
            if "ArviZ is undergoing a major refactor" in str(w.message):
                continue
            msg = f"{context}: {w.category.__name__}: {w.message}"
            if msg not in self.messages:
                self.messages.append(msg)
                _say(self.args, f"bayescrust: warning: {msg}")


def _assumptions(study, layer=None, thermal=None) -> dict:
    from .config import _prior_dict

    a = {
        "forward model": ", ".join(f"{k}={v}" for k, v in study.forward.items())
        or "package defaults (Hill mixing, DEM inclusions, lizardite, anelastic correction)",
        "rocks": ", ".join(study.rocks_for(layer) if layer else study.rocks),
        "likelihood": study.likelihood + (
            f" (model error {study.model_error_for(layer)})" if layer is not None
            and study.model_error_for(layer) is not None else " (default forward-model error)"),
    }
    if layer is not None:
        pri = study.priors_for(layer)
        a["priors"] = "; ".join(f"{k}: {_prior_dict(v)}" for k, v in pri.items()) or "defaults"
    th = thermal if thermal is not None else (study.thermal_for(layer) if layer else None)
    if th is not None:
        a["thermal-state prior"] = f"{th.name} ({th.kind})"
    a["interpretations"] = "as named in the study file (or the package defaults)"
    return a


def _build(study, layer, **kw):
    """Layer object and API keyword arguments; API validation errors are input errors."""
    from .config import build_layer, layer_arguments

    try:
        return build_layer(study, layer), layer_arguments(study, layer, **kw)
    except (ValueError, TypeError) as exc:
        raise InputError(f"{study.source}: layer {layer.name!r}: {exc}") from None


def _run_one(study, layer, *, method, seed, progress, thermal=None, observed=None,
             sampler=True):
    """Invert one layer through the public API (``invert_layer`` or ``exact_layer``)."""
    import bayescrust.inference.api as api

    lay, kw = _build(study, layer, thermal=thermal)
    if observed is not None:  # replace observations (probability chart)
        import dataclasses

        lay = dataclasses.replace(lay, **observed)
    if sampler:
        kw.update(study.sampler.arguments(method))
    if method == "exact":
        return api.exact_layer(lay, seed=seed, **kw)
    return api.invert_layer(lay, seed=seed, progress=progress, **kw)


# ---------------------------------------------------------------------------------------------
# invert
# ---------------------------------------------------------------------------------------------


def _select_layers(study, names):
    if not names:
        return list(enumerate(study.layers))
    out = []
    for n in names:
        try:
            lay = study.layer(n)
        except KeyError as exc:
            raise InputError(f"{study.source}: --layer: {exc.args[0]}") from None
        out.append((study.layers.index(lay), lay))
    return out


def _run_toml(study, extra: dict) -> str:
    from . import __version__

    data = study_to_dict(study)
    if extra.get("seed") is not None:
        data["seed"] = extra["seed"]  # the seed actually used (--seed overrides the study's)
    # provenance goes under [run], which study files may carry and the reader ignores
    data["run"] = {"bayescrust_version": __version__, "study_file": str(study.source), **extra}
    return dumps_toml(data, header="Resolved configuration of this run, written by bayescrust.\n"
                                   "Re-run with: bayescrust invert run.toml --out NEW_FOLDER")


def _do_invert(args, study, dest: Path, *, method, figures: bool, layer_names=None) -> dict:
    import pandas as pd

    from .report.caution import caution_text
    from .report.tables import to_markdown

    seed = study.seed if args.seed is None else args.seed
    chosen = _select_layers(study, layer_names)
    warn = _Warnings(args)
    results = {}
    summaries, hyps, seeds, times = [], [], {}, {}
    for k, (i, layer) in enumerate(chosen):
        s = _layer_seed(seed, i)
        seeds[layer.name] = s
        _say(args, f"[{k + 1}/{len(chosen)}] layer {layer.name!r} ({method})")
        t0 = time.perf_counter()
        with warn.catch(f"layer {layer.name!r}"):
            res = _run_one(study, layer, method=method, seed=s, progress=not args.quiet)
        times[layer.name] = round(time.perf_counter() - t0, 3)
        results[layer.name] = res
        sub = dest / "layers" / _slug(layer.name)
        sub.mkdir(parents=True)
        res.idata.to_netcdf(str(sub / "posterior.nc"), engine="h5netcdf")
        _write_table(sub, "summary", res.summary,
                     caption=f"Posterior summary, layer {layer.name} (94 % HDI)")
        _write_table(sub, "hypotheses", res.hypotheses,
                     caption=f"Interpretations, layer {layer.name}")
        sm = res.summary.reset_index()
        sm.insert(0, "layer", layer.name)
        summaries.append(sm)
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
    _write_table(dest, "summary", summary, caption="Posterior summary per layer (94 % HDI)")
    _write_table(dest, "hypotheses", hypotheses,
                 caption="Interpretations per layer: prior and posterior probabilities")
    extra = {"command": "invert", "method": method, "seed": seed,
             "layer_seeds": seeds, "wall_time_s": times}
    _write_text(dest / "run.toml", _run_toml(study, extra))
    lines = [f"# {study.title}", "", "Results of `bayescrust invert`.", "",
             caution_text(_assumptions(study)), "## Interpretations", ""]
    for name, res in results.items():
        lines += [f"### {name}", "", to_markdown(res.hypotheses[[
            "prior_probability", "posterior_probability", "posterior_mcse", "bayes_factor",
            "evidence_category"]]),
            f"log evidence: {res.log_evidence:.3f} ± {res.log_evidence_error:.3f}; "
            f"converged: {res.diagnostics.get('converged')}", ""]
    if warn.messages:
        lines += ["## Warnings", ""] + [f"- {m}" for m in warn.messages] + [""]
    lines += ["## Files", "", "- `summary.*`, `hypotheses.*`: all layers (CSV, Markdown, LaTeX)",
              "- `layers/<layer>/posterior.nc`: arviz InferenceData (NetCDF)",
              "- `layers/<layer>/figures/`: corner, trace (MCMC only), predictive check, "
              "prior vs posterior (PNG and PDF)", "- `run.toml`: the resolved configuration", ""]
    _write_text(dest / "report.md", "\n".join(lines))
    return results


def _layer_figures(res, layer, folder: Path, method: str):
    from matplotlib.figure import Figure  # noqa: F401  (ensures matplotlib is importable)

    from .report import figures as F  # noqa: N812

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
        _save_figure(fig, folder, stem)


def _study_command(args, run) -> int:
    """Shared shell of ``invert`` and ``compare``: read the study, run into an atomic folder."""
    study = load_study(args.study)
    method = args.method or study.sampler.method
    if not args.no_figures:
        _use_agg()
    with AtomicFolder(args.out, overwrite=args.overwrite) as tmp:
        run(args, study, tmp, method=method, figures=not args.no_figures,
            layer_names=args.layer)
    print(args.out)
    return 0


def cmd_invert(args) -> int:
    return _study_command(args, _do_invert)


# ---------------------------------------------------------------------------------------------
# compare
# ---------------------------------------------------------------------------------------------


def _thermal_set(study):
    from .config import ThermalSpec

    if study.thermal:
        return list(study.thermal.values())
    return [ThermalSpec("uniform", "uniform", {"lo": 0.0, "hi": 1400.0}),
            ThermalSpec("half_space", "half_space", {}),
            ThermalSpec("hot_axial", "hot_axial", {})]


def _do_compare(args, study, dest: Path, *, method, figures: bool, layer_names=None):

    import pandas as pd

    from .inference import UniformTemperature, compare_priors
    from .report.caution import caution_text
    from .report.tables import to_markdown

    seed = study.seed if args.seed is None else args.seed
    chosen = _select_layers(study, layer_names)
    thermals = _thermal_set(study)
    warn = _Warnings(args)
    prob_rows, ev_frames = [], []
    for i, layer in chosen:
        _say(args, f"layer {layer.name!r} under {len(thermals)} thermal-state priors ({method})")
        lay, kw = _build(study, layer, thermal=thermals[0])
        pri = dict(kw.pop("priors", {}))
        pri.pop("temperature_c", None)
        tps = {th.name: _build(study, layer, thermal=th)[1].get("priors", {}).get(
            "temperature_c", UniformTemperature(0.0, 1400.0)) for th in thermals}
        kw.update(study.sampler.arguments(method))
        if method == "mcmc":
            kw["progress"] = not args.quiet
        with warn.catch(f"layer {layer.name!r}"):
            try:
                cmp = compare_priors(lay, thermal_priors=tps, method=method, priors=pri,
                                     seed=_layer_seed(seed, i), **kw)
            except ValueError as exc:
                raise InputError(f"{study.source}: layer {layer.name!r}: {exc}") from None
        for th in thermals:
            for h, row in cmp.results[th.name].hypotheses.iterrows():
                prob_rows.append({"layer": layer.name, "thermal_prior": th.name, "hypothesis": h,
                                  "prior_probability": row["prior_probability"],
                                  "posterior_probability": row["posterior_probability"],
                                  "posterior_mcse": row["posterior_mcse"]})
        e = cmp.evidence.rename(columns={"posterior_probability":
                                         "posterior_probability_equal_odds"})
        e = e.rename_axis("thermal_prior").reset_index()
        e.insert(0, "layer", layer.name)
        e.insert(2, "kind", [th.kind for th in thermals])
        ev_frames.append(e)
    probs = pd.DataFrame(prob_rows)
    ev = pd.concat(ev_frames, ignore_index=True)
    _write_table(dest, "comparison", probs.set_index("layer"),
                 caption="Interpretation probabilities under each thermal-state prior")
    _write_table(dest, "evidence", ev.set_index("layer"),
                 caption="Marginal likelihood (natural log) of each thermal-state prior")
    if figures:
        from .report import figures as F  # noqa: N812

        for _, layer in chosen:
            sub = probs[probs["layer"] == layer.name]
            wide = sub.pivot(index="hypothesis", columns="thermal_prior",
                             values="posterior_probability")
            wide = wide.loc[list(dict.fromkeys(sub["hypothesis"])),
                            [t.name for t in thermals]]
            e = ev[ev["layer"] == layer.name].set_index("thermal_prior")
            with warn.catch(f"comparison figure of {layer.name!r}"):
                fig = F.comparison_figure(wide, e, title=f"{layer.name}")
                _save_figure(fig, dest / "figures", f"comparison_{_slug(layer.name)}")
    extra = {"command": "compare", "method": method, "seed": seed,
             "thermal_priors_compared": [t.name for t in thermals]}
    _write_text(dest / "run.toml", _run_toml(study, extra))
    lines = [f"# {study.title}: thermal-state priors compared", "",
             caution_text(_assumptions(study)),
             "Each interpretation's posterior probability under each thermal-state prior, and "
             "each prior's evidence. A higher evidence means the data are better predicted "
             "under that thermal state; with equal prior odds on the thermal states, "
             "`posterior_probability_equal_odds` is the probability of each.", "",
             "## Evidence", "", to_markdown(ev.set_index("layer")), "",
             "## Interpretations", "", to_markdown(probs.set_index("layer")), ""]
    if warn.messages:
        lines += ["## Warnings", ""] + [f"- {m}" for m in warn.messages] + [""]
    _write_text(dest / "report.md", "\n".join(lines))
    return probs, ev


def cmd_compare(args) -> int:
    return _study_command(args, _do_compare)


# ---------------------------------------------------------------------------------------------
# chart: probability of each interpretation against observed Vp
# ---------------------------------------------------------------------------------------------


def probability_table(study, layer, vp_values, *, thermals=None, method="exact", seed=0,
                      progress=False, warn=None):
    """Interpretation probabilities for a range of observed Vp (same depth, same error).

    Computed through the public API: with the exact method one prior design per thermal prior,
    weighed against every Vp (:func:`bayescrust.probability_chart`); with MCMC one inversion per
    (thermal prior, Vp). The layer's other observations are unchanged. Returns a long
    DataFrame: thermal_prior, vp, hypothesis, probability, mcse.
    """
    import pandas as pd

    if "vp" not in layer.observations:
        raise InputError(f"{study.source}: layer {layer.name!r}: chart needs an observed vp")
    sigma = layer.observations["vp"].sigma
    thermals = thermals if thermals is not None else _thermal_set(study)
    if method == "exact":
        from .inference import UniformTemperature, probability_chart

        frames = []
        ctx = warn.catch(f"chart of {layer.name!r}") if warn else contextlib.nullcontext()
        with ctx:
            for th in thermals:
                lay, kw = _build(study, layer, thermal=th)
                pri = dict(kw.pop("priors", {}))
                tp = pri.pop("temperature_c", UniformTemperature(0.0, 1400.0))
                try:
                    frames.append(probability_chart(
                        lay, vp_values, thermal_priors={th.name: tp}, seed=seed, priors=pri,
                        **kw, **study.sampler.arguments("exact")))
                except ValueError as exc:
                    raise InputError(f"{study.source}: layer {layer.name!r}: {exc}") from None
        return pd.concat(frames, ignore_index=True)[
            ["thermal_prior", "vp", "hypothesis", "probability", "mcse"]]
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
                res = _run_one(study, layer, method=method, seed=seed, progress=False,
                               thermal=th, observed={"vp": (float(v), sigma)})
                for h, row in res.hypotheses.iterrows():
                    rows.append({"thermal_prior": th.name, "vp": float(v), "hypothesis": h,
                                 "probability": row["posterior_probability"],
                                 "mcse": row["posterior_mcse"]})
                if bar is not None:
                    bar.update()
    if bar is not None:
        bar.close()
    return pd.DataFrame(rows)


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


def _do_chart(args, study, dest: Path, *, layer_name, method, figures: bool):
    from .report.caution import caution_text

    if layer_name is None:
        if len(study.layers) != 1:
            names = ", ".join(repr(lay.name) for lay in study.layers)
            raise InputError(f"{study.source}: --layer: required (the study has "
                             f"{len(study.layers)} layers: {names})")
        layer = study.layers[0]
    else:
        layer = _select_layers(study, [layer_name])[0][1]
    grid = _vp_grid(args, layer)
    seed = study.seed if args.seed is None else args.seed
    warn = _Warnings(args)
    table = probability_table(study, layer, grid, method=method, seed=seed,
                              progress=not args.quiet, warn=warn)
    from .report.tables import to_csv

    _write_text(dest / "chart.csv", to_csv(table, index=False))
    if figures:
        from .report import figures as F  # noqa: N812

        vp = layer.observations["vp"]
        fig = F.probability_chart(table, observed=(vp.value, vp.sigma),
                                  title=f"{layer.name}: probability against observed Vp "
                                        f"(σ = {vp.sigma:g} km/s)")
        _save_figure(fig, dest, "chart")
    extra = {"command": "chart", "layer": layer.name, "method": method, "seed": seed,
             "vp_grid": [float(v) for v in grid]}
    _write_text(dest / "run.toml", _run_toml(study, extra))
    lines = [f"# {study.title}: probability chart for {layer.name!r}", "",
             caution_text(_assumptions(study, layer)),
             "`chart.csv` holds, for each thermal-state prior and each observed Vp (other "
             "observations and errors as in the study file), the posterior probability of each "
             "interpretation and its Monte Carlo standard error. The shaded band in the figure "
             "is the layer's observed Vp ± 1σ.", ""]
    if warn.messages:
        lines += ["## Warnings", ""] + [f"- {m}" for m in warn.messages] + [""]
    _write_text(dest / "report.md", "\n".join(lines))
    return table


def cmd_chart(args) -> int:
    study = load_study(args.study)
    if not args.no_figures:
        _use_agg()
    with AtomicFolder(args.out, overwrite=args.overwrite) as tmp:
        _do_chart(args, study, tmp, layer_name=args.layer, method=args.method,
                  figures=not args.no_figures)
    print(args.out)
    return 0


# ---------------------------------------------------------------------------------------------
# forward
# ---------------------------------------------------------------------------------------------

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
        from .physics.labdata import lab_misfit, validation_report

        misfit = lab_misfit()
        print(validation_report(misfit))
        if args.plot:
            _use_agg()
            from .report.validation import lab_misfit_figure

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
    from .config import known_rocks

    minerals = [m["name"] for m in bc.list_minerals()]
    if args.rock not in known_rocks() and args.rock not in minerals:
        import difflib

        hint = difflib.get_close_matches(args.rock, [*known_rocks(), *minerals], n=1)
        extra = f" (did you mean {hint[0]!r}?)" if hint else ""
        raise InputError(f"--rock: unknown rock or mineral {args.rock!r}{extra}; known rocks: "
                         f"{', '.join(known_rocks())}; minerals: {', '.join(minerals)}")
    rock = args.rock if args.rock in known_rocks() else {args.rock: 1.0}  # one-mineral rock
    kw = {k: (v if v.size > 1 else float(v[0])) for k, v in vals.items()}
    try:
        # melt only above the solidus, serpentine only below its stability (as the inversion)
        kw, notes = bc.physics.rocks.apply_stability(rock, **kw)
        for note in notes:
            print(f"warning: {note}", file=sys.stderr)
        props = bc.rock_properties(rock, **kw)
    except ValueError as exc:
        raise InputError(f"forward: {exc}") from None
    n = max([v.size for v in vals.values()] + [1])
    table = {k: np.broadcast_to(np.asarray(v, float), (n,)) for k, v in vals.items()}
    for q in ("vp", "vs", "density"):
        table[q] = np.broadcast_to(np.asarray(getattr(props, q), float), (n,))
    rows = [{k: float(v[i]) for k, v in table.items()} for i in range(n)]
    if args.plot:
        if not ranged:
            raise InputError("--plot: needs one option given as a range start:stop:count")
        import pandas as pd

        _use_agg()
        from .report.figures import forward_figure

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
    if out.suffix.lower().lstrip(".") not in _FIG_FORMATS:
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


# ---------------------------------------------------------------------------------------------
# check
# ---------------------------------------------------------------------------------------------


def cmd_check(args) -> int:
    from .config import build_thermal_prior

    study = load_study(args.study)
    for layer in study.layers:
        _build(study, layer)  # API validation of observations and priors
    for th in study.thermal.values():
        try:
            build_thermal_prior(th)
        except (ValueError, TypeError) as exc:
            raise InputError(f"{study.source}: thermal.{th.name}: {exc}") from None
    text = dumps_toml(study_to_dict(study),
                      header=f"{study.source}: valid ({len(study.layers)} layer(s)). "
                             "Resolved study, defaults filled in:")
    sys.stdout.write(text)
    return 0


# ---------------------------------------------------------------------------------------------
# demo
# ---------------------------------------------------------------------------------------------

DEMO_FILES = ("vestra_ridge.toml", "one_layer.toml")
_DEMO_CHART_LAYER = "deep layer (VX-07, Vp only)"
_DEMO_COMPARE_LAYERS = ("deep layer (VX-07, Vp only)", "deep layer (VX-12, Vp and Vs)")


def demo_text(name: str) -> str:
    """Text of a shipped demo study file."""
    from importlib.resources import files

    return files("bayescrust").joinpath("demo", name).read_text(encoding="utf-8")


def cmd_demo(args) -> int:
    from .config import parse_study
    from .report.caution import caution_text

    out = Path(args.out)
    _use_agg()
    t0 = time.perf_counter()
    with AtomicFolder(out, overwrite=args.overwrite) as tmp:
        (tmp / "study").mkdir()
        for name in DEMO_FILES:
            _write_text(tmp / "study" / name, demo_text(name))
        study_path = tmp / "study" / DEMO_FILES[0]
        study = parse_study(study_path.read_text(encoding="utf-8"),
                            source=str(out / "study" / DEMO_FILES[0]))
        # the main job (MCMC) inverts every layer; the prior comparison (six inversions) and
        # the chart (dozens) use the exact reference so that the demo stays under a minute
        method = args.method or "mcmc"
        compare_method = args.method or "exact"
        _say(args, f"demo: inverting {len(study.layers)} layers ({method})")
        (tmp / "invert").mkdir()
        _do_invert(args, study, tmp / "invert", method=method, figures=True)
        _say(args, f"demo: comparing thermal-state priors for the deep layers ({compare_method})")
        (tmp / "compare").mkdir()
        _do_compare(args, study, tmp / "compare", method=compare_method, figures=True,
                    layer_names=_DEMO_COMPARE_LAYERS)
        _say(args, "demo: probability chart for the deep layer")
        (tmp / "chart").mkdir()
        chart_args = argparse.Namespace(vp_min=None, vp_max=None, points=args.points,
                                        seed=args.seed, quiet=args.quiet)
        _do_chart(chart_args, study, tmp / "chart", layer_name=_DEMO_CHART_LAYER,
                  method="exact", figures=True)
        elapsed = time.perf_counter() - t0
        _write_text(tmp / "README.md", "\n".join([
            "# bayescrust demo (invented data)", "",
            "The Vestra Ridge, segment VR-3 and lines VX-07 / VX-12 are fictional; every "
            "velocity in `study/` was made up to exercise the software.", "",
            caution_text(_assumptions(study)),
            "## Contents", "",
            "- `study/`: the demo study files (edit them and run `bayescrust invert`)",
            f"- `invert/`: every layer inverted ({method}); start with `invert/report.md`",
            f"- `compare/`: the deep layers under three thermal-state priors ({compare_method})",
            "- `chart/`: probability of each interpretation against observed Vp", "",
            "Reproduce from the shell:", "",
            "    bayescrust invert study/vestra_ridge.toml --out my_run",
            "    bayescrust compare study/vestra_ridge.toml --out my_compare "
            f"--layer '{_DEMO_COMPARE_LAYERS[0]}'",
            f"    bayescrust chart study/vestra_ridge.toml --layer '{_DEMO_CHART_LAYER}' "
            "--out my_chart", "",
            f"Run time of this demo: {elapsed:.1f} s.", ""]))
    _say(args, f"demo: done in {time.perf_counter() - t0:.1f} s; start with {out}/README.md")
    print(out)
    return 0


# ---------------------------------------------------------------------------------------------
# parser and entry point
# ---------------------------------------------------------------------------------------------


def _parser() -> argparse.ArgumentParser:
    from . import __version__

    p = argparse.ArgumentParser(
        prog="bayescrust",
        description="Posterior probabilities of rock type, temperature, porosity and melt from "
                    "seismic velocities of oceanic crust and uppermost mantle.",
        epilog="Exit codes: 0 success, 1 run failed, 2 bad input. Interpretations are "
               "model-dependent; see docs/interpretation.md.")
    p.add_argument("--version", action="version", version=f"bayescrust {__version__}")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def common(sp, *, out=True, seed=True, method=True, layer=None, figures=True):
        sp.add_argument("-q", "--quiet", action="store_true", help="no progress or messages")
        if out:
            sp.add_argument("--out", required=out is True, default=None if out is True else out,
                            metavar="DIR", help="output folder (created atomically)")
            sp.add_argument("--overwrite", action="store_true",
                            help="replace an output folder that already holds results")
        if seed:
            sp.add_argument("--seed", type=int, default=None,
                            help="random seed (default: the study file's seed, else 0)")
        if method:
            sp.add_argument("--method", choices=("mcmc", "exact"), default=None,
                            help="MCMC sampling or the exact reference (default: study file)")
        if figures:
            sp.add_argument("--no-figures", action="store_true", help="tables only")
        if layer == "many":
            sp.add_argument("--layer", action="append", metavar="NAME",
                            help="only this layer (repeatable; default: every layer)")

    sp = sub.add_parser("demo", help="write the demo study and run the full job on it")
    common(sp, out="bayescrust-demo", figures=False)
    sp.add_argument("--points", type=int, default=13, help="Vp points of the demo chart")
    sp.set_defaults(func=cmd_demo)

    sp = sub.add_parser("invert", help="invert every layer of a study file")
    sp.add_argument("study", metavar="STUDY.toml")
    common(sp, layer="many")
    sp.set_defaults(func=cmd_invert)

    sp = sub.add_parser("compare", help="compare thermal-state priors (probabilities, evidence)")
    sp.add_argument("study", metavar="STUDY.toml")
    common(sp, layer="many")
    sp.set_defaults(func=cmd_compare)

    sp = sub.add_parser("chart", help="probability of each interpretation against observed Vp")
    sp.add_argument("study", metavar="STUDY.toml")
    common(sp, method=False)
    sp.add_argument("--layer", metavar="NAME", help="the layer (required if several)")
    sp.add_argument("--vp-min", type=float, help="lowest Vp (km/s; default observed - 0.8)")
    sp.add_argument("--vp-max", type=float, help="highest Vp (km/s; default observed + 0.8)")
    sp.add_argument("--points", type=int, default=25, help="number of Vp values (default 25)")
    sp.add_argument("--method", choices=("exact", "mcmc"), default="exact",
                    help="exact reference (default, fast) or MCMC")
    sp.set_defaults(func=cmd_chart)

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
    sp.add_argument("--json", action="store_true", help="JSON output")
    sp.add_argument("--plot", metavar="FILE.png|pdf", help="plot against the ranged option")
    sp.add_argument("--overwrite", action="store_true", help="replace an existing --plot file")
    sp.add_argument("-q", "--quiet", action="store_true")
    sp.set_defaults(func=cmd_forward)

    sp = sub.add_parser("check", help="validate a study file and print the resolved study")
    sp.add_argument("study", metavar="STUDY.toml")
    sp.add_argument("-q", "--quiet", action="store_true")
    sp.set_defaults(func=cmd_check)
    return p


def main(argv=None) -> int:
    """Run the command line; return the exit code (0 ok, 1 run failed, 2 bad input)."""
    parser = _parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse: --help / --version (0) or a usage error (2)
        return int(exc.code) if isinstance(exc.code, int) else 2
    try:
        return args.func(args)
    except (StudyError, InputError) as exc:
        print(f"bayescrust: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("bayescrust: interrupted; no output written", file=sys.stderr)
        return 130
    except Exception as exc:  # noqa: BLE001 - one clean message, no traceback
        print(f"bayescrust: run failed: {type(exc).__name__}: {exc}", file=sys.stderr)
        return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
