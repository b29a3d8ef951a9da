"""How far a layer's answer can be trusted: posterior-predictive check, the one convergence rule,
draw-count bounds on probabilities (for Bayes factors) and the mixing fraction within each class.

These read posterior draws; none recomputes the forward model.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

__all__ = ["MisfitWarning", "PPC_ALPHA", "RHAT_MAX", "EXACT_MIN_ESS", "predictive_check",
           "misfit_message", "misfit_details", "data_fit_label", "convergence_verdict",
           "rule_of_three", "class_mixing", "ensemble_rhat", "RHAT_GROUPS"]

#: Two-sided posterior-predictive p-value below which an observable is flagged as misfit.
#: 0.01 corresponds to a residual of ~2.6 predictive standard deviations for a Gaussian
#: (Gelman, Meng & Stern 1996, Statistica Sinica 6, 733: posterior predictive p-values;
#: the 0.01 level is ``common practice``).
PPC_ALPHA = 0.01

#: The one convergence rule on R-hat: every summarised quantity must have rank-normalised
#: split R-hat below 1.01 (Vehtari, Gelman, Simpson, Carpenter & Buerkner 2021, Bayesian
#: Analysis 16, 667, section 4: "use the sample only if R-hat < 1.01").
RHAT_MAX = 1.01

#: Exact reference: importance effective size needed to call the result resolved
#: (the same 500 as the ConvergenceWarning of :func:`bayescrust.exact_layer`).
EXACT_MIN_ESS = 500.0

_LABEL = {"vp": "Vp", "vs": "Vs", "vp_vs": "Vp/Vs", "density": "density"}


def _mean(x, w):
    """Plain mean, or the weighted mean with normalised weights ``w``."""
    return float(np.mean(x)) if w is None else float(w @ x)


def _draws(values, weights, extra=None):
    """Finite draws (and their normalised weights, ``None`` for equal weights)."""
    m = np.asarray(values, float).ravel()
    ok = np.isfinite(m) if extra is None else (np.isfinite(m) & extra)
    if weights is not None:
        w = np.asarray(weights, float).ravel()
        ok &= np.isfinite(w) & (w > 0)
        w = w[ok]
        return m[ok], (w / w.sum() if w.size else w), ok
    return m[ok], None, ok


def predictive_check(model, q: dict, *, alpha: float = PPC_ALPHA, weights=None,
                     observed=None) -> dict:
    """Posterior-predictive check of every observable of a layer.

    For posterior draws ``theta_i`` with predictions ``m_i`` and likelihood scales ``s_i``
    (measurement and model error in quadrature), a replicate is ``y_rep ~ L(. | m_i, s_i)``.
    Per observable it returns

    - ``p_value``: two-sided posterior-predictive p-value ``2 min(P(y_rep <= y), P(y_rep >= y))``
      (Gelman, Meng & Stern 1996), computed without simulation as the posterior mean of the
      likelihood's CDF at the observed value;
    - ``z``: standardised residual ``(y - E[y_rep]) / sd(y_rep)`` with
      ``var(y_rep) = var(m) + E[s^2]`` (``E[s^2] nu / (nu - 2)`` for the Student-t);
    - the predictive mean and sd.

    ``misfit`` is True when any observable has ``p_value < alpha`` (:data:`PPC_ALPHA`): the data
    sit in the tail of what the model, fitted to them, can produce.

    Parameters
    ----------
    model : LayerModel
    q : dict
        Posterior quantities (flat arrays, one entry per draw) holding the predictions.
    alpha : float
        Flagging threshold on the two-sided p-value.
    weights : array_like, optional
        Posterior weight of each entry of ``q`` (an importance-weighted design, e.g. the exact
        path's or the planner's); default equal weights (posterior draws). Every posterior
        mean above becomes the weighted mean: the same check.
    observed : dict, optional
        ``{observable: value}`` replacing the layer's observed values (same errors): the check
        of the posterior obtained with those values (the probability chart).

    Returns
    -------
    dict
        ``{"alpha", "misfit", "flagged": [names], "observables": {name: {...}}}``.
    """
    obs = {}
    observed = dict(observed or {})
    for k, (y, _sd) in model.observed.items():
        y = float(observed.get(k, y))
        m, w, _ = _draws(q[k], weights)
        s = model.total_sigma(k, m)
        z_i = (y - m) / s
        if model.likelihood == "gaussian":
            cdf, sf = special.ndtr(z_i), special.ndtr(-z_i)
            var_noise = _mean(s * s, w)
        else:
            nu = float(model.nu)
            from scipy import stats

            cdf, sf = stats.t.cdf(z_i, nu), stats.t.sf(z_i, nu)
            var_noise = _mean(s * s, w) * (nu / (nu - 2.0) if nu > 2 else math.inf)
        # each tail from its own CDF: 1 - P(y_rep <= y) rounds to 0 far in the upper tail
        p_le, p_ge = (_mean(cdf, w), _mean(sf, w)) if m.size else (math.nan, math.nan)
        p = min(1.0, 2.0 * min(p_le, p_ge))
        mean = _mean(m, w) if m.size else math.nan
        sd = math.sqrt(_mean((m - mean) ** 2, w) + var_noise) if m.size else math.nan
        obs[k] = {"observed": y, "predicted_mean": mean, "predicted_sd": sd,
                  "z": (y - mean) / sd if 0 < sd < math.inf else math.nan, "p_value": p}
    if "vp" in model.observed and "vs" in model.observed and "vp_vs" not in model.observed:
        obs["vp_vs (from Vp, Vs)"] = _pair_ratio_check(model, q, weights, observed)
    flagged = [k for k, v in obs.items() if not v["p_value"] >= alpha]
    return {"alpha": float(alpha), "misfit": bool(flagged), "flagged": flagged,
            "observables": obs}


def _pair_ratio_check(model, q: dict, weights=None, observed=None) -> dict:
    """Predictive check of the observed Vp/Vs when Vp and Vs are both observed.

    Each marginal check can pass while the pair does not: a Vp and a Vs each within reach of
    the model may need a Vp/Vs no rock gives. In log space, ``ln(y_p / y_s)`` per draw has mean
    ``ln(m_p / m_s)`` and variance ``(s_p/m_p)^2 + (s_s/m_s)^2 - 2 c / (m_p m_s)``, with ``c``
    the covariance of the correlated model errors (first-order propagation; Gaussian
    replicates, also used for the Student-t as an approximation).
    """
    observed = observed or {}
    yp = float(observed.get("vp", model.observed["vp"][0]))
    ys = float(observed.get("vs", model.observed["vs"][0]))
    ms_all = np.asarray(q["vs"], float).ravel()
    with np.errstate(invalid="ignore"):
        mp, w, ok = _draws(q["vp"], weights, np.isfinite(ms_all) & (ms_all > 0))
    ms = ms_all[ok]
    sp, ss = model.total_sigma("vp", mp), model.total_sigma("vs", ms)
    rho = model.error_correlation if model.likelihood == "gaussian" else 0.0
    c = rho * model.model_error["vp"] * model.model_error["vs"] * mp * ms
    var = (sp / mp) ** 2 + (ss / ms) ** 2 - 2 * c / (mp * ms)
    sd_i = np.sqrt(np.maximum(var, 1e-300))
    y = math.log(yp / ys)
    lm = np.log(mp / ms)
    p_le = _mean(special.ndtr((y - lm) / sd_i), w) if mp.size else math.nan
    p_ge = _mean(special.ndtr((lm - y) / sd_i), w) if mp.size else math.nan
    p = min(1.0, 2.0 * min(p_le, p_ge))
    ratio = mp / ms
    mean = _mean(ratio, w) if mp.size else math.nan
    sd = (math.sqrt(_mean((ratio - mean) ** 2, w) + _mean((ratio * sd_i) ** 2, w))
          if mp.size else math.nan)
    return {"observed": yp / ys, "predicted_mean": mean, "predicted_sd": sd,
            "z": (yp / ys - mean) / sd if sd > 0 else math.nan, "p_value": p}


def data_fit_label(check: dict) -> str:
    """The ``data_fit`` entry of a hypothesis table: ``"ok"`` or ``"MISFIT (vp, ...)"``."""
    if not check.get("misfit"):
        return "ok"
    return "MISFIT (" + ", ".join(check["flagged"]) + ")"


def misfit_details(check: dict) -> str:
    """The flagged observables of a check, e.g. ``"Vp observed 9.5, predicted 8.1 +- 0.23
    (z = +6.0, p = 1e-09)"`` ('' when the data fit)."""
    parts = []
    for k in check.get("flagged", ()):
        v = check["observables"][k]
        parts.append(f"{_LABEL.get(k, k)} observed {v['observed']:.3g}, predicted "
                     f"{v['predicted_mean']:.3g} +- {v['predicted_sd']:.2g} "
                     f"(z = {v['z']:+.1f}, p = {v['p_value']:.2g})")
    return "; ".join(parts)


