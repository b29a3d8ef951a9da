"""The resolved study as plain data (defaults filled in, per-layer settings merged)."""

from __future__ import annotations

from typing import Any

from .specs import PriorSpec, StudySpec

__all__ = ["study_to_dict", "prior_dict"]


def prior_dict(spec: PriorSpec):
    if spec.kind == "fixed":
        return spec.params["value"]
    return {"dist": spec.kind, **spec.params}


def study_to_dict(study: StudySpec) -> dict:
    """The resolved study (defaults filled in, per-layer settings merged) as plain data."""
    out: dict[str, Any] = {
        "title": study.title,
        "water_depth_km": study.water_depth_km,
        "seed": study.seed,
        "rocks": list(study.rocks),
        "likelihood": study.likelihood,
    }
    if study.student_t_nu is not None:
        out["student_t_nu"] = study.student_t_nu
    if study.forward:
        out["forward"] = dict(study.forward)
    if study.description:
        out["description"] = study.description
    if study.model_error is not None:
        out["model_error"] = study.model_error
    if study.thermal_prior is not None:
        out["thermal_prior"] = study.thermal_prior
    s = study.sampler
    out["sampler"] = {k: v for k, v in vars(s).items() if v is not None}
    if study.thermal:
        out["thermal"] = {
            n: {"kind": t.kind, **{k: (prior_dict(v) if isinstance(v, PriorSpec) else v)
                                   for k, v in t.params.items()}}
            for n, t in study.thermal.items()
        }
    layers = []
    for lay in study.layers:
        d: dict[str, Any] = {"name": lay.name, "top_km": lay.top_km, "bottom_km": lay.bottom_km}
        if lay.pressure_gpa is not None:
            d["pressure_gpa"] = lay.pressure_gpa
        for q, o in lay.observations.items():
            d[q] = [o.value, o.sigma]
        d["rocks"] = list(study.rocks_for(lay))
        me = study.model_error_for(lay)
        if me is not None:
            d["model_error"] = me
        th = study.thermal_for(lay)
        if th is not None:
            d["thermal_prior"] = th.name
        pri = study.priors_for(lay)
        if pri:
            d["priors"] = {k: prior_dict(v) for k, v in pri.items()}
        hy = study.hypotheses_for(lay)
        if hy:
            d["hypotheses"] = {h: {p: list(b) for p, b in c.items()} for h, c in hy.items()}
        layers.append(d)
    out["layers"] = layers
    if getattr(study, "plan", None) is not None:
        from .plan import plan_dict

        out["plan"] = plan_dict(study.plan)
    return out
