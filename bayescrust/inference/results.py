"""The result of a layer inversion and the one place where its arviz object is built."""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from .hypotheses import evidence_category, indicators

__all__ = ["LayerResult", "HDI_PROB", "hypothesis_table", "build_idata", "summarize"]

#: Probability mass of the highest-density intervals in ``LayerResult.summary`` (arviz default).
HDI_PROB = 0.94


@dataclass(frozen=True, eq=False)
class LayerResult:
    """Posterior of one layer (from MCMC or the exact reference).

    Attributes
    ----------
    idata : arviz.InferenceData
        Groups posterior, prior, observed_data, log_likelihood, sample_stats; posterior
        variables are every parameter, every rock fraction and the derived quantities
        (vp, vs, density, vp_vs, ultramafic_fraction, melt_fraction_effective,
        serpentinization_effective, ...); provenance (package version, seed, method, settings)
        in ``idata.attrs``.
    hypotheses : pandas.DataFrame
        Indexed by hypothesis: prior_probability, posterior_probability, posterior_mcse,
        bayes_factor, log10_bayes_factor, evidence_category (Kass & Raftery 1995).
    summary : pandas.DataFrame
        Per quantity: mean, sd, median, hdi_low, hdi_high (94 % HDI), r_hat, ess_bulk.
    log_evidence, log_evidence_error : float
        Natural log of the marginal likelihood and its standard error.
    diagnostics : dict
        Sampler diagnostics (tau, n_steps, burn, thin, converged, acceptance, ...) or, for the
        exact reference, the number of points and the importance-sampling effective size.
    layer : Layer
    settings : dict
        Plain-dict echo of the resolved configuration (for run.toml).
    """

    idata: object
    hypotheses: object
    summary: object
    log_evidence: float
    log_evidence_error: float
    diagnostics: dict
    layer: object
    settings: dict

    def probability(self, name: str) -> float:
        """Posterior probability of hypothesis ``name``."""
        return float(self.hypotheses.loc[name, "posterior_probability"])

    def __repr__(self) -> str:
        return (f"LayerResult(layer={self.layer.name!r}, method={self.settings.get('method')!r}, "
                f"log_evidence={self.log_evidence:.3f} +- {self.log_evidence_error:.3f}, "
                f"hypotheses={list(self.hypotheses.index)})")


def hypothesis_table(prior_p: dict, post_p: dict, post_se: dict, n_prior: dict | None = None):
    """DataFrame of prior and posterior probabilities, Bayes factors, their errors and categories.

    ``n_prior`` gives the number of independent prior draws behind each prior probability
    (binomial error ``sqrt(pi (1 - pi) / n)``). The Monte Carlo error of ``log10 B`` follows by
    the delta method from the errors of both probabilities (independent estimates):
    ``ln B = logit(p) - logit(pi)``, so
    ``se(log10 B) = sqrt((se_p / (p (1 - p)))^2 + (se_pi / (pi (1 - pi)))^2) / ln 10``.
    """
    import pandas as pd

    rows = []
    for name in post_p:
        pi, p = float(prior_p[name]), float(post_p[name])
        se_p = float(post_se[name])
        n_pi = (n_prior or {}).get(name)
        se_pi = math.sqrt(pi * (1.0 - pi) / n_pi) if n_pi else math.nan
        if not 0 < pi < 1:
            bf = math.nan  # a hypothesis the prior excludes (or is sure of) has no Bayes factor
        elif p in (0.0, 1.0):
            bf = 0.0 if p == 0.0 else math.inf  # python floats raise on division by zero
        else:
            bf = (p / (1 - p)) / (pi / (1 - pi))
        lbf = math.log10(bf) if bf > 0 else (-math.inf if bf == 0 else math.nan)
        if 0 < p < 1 and 0 < pi < 1:
            lbf_se = math.hypot(se_p / (p * (1 - p)), se_pi / (pi * (1 - pi))) / math.log(10.0)
        else:
            lbf_se = math.nan
        rows.append({
            "hypothesis": name, "prior_probability": pi, "prior_mcse": se_pi,
            "posterior_probability": p, "posterior_mcse": se_p, "bayes_factor": bf,
            "log10_bayes_factor": lbf, "log10_bayes_factor_mcse": lbf_se,
            "evidence_category": evidence_category(lbf),
        })
    cols = ["prior_probability", "prior_mcse", "posterior_probability", "posterior_mcse",
            "bayes_factor", "log10_bayes_factor", "log10_bayes_factor_mcse", "evidence_category"]
    if not rows:
        return pd.DataFrame(columns=cols, index=pd.Index([], name="hypothesis"))
    return pd.DataFrame(rows).set_index("hypothesis")[cols]


