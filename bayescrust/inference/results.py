"""The result of a layer inversion and the one place where its arviz object is built."""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from .hypotheses import evidence_category, indicators
from .trust import ensemble_rhat

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

    # --- trust (issue 9): predictive check and convergence word -------------------------
    @property
    def predictive_check(self) -> dict:
        """Posterior-predictive check (:func:`bayescrust.inference.trust.predictive_check`)."""
        return self.diagnostics.get("predictive_check", {})

    @property
    def misfit(self) -> bool:
        """True when the data sit in the tail of the posterior predictive (see PPC_ALPHA)."""
        return bool(self.predictive_check.get("misfit", False))

    @property
    def converged(self) -> bool:
        """The one convergence rule (:func:`bayescrust.inference.trust.convergence_verdict`)."""
        return bool(self.diagnostics.get("converged", False))

    def warnings(self) -> list[str]:
        """Plain-text warnings a reader must see beside the probabilities."""
        from .trust import misfit_message

        out = []
        if self.misfit:
            out.append(misfit_message(self.predictive_check))
        if not self.converged:
            out.append("NOT CONVERGED by the rule " + str(self.diagnostics.get(
                "convergence_rule", "")) + "; the probabilities carry extra Monte Carlo error.")
        return out
    # --- end trust -------------------------------------------------------------------

    def __repr__(self) -> str:
        return (f"LayerResult(layer={self.layer.name!r}, method={self.settings.get('method')!r}, "
                f"log_evidence={self.log_evidence:.3f} +- {self.log_evidence_error:.3f}, "
                f"hypotheses={list(self.hypotheses.index)}"
                + (", MISFIT" if self.misfit else "") + ")")


def hypothesis_table(prior_p: dict, post_p: dict, post_se: dict, n_prior: dict | None = None,
                     n_post: float | None = None):
    """DataFrame of prior and posterior probabilities, Bayes factors, their errors and categories.

    ``n_prior`` gives the number of independent prior draws behind each prior probability
    (binomial error ``sqrt(pi (1 - pi) / n)``). The Monte Carlo error of ``log10 B`` follows by
    the delta method from the errors of both probabilities (independent estimates):
    ``ln B = logit(p) - logit(pi)``, so
    ``se(log10 B) = sqrt((se_p / (p (1 - p)))^2 + (se_pi / (pi (1 - pi)))^2) / ln 10``.

    A probability of exactly 0 or 1 (no draw, or every draw, in the class) gives no finite
    Bayes factor; it is replaced by its 95 % bound from the number of (effective) draws,
    ``3 / n`` (:func:`bayescrust.inference.trust.rule_of_three`; ``n_post`` for the posterior,
    ``n_prior`` for the prior), and ``bayes_factor_bound`` says which side the true value lies
    on (``"<"`` or ``">"``; ``"="`` for an estimate, ``""`` when undefined).
    """
    import pandas as pd

    from .trust import rule_of_three

    def odds(x):
        return x / (1.0 - x)

    rows = []
    for name in post_p:
        pi, p = float(prior_p[name]), float(post_p[name])
        se_p = float(post_se[name])
        n_pi = (n_prior or {}).get(name)
        se_pi = math.sqrt(pi * (1.0 - pi) / n_pi) if n_pi else math.nan
        r_pi = rule_of_three(n_pi) if n_pi else math.nan
        r_p = rule_of_three(n_post) if n_post else math.nan
        pi_b, p_b, side = pi, p, "="
        if p == 0.0:
            p_b, side = r_p, "<"
        elif p == 1.0:
            p_b, side = 1.0 - r_p, ">"
        if pi == 0.0:
            pi_b, side = r_pi, ("" if side == "<" else ">")
        elif pi == 1.0:
            pi_b, side = 1.0 - r_pi, ("" if side == ">" else "<")
        if side and 0 < p_b < 1 and 0 < pi_b < 1:
            bf = odds(p_b) / odds(pi_b)
        else:
            bf, side = math.nan, ""
        lbf = math.log10(bf) if bf > 0 else math.nan
        if 0 < p < 1 and 0 < pi < 1:
            lbf_se = math.hypot(se_p / (p * (1 - p)), se_pi / (pi * (1 - pi))) / math.log(10.0)
        else:
            lbf_se = math.nan
        cat = evidence_category(lbf)
        if side in ("<", ">"):
            # a bound gives the category only on the side it bounds
            informative = (side == "<" and lbf < 0) or (side == ">" and lbf > 0)
            cat = f"{cat} or more (bound)" if informative else "undetermined (too few draws)"
        rows.append({
            "hypothesis": name, "prior_probability": pi, "prior_mcse": se_pi,
            "posterior_probability": p, "posterior_mcse": se_p, "bayes_factor_bound": side,
            "bayes_factor": bf, "log10_bayes_factor": lbf, "log10_bayes_factor_mcse": lbf_se,
            "evidence_category": cat,
        })
    cols = ["prior_probability", "prior_mcse", "posterior_probability", "posterior_mcse",
            "bayes_factor_bound", "bayes_factor", "log10_bayes_factor",
            "log10_bayes_factor_mcse", "evidence_category"]
    if not rows:
        return pd.DataFrame(columns=cols, index=pd.Index([], name="hypothesis"))
    return pd.DataFrame(rows).set_index("hypothesis")[cols]


