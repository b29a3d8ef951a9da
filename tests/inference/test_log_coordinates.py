"""Sampling coordinates (bayescrust.inference.coordinates): the same prior and posterior in
other coordinates.

A bounded log-scale prior's coordinate is the logit of its position in ln x, a porosity paired
with a log-scaled aspect ratio is sampled through its pore compliance, and the prior density
of a coordinate is the parameter's density times the Jacobian. The exact path draws from the
prior through ``from_unit`` and never uses that density; MCMC uses it: a wrong Jacobian makes
the two disagree, which the MCMC tests check.
"""

import math

import numpy as np
import pytest
from scipy import special, stats

import bayescrust as bc
from bayescrust.inference.model import LayerModel
from bayescrust.inference.priors import LogUniform, Uniform
from bayescrust.inference.sampler import ensemble_mcse

LAYER_2A = bc.Layer("2A", top_km=0.0, bottom_km=0.5, water_depth_km=3.0, vp=(4.4, 0.15))
PRIORS = {"porosity": LogUniform(0.01, 0.3), "melt_fraction": 0.0}


def test_log_coordinate_density_and_map():
    model = LayerModel.build(LAYER_2A, rocks=("basalt", "diabase"),
                             priors={**PRIORS, "aspect_ratio": Uniform(0.05, 1.0)})
    assert model.coordinates.names("logit_log") == ("porosity",)
    assert model.coordinates.names("linear") == ("temperature_c",)
    j = model.parameter_names.index("porosity")
    u = np.random.default_rng(0).random((500, model.ndim))
    theta = model.from_unit(u)
    # the map: the quantile's position in [ln 0.01, ln 0.3] is u itself; its logit, and back
    np.testing.assert_allclose(theta[:, j], special.logit(u[:, j]), rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(model.scalars(theta)["porosity"], PRIORS["porosity"].ppf(u[:, j]),
                               rtol=1e-12)
    # the density of z = logit((ln x - ln a) / ln(b / a)) under LogUniform(a, b) is the
    # standard logistic density (scipy)
    grid = np.linspace(-40.0, 40.0, 4001)
    pts = np.repeat(theta[:1], grid.size, axis=0)
    pts[:, j] = grid
    lp = (model.log_prior(pts) - model.log_prior(theta[:1])[0]
          + stats.logistic.logpdf(theta[0, j]))
    np.testing.assert_allclose(lp, stats.logistic.logpdf(grid), rtol=1e-10, atol=1e-10)
    assert np.trapezoid(np.exp(lp), grid) == pytest.approx(1.0, rel=1e-9)
    outside = pts[:2].copy()
    outside[:, model.parameter_names.index("temperature_c")] = [-10.0, 1500.0]
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


SPREAD = {"aspect_ratio": LogUniform(0.01, 1.0), "porosity": Uniform(0.0, 0.3),
          "melt_fraction": 0.0}


def test_amount_with_log_shape_is_sampled_as_pore_compliance():
    # a log-scaled pore (melt) shape makes its amount's coordinate w = ln(amount) +
    # ln(1 + A / shape); the amount's prior stays Uniform(0, 0.3): at a fixed aspect ratio the
    # density of w is e^(ln phi) / 0.3 with ln phi = w - ln(1 + A / alpha) <= ln 0.3
    from bayescrust.inference.coordinates import PORE_CROSSOVER as A

    model = LayerModel.build(LAYER_2A, rocks=("basalt", "diabase"), priors=SPREAD)
    assert model.coordinates.names("logit_log") == ("aspect_ratio",)
    assert model.coordinates.paired == {"porosity": "aspect_ratio"}
    assert model.coordinates.names("paired") == ("porosity",)
    melt = LayerModel.build(LAYER_2A, rocks=("basalt", "diabase"), priors={
        "melt_aspect_ratio": LogUniform(0.01, 0.5), "melt_fraction": Uniform(0, 0.05),
        "aspect_ratio": 0.1})
    assert melt.coordinates.paired == {"melt_fraction": "melt_aspect_ratio"}
    j, ja = model.parameter_names.index("porosity"), model.parameter_names.index("aspect_ratio")
    u = np.random.default_rng(1).random((4000, model.ndim))
    u[0, j] = 0.0  # the quantile of u = 0 is porosity 0: the coordinate must stay finite
    theta = model.from_unit(u)
    assert np.all(np.isfinite(theta))
    assert np.all(np.isfinite(model.log_prior(theta)))
    phi, alpha = 0.3 * u[1:, j], 0.01 * 100.0 ** u[1:, ja]
    np.testing.assert_allclose(theta[1:, j], np.log(phi) + np.log1p(A / alpha), rtol=1e-13)
    np.testing.assert_allclose(model.scalars(theta)["porosity"][1:], phi, rtol=1e-12)
    # prior draws through the map: porosity ~ Uniform(0, 0.3) (scipy's KS test)
    assert stats.kstest(model.scalars(theta)["porosity"], stats.uniform(0, 0.3).cdf).pvalue > 1e-3
    shift = math.log1p(A / alpha[0])
    grid = np.linspace(math.log(1e-7) + shift, math.log(0.3 * (1 - 1e-12)) + shift, 4001)
    pts = np.repeat(theta[1:2], grid.size, axis=0)
    pts[:, j] = grid
    dens = np.exp(model.log_prior(pts) - (model.log_prior(theta[1:2])[0]
                                          - (math.log(1 / 0.3) + math.log(phi[0]))))
    np.testing.assert_allclose(dens, np.exp(grid - shift) / 0.3, rtol=1e-11)
    assert np.trapezoid(dens, grid) == pytest.approx(1.0, abs=1e-6)
    above = pts[:1].copy()
    above[0, j] = math.log(0.31) + shift
    assert model.log_prior(above)[0] == -np.inf


def test_mcmc_with_pore_shape_spread_matches_exact():
    # porosity through its pore compliance and ln(aspect ratio) sampled together; posterior
    # means of both against the exact path, which never uses the coordinates
    kw = dict(rocks=("basalt", "diabase"), priors=SPREAD)
    layer = bc.Layer("2A", top_km=0.0, bottom_km=0.5, water_depth_km=3.0, vp=(4.4, 0.15),
                     vs=(2.3, 0.1))
    ex = bc.exact_layer(layer, seed=3, **kw)
    mc = bc.invert_layer(layer, seed=4, min_ess=1000, evidence=False, **kw)
    assert mc.diagnostics["converged"]
    for name in ("porosity", "aspect_ratio"):
        s_mc, s_ex = mc.summary.loc[name], ex.summary.loc[name]
        _, se_mc, _ = ensemble_mcse(mc.idata.posterior[name].values)
        se = np.hypot(se_mc, s_ex["sd"] / np.sqrt(s_ex["ess_bulk"]))
        assert abs(s_mc["mean"] - s_ex["mean"]) <= 4 * se, (name, s_mc["mean"], s_ex["mean"], se)
    # not vacuous: the data (Vp/Vs 1.91) moved the aspect ratio well away from its prior mean,
    # 0.99 / ln 100 = 0.215, towards cracks (se is the aspect ratio's, the last in the loop)
    assert abs(ex.summary.loc["aspect_ratio", "mean"] - 0.99 / math.log(100.0)) > 10 * se


def test_mcmc_with_three_rock_stick_breaking_matches_exact():
    # three rock fractions sampled as stick-breaking logits: posterior means of every fraction
    # against the exact path (which draws through from_unit and never uses the density)
    layer = bc.Layer("lc", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(7.0, 0.1))
    kw = dict(rocks=("gabbro", "harzburgite", "altered_gabbro"),
              priors={"porosity": 0.0, "melt_fraction": 0.0, "serpentinization": 0.0})
    ex = bc.exact_layer(layer, seed=3, **kw)
    mc = bc.invert_layer(layer, seed=4, min_ess=1000, evidence=False, **kw)
    assert mc.diagnostics["converged"]
    for name in kw["rocks"]:
        s_mc, s_ex = mc.summary.loc[name], ex.summary.loc[name]
        _, se_mc, _ = ensemble_mcse(mc.idata.posterior[name].values)
        se = np.hypot(se_mc, s_ex["sd"] / np.sqrt(s_ex["ess_bulk"]))
        assert abs(s_mc["mean"] - s_ex["mean"]) <= 4 * se, (name, s_mc["mean"], s_ex["mean"], se)
    # not vacuous: the data moved the harzburgite fraction away from its prior mean, 1/3
    assert abs(ex.summary.loc["harzburgite", "mean"] - 1 / 3) > 10 * se
