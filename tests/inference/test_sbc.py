"""Simulation-based calibration (Talts et al. 2018, arXiv:1804.06788) on a small model.

Draw parameters from the prior, simulate observations from the likelihood, infer, and record
the rank of the true value among L = 99 posterior draws. A calibrated method gives ranks
uniform on {0, ..., 99}: tested by a chi-square test on 10 equal bins (p > 0.01), and by the
coverage of central 50 % and 90 % credible intervals (ranks 25-74 and 5-94).
"""

import numpy as np
import pytest
from scipy import stats

import bayescrust as bc
from bayescrust.inference.evidence import prior_design
from bayescrust.inference.model import LayerModel

L_DRAWS = 99
LAYER = bc.Layer("lower crust", top_km=4.0, bottom_km=6.0, water_depth_km=3.0,
                 vp=(7.0, 0.1), vs=(3.9, 0.1))
# Two free parameters (harzburgite fraction, temperature): everything else fixed.
CONFIG = dict(rocks=("gabbro", "harzburgite"),
              priors={"porosity": 0.0, "melt_fraction": 0.0, "serpentinization": 0.0,
                      "temperature_c": bc.priors.Uniform(0.0, 1200.0)},
              forward={"inclusion_scheme": "kuster_toksoz"})


def _simulate(model, rng, m):
    theta = model.sample_prior(rng, m)
    q = model.quantities(theta)
    y = {k: q[k] + model.total_sigma(k, q[k]) * rng.standard_normal(m) for k in model.observed}
    return theta, y


def _check(ranks, m):
    for j in range(ranks.shape[1]):
        counts = np.bincount(ranks[:, j] // 10, minlength=10)
        assert stats.chisquare(counts).pvalue > 0.01, counts
        cov50 = np.mean((ranks[:, j] >= 25) & (ranks[:, j] <= 74))
        cov90 = np.mean((ranks[:, j] >= 5) & (ranks[:, j] <= 94))
        # 3 binomial standard errors for m replicates
        assert abs(cov50 - 0.5) < 3 * np.sqrt(0.25 / m), cov50
        assert abs(cov90 - 0.9) < 3 * np.sqrt(0.09 / m), cov90


def _ranks_exact(m, seed):
    model = LayerModel.build(LAYER, **CONFIG)
    rng = np.random.default_rng(seed)
    theta_true, y = _simulate(model, rng, m)
    theta, q, _ = prior_design(model, rng, 2**14)
    # batched likelihood: one row per simulated data set (the grid fast path)
    ll = sum(model.log_likelihood_terms(q, {k: v[:, None] for k, v in y.items()}).values())
    w = np.exp(ll - ll.max(axis=1, keepdims=True))
    ranks = np.empty((m, model.ndim), int)
    for i in range(m):  # one resampling per replicate
        idx = rng.choice(w.shape[1], size=L_DRAWS, p=w[i] / w[i].sum())
        ranks[i] = np.sum(theta[idx] < theta_true[i], axis=0)
    return ranks


def test_sbc_exact_reference():
    m = 300
    _check(_ranks_exact(m, seed=2024), m)


@pytest.mark.slow
def test_sbc_exact_reference_large():
    m = 2000
    _check(_ranks_exact(m, seed=7), m)


def _ranks_mcmc(m, seed):
    import warnings

    model = LayerModel.build(LAYER, **CONFIG)
    rng = np.random.default_rng(seed)
    theta_true, y = _simulate(model, rng, m)
    ranks = np.empty((m, model.ndim), int)
    for i in range(m):
        layer = bc.Layer("sim", top_km=4.0, bottom_km=6.0, water_depth_km=3.0,
                         vp=(float(np.clip(y["vp"][i], 0.5, 12)), 0.1),
                         vs=(float(np.clip(y["vs"][i], 0.1, 8)), 0.1))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", bc.ConvergenceWarning)
            res = bc.invert_layer(layer, **CONFIG, seed=int(rng.integers(2**31)), min_ess=400,
                                  max_steps=4000, evidence=False, n_prior=100)
        post = res.idata.posterior
        draws = np.stack([post["gabbro"].values.ravel(),
                          post["temperature_c"].values.ravel()], axis=1)
        idx = rng.choice(draws.shape[0], size=L_DRAWS, replace=False)
        ranks[i] = np.sum(draws[idx] < theta_true[i], axis=0)
    return ranks


@pytest.mark.slow
def test_sbc_mcmc():
    m = 100
    _check(_ranks_mcmc(m, seed=99), m)
