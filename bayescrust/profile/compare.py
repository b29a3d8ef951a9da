"""The same profile under several thermal states: evidences and how the answers move."""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

__all__ = ["ThermalComparison", "compare_thermal_states"]


@dataclass(frozen=True, eq=False)
class ThermalComparison:
    """Output of :func:`compare_thermal_states`.

    Attributes
    ----------
    results : dict
        ``{state name: ProfileResult}`` (exact path).
    evidence : pandas.DataFrame
        Per state: log_evidence, log_evidence_error, log10_bayes_factor_vs_best with its error
        (the log-evidence errors of the two states in quadrature; 0 for the best itself),
        ``best_vs_this``: the Kass & Raftery (1995) category of the best state's Bayes factor
        against this one (:func:`bayescrust.inference.hypotheses.evidence_category`; "best" on
        its own row), and the posterior probability of the state with equal prior weights (with
        its error by the delta method from the log-evidence errors).
    answers : pandas.DataFrame
        Long table of how each answer moves between states: state, layer, quantity
        (hypothesis or boundary outcome), probability, mcse, data_fit (the layer's
        posterior-predictive check under that state).
    """

    results: dict
    evidence: object
    answers: object


def compare_thermal_states(profile, states: dict, *, done=None, **kwargs) -> ThermalComparison:
    """Run :func:`exact_profile` for ``profile`` under each thermal state in ``states``.

    ``kwargs`` go to :func:`exact_profile` (the same seed for every state); ``done``
    (``{name: ProfileResult}``, exact path) supplies results already computed.
    """
    import pandas as pd

    from ..inference.hypotheses import evidence_category
    from .exact import exact_profile

    if not isinstance(states, dict) or not states:
        raise ValueError("states must be a non-empty dict {name: thermal state}")
    done = dict(done or {})
    results = {name: done[name] if name in done and done[name].method == "exact"
               else exact_profile(dataclasses.replace(profile, thermal=st), **kwargs)
               for name, st in states.items()}
    lz = np.array([r.log_evidence for r in results.values()])
    le = np.array([r.log_evidence_error for r in results.values()])
    post = np.exp(lz - lz.max())
    post /= post.sum()
    # d post_k / d log Z_m = post_k (delta_km - post_m); errors independent across states
    jac = np.diag(post) - np.outer(post, post)
    perr = np.sqrt((jac**2) @ (le**2))
    best = int(np.argmax(lz))
    lbf = (lz - lz[best]) / math.log(10.0)
    lbf_err = np.where(np.arange(lz.size) == best, 0.0, np.hypot(le, le[best]) / math.log(10.0))
    category = ["best" if k == best else evidence_category(-float(v)) for k, v in enumerate(lbf)]
    evidence = pd.DataFrame({"log_evidence": lz, "log_evidence_error": le,
                             "log10_bayes_factor_vs_best": lbf,
                             "log10_bayes_factor_vs_best_error": lbf_err,
                             "best_vs_this": category,
                             "posterior_probability": post, "posterior_probability_error": perr},
                            index=pd.Index(list(results), name="thermal_state"))
    rows = []
    for name, r in results.items():
        for _, h in r.hypotheses.iterrows():
            rows.append({"thermal_state": name, "layer": h["layer"], "quantity": h["hypothesis"],
                         "probability": h["probability"], "mcse": h["mcse"],
                         "data_fit": h.get("data_fit", "")})
        for _, b in r.boundary.iterrows():
            rows.append({"thermal_state": name, "layer": "crust-mantle boundary",
                         "quantity": b["outcome"], "probability": b["probability"],
                         "mcse": b["mcse"], "data_fit": r.data_fit})
    return ThermalComparison(results=results, evidence=evidence, answers=pd.DataFrame(rows))