def build_idata(*, posterior: dict, prior: dict, log_likelihood: dict, sample_stats: dict,
                observed: dict, attrs: dict, constant_data: dict | None = None):
    """Assemble the InferenceData; arrays are (chain, draw) shaped.

    ``observed`` is ``{name: (value, sigma)}``: the values go to ``observed_data``, the 1-sigma
    errors to ``constant_data`` as ``<name>_sigma`` (with any other ``constant_data``).
    """
    from ._arviz import module

    az = module()
    with warnings.catch_warnings():
        # arviz warns when there are more chains (walkers) than draws; that is by design here
        # (0.2x: "More chains ...", 1.x: "Found chain dimension to be longer than draw ...")
        warnings.filterwarnings("ignore", message="More chains", category=UserWarning)
        warnings.filterwarnings("ignore", message="Found chain dimension to be longer",
                                category=UserWarning)
        idata = _from_dict(az,
            posterior=posterior, prior=prior, log_likelihood=log_likelihood,
            sample_stats=sample_stats,
            observed_data={k: np.array([v]) for k, (v, _) in observed.items()},
            constant_data={**{f"{k}_sigma": np.array([sd]) for k, (_, sd) in observed.items()},
                           **(constant_data or {})},
            attrs=attrs,
        )
    _set_units(idata)
    return idata


# --- arviz 0.2x / 1.x compatibility and units (issue 9) ------------------------------------
#: Unit attribute of every variable written to posterior.nc (rock names: volume fraction).
VARIABLE_UNITS = {
    "temperature_c": "deg C", "solidus_c": "deg C", "porosity": "volume fraction",
    "aspect_ratio": "1", "melt_aspect_ratio": "1", "melt_fraction": "volume fraction",
    "melt_fraction_effective": "volume fraction",
    "serpentinization": "fraction of the ultramafic volume",
    "serpentinization_effective": "fraction of the ultramafic volume",
    "serpentine_fraction": "volume fraction", "vp": "km/s", "vs": "km/s", "vp_vs": "1",
    "density": "g/cm^3", "vp_sigma": "km/s", "vs_sigma": "km/s", "vp_vs_sigma": "1",
    "density_sigma": "g/cm^3", "lp": "1 (natural log)",
}


def _from_dict(az, *, dims=None, coords=None, **groups):
    """``az.from_dict`` of arviz 0.2x (keyword groups, InferenceData) or 1.x (one dict of
    groups, DataTree); both have the same groups and write the same NetCDF layout."""
    if _major(az) >= 1:
        attrs = groups.pop("attrs", None)
        tree = az.from_dict({k: v for k, v in groups.items() if v is not None}, dims=dims,
                            coords=coords)
        tree.attrs.update(attrs or {})  # provenance at the root, where 0.2x reads it too
        return tree
    return az.from_dict(dims=dims, coords=coords, **groups)


