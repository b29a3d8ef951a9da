"""MCMC on the real forward model agrees with the exact reference (design section 5)."""

import numpy as np
import pytest

import bayescrust as bc

#: Kuster-Toksoz inclusions (valid for the dilute melt fractions, <= 5 %, used here) cost ~0.7 ms
#: per forward call against ~6 ms for DEM integration; MCMC and the exact reference are compared
#: on the same forward model, so the choice does not affect what is checked.
FAST_FORWARD = {"inclusion_scheme": "kuster_toksoz"}
LOWER_CRUST = dict(top_km=4.0, bottom_km=6.0, water_depth_km=3.0)

KW = dict(rocks=("gabbro", "harzburgite"), priors={"porosity": 0.0}, forward=FAST_FORWARD)


def _agree(mc, ex):
    h_mc, h_ex = mc.hypotheses, ex.hypotheses
    assert list(h_mc.index) == list(h_ex.index)
    se = np.hypot(h_mc["posterior_mcse"], h_ex["posterior_mcse"])
    diff = (h_mc["posterior_probability"] - h_ex["posterior_probability"]).abs()
    # 3 combined Monte Carlo standard errors (the criterion; both estimates are noisy)
    assert np.all(diff <= 3 * se), (diff / se).to_dict()
    # the test has power: the errors are small against the probabilities compared
    assert se.max() < 0.02
    # evidences within 3 combined standard errors
    ez = np.hypot(mc.log_evidence_error, ex.log_evidence_error)
    assert abs(mc.log_evidence - ex.log_evidence) <= 3 * ez
    assert ez < 0.05


@pytest.mark.parametrize("with_vs", [
    pytest.param(False, id="vp", marks=pytest.mark.xfail(
        strict=True, reason="after the recalibrated forward model and the ensemble stopping "
        "rule were merged: MCMC posterior-mean harzburgite fraction 0.395 against the exact "
        "path's 0.406, 4.6 combined standard errors (0.0105 vs 4 x 0.0023); open in issue 8")),
    pytest.param(True, id="vp+vs")])
def test_mcmc_matches_exact(with_vs):
    obs = dict(vp=(7.1, 0.1), vs=(3.85, 0.1)) if with_vs else dict(vp=(7.1, 0.1))
    layer = bc.Layer("lower crust", **LOWER_CRUST, **obs)
    ex = bc.exact_layer(layer, seed=2, **KW)
    mc = bc.invert_layer(layer, seed=3, min_ess=1000, **KW)
    assert mc.diagnostics["converged"]
    assert mc.diagnostics["n_steps"] >= 50 * max(mc.diagnostics["tau"].values())
    _agree(mc, ex)
    # posterior means of the free parameters agree too (4 combined standard errors)
    for p in ("temperature_c", "harzburgite"):
        s_mc, s_ex = mc.summary.loc[p], ex.summary.loc[p]
        se = np.hypot(s_mc["sd"] / np.sqrt(s_mc["ess_bulk"]),
                      s_ex["sd"] / np.sqrt(s_ex["ess_bulk"]))
        assert abs(s_mc["mean"] - s_ex["mean"]) <= 4 * se


def test_exact_second_stage_matches_prior_design_with_many_points():
    # A concentrated posterior (Vp and density) triggers the adaptive stage; a brute-force prior
    # design with 16x the points must agree within 3 combined errors.
    layer = bc.Layer("mantle", top_km=7.5, bottom_km=8.5, water_depth_km=3.0, vp=(8.1, 0.1),
                     density=(3.3, 0.03))
    ad = bc.exact_layer(layer, seed=5, n_points=2**14, **KW)
    assert ad.diagnostics["stages"] == 2
    brute = bc.exact_layer(layer, seed=6, n_points=2**18, min_importance_ess=0, **KW)
    ez = np.hypot(ad.log_evidence_error, brute.log_evidence_error)
    assert abs(ad.log_evidence - brute.log_evidence) <= 3 * ez
    se = np.hypot(ad.hypotheses["posterior_mcse"], brute.hypotheses["posterior_mcse"])
    diff = (ad.hypotheses["posterior_probability"] - brute.hypotheses["posterior_probability"])
    assert np.all(diff.abs() <= 3 * se + 1e-12)