def misfit_message(check: dict) -> str:
    """One-line warning text for a flagged check ('' when the data fit)."""
    if not check.get("misfit"):
        return ""
    return ("DATA MISFIT: the model cannot reproduce the data (posterior-predictive p < "
            f"{check['alpha']:g}): " + misfit_details(check)
            + ". The probabilities are conditional on a model that does not fit; treat them "
            "with caution.")


def convergence_verdict(summary, *, sampler_converged: bool, method: str,
                        importance_ess: float | None = None, parameters=None) -> dict:
    """The one convergence rule, applied to every result.

    MCMC: the sampler's own stopping rule was met (>= ``tau_factor`` autocorrelation times,
    stable tau, ESS >= ``min_ess``) **and** every finite R-hat of ``summary`` (the one the user
    sees, computed by :func:`ensemble_rhat`; or only the rows named in ``parameters``) is below
    :data:`RHAT_MAX`. Exact reference: importance effective size >= :data:`EXACT_MIN_ESS`.

    Returns ``{"converged", "rule", "max_r_hat", "worst"}``.
    """
    if method == "exact":
        ok = importance_ess is not None and importance_ess >= EXACT_MIN_ESS
        return {"converged": bool(ok), "max_r_hat": math.nan, "worst": None,
                "rule": f"importance effective size >= {EXACT_MIN_ESS:g}"}
    r = summary["r_hat"].astype(float)
    if parameters is not None:
        r = r[[k for k in r.index if k in set(parameters)]]
    r = r[np.isfinite(r)]
    worst = str(r.idxmax()) if len(r) else None
    max_r = float(r.max()) if len(r) else math.nan
    ok = bool(sampler_converged) and (not len(r) or max_r < RHAT_MAX)
    return {"converged": ok, "max_r_hat": max_r, "worst": worst,
            "rule": f"sampler stopping rule met and every R-hat < {RHAT_MAX:g}"}


