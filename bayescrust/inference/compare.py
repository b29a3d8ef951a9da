"""The same layer under several thermal-state priors, side by side."""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

__all__ = ["PriorComparison", "compare_priors", "probability_chart"]


@dataclass(frozen=True, eq=False)
class PriorComparison:
    """Output of :func:`compare_priors`.

    Attributes
    ----------
    results : dict
        ``{prior name: LayerResult}``.
    probabilities : pandas.DataFrame
        Posterior probability of each hypothesis (rows) under each prior (columns).
    errors : pandas.DataFrame
        Their Monte Carlo standard errors.
    evidence : pandas.DataFrame
        Per prior: log_evidence, log_evidence_error, log10_bayes_factor_vs_best (against the
        prior with the highest evidence), and posterior_probability of the prior itself when
        all priors are given equal prior weight.
    bayes_factors : pandas.DataFrame
        ``log10`` Bayes factor of the row prior against the column prior.
    bayes_factor_errors : pandas.DataFrame
        Their Monte Carlo errors, ``hypot(err_i, err_j) / ln 10`` from the log-evidence errors
        taken as independent. The priors share a seed, so the real errors of these differences
        are smaller (positively correlated estimates): the stated errors are conservative.
    """

    results: dict
    probabilities: object
    errors: object
    evidence: object
    bayes_factors: object
    bayes_factor_errors: object = None


def compare_priors(layer, *, thermal_priors: dict, method: str = "exact", **kwargs):
    """Invert ``layer`` under each thermal-state prior and compare.

    Parameters
    ----------
    layer : Layer
    thermal_priors : dict
        ``{name: thermal-state prior or 1-D temperature prior}``; each replaces
        ``priors["temperature_c"]``.
    method : {"exact", "mcmc"}
        :func:`bayescrust.exact_layer` or :func:`bayescrust.invert_layer`.
    **kwargs
        Passed to the inversion (``rocks``, ``priors``, ``hypotheses``, ``seed``, ...); the
        same seed is used for each prior.

    Returns
    -------
    PriorComparison
    """
    import pandas as pd

    from .api import exact_layer, invert_layer

    if method not in ("exact", "mcmc"):
        raise ValueError(f"method must be 'exact' or 'mcmc'; got {method!r}")
    if not isinstance(thermal_priors, dict) or not thermal_priors:
        raise ValueError("thermal_priors must be a non-empty dict {name: prior}")
    fn = exact_layer if method == "exact" else invert_layer
    base = dict(kwargs.pop("priors", None) or {})
    results = {}
    for name, tp in thermal_priors.items():
        with warnings.catch_warnings(record=True) as rec:
            warnings.simplefilter("always")
            results[name] = fn(layer, priors={**base, "temperature_c": tp}, **kwargs)
        for w in rec:  # say under which prior: the runs' warnings read alike
            warnings.warn(f"under thermal prior {name!r}: {w.message}", w.category,
                          stacklevel=2)
    probs = pd.DataFrame({k: r.hypotheses["posterior_probability"] for k, r in results.items()})
    errs = pd.DataFrame({k: r.hypotheses["posterior_mcse"] for k, r in results.items()})
    lz = np.array([r.log_evidence for r in results.values()])
    le = np.array([r.log_evidence_error for r in results.values()])
    with np.errstate(invalid="ignore"):
        post = np.exp(lz - np.nanmax(lz))
        post = post / np.nansum(post)
    names = list(results)
    best = int(np.nanargmax(lz))
    # delta method with independent log-evidence errors (conservative, see PriorComparison):
    # dP_k / d ln Z_j = P_k (delta_kj - P_j)
    jac = post[:, None] * (np.eye(len(post)) - post[None, :])
    post_err = np.sqrt(np.sum((jac * le[None, :]) ** 2, axis=1))
    bf_err = np.hypot(le[:, None], le[None, :]) / math.log(10.0)
    np.fill_diagonal(bf_err, 0.0)
    evidence = pd.DataFrame({"log_evidence": lz, "log_evidence_error": le,
                             "log10_bayes_factor_vs_best": (lz - np.nanmax(lz)) / math.log(10.0),
                             "log10_bayes_factor_vs_best_error": bf_err[:, best],
                             "posterior_probability": post,
                             "posterior_probability_error": post_err},
                            index=pd.Index(names, name="prior"))
    bf = (lz[:, None] - lz[None, :]) / math.log(10.0)
    bayes_factors = pd.DataFrame(bf, index=pd.Index(names, name="prior"), columns=names)
    return PriorComparison(results=results, probabilities=probs, errors=errs, evidence=evidence,
                           bayes_factors=bayes_factors,
                           bayes_factor_errors=pd.DataFrame(
                               bf_err, index=pd.Index(names, name="prior"), columns=names))