def _major(az) -> int:
    return int(str(az.__version__).split(".")[0])


def _hdi(az, flat, prob):
    """Highest-density interval of a 1-D sample (``hdi_prob=`` in 0.2x, ``prob=`` in 1.x)."""
    if _major(az) >= 1:
        return np.asarray(az.hdi(flat, prob=prob), float).ravel()
    return az.hdi(flat, hdi_prob=prob)


def _set_units(idata):
    groups = ("posterior", "prior", "observed_data", "constant_data", "log_likelihood",
              "sample_stats")
    for g in groups:
        ds = getattr(idata, g, None) if not hasattr(idata, "children") else (
            idata[g] if g in idata.children else None)
        if ds is None:
            continue
        for v in ds.data_vars:
            unit = VARIABLE_UNITS.get(str(v), "volume fraction")
            if g == "log_likelihood":
                unit = "1 (natural log density)"
            ds[v].attrs["units"] = unit
# --- end arviz compatibility ------------------------------------------------------------


def is_constant(values) -> bool:
    """Whether ``values`` are one number in every draw: their spread is at most 1e-9 of their
    size, i.e. floating-point rounding (a solidus summed over rocks that share it)."""
    v = np.asarray(values, float).ravel()
    v = v[np.isfinite(v)]
    return bool(v.size == 0 or np.ptp(v) <= 1e-9 * float(np.max(np.abs(v))))


def summarize(posterior: dict, *, ess_override: float | None = None, mcmc: bool = True):
    """Summary table from (chain, draw) arrays: mean, sd, median, HDI, r_hat, ess_bulk.

    For the exact reference (``mcmc=False``) r_hat is NaN and ess_bulk is ``ess_override``
    (the importance-sampling effective size).
    """
    import pandas as pd

    from ._arviz import numpy_diagnostics

    with numpy_diagnostics() as az:
        return _summary_rows(az, pd, posterior, ess_override, mcmc)


def _summary_rows(az, pd, posterior, ess_override, mcmc):
    rows, seen = [], []
    for name, arr in posterior.items():
        arr = np.asarray(arr, float)
        # a quantity equal draw for draw to one already summarised (e.g. gabbroic_fraction and
        # gabbro when gabbro is the only gabbroic rock) has the same row
        same = next((r for a, r in seen if a.shape == arr.shape and np.array_equal(a, arr)),
                    None)
        if same is not None:
            rows.append({**same, "quantity": name})
            continue
        flat = arr.ravel()
        const = is_constant(flat)
        if const:
            lo = hi = float(flat[0])
        else:
            lo, hi = (float(v) for v in _hdi(az, flat, HDI_PROB))
        if mcmc and not const:
            with warnings.catch_warnings():
                warnings.filterwarnings("ignore", message="More chains", category=UserWarning)
                r_hat = ensemble_rhat(arr)  # walker groups as chains (trust.py)
                ess = float(az.ess(arr, method="bulk"))
        else:
            r_hat = math.nan
            ess = math.nan if (const or ess_override is None) else float(ess_override)
        rows.append({"quantity": name, "mean": float(flat.mean()),
                     "sd": 0.0 if const else float(flat.std()),
                     "median": float(np.median(flat)), "hdi_low": lo, "hdi_high": hi,
                     "r_hat": r_hat, "ess_bulk": ess})
        seen.append((arr, rows[-1]))
    return pd.DataFrame(rows).set_index("quantity")


def agresti_coull_se(p: float, n: float) -> float:
    """Error of a proportion ``p`` seen in ``n`` (effective) draws by the Agresti & Coull (1998,
    Am. Stat. 52, 119) adjusted proportion: ``sqrt(p~ (1 - p~) / n)``, ``p~ = (n p + 2) / (n + 4)``
    (``n`` at least 1), so that 0 of n (or n of n) is not +- 0."""
    n = max(float(n), 1.0)
    pt = (n * p + 2.0) / (n + 4.0)
    return math.sqrt(pt * (1 - pt) / n)


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
        se[name] = agresti_coull_se(pm, ess)
        p[name] = pm
    return p, se