def chain_verdict(samples, names, *, sampler_converged: bool) -> dict:
    """:func:`convergence_verdict` of a raw ensemble chain ``samples`` (draw, walker, ndim):
    every coordinate's :func:`ensemble_rhat` below :data:`RHAT_MAX` and the sampler's rule met
    (the profile's MCMC schemes, whose results have no per-parameter summary of the chain)."""
    import pandas as pd

    s = np.asarray(samples, float)
    r = pd.Series({str(n): ensemble_rhat(s[:, :, j].T) for j, n in enumerate(names)},
                  dtype=float)
    out = convergence_verdict(pd.DataFrame({"r_hat": r}), sampler_converged=sampler_converged,
                              method="mcmc")
    out["r_hat"] = r.to_dict()
    return out


def rule_of_three(n: float) -> float:
    """Upper 95 % bound ``3 / n`` on a probability seen in none of ``n`` independent draws
    (Hanley & Lippman-Hand 1983, JAMA 249, 1743), capped at 0.5."""
    return min(0.5, 3.0 / max(float(n), 1.0))


def class_mixing(ind: dict, q: dict, quantity: str) -> dict:
    """Median and 5-95 % range of ``quantity`` among the posterior draws of each class.

    ``ind`` is ``{class: boolean array}``; returns ``{class: (median, q05, q95)}`` (NaN for a
    class without draws).
    """
    x = np.asarray(q[quantity], float).ravel()
    out = {}
    for name, m in ind.items():
        sel = x[np.asarray(m, bool).ravel()]
        if sel.size:
            lo, med, hi = np.quantile(sel, [0.05, 0.5, 0.95])
            out[name] = (float(med), float(lo), float(hi))
        else:
            out[name] = (math.nan, math.nan, math.nan)
    return out


class MisfitWarning(UserWarning):
    """The data sit in the tail of the posterior predictive: the model does not fit them."""


#: Walker groups that play the part of chains in R-hat for an ensemble sampler.
RHAT_GROUPS = 4


def ensemble_rhat(arr, n_groups: int = RHAT_GROUPS) -> float:
    """Rank-normalised split R-hat (Vehtari et al. 2021) of an ensemble run, shape (walker, draw).

    Walkers of an affine-invariant or DE ensemble are not independent chains, and each is short
    (tens of autocorrelation times), so R-hat over walkers is biased upwards by roughly
    ``tau / n_draws`` even for a converged run. Here walker ``w`` joins group ``w mod n_groups``
    and each group's draws are interleaved in time order (draw ``t`` of every walker of the group
    before draw ``t + 1``): split R-hat then compares the first and second halves of the run and
    the groups against each other, each chain being as long as the whole group. With fewer
    walkers than ``2 n_groups`` the walkers are used as chains.
    """
    from ._arviz import numpy_diagnostics

    a = np.asarray(arr, float)
    nw, nd = a.shape
    if nw >= 2 * n_groups:
        k = nw // n_groups
        a = a[: k * n_groups].reshape(k, n_groups, nd).transpose(1, 2, 0).reshape(n_groups, -1)
    with numpy_diagnostics() as az:
        return float(az.rhat(a))
