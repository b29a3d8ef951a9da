"""The posterior-predictive check on a weighted design (the planner's and the chart's today's
posterior) and with a replaced observed value (the chart): the same rule as on posterior draws.

The layer is a made-up test input; the checks are identities of weighted means or agreement
with equal-weight resampling within its Monte Carlo error.
"""

import numpy as np
import pytest

import bayescrust as bc
from bayescrust.inference.evidence import prior_design, weigh_design
from bayescrust.inference.model import LayerModel
from bayescrust.inference.trust import data_fit_label, predictive_check

DEEP = dict(top_km=4.0, bottom_km=6.0, water_depth_km=3.0)


def _design(layer, n=2**12, seed=5):
    model = LayerModel.build(layer, rocks=("gabbro", "harzburgite"))
    _, q, _ = prior_design(model, np.random.default_rng(seed), n)
    loglik, _ = weigh_design(model, q)
    w = np.exp(loglik - np.max(loglik))
    return model, q, w / w.sum()


def test_equal_weights_give_the_unweighted_check():
    # identity: a weighted mean with equal weights is the plain mean
    model, q, _ = _design(bc.Layer("x", vp=(7.1, 0.1), vs=(3.9, 0.1), **DEEP))
    plain = predictive_check(model, q)
    eq = predictive_check(model, q, weights=np.full(q["vp"].shape, 3.0))
    for k, v in plain["observables"].items():
        for key in ("p_value", "z", "predicted_mean", "predicted_sd"):
            assert eq["observables"][k][key] == pytest.approx(v[key], rel=1e-10, abs=1e-14)


def test_weighted_design_agrees_with_its_resampled_draws():
    # importance weights and equal-weight resampling by those weights estimate the same
    # posterior means (Gelfand & Smith 1990, J. Am. Stat. Assoc. 85, 398, sec. 3.2); the
    # p-value of a fitting layer and the z of a misfitting one agree within resampling error
    for vp, key in ((7.1, "p_value"), (9.5, "z")):
        model, q, w = _design(bc.Layer("x", vp=(vp, 0.1), **DEEP))
        weighted = predictive_check(model, q, weights=w)["observables"]["vp"][key]
        idx = np.random.default_rng(1).choice(w.size, size=200_000, p=w)
        drawn = predictive_check(model, {"vp": q["vp"][idx]})["observables"]["vp"][key]
        assert weighted == pytest.approx(drawn, rel=0.02, abs=0.02)


def test_replaced_observation_is_the_check_of_that_observation():
    # identity: the override is the same check as a layer observed at that value
    layer = bc.Layer("x", vp=(7.1, 0.1), **DEEP)
    model, q, w = _design(layer)
    other = LayerModel.build(bc.Layer("x", vp=(9.5, 0.1), **DEEP),
                             rocks=("gabbro", "harzburgite"))
    a = predictive_check(model, q, weights=w, observed={"vp": 9.5})
    b = predictive_check(other, q, weights=w)
    assert a["observables"]["vp"] == b["observables"]["vp"]
    assert a["misfit"] and data_fit_label(a) == "MISFIT (vp)"
    assert data_fit_label(predictive_check(model, q, weights=w)) == "ok"
