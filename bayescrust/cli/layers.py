"""Shared pieces of the layer commands (``invert``, ``compare``, ``chart``): choosing layers,
building the API objects, running one layer, the assumptions text and the ``run.toml`` echo."""

from __future__ import annotations

from ..config import ThermalSpec, dumps_toml, load_study, study_to_dict
from .shell import InputError, folder_command

__all__ = ["assumptions", "build", "run_one", "select_layers", "run_toml", "thermal_set",
           "study_command", "defaults_used"]


def assumptions(study, layer=None, thermal=None) -> dict:
    from ..config.echo import prior_dict

    a = {
        "forward model": ", ".join(f"{k}={v}" for k, v in study.forward.items())
        or "package defaults (Hill mixing, DEM inclusions, lizardite, anelastic correction)",
        "rocks": (", ".join(study.rocks_for(layer)) if layer is not None
                  else _rocks_by_layer(study)),
        "likelihood": study.likelihood + (
            f" (model error {study.model_error_for(layer)})" if layer is not None
            and study.model_error_for(layer) is not None else " (default forward-model error)"),
    }
    if layer is not None:
        pri = study.priors_for(layer)
        a["priors"] = "; ".join(f"{k}: {prior_dict(v)}" for k, v in pri.items()) or "defaults"
    th = thermal if thermal is not None else (study.thermal_for(layer) if layer else None)
    if isinstance(th, (list, tuple)):  # a command that runs several (chart, compare)
        a["thermal-state priors"] = ", ".join(f"{t.name} ({t.kind})" for t in th)
    elif th is not None:
        a["thermal-state prior"] = f"{th.name} ({th.kind})"
    a["interpretations"] = "as named in the study file (or the package defaults)"
    return a


def _rocks_by_layer(study) -> str:
    """The rocks each layer is inverted with (depth defaults filled in), layers with the same
    set grouped: ``"basalt (upper); gabbro, harzburgite (gabbro layer, deep layer)"``."""
    groups: dict[tuple, list] = {}
    for name, s in defaults_used(study).items():
        groups.setdefault(tuple(s["rocks"]), []).append(name)
    if len(groups) == 1:
        return ", ".join(next(iter(groups)))
    return "; ".join(f"{', '.join(r)} ({', '.join(n)})" for r, n in groups.items())


def build(study, layer, **kw):
    """Layer object and API keyword arguments; API validation errors are input errors."""
    from ..config import build_layer, layer_arguments

    try:
        return build_layer(study, layer), layer_arguments(study, layer, **kw)
    except (ValueError, TypeError) as exc:
        raise InputError(f"{study.source}: layer {layer.name!r}: {exc}") from None


def run_one(study, layer, *, method, seed, progress, thermal=None, observed=None,
             sampler=True):
    """Invert one layer through the public API (``invert_layer`` or ``exact_layer``)."""
    import bayescrust.inference.api as api

    lay, kw = build(study, layer, thermal=thermal)
    if observed is not None:  # replace observations (probability chart)
        import dataclasses

        lay = dataclasses.replace(lay, **observed)
    if sampler:
        kw.update(study.sampler.arguments(method))
    if method == "exact":
        return api.exact_layer(lay, seed=seed, **kw)
    return api.invert_layer(lay, seed=seed, progress=progress, **kw)


def select_layers(study, names):
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


def _plain(v):
    """Settings as TOML-writable data (no None; tuples as lists; numpy scalars as floats)."""
    if isinstance(v, dict):
        return {str(k): _plain(x) for k, x in v.items() if x is not None}
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    if isinstance(v, (bool, int, float, str)):
        return v
    try:
        return float(v)
    except (TypeError, ValueError):
        return str(v)


def defaults_used(study, method=None) -> dict:
    """Per layer, every setting a run uses with the package defaults filled in: rocks, priors,
    temperature prior, interpretations, model error, likelihood, forward model, sampler."""
    from ..inference.api import resolved_settings

    out = {}
    for layer in study.layers:
        lay, kw = build(study, layer)
        try:
            s = resolved_settings(lay, **kw)
        except (ValueError, TypeError) as exc:
            raise InputError(f"{study.source}: layer {layer.name!r}: {exc}") from None
        m = method or study.sampler.method
        s["sampler"] = {"method": m, **_sampler_defaults(m), **study.sampler.arguments(m)}
        out[layer.name] = _plain(s)
    return out


def _sampler_defaults(method) -> dict:
    import inspect

    from ..inference.api import exact_layer, invert_layer

    fn = exact_layer if method == "exact" else invert_layer
    keep = (("n_points", "n_draws", "min_importance_ess") if method == "exact"
            else ("n_walkers", "min_ess", "max_steps", "tau_factor", "n_evidence", "n_prior"))
    d = {k: p.default for k, p in inspect.signature(fn).parameters.items() if k in keep}
    if d.get("n_walkers") is None:
        d["n_walkers"] = "max(64, 16 * ndim), rounded up to even"
    return d


def run_toml(study, extra: dict) -> str:
    from .. import __version__

    data = study_to_dict(study)
    if extra.get("seed") is not None:
        data["seed"] = extra["seed"]  # the seed actually used (--seed overrides the study's)
    if extra.get("method") is not None:  # the method actually used (--method overrides it)
        data.setdefault("sampler", {})["method"] = extra["method"]
    # provenance goes under [run], which study files may carry and the reader ignores
    data["run"] = {"bayescrust_version": __version__, "study_file": str(study.source), **extra,
                   "defaults_used": defaults_used(study, extra.get("method"))}
    return dumps_toml(data, header="Resolved configuration of this run, written by bayescrust.\n"
                                   f"Re-run with: {rerun_command(extra)}")


def rerun_command(extra: dict) -> str:
    """The command line that repeats a run from its ``run.toml`` (the command that wrote it,
    with the options that are not part of the study file)."""
    import shlex

    cmd = extra.get("command", "invert")
    words = ["bayescrust", cmd, "run.toml", "--out", "NEW_FOLDER"]
    if extra.get("layer") is not None:
        words += ["--layer", shlex.quote(str(extra["layer"]))]
    if cmd in ("chart", "plan") and extra.get("method"):  # their --method is not the study's
        words += ["--method", str(extra["method"])]
    if cmd == "chart" and extra.get("vp_grid"):
        g = extra["vp_grid"]
        words += ["--vp-min", f"{g[0]:g}", "--vp-max", f"{g[-1]:g}", "--points", str(len(g))]
    line = " ".join(words)
    if cmd == "plan":
        line += " (and a --candidate for each of [run] candidates when they were given)"
    return line


def thermal_set(study):
    if study.thermal:
        return list(study.thermal.values())
    return [ThermalSpec("uniform", "uniform", {"lo": 0.0, "hi": 1400.0}),
            ThermalSpec("half_space", "half_space", {}),
            ThermalSpec("hot_axial", "hot_axial", {})]


def study_command(args, run) -> int:
    """Shared shell of ``invert`` and ``compare``: read the study, run into an atomic folder."""
    study = load_study(args.study)
    method = args.method or study.sampler.method
    defaults_used(study, method)  # every layer's model builds (bad input: exit 2, no folder)
    return folder_command(args, lambda tmp: run(args, study, tmp, method=method,
                                                figures=not args.no_figures,
                                                layer_names=args.layer))