def probability_chart(layer, vp_values, *, thermal_priors: dict, seed=None, n_points=2**15,
                      **kwargs):
    """Probability of each interpretation as a function of observed Vp, under each prior.

    For each thermal-state prior one scrambled-Sobol prior design (``n_points``) is evaluated by
    the forward model once and then weighed against every observed Vp at the layer's Vp error
    (other observations of the layer unchanged): the exact reference of
    :func:`bayescrust.exact_layer` (first stage), batched over observed values.

    Parameters
    ----------
    layer : Layer
        Must have an observed Vp (its sigma is used for every value).
    vp_values : array_like
        Observed Vp values, km/s.
    thermal_priors : dict
        ``{name: thermal-state prior or 1-D temperature prior}``.
    seed : int or numpy.random.Generator, optional
        Seeds the designs (the same stream for each prior).
    n_points : int
        Design size per prior (rounded up to a power of two).
    **kwargs
        Model arguments of :func:`bayescrust.exact_layer` (``rocks``, ``priors``,
        ``hypotheses``, ``model_error``, ``likelihood``, ``nu``, ``forward``).

    Returns
    -------
    pandas.DataFrame
        Long table: ``thermal_prior, vp, hypothesis, probability, mcse, importance_ess``,
        ``ppc_p_value`` and ``data_fit``: the posterior-predictive check of the layer's data
        with that observed Vp (:func:`bayescrust.inference.trust.predictive_check` on the
        weighted design: the rule and threshold of :func:`bayescrust.exact_layer`), its
        smallest p-value and ``"ok"`` or ``"MISFIT (vp, ...)"``. Where it says MISFIT the model
        cannot produce that Vp and the probabilities are conditional on a model that does not
        fit.
    """
    import pandas as pd

    from .api import _setup, resolve_rng
    from .evidence import prior_design, weigh_design
    from .hypotheses import indicators
    from .trust import data_fit_label, predictive_check

    if layer.vp is None:
        raise ValueError(f"layer {layer.name!r}: a probability chart needs an observed vp")
    vp = np.atleast_1d(np.asarray(vp_values, float))
    if vp.ndim != 1 or not np.all(np.isfinite(vp)) or np.any(vp <= 0):
        raise ValueError(f"vp_values must be finite positive velocities; got {vp_values!r}")
    if not isinstance(thermal_priors, dict) or not thermal_priors:
        raise ValueError("thermal_priors must be a non-empty dict {name: prior}")
    model_keys = ("rocks", "priors", "hypotheses", "model_error", "likelihood", "nu", "forward")
    unknown = set(kwargs) - set(model_keys)
    if unknown:
        raise ValueError(f"unknown arguments {sorted(unknown)}; allowed {list(model_keys)}")
    base = dict(kwargs.pop("priors", None) or {})
    resolve_rng(seed)  # validates the seed
    rows = []
    for name, tp in thermal_priors.items():
        if isinstance(seed, np.random.Generator):
            rng = seed.spawn(1)[0]
        else:  # the design stream exact_layer(seed=...) uses for its first stage
            rng = resolve_rng(seed)[0].spawn(3)[0]
        model, hyps = _setup(layer, kwargs.get("rocks", ("gabbro", "harzburgite")),
                             {**base, "temperature_c": tp}, kwargs.get("hypotheses"),
                             kwargs.get("model_error"), kwargs.get("likelihood", "gaussian"),
                             kwargs.get("nu", 4.0), kwargs.get("forward"))
        _, q, _ = prior_design(model, rng, n_points)
        observed = {k: v for k, (v, _) in model.observed.items()}
        observed["vp"] = vp[:, None]
        loglik, _ = weigh_design(model, q, observed)          # (n_vp, n)
        w = np.exp(loglik - np.max(loglik, axis=1, keepdims=True))
        sw = w.sum(axis=1)
        ess = sw**2 / np.sum(w * w, axis=1)
        checks = [predictive_check(model, q, weights=w[j], observed={"vp": float(x)})
                  for j, x in enumerate(vp)]
        p_min = [min(v["p_value"] for v in c["observables"].values()) for c in checks]
        fit = [data_fit_label(c) for c in checks]
        for h, ind in indicators(hyps, q).items():
            v = ind.astype(float)
            p = (w @ v) / sw
            se = np.sqrt(np.sum(w**2 * (v[None, :] - p[:, None]) ** 2, axis=1)) / sw
            rows += [{"thermal_prior": name, "vp": float(x), "hypothesis": h,
                      "probability": float(pi), "mcse": float(si), "importance_ess": float(e),
                      "ppc_p_value": pm, "data_fit": f}
                     for x, pi, si, e, pm, f in zip(vp, p, se, ess, p_min, fit, strict=True)]
    return pd.DataFrame(rows)
