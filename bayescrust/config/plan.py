"""Section reader: ``[plan]`` (candidate observations and settings of ``bayescrust plan``).

```toml
[plan]
layer = "deep layer"            # default layer of `bayescrust plan` (else --layer)
simulations = 1000              # simulated data per candidate
design_points = 16384           # exact-path design (power of two)
decisive_probability = 0.9
decisive_bayes_factor = 10.0
rank_by = "information_gain_bits"
candidates = [
  { observable = "vs", sigma = [0.05, 0.1, 0.2] },       # one candidate per sigma
  { observable = "density", sigma = 0.05, model_error = 0.005 },
]
```

In a profile study (``[profile]``) the same section plans the profile: layer candidates name
their ``layer``, heat flow takes ``mode`` (``gaussian``, ``lower_bound``, ``off``) and, for a
lower bound, ``max_deficit`` (mW/m^2); ``rank_question`` is a layer name, ``"crust-mantle
boundary"`` (default) or ``"thermal: <parameter>"``; each layer's design has a quarter of
``design_points`` (the default 16384 gives 4096, the ``n_layer`` default of
:func:`bayescrust.plan.plan_profile`: a profile weighs one design per layer).

```toml
[plan]
rank_question = "crust-mantle boundary"
candidates = [
  { observable = "heat_flow", sigma = [5.0, 10.0] },
  { observable = "heat_flow", sigma = 10.0, mode = "lower_bound" },
  { observable = "vs", sigma = 0.1, layer = "3 lower gabbro" },
]
```
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .limits import OBSERVABLES
from .reader import Reader

__all__ = ["PLAN_KEYS", "CANDIDATE_KEYS", "PlanSpec", "CandidateSpec", "read_plan", "plan_dict"]

PLAN_KEYS = ("layer", "simulations", "design_points", "decisive_probability",
             "decisive_bayes_factor", "rank_by", "rank_question", "candidates")
CANDIDATE_KEYS = ("observable", "sigma", "model_error", "label", "layer", "mode", "max_deficit")
_MODES = ("gaussian", "lower_bound", "off")
_RANK_KEYS = ("information_gain_bits", "p_decisive", "expected_p_true", "interval_narrowing")
_CANDIDATE_OBSERVABLES = tuple(OBSERVABLES) + ("heat_flow",)


@dataclass(frozen=True)
class CandidateSpec:
    """One candidate datum: observable, 1-sigma error (its unit), optional model error/label."""

    observable: str
    sigma: float
    model_error: float | None = None
    label: str | None = None
    layer: str | None = None
    mode: str | None = None
    max_deficit: float | None = None


@dataclass(frozen=True)
class PlanSpec:
    """Settings of ``bayescrust plan``; ``None`` leaves the package default."""

    layer: str | None = None
    simulations: int = 1000
    design_points: int = 2**14
    decisive_probability: float = 0.9
    decisive_bayes_factor: float = 10.0
    #: ``None``: ``information_gain_bits`` (``interval_narrowing`` for a profile's thermal
    #: ``rank_question``)
    rank_by: str | None = None
    candidates: tuple[CandidateSpec, ...] | None = None
    rank_question: str | None = None


def _candidate(r: Reader, key, value) -> list[CandidateSpec]:
    t = r.table(key, value)
    r.keys(key, t, CANDIDATE_KEYS)
    if "observable" not in t or "sigma" not in t:
        r.got(key, value, "a table with 'observable' and 'sigma'")
    obs = r.string(f"{key}.observable", t["observable"], _CANDIDATE_OBSERVABLES)
    sig = t["sigma"] if isinstance(t["sigma"], list) else [t["sigma"]]
    if not sig:
        r.got(f"{key}.sigma", t["sigma"], "a 1-sigma error > 0 or a list of them")
    me = None
    if "model_error" in t:
        me = r.number(f"{key}.model_error", t["model_error"], 0.0, 0.5,
                      unit="(fraction of the predicted value)")
    label = r.string(f"{key}.label", t["label"]) if "label" in t else None
    layer = r.string(f"{key}.layer", t["layer"]) if "layer" in t else None
    mode = r.string(f"{key}.mode", t["mode"], _MODES) if "mode" in t else None
    if obs == "heat_flow" and layer is not None:
        r.got(f"{key}.layer", layer, "no layer for heat flow (a profile-wide datum)")
    if mode not in (None, "gaussian") and obs != "heat_flow":
        r.got(f"{key}.mode", mode, "'gaussian' (other modes are for heat_flow only)")
    deficit = None
    if "max_deficit" in t:
        if mode != "lower_bound":
            r.got(f"{key}.max_deficit", t["max_deficit"], "only with mode = 'lower_bound'")
        deficit = r.number(f"{key}.max_deficit", t["max_deficit"], 0.0, 5000.0, lo_open=True,
                           unit="mW/m^2")
    if label is not None and len(sig) > 1:
        r.got(f"{key}.label", label, "no label when several sigmas are given (each needs its own)")
    out = []
    for i, s in enumerate(sig):
        k = f"{key}.sigma[{i}]" if isinstance(t["sigma"], list) else f"{key}.sigma"
        if isinstance(s, bool) or not isinstance(s, (int, float)) or math.isnan(s) or s <= 0:
            r.got(k, s, "a 1-sigma error > 0 (inf for the no-information baseline)")
        out.append(CandidateSpec(obs, float(s), me, label, layer, mode, deficit))
    return out


def read_plan(r: Reader, key, value) -> PlanSpec:
    t = r.table(key, value)
    r.keys(key, t, PLAN_KEYS)
    kw = {}
    if "layer" in t:
        kw["layer"] = r.string(f"{key}.layer", t["layer"])
    if "simulations" in t:
        kw["simulations"] = r.integer(f"{key}.simulations", t["simulations"], 10, 10**6)
    if "design_points" in t:
        n = r.integer(f"{key}.design_points", t["design_points"], 256, 2**22)
        if n & (n - 1):
            r.got(f"{key}.design_points", n, "a power of two (e.g. 16384)")
        kw["design_points"] = n
    if "decisive_probability" in t:
        kw["decisive_probability"] = r.number(f"{key}.decisive_probability",
                                              t["decisive_probability"], 0.5, 0.999)
    if "decisive_bayes_factor" in t:
        kw["decisive_bayes_factor"] = r.number(f"{key}.decisive_bayes_factor",
                                               t["decisive_bayes_factor"], 1.0, 1e6,
                                               lo_open=True)
    if "rank_question" in t:
        kw["rank_question"] = r.string(f"{key}.rank_question", t["rank_question"])
    if "rank_by" in t:
        kw["rank_by"] = r.string(f"{key}.rank_by", t["rank_by"], _RANK_KEYS)
    if "candidates" in t:
        c = t["candidates"]
        if not isinstance(c, list) or not c:
            r.got(f"{key}.candidates", c, "a non-empty list of tables {observable, sigma}")
        cands = [x for i, v in enumerate(c) for x in _candidate(r, f"{key}.candidates[{i}]", v)]
        labels = [x.label or f"{x.observable}:{x.sigma:g}:{x.layer}:{x.mode}" for x in cands]
        if len(set(labels)) != len(labels):
            r.got(f"{key}.candidates", c, "each (observable, sigma) at most once")
        kw["candidates"] = tuple(cands)
    return PlanSpec(**kw)


def plan_dict(spec: PlanSpec) -> dict:
    """Plain-data echo of a :class:`PlanSpec` (for ``run.toml``)."""
    d = {k: getattr(spec, k) for k in PLAN_KEYS if k != "candidates"
         and getattr(spec, k) is not None}
    if spec.candidates:
        d["candidates"] = [{k: v for k, v in vars(c).items() if v is not None}
                           for c in spec.candidates]
    return d
