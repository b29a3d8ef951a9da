"""Log-scale priors are sampled in ln(x): the same prior and posterior in other coordinates.

A ``LogUniform`` parameter's sampled coordinate is u = ln x (``LayerModel.log_coordinates``),
whose prior density is p(e^u) e^u (change of variables). The exact path draws from the prior
through ``from_unit`` and never uses that density; MCMC uses it: a missing Jacobian would make
the two disagree, which the second test checks.
"""

import math

import numpy as np
import pytest

import bayescrust as bc
from bayescrust.inference.model import LayerModel
from bayescrust.inference.priors import LogUniform, Uniform
from bayescrust.inference.sampler import ensemble_mcse

LAYER_2A = bc.Layer("2A", top_km=0.0, bottom_km=0.5, water_depth_km=3.0, vp=(4.4, 0.15))
PRIORS = {"porosity": LogUniform(0.01, 0.3), "melt_fraction": 0.0}


def test_log_coordinate_density_and_map():
    model = LayerModel.build(LAYER_2A, rocks=("basalt", "diabase"),
                             priors={**PRIORS, "aspect_ratio": Uniform(0.05, 1.0)})
    assert model.log_coordinates == ("porosity",)
    j = model.parameter_names.index("porosity")
    u = np.random.default_rng(0).random((500, model.ndim))
    theta = model.from_unit(u)
    # the map: ln of the prior's quantile; scalars() gives the value back
    np.testing.assert_allclose(theta[:, j], np.log(PRIORS["porosity"].ppf(u[:, j])), rtol=1e-13)
    np.testing.assert_allclose(model.scalars(theta)["porosity"], PRIORS["porosity"].ppf(u[:, j]),
                               rtol=1e-13)
    # the density of u = ln x under LogUniform(a, b) is uniform, 1 / ln(b / a), on [ln a, ln b]
    grid = np.linspace(math.log(0.01), math.log(0.3), 2001)
    pts = np.repeat(theta[:1], grid.size, axis=0)
    pts[:, j] = grid
    lp = model.log_prior(pts) - model.log_prior(theta[:1])[0] + model.scalar_priors[
        "porosity"].logpdf(model.scalars(theta[:1])["porosity"])[0] + theta[0, j]
    np.testing.assert_allclose(np.exp(lp), 1.0 / math.log(30.0), rtol=1e-12)
    assert np.trapezoid(np.exp(lp), grid) == pytest.approx(1.0, rel=1e-12)
    outside = pts[:2].copy()
    outside[:, j] = [math.log(0.009), math.log(0.31)]
    assert np.all(model.log_prior(outside) == -np.inf)


def test_mcmc_in_log_coordinates_matches_exact():
    # porosity LogUniform(0.01, 0.3) under a 4.4 km/s Layer 2A: the posterior of porosity
    # and the probability of the porous class, MCMC (ln porosity) against the exact path
    kw = dict(rocks=("basalt", "diabase"), priors=PRIORS)
    ex = bc.exact_layer(LAYER_2A, seed=3, **kw)
    mc = bc.invert_layer(LAYER_2A, seed=4, min_ess=1000, evidence=False, **kw)
    assert mc.diagnostics["converged"]
    s_mc, s_ex = mc.summary.loc["porosity"], ex.summary.loc["porosity"]
    _, se_mc, _ = ensemble_mcse(mc.idata.posterior["porosity"].values)
    se = np.hypot(se_mc, s_ex["sd"] / np.sqrt(s_ex["ess_bulk"]))
    assert abs(s_mc["mean"] - s_ex["mean"]) <= 4 * se, (s_mc["mean"], s_ex["mean"], se)
    # not vacuous: the data moved porosity well away from its prior mean (0.0843)
    assert abs(s_ex["mean"] - 0.29 / math.log(30.0)) > 10 * se