def build_idata(*, posterior: dict, prior: dict, log_likelihood: dict, sample_stats: dict,
                observed: dict, attrs: dict, constant_data: dict | None = None):
    """Assemble the InferenceData; arrays are (chain, draw) shaped.

    ``observed`` is ``{name: (value, sigma)}``: the values go to ``observed_data``, the 1-sigma
    errors to ``constant_data`` as ``<name>_sigma`` (with any other ``constant_data``).
    """
    import arviz as az

    with warnings.catch_warnings():
        # arviz warns when there are more chains (walkers) than draws; that is by design here.
        warnings.filterwarnings("ignore", message="More chains", category=UserWarning)
        return az.from_dict(
            posterior=posterior, prior=prior, log_likelihood=log_likelihood,
            sample_stats=sample_stats,
            observed_data={k: np.array([v]) for k, (v, _) in observed.items()},
            constant_data={**{f"{k}_sigma": np.array([sd]) for k, (_, sd) in observed.items()},
                           **(constant_data or {})},
            attrs=attrs,
        )


def summarize(posterior: dict, *, ess_override: float | None = None, mcmc: bool = True):
    """Summary table from (chain, draw) arrays: mean, sd, median, HDI, r_hat, ess_bulk.

    For the exact reference (``mcmc=False``) r_hat is NaN and ess_bulk is ``ess_override``
    (the importance-sampling effective size).
    """
    import arviz as az
    import pandas as pd

    rows = []
    for name, arr in posterior.items():
        arr = np.asarray(arr, float)
        flat = arr.ravel()
        const = bool(np.ptp(flat) == 0)
        if const:
            lo = hi = float(flat[0])
        else:
            lo, hi = (float(v) for v in az.hdi(flat, hdi_prob=HDI_PROB))
        if mcmc and not const:
            with warnings.catch_warnings():
                warnings.filterwarnings("ignore", message="More chains", category=UserWarning)
                r_hat = float(az.rhat(arr))
                ess = float(az.ess(arr, method="bulk"))
        else:
            r_hat = math.nan
            ess = math.nan if (const or ess_override is None) else float(ess_override)
        rows.append({"quantity": name, "mean": float(flat.mean()), "sd": float(flat.std()),
                     "median": float(np.median(flat)), "hdi_low": lo, "hdi_high": hi,
                     "r_hat": r_hat, "ess_bulk": ess})
    return pd.DataFrame(rows).set_index("quantity")


def probabilities_mcmc(hyps: dict, q: dict, ess_ref: float | None = None):
    """Posterior probability and MCSE of each hypothesis from (walker, draw) quantity arrays.

    The error is measured on the ensemble (:func:`bayescrust.inference.sampler.ensemble_mcse`):
    the autocorrelation of the ensemble-average indicator series, which sees walker-to-walker
    correlation and slow hopping between modes, gives the indicator's effective sample size
    ``ESS = p (1 - p) / mcse^2``. The reported error is ``sqrt(p~ (1 - p~) / ESS)`` with
    ``p~ = (ESS p + 2) / (ESS + 4)``, the Agresti & Coull (1998) adjusted proportion with
    effective counts, so that rare (or absent) regions do not get a near-zero error; when the
    indicator is constant over the run (p = 0 or 1) ``ESS`` is ``ess_ref`` (the smallest
    effective sample size of the sampler's monitored averages), else the number of draws.
    """
    from .sampler import ensemble_mcse

    ind = indicators(hyps, q)
    p, se = {}, {}
    for name, m in ind.items():
        m = np.atleast_2d(np.asarray(m, float))
        pm, mc, _ = ensemble_mcse(m)
        ess = float(m.size) if ess_ref is None or not np.isfinite(ess_ref) else float(ess_ref)
        if 0.0 < pm < 1.0 and mc > 0:
            ess = min(float(m.size), pm * (1.0 - pm) / mc**2)
        ess = max(ess, 1.0)
        pt = (ess * pm + 2.0) / (ess + 4.0)
        se[name] = math.sqrt(pt * (1 - pt) / ess)
        p[name] = pm
    return p, se
