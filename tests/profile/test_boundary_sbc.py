"""Calibration of the crust-mantle boundary posterior (simulation-based, Talts et al. 2018).

Synthetic profiles are drawn from the profile prior: thermal parameters from their priors, each
layer's rock fractions and other parameters from its prior, its temperature from the geotherm
plus scatter; observations are the forward model's Vp (and Vs) plus Gaussian noise with the
likelihood's total sigma. The pressure is the fixed reference column (``pressure="reference"``),
so the simulated and the inverted model are the same. For a calibrated posterior
(a) the average posterior probability of each boundary outcome equals its frequency among the
true profiles (E_d[P(k | d)] = P(k)), checked within 3.5 standard errors;
(b) the 90 % credible set of outcomes (most probable first) covers the true outcome in at least
90 % of profiles, less 3 binomial standard errors (discrete sets over-cover).
"""

import dataclasses
import math
import warnings

import numpy as np
import pytest
from scipy import stats

from bayescrust import Layer, MisfitWarning
from bayescrust.inference.priors import Uniform
from bayescrust.profile import HalfSpaceState, Profile, exact_profile

_TEMPLATE = [Layer("L1", top_km=0.0, bottom_km=1.5, vp=(5.0, 0.15)),
             Layer("L2", top_km=1.5, bottom_km=4.0, vp=(6.8, 0.1), vs=(3.8, 0.1)),
             Layer("L3", top_km=4.0, bottom_km=6.0, vp=(7.0, 0.1)),
             Layer("L4", top_km=6.0, bottom_km=8.0, vp=(7.8, 0.1), vs=(4.4, 0.1))]
_ROCKS = [("basalt", "gabbro"), ("gabbro", "harzburgite"), ("gabbro", "harzburgite"),
          ("gabbro", "harzburgite")]
_PRIORS = [{}, {"melt_fraction": 0.0}, {"melt_fraction": 0.0}, {"melt_fraction": 0.0}]


def _base():
    th = HalfSpaceState(age_myr=Uniform(1.0, 20.0), mantle_temperature_c=1350.0, scatter_c=60.0)
    return Profile(_TEMPLATE, th, water_depth_km=3.0, rocks=_ROCKS, priors=_PRIORS,
                   pressure="reference")


def _simulate(base, rng):
    th = base.thermal
    phi = th.from_unit(rng.random((1, th.ndim)))
    geo = th.geotherm_c(base.mid_depths_km, phi)[0]
    lo, hi = base.temperature_range_c
    layers, mantle = [], []
    for i, m in enumerate(base.layer_models()):
        theta = m.sample_prior(rng, 1)
        s = th.scatter_c
        j = m.n_fraction_dims + m.free.index("temperature_c")
        theta[0, j] = stats.truncnorm.rvs((lo - geo[i]) / s, (hi - geo[i]) / s, loc=geo[i],
                                          scale=s, random_state=rng)
        q = m.quantities(theta)
        obs = {}
        for k, (_, sig) in m.observed.items():
            tot = float(m.total_sigma(k, q[k])[0])
            obs[k] = (float(q[k][0] + tot * rng.standard_normal()), sig)
        layers.append(dataclasses.replace(base.layers[i], **obs))
        mantle.append(bool(q["ultramafic_fraction"][0] >= 0.5))
    true = next((i for i, x in enumerate(mantle) if x), len(mantle))
    return dataclasses.replace(base, layers=tuple(layers)), true


def _run(n_sims, seed):
    rng = np.random.default_rng(seed)
    base = _base()
    post, truth = [], []
    for s in range(n_sims):
        prof, true = _simulate(base, rng)
        with warnings.catch_warnings():
            # simulated data are flagged at the predictive check's rate (p < 0.01 per check)
            warnings.simplefilter("ignore", MisfitWarning)
            r = exact_profile(prof, n_layer=2**11, n_thermal=64, n_replicates=2,
                              seed=seed + s, n_draws=200)
        post.append(r.boundary["probability"].to_numpy())
        truth.append(true)
    return np.array(post), np.array(truth)


def _check(post, truth):
    n, k = post.shape
    onehot = np.eye(k)[truth]
    diff = onehot - post
    se = diff.std(axis=0, ddof=1) / math.sqrt(n)
    ok = se > 0
    assert np.all(np.abs(diff.mean(axis=0))[ok] < 3.5 * se[ok])
    covered = []
    for p, t in zip(post, truth, strict=True):
        order = np.argsort(p)[::-1]
        cum = np.cumsum(p[order])
        chosen = order[: int(np.searchsorted(cum, 0.9) + 1)]
        covered.append(t in chosen)
    cov = float(np.mean(covered))
    assert cov >= 0.9 - 3 * math.sqrt(0.09 / n)
    return cov


def test_boundary_calibration_small():
    post, truth = _run(16, seed=100)
    assert len(set(truth)) >= 2  # several outcomes occur: the check is not trivial
    _check(post, truth)


@pytest.mark.slow
def test_boundary_calibration_large():
    post, truth = _run(120, seed=1000)
    cov = _check(post, truth)
    assert cov <= 1.0
