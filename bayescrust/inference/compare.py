"""The same layer under several thermal-state priors, side by side."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["PriorComparison", "compare_priors"]


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
        Per prior: log_evidence, log_evidence_error, and posterior_probability of the prior
        itself when all priors are given equal prior weight.
    bayes_factors : pandas.DataFrame
        ``log10`` Bayes factor of the row prior against the column prior.
    """

    results: dict
    probabilities: object
    errors: object
    evidence: object
    bayes_factors: object


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
        results[name] = fn(layer, priors={**base, "temperature_c": tp}, **kwargs)
    probs = pd.DataFrame({k: r.hypotheses["posterior_probability"] for k, r in results.items()})
    errs = pd.DataFrame({k: r.hypotheses["posterior_mcse"] for k, r in results.items()})
    lz = np.array([r.log_evidence for r in results.values()])
    le = np.array([r.log_evidence_error for r in results.values()])
    with np.errstate(invalid="ignore"):
        post = np.exp(lz - np.nanmax(lz))
        post = post / np.nansum(post)
    names = list(results)
    evidence = pd.DataFrame({"log_evidence": lz, "log_evidence_error": le,
                             "posterior_probability": post}, index=pd.Index(names, name="prior"))
    bf = (lz[:, None] - lz[None, :]) / math.log(10.0)
    bayes_factors = pd.DataFrame(bf, index=pd.Index(names, name="prior"), columns=names)
    return PriorComparison(results=results, probabilities=probs, errors=errs, evidence=evidence,
                           bayes_factors=bayes_factors)
