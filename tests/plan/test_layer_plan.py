"""Planning on a real layer model: reweighting against rerunning the exact path, calibration,
the degenerate limit with its fallback, and the candidate datum's likelihood against scipy.

The layer is a made-up test input (a deep layer with Vp only); no value in it is a check value.
Tolerances: 4 combined Monte Carlo standard errors (false failure ~6e-5 per check).
"""

import dataclasses
import math

import numpy as np
import pytest
from scipy import stats

import bayescrust as bc
from bayescrust.inference.api import _setup
from bayescrust.plan import Candidate, ensemble_from_design, plan_layer, update
from bayescrust.plan.likelihood import datum_location_scale, datum_log_likelihood

LAYER = bc.Layer("deep", top_km=4.6, bottom_km=6.6, water_depth_km=3.4, vp=(7.2, 0.12))
ROCKS = ("gabbro", "harzburgite")
PRIORS = {"melt_fraction": 0.0}
HYPS = {"gabbroic": {"ultramafic_fraction": (0.0, 0.5)},
        "cool mantle": {"ultramafic_fraction": (0.5, 1.0), "temperature_c": (-math.inf, 900.0)},
        "hot mantle": {"ultramafic_fraction": (0.5, 1.0), "temperature_c": (900.0, math.inf)}}


def test_reweighting_matches_rerunning_the_exact_path():
    model, hyps = _setup(LAYER, ROCKS, PRIORS, HYPS, None, "gaussian", 4.0, None)
    ens = ensemble_from_design(model, hyps, np.random.default_rng(1), 2**14)
    cand = Candidate("vs", 0.1)
    rng = np.random.default_rng(2)
    w = ens.weights()
    truth = rng.choice(ens.n, size=3, p=w)
    loc, scale = datum_location_scale(ens.quantities["vs"][truth], sigma=0.1,
                                      model_error=ens.model_error["vs"])
    ys = loc + scale * rng.standard_normal(3)
    up = update(ens, cand, ys)
    names = list(hyps)
    for j, y in enumerate(ys):
        ref = bc.exact_layer(dataclasses.replace(LAYER, vs=(float(y), 0.1)), rocks=ROCKS,
                             priors=PRIORS, hypotheses=HYPS, seed=100 + j, n_points=2**13)
        for i, h in enumerate(names):
            p_ref = ref.hypotheses.loc[h, "posterior_probability"]
            se_ref = ref.hypotheses.loc[h, "posterior_mcse"]
            p, se = up["hypothesis_probabilities"][j, i], up["hypothesis_mcse"][j, i]
            assert abs(p - p_ref) <= 4 * math.hypot(se, se_ref), (y, h, p, p_ref, se, se_ref)


def test_layer_plan_calibrated_and_ranked():
    plan = plan_layer(LAYER, rocks=ROCKS, priors=PRIORS, hypotheses=HYPS, seed=3,
                      n_points=2**13, n_simulations=800,
                      candidates=[("vs", 0.05), ("vs", 0.3), ("density", 0.05)])
    cal = plan.calibration
    assert np.all(np.abs(cal["average_updated"] - cal["today"]) <= 4 * cal["mcse"])
    t = plan.table
    assert t.loc["Vs ± 0.05 km/s", "information_gain_bits"] > \
        t.loc["Vs ± 0.3 km/s", "information_gain_bits"]
    assert np.all(t["information_gain_bits"].diff().dropna() <= 0)  # ranked
    assert set(plan.sentences) == set(t.index)
    assert all("of cases" in s for s in plan.sentences.values())


def test_tiny_error_with_fallback_settles_a_separable_question():
    # hypotheses separated by Vs itself; a near-perfect Vs datum (no forward-model error)
    # must leave almost no uncertainty - the reweighting degenerates and the exact path reruns
    hyps = {"fast": {"vs": (4.0, math.inf)}, "slow": {"vs": (-math.inf, 4.0)}}
    plan = plan_layer(LAYER, rocks=ROCKS, priors=PRIORS, hypotheses=hyps, seed=5,
                      n_points=2**12, n_simulations=200, max_reruns=20, rerun_points=2048,
                      candidates=[Candidate("vs", 1e-4, model_error=0.0)])
    row = plan.table.iloc[0]
    assert row["degenerate"] > 0 and row["reruns"] == 20
    assert row["expected_entropy_bits"] < 0.05
    assert row["information_gain_bits"] > 0.95 * plan.today["entropy_bits"]


def test_infinite_error_on_a_layer():
    plan = plan_layer(LAYER, rocks=ROCKS, priors=PRIORS, hypotheses=HYPS, seed=6,
                      n_points=2**12, n_simulations=200, candidates=[("vs", math.inf)])
    row = plan.table.iloc[0]
    assert row["information_gain_bits"] == pytest.approx(0.0, abs=1e-12)
    assert row["degenerate"] == 0


@pytest.mark.parametrize("likelihood", ["gaussian", "student_t"])
def test_new_datum_likelihood_is_the_layer_likelihood(likelihood):
    # the candidate's factor must equal the layer model's own likelihood of that datum
    lay = dataclasses.replace(LAYER, vs=(3.9, 0.1))
    model, _ = _setup(lay, ROCKS, PRIORS, None, None, likelihood, 5.0, None)
    pred = {"vp": np.array([7.0, 7.3]), "vs": np.array([3.8, 4.1])}
    ref = model.log_likelihood_terms(pred)["vs"]
    partner = None
    if likelihood == "gaussian":  # the layer's Vp and Vs model errors are correlated
        from bayescrust.inference.model import MODEL_ERROR_CORRELATION

        partner = (pred["vp"], *model.observed["vp"], model.model_error["vp"],
                   MODEL_ERROR_CORRELATION)
    loc, scale = datum_location_scale(pred["vs"], sigma=0.1, model_error=model.model_error["vs"],
                                      partner=partner)
    got = datum_log_likelihood(3.9, loc, scale, likelihood=likelihood, nu=5.0)
    np.testing.assert_allclose(got, ref, rtol=1e-12)


