"""MCMC on the real forward model agrees with the exact reference (design section 5)."""

import warnings

import numpy as np
import pytest

import bayescrust as bc
from bayescrust.inference.evidence import prior_design, scramble_estimates, weigh_design
from bayescrust.inference.model import LayerModel
from bayescrust.inference.sampler import ensemble_mcse

#: Kuster-Toksoz inclusions (valid for the dilute melt fractions, <= 5 %, used here) are cheaper
#: than the default DEM; MCMC and the exact reference are compared on the same forward model, so
#: the choice does not affect what is checked.
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


@pytest.mark.parametrize("with_vs", [pytest.param(False, id="vp"),
                                     pytest.param(True, id="vp+vs")])
def test_mcmc_matches_exact(with_vs):
    obs = dict(vp=(7.1, 0.1), vs=(3.85, 0.1)) if with_vs else dict(vp=(7.1, 0.1))
    layer = bc.Layer("lower crust", **LOWER_CRUST, **obs)
    ex = bc.exact_layer(layer, seed=2, **KW)
    mc = bc.invert_layer(layer, seed=3, min_ess=1000, **KW)
    assert mc.diagnostics["converged"]
    assert mc.diagnostics["n_steps"] >= 50 * max(mc.diagnostics["tau"].values())
    _agree(mc, ex)
    # posterior means of the free parameters agree too (4 combined standard errors). The MCMC
    # error is measured on the ensemble average (walkers are not independent chains); the
    # exact path's mean is its importance-weighted mean, whose error is sd / sqrt(ESS).
    for p in ("temperature_c", "harzburgite"):
        s_mc, s_ex = mc.summary.loc[p], ex.summary.loc[p]
        _, se_mc, _ = ensemble_mcse(mc.idata.posterior[p].values)
        se = np.hypot(se_mc, s_ex["sd"] / np.sqrt(s_ex["ess_bulk"]))
        assert abs(s_mc["mean"] - s_ex["mean"]) <= 4 * se, (p, s_mc["mean"], s_ex["mean"], se)


def test_exact_posterior_means_match_brute_force():
    # Referee: a 2^20-point design (16 independent scrambles, error from their spread, ~1e-5 on
    # the harzburgite fraction here) against the default 2^16-point exact path. The exact path's
    # posterior means must lie within 3 of their stated errors sd / sqrt(importance ESS).
    # Before the fix the summary mean came from 4000 resampled draws (resampling error
    # ~0.004, three times the stated 0.0013): seed 2 was 4.0 stated errors off.
    layer = bc.Layer("lower crust", **LOWER_CRUST, vp=(7.1, 0.1))
    model = LayerModel.build(layer, rocks=KW["rocks"], priors=KW["priors"],
                             forward=FAST_FORWARD)
    _, q, _ = prior_design(model, np.random.default_rng(99), 2**20, n_scrambles=16)
    loglik, _ = weigh_design(model, q)
    _, _, ref, ref_err = scramble_estimates(
        loglik, {k: q[k] for k in ("harzburgite", "temperature_c")}, 16)
    for seed in (2, 3):
        ex = bc.exact_layer(layer, seed=seed, **KW)
        for p in ("harzburgite", "temperature_c"):
            s = ex.summary.loc[p]
            se = np.hypot(s["sd"] / np.sqrt(s["ess_bulk"]), ref_err[p])
            assert abs(s["mean"] - ref[p]) <= 3 * se, (seed, p, s["mean"], ref[p], se)


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


#: Tight Vp and Vs (0.02 km/s, model error 0.3 %) make the posterior concentrated; "hot mantle"
#: holds ~0.0014 of it, a rare class for both stages of the exact path.
TIGHT_LAYER = bc.Layer("lc", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(7.1, 0.02),
                       vs=(3.9, 0.02))
TIGHT_KW = dict(rocks=("gabbro", "harzburgite"), model_error=0.003,
                priors={"porosity": 0.0, "serpentinization": 0.0})


@pytest.fixture(scope="module")
def tight_reference():
    """The tight layer's probabilities from one 2^19-point prior design (stage 1 only)."""
    with warnings.catch_warnings():  # Vp/Vs 1.82 sits at the edge of the model (a check of
        warnings.simplefilter("ignore", bc.MisfitWarning)  # the integration, not the rocks)
        return bc.exact_layer(TIGHT_LAYER, seed=100, n_points=2**19, min_importance_ess=0,
                              **TIGHT_KW).hypotheses


def _rare_z(runs, ref, name="hot mantle"):
    j = list(ref.index).index(name)
    assert 0.0005 < ref["posterior_probability"].iloc[j] < 0.005
    p = np.array([r.hypotheses["posterior_probability"].iloc[j] for r in runs])
    se = np.array([r.hypotheses["posterior_mcse"].iloc[j] for r in runs])
    return (p - ref["posterior_probability"].iloc[j]) / np.hypot(se, ref["posterior_mcse"].iloc[j])


def test_exact_first_stage_errors_cover_a_rare_class(tight_reference):
    # At the default design size the tight layer stays in stage 1 (importance ESS ~2200-2400);
    # there the 8 scrambles that under-reach "hot mantle" also under-state their spread: seeds
    # 42 and 100 gave 0.0003 +- 0.0001 against 0.0014 (z -6.7, -6.1) before the Agresti-Coull
    # floor for classes with fewer than RARE_COUNT effective draws. Honest errors from 8
    # scrambles exceed |t_7| = 4 with probability 0.5 % per run (scipy.stats.t).
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", bc.MisfitWarning)
        runs = [bc.exact_layer(TIGHT_LAYER, seed=s, **TIGHT_KW) for s in (42, 100, 1, 2, 3, 4)]
    assert all(r.diagnostics["stages"] == 1 for r in runs)
    z = _rare_z(runs, tight_reference)
    assert np.max(np.abs(z)) < 4.0, z


def test_exact_second_stage_errors_are_honest_for_rare_and_common_classes(tight_reference):
    # With 2^13 points the adaptive stage runs. Over 16 seeds the stage-2 errors
    # must (a) cover the rare class against a 2^19-point prior design (one kernel mixture's
    # delta-method error gave z-scores up to -435 there, 0.0002 +- 0.0001 against 0.0013) and
    # (b) match the spread over seeds for the common classes: honest errors from 8 replicates
    # give a ratio inside the 99 % range of sqrt(F(15, 112)), [0.54, 1.54].
    ref = tight_reference
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", bc.MisfitWarning)
        runs = [bc.exact_layer(TIGHT_LAYER, seed=s, n_points=2**13, **TIGHT_KW)
                for s in range(1, 17)]
    assert all(r.diagnostics["stages"] == 2 for r in runs)
    p = np.array([r.hypotheses["posterior_probability"] for r in runs])
    se = np.array([r.hypotheses["posterior_mcse"] for r in runs])
    names = list(ref.index)
    z = _rare_z(runs, ref)
    assert np.max(np.abs(z)) < 4.0, z
    for j, name in enumerate(names):
        if ref["posterior_probability"].iloc[j] > 0.02:
            ratio = np.std(p[:, j], ddof=1) / np.sqrt(np.mean(se[:, j] ** 2))
            assert 0.54 < ratio < 1.54, (name, ratio)
