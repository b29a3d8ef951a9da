"""Joint states of a profile and the questions they answer, one :class:`~.ensemble.Ensemble` each.

Today's knowledge is the structured exact path's weighted design
(:func:`bayescrust.profile.exact.exact_design`): thermal points ``phi_j`` with posterior weights
``W_j`` and, per layer, design points with weights given each ``phi_j``. Joint states are drawn
from it stratified by thermal point: for every ``phi_j`` of every replicate, ``r`` design points
of each layer from its conditional weights (so the thermal design is kept whole, not resampled),
each joint state weighted ``W_j / R``. A joint state carries every layer's quantities, the
thermal parameters, the predicted heat flow and the crust-mantle boundary.

The same states answer several *questions*, each an :class:`~.ensemble.Ensemble` (same states and
weights; the question's classes and interval quantity), valued by :func:`~.api.preposterior`:

- per layer, its interpretations (the profile's hypotheses for the layer) and the interval of
  its temperature;
- the crust-mantle boundary: the first mantle layer (:data:`bayescrust.profile.MANTLE_RULE`)
  or "no boundary in the section", and the interval of its depth (the base of the section
  when there is none);
- per free thermal parameter, its interval (e.g. the crustal age or the mantle temperature).

The questions and the :class:`~.rerun.ProfileRerun` they share are computed once per set of
states and kept in the states dict. The driver is :func:`bayescrust.plan.profile.plan_profile`.
"""

from __future__ import annotations

import math

import numpy as np

from .ensemble import Ensemble, assign_classes, make_classes

__all__ = ["profile_states", "profile_ensemble", "BOUNDARY_QUESTION"]

BOUNDARY_QUESTION = "crust-mantle boundary"
_INTERVAL = "interval quantity"
_UNITS = {"_myr": "Myr", "_c": "°C", "_km": "km", "_w_mk": "W/m/K"}


def _unit(name):
    return next((u for s, u in _UNITS.items() if name.endswith(s)), "")


def _draw_rows(w, r, rng):
    """``r`` column indices per row of the row-stochastic ``w`` (J, N), by inverse CDF
    (vectorised over rows; rows that sum to zero give index 0, their states weigh nothing)."""
    j, n = w.shape
    cdf = np.cumsum(w, axis=1)
    tot = cdf[:, -1:]
    off = 2.0 * np.arange(j)[:, None] * np.maximum(tot, 1.0)
    u = rng.random((j, r)) * tot + off
    k = np.searchsorted((cdf + off).ravel(), u.ravel(), side="right") - np.repeat(
        np.arange(j) * n, r)
    return np.clip(k, 0, n - 1).reshape(j, r)


def profile_states(profile, design, rng, states_per_thermal=16) -> dict:
    """Joint weighted states of a profile from :func:`~bayescrust.profile.exact.exact_design`.

    Returns
    -------
    dict
        ``log_weights`` (n,); ``layers`` (one dict of quantities (n,) per layer); ``thermal``
        {parameter: (n,)}; ``heat_flow`` (n,) mW/m^2; ``boundary`` (n,) the index of the first
        mantle layer (``L`` for none); ``prior_layer`` (per layer, the prior probability of
        every design point, pooled over the thermal design, with its quantities) for prior class
        probabilities.
    """
    from ..inference.hypotheses import indicators
    from ..profile.spec import MANTLE_RULE

    th = profile.thermal
    r = int(states_per_thermal)
    mids = profile.mid_depths_km
    reps = design["replicates"]
    lw, thermal, layers, mantle = [], {k: [] for k in th.params}, [], []
    prior_layer = [[] for _ in range(profile.n_layers)]
    for rep in reps:
        phi = rep["phi"]
        with np.errstate(divide="ignore"):
            lw.append(np.repeat(np.log(rep["W"]) - math.log(len(reps)), r))
        vals = th.values(phi) if th.coupled else {}
        for k in thermal:
            thermal[k].append(np.repeat(vals[k], r))
        geo = th.geotherm_c(mids, phi) if th.coupled else None
        per = []
        for i, (w, q) in enumerate(zip(rep["layer_w"], rep["layer_q"], strict=True)):
            k = _draw_rows(w, r, rng).ravel()
            per.append({name: np.asarray(v)[k] for name, v in q.items()
                        if np.ndim(v) == 1 and np.shape(v)[0] == w.shape[1]})
            # prior of each design point: conditional temperature density over the proposal
            # (the exact path's importance weights without the likelihood), pooled over phi
            t = np.asarray(q["temperature_c"], float)
            lp = profile.log_temperature_density(t[None, :], None if geo is None
                                                 else geo[:, i][:, None])
            pw = np.exp(lp - np.max(lp, axis=1, keepdims=True))
            pw /= np.maximum(pw.sum(axis=1, keepdims=True), 1e-300)
            prior_layer[i].append((pw.mean(axis=0) / len(reps), q))
        layers.append(per)
        mantle.append(np.stack([indicators({"m": MANTLE_RULE}, p)["m"] for p in per], axis=1))
    out_layers = [{k: np.concatenate([rl[i][k] for rl in layers]) for k in layers[0][i]}
                  for i in range(profile.n_layers)]
    m = np.concatenate(mantle)
    boundary = np.where(m.any(axis=1), np.argmax(m, axis=1), profile.n_layers)
    thermal = {k: np.concatenate(v) for k, v in thermal.items()}
    if th.coupled:
        phi_all = np.concatenate([np.repeat(rep["phi"], r, axis=0) for rep in reps])
        heat = np.asarray(th.heat_flow_mw_m2(phi_all), float)
    else:  # as the exact path: the top layer's linear conductive gradient
        heat = (th.conductivity_w_mk * (out_layers[0]["temperature_c"]
                                        - th.surface_temperature_c) / mids[0])
    return {"log_weights": np.concatenate(lw), "layers": out_layers, "thermal": thermal,
            "heat_flow": heat, "boundary": boundary, "prior_layer": prior_layer}