def test_new_vs_datum_uses_the_layers_own_error_correlation():
    # a model_error with its own Vp/Vs error sets the Vp-Vs error correlation of the layer's
    # likelihood (here 0.875); the candidate Vs datum's factor must use it, not the calibrated
    # 0.643: equal to the likelihood of a layer that observed Vs, to rounding
    from bayescrust.plan.preposterior import _loc_scale

    me = {"vp": 0.02, "vs": 0.02, "vp_vs": 0.01}
    model, hyps = _setup(LAYER, ROCKS, PRIORS, HYPS, me, "gaussian", 4.0, None)
    ens = ensemble_from_design(model, hyps, np.random.default_rng(0), 2**8, model_error=me)
    assert ens.error_correlation == pytest.approx(0.875)
    both, _ = _setup(dataclasses.replace(LAYER, vs=(3.9, 0.1)), ROCKS, PRIORS, HYPS, me,
                     "gaussian", 4.0, None)
    q = {"vp": np.array([7.0, 7.3]), "vs": np.array([3.8, 4.1])}
    loc, scale = _loc_scale(ens, Candidate("vs", 0.1), q)
    got = datum_log_likelihood(3.9, loc, scale, likelihood="gaussian")
    np.testing.assert_allclose(got, both.log_likelihood_terms(q)["vs"], rtol=1e-12)


def test_repeat_datum_shares_the_model_error():
    # joint law of two measurements of one quantity with a shared forward-model error:
    # bivariate normal (scipy.stats.multivariate_normal); old factor x new factor == joint
    pred, tau, s0, s1, y0, y1 = 7.1, 0.071, 0.12, 0.05, 7.2, 7.15
    cov = [[s0**2 + tau**2, tau**2], [tau**2, s1**2 + tau**2]]
    joint = stats.multivariate_normal([pred, pred], cov).logpdf([y0, y1])
    old = stats.norm.logpdf(y0, pred, math.hypot(s0, tau))
    loc, scale = datum_location_scale(np.array([pred]), sigma=s1, model_error=tau / pred,
                                      existing=(y0, s0))
    new = datum_log_likelihood(y1, loc, scale)[0]
    assert old + new == pytest.approx(joint, rel=1e-12)


def test_bad_candidates_are_named():
    with pytest.raises(ValueError, match="observable must be one of"):
        Candidate("gravity", 0.1)
    with pytest.raises(ValueError, match="sigma must be > 0"):
        Candidate("vs", -1)
    with pytest.raises(ValueError, match="profile"):
        plan_layer(LAYER, candidates=[("heat_flow", 5.0)])


def test_plan_from_a_result_is_calibrated():
    # the same question from a LayerResult's posterior draws (here of the exact path, which is
    # quicker than MCMC; the builder reads only the result's draws and hypothesis table)
    res = bc.exact_layer(LAYER, rocks=ROCKS, priors=PRIORS, hypotheses=HYPS, seed=8,
                         n_points=2**13, n_draws=3000)
    plan = plan_layer(LAYER, result=res, rocks=ROCKS, priors=PRIORS, hypotheses=HYPS, seed=9,
                      n_simulations=600, candidates=[("vs", 0.05)])
    assert plan.settings["ensemble"] == "posterior draws"
    cal = plan.calibration
    assert np.all(np.abs(cal["average_updated"] - cal["today"]) <= 4 * cal["mcse"])
    # today's probabilities from 3000 multinomial resamples of the weighted design: binomial
    # resampling error sqrt(p (1 - p) / 3000) on top of the design's own MCSE
    p_ref = res.hypotheses.loc[list(HYPS), "posterior_probability"].to_numpy()
    se = np.hypot(res.hypotheses.loc[list(HYPS), "posterior_mcse"].to_numpy(),
                  np.sqrt(p_ref * (1 - p_ref) / 3000))
    assert np.all(np.abs(plan.today["class_probabilities"] - p_ref) <= 4 * se)


def test_sentence_does_not_report_a_change_of_p_true_within_its_monte_carlo_error():
    # Measuring nothing (sigma = inf) leaves E[P(true)] at today's sum of p^2 (the law of total
    # probability); its simulated estimate 0.6953 +- 0.0076 against 0.6916 today is noise, and
    # the sentence said it "goes from 69 % to 70 %".
    from bayescrust.plan.api import sentence

    row = {"p_decisive": 0.0, "p_decisive_mcse": 0.0, "expected_p_true": 0.6953,
           "expected_p_true_mcse": 0.0076, "interval_narrowing": 0.0,
           "interval_narrowing_mcse": 0.0, "information_gain_bits": 0.0,
           "information_gain_bits_mcse": 0.0}
    today = {"decisive": False, "expected_p_true": 0.6916, "interval_width": 906.0}
    text = sentence("Vp/Vs ± inf", row, today)
    assert "goes from" not in text
    assert "stays at ~69 %" in text
    moved = dict(row, expected_p_true=0.75)
    assert "goes from 69 % to 75 %" in sentence("Vs ± 0.05 km/s", moved, today)
