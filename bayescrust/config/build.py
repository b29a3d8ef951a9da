"""Builders: settings -> objects of the Python API (the inference package is imported lazily)."""

from __future__ import annotations

from typing import Any

from .specs import LayerSpec, PriorSpec, StudySpec, ThermalSpec

__all__ = ["build_prior", "build_thermal_prior", "build_layer", "layer_arguments"]


def build_prior(spec: PriorSpec):
    """Turn a :class:`PriorSpec` into a ``bayescrust.priors`` object (or a float if fixed)."""
    if spec.kind == "fixed":
        return spec.params["value"]
    from bayescrust.inference import priors as P

    p = spec.params
    if spec.kind == "uniform":
        return P.Uniform(p["lo"], p["hi"])
    if spec.kind == "loguniform":
        return P.LogUniform(p["lo"], p["hi"])
    if spec.kind == "normal":
        return P.Normal(p["mean"], p["sd"])
    if spec.kind == "truncated_normal":
        return P.TruncatedNormal(p["mean"], p["sd"], p["lo"], p["hi"])
    if spec.kind == "beta":
        return P.Beta(p["a"], p["b"])
    if spec.kind == "dirichlet":
        return P.Dirichlet(p["alpha"])
    raise ValueError(f"unknown prior kind {spec.kind!r}")


def build_thermal_prior(spec: ThermalSpec | None):
    """Turn a :class:`ThermalSpec` into a thermal-state prior object (``None`` stays ``None``)."""
    if spec is None:
        return None
    from bayescrust.inference import thermal_priors as T  # noqa: N812

    kw = {k: (build_prior(v) if isinstance(v, PriorSpec) else v) for k, v in spec.params.items()}
    if spec.kind == "uniform":
        return T.UniformTemperature(kw["lo"], kw["hi"])
    if spec.kind == "half_space":
        return T.HalfSpaceCooling(**kw)
    if spec.kind == "hot_axial":
        return T.HotAxial(**kw)
    raise ValueError(f"unknown thermal prior kind {spec.kind!r}")


def build_layer(study: StudySpec, layer: LayerSpec):
    """The ``bayescrust.Layer`` of one layer of the study."""
    from bayescrust.inference.layer import Layer

    obs = {q: (o.value, o.sigma) for q, o in layer.observations.items()}
    kw = {}
    if layer.pressure_gpa is not None:
        kw["pressure_gpa"] = layer.pressure_gpa
    return Layer(layer.name, top_km=layer.top_km, bottom_km=layer.bottom_km,
                 water_depth_km=study.water_depth_km, **obs, **kw)


def layer_arguments(study: StudySpec, layer: LayerSpec, *, thermal: ThermalSpec | None = None,
                    with_thermal: bool = True) -> dict:
    """Keyword arguments of ``invert_layer`` / ``exact_layer`` for one layer (without the layer
    and the sampler settings).

    The temperature prior is, in order: the layer's own ``priors.temperature_c``; else
    ``thermal`` (if given) or the layer's selected thermal-state prior; else the study's
    ``priors.temperature_c``; else the inference package's default. ``with_thermal=False``
    leaves the thermal-state prior out.
    """
    kw: dict[str, Any] = {"rocks": study.rocks_for(layer)}
    pri = {k: build_prior(v) for k, v in study.priors_for(layer).items()}
    if with_thermal and "temperature_c" not in layer.priors:
        th = thermal if thermal is not None else study.thermal_for(layer)
        if th is not None:
            pri["temperature_c"] = build_thermal_prior(th)
    if pri:
        kw["priors"] = pri
    hy = study.hypotheses_for(layer)
    if hy is not None:
        kw["hypotheses"] = {h: dict(c) for h, c in hy.items()}
    me = study.model_error_for(layer)
    if me is not None:
        kw["model_error"] = dict(me) if isinstance(me, dict) else me
    if study.likelihood != "gaussian":
        kw["likelihood"] = study.likelihood
    if study.student_t_nu is not None:
        kw["nu"] = study.student_t_nu
    if study.forward:
        kw["forward"] = dict(study.forward)
    return kw