def _questions(profile, design, states):
    """``{name: (kind, indicators (n,), class names, prior class probabilities, interval
    quantity (n,), interval label)}`` of every question (module docstring)."""
    from ..inference.hypotheses import indicators
    from ..profile.results import NO_BOUNDARY

    out = {}
    for i, name in enumerate(profile.names):
        hyps = {h: b for h, b in design["hypotheses"][i].items() if h != "mantle rock"}
        pri = states["prior_layer"][i]
        ind_d = [indicators(hyps, q) for _, q in pri]
        _, names = make_classes(ind_d[0], *ind_d[1:])
        pc = sum(np.bincount(np.maximum(assign_classes(ind, names), 0), weights=pw,
                             minlength=len(names)) for (pw, _), ind in zip(pri, ind_d,
                                                                          strict=True))
        ind = indicators(hyps, states["layers"][i])
        out[name] = ("interpretation", ind, names, pc / pc.sum(),
                     states["layers"][i]["temperature_c"], f"{name} temperature", "°C")
    outcomes = list(profile.names) + [NO_BOUNDARY]
    b = states["boundary"]
    ind = {o: b == k for k, o in enumerate(outcomes)}
    # prior: the first mantle layer under the prior, from each layer's prior mantle probability
    pm = np.array([sum(pw @ (np.asarray(q["ultramafic_fraction"]) >= 0.5) for pw, q in pri)
                   for pri in states["prior_layer"]])
    surv = np.concatenate([[1.0], np.cumprod(1.0 - pm)])
    pb = np.append(pm * surv[:-1], surv[-1])
    depth = np.append(profile.tops_km, profile.bottoms_km[-1])[b]
    out[BOUNDARY_QUESTION] = ("boundary", ind, tuple(outcomes), pb / pb.sum(), depth,
                              "boundary depth", "km")
    for k in (profile.thermal.free if profile.thermal.coupled else ()):
        out[f"thermal: {k}"] = ("thermal", ind, tuple(outcomes), pb / pb.sum(),
                                states["thermal"][k], k, _unit(k))
    return out


def profile_ensemble(profile, design, states, question, group=None) -> Ensemble:
    """The :class:`Ensemble` of one question whose candidates are measured in layer ``group``
    (a layer name; ``None`` for heat flow)."""
    from .ensemble import _model_errors

    kind, ind, names, pc, interval, _, _ = _questions_cache(profile, design, states)[question]
    q = {"heat_flow": states["heat_flow"], **states["thermal"], _INTERVAL: interval}
    existing, me, lik, nu, rho = {}, {}, "gaussian", 4.0, None
    if group is not None:
        i = profile.names.index(group)
        model = design["models"][i]
        q.update(states["layers"][i])
        q.update(states["thermal"])
        q[_INTERVAL] = interval
        existing = dict(profile.layers[i].observed)
        me = _model_errors(model, profile.model_error)
        lik, nu, rho = model.likelihood, float(model.nu or 4.0), model.error_correlation
    classes = assign_classes(ind, names)
    lw = np.where(classes >= 0, states["log_weights"], -np.inf)
    return Ensemble(quantities=q, log_weights=lw, hypotheses=ind, boxes={},
                    classes=np.maximum(classes, 0), class_names=tuple(names),
                    prior_probabilities=np.asarray(pc, float), existing=existing,
                    model_error=me, error_correlation=rho, likelihood=lik, nu=nu,
                    source="profile exact design",
                    rerun=_rerun_cache(profile, design, states).for_question(question))


def _questions_cache(profile, design, states):
    if "_questions" not in states:
        states["_questions"] = _questions(profile, design, states)
    return states["_questions"]


def _rerun_cache(profile, design, states):
    """One :class:`~.rerun.ProfileRerun` per set of states (shared by every question)."""
    from .rerun import ProfileRerun

    if "_rerun" not in states:
        states["_rerun"] = ProfileRerun(profile, design, _questions_cache(profile, design,
                                                                          states))
    return states["_rerun"]
