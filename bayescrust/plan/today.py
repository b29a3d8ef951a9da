"""How far today's posterior, the starting point of every plan, can be trusted.

A plan values a new datum by how it would move today's posterior, so it inherits that
posterior's weaknesses. Two are checked and stated beside every plan (and warned):

- **the data sit outside what the model can produce**: the layer's posterior-predictive check
  (:func:`bayescrust.inference.trust.predictive_check`: the rule and the threshold of every layer
  result), here on today's weighted states. Today's probabilities, and every value of a new
  datum computed from them, are then conditional on a model that does not fit: "already
  decisive" says that the model has one way to come near the data, not that the rock is known;
- **today's weighted design rests on too few states**: an importance effective size (Kish 1965,
  Survey Sampling, sec. 11.7) below the plan's own ``min_ess`` (the size below which an update
  counts as degenerate). Today's probabilities then carry a larger error than the plan's Monte
  Carlo errors, which cover the simulated data only.

Posterior draws of an MCMC result bring their own check and convergence verdict.
"""

from __future__ import annotations

import warnings

import numpy as np

__all__ = ["layer_check", "profile_checks", "profile_today", "caveats", "MISFIT_PREFIX",
           "PROFILE_ERROR_CAVEAT"]

#: Opening of every plan sentence when today's data misfit (the sentence is no recommendation).
MISFIT_PREFIX = "Under a model that does not fit today's data (not a recommendation): "


def layer_check(ensemble, result=None) -> dict:
    """Predictive check of today's posterior of a layer plan (``{}`` when it cannot be made).

    ``result`` (a :class:`~bayescrust.LayerResult` the ensemble was built from) brings its own
    check; otherwise the ensemble's states with today's weights against its layer model.
    """
    from ..inference.trust import predictive_check

    if result is not None:
        return dict(result.predictive_check)
    if ensemble.model is None:
        return {}
    return predictive_check(ensemble.model, ensemble.quantities, weights=ensemble.weights())


def profile_checks(profile, design) -> tuple[dict, dict, float]:
    """Per-layer predictive checks and importance effective sizes of a profile's exact design.

    Each layer's design points carry the posterior weight ``sum_j W_j w_ij`` (the thermal
    points' weights times the point's weight given each), pooled over the replicates.

    Returns
    -------
    (checks, layer_ess, thermal_ess)
        ``{layer: check}``, ``{layer: effective size of its design}`` and the effective size of
        the pooled thermal design (NaN for a state without free thermal parameters).
    """
    from ..inference.trust import predictive_check

    reps = design["replicates"]
    checks, ess = {}, {}
    for i, (name, model) in enumerate(zip(profile.names, design["models"], strict=True)):
        omega = np.concatenate([rep["W"] @ rep["layer_w"][i] for rep in reps]) / len(reps)
        q = {k: np.concatenate([np.asarray(rep["layer_q"][i][k], float) for rep in reps])
             for k in ("vp", "vs", "vp_vs", "density") if k in reps[0]["layer_q"][i]}
        checks[name] = predictive_check(model, q, weights=omega)
        w = omega / omega.sum()
        ess[name] = float(1.0 / np.sum(w * w))
    th = profile.thermal
    thermal = np.nan
    if th.coupled and th.ndim > 0:
        big = np.concatenate([rep["W"] for rep in reps]) / len(reps)
        thermal = float(1.0 / np.sum(big * big))
    return checks, ess, thermal


def caveats(checks: dict, ess: dict, min_ess: float, *, result=None) -> list[str]:
    """Plain-language caveats of today's posterior (empty when there is nothing to say).

    Parameters
    ----------
    checks : dict
        ``{layer: predictive check}``.
    ess : dict
        ``{what: importance effective size}`` of today's weighted states (e.g. ``{"today's
        design": 39.0}``); those below ``min_ess`` are named.
    min_ess : float
        The plan's threshold of a degenerate update.
    result : LayerResult, optional
        The MCMC result today's posterior came from (its convergence verdict is stated).
    """
    from ..inference.trust import misfit_details

    out = []
    bad = {n: c for n, c in checks.items() if c and c.get("misfit")}
    if bad:
        where = "; ".join(f"{n}: {misfit_details(c)}" for n, c in bad.items())
        out.append(
            f"DATA MISFIT: the model cannot reproduce today's data ({where}; "
            f"posterior-predictive p < {next(iter(bad.values()))['alpha']:g}). Today's "
            "probabilities and every value of a new datum below are computed under that model: "
            "'already decisive' and 'adds almost nothing' describe a model with one way to come "
            "near the data, not the rock. They are not recommendations; check the data and the "
            "model (rocks, priors, forward-model settings) before planning.")
    low = {k: v for k, v in ess.items() if np.isfinite(v) and v < min_ess}
    if low:
        what = "; ".join(f"{v:.0f} ({k})" for k, v in low.items())
        out.append(
            f"Today's posterior rests on too few states: importance effective size {what}, "
            f"below the plan's own threshold of {min_ess:g} (min_ess). Today's probabilities, "
            "and the values below, carry errors larger than the stated ones (those cover the "
            "simulated data only); use more design points.")
    if result is not None and not result.converged:
        out.append("Today's posterior comes from an MCMC run that is NOT CONVERGED by the rule "
                   f"{result.diagnostics.get('convergence_rule', '')}; the values below carry "
                   "its extra error.")
    return out


#: What a profile plan's Monte Carlo errors leave out (measured: docs/plan.md; the strict xfail
#: in tests/plan/test_profile_plan.py keeps the measurement honest).
PROFILE_ERROR_CAVEAT = (
    "The Monte Carlo errors of this profile plan cover the simulated data only, not the draw of "
    "joint states nor the exact design: over 16 seeds at the default sizes the values scattered "
    "2-10x more than these errors (interval narrowing up to ~70x under a heat-flow datum). "
    "Candidates that differ by less than that are not told apart: run again with other seeds "
    "(or larger n_layer, n_thermal and states_per_thermal) and compare.")


def profile_today(profile, design, settings, min_ess, sentences):
    """Today's per-layer checks and effective sizes (into ``settings``), the caveats and the
    sentences (prefixed when a layer misfits); warns on each (:mod:`.today`)."""
    from ..inference.trust import MisfitWarning, misfit_message
    from .preposterior import DegeneracyWarning

    checks, layer_ess, thermal_ess = profile_checks(profile, design)
    settings.update(thermal_importance_ess=thermal_ess, layer_importance_ess=layer_ess)
    ess = {"thermal design": thermal_ess, **{f"layer {n}": v for n, v in layer_ess.items()}}
    notes = (*caveats(checks, ess, min_ess), PROFILE_ERROR_CAVEAT)
    for n, c in checks.items():
        if c["misfit"]:
            warnings.warn(f"plan of profile {profile.name!r}, layer {n!r}: {misfit_message(c)} "
                          "The plan's values are computed under that model: no "
                          "recommendations.", MisfitWarning, stacklevel=3)
    low = {k: v for k, v in ess.items() if np.isfinite(v) and v < min_ess}
    if low:
        warnings.warn(f"plan of profile {profile.name!r}: today's importance effective size "
                      "below min_ess = " + f"{min_ess:g}: " + "; ".join(
                          f"{k} {v:.0f}" for k, v in low.items()) + "; use more design points",
                      DegeneracyWarning, stacklevel=3)
    if any(c["misfit"] for c in checks.values()):
        sentences = {k: MISFIT_PREFIX + v for k, v in sentences.items()}
    return checks, notes, sentences
