"""Planning for profiles (:func:`bayescrust.plan.plan_profile`): checks that could fail.

- law of total probability for the profile-level question (the crust-mantle boundary) and for a
  layer: the average updated probability equals today's within Monte Carlo error;
- reweighting the profile's joint states against rerunning the structured exact path with the
  simulated datum added (heat flow; Vs in a layer): agreement within the combined errors;
- a heat flow with infinite error (or mode "off") has zero value; one with a tiny error, where
  the thermal states are separable by heat flow (age the only free thermal parameter: heat flow
  is a monotone function of it, Turcotte & Schubert 2002 eq. 4-124), has near-maximal value;
- a heat flow marked as a lower bound is one-sided: it excludes states whose predicted heat flow
  lies below the measured value and leaves the odds among states above it unchanged; its density
  is the profile's one-sided law up to a constant (closed form, scipy's normal CDF).
"""

import dataclasses
import math
import warnings

import numpy as np
import pytest
from scipy import stats

from bayescrust import Layer
from bayescrust.inference.priors import Uniform
from bayescrust.plan import Candidate, DegeneracyWarning, update
from bayescrust.plan.likelihood import datum_log_likelihood, simulate_datum
from bayescrust.plan.profile import (
    BOUNDARY_QUESTION,
    plan_profile,
    profile_ensemble,
    profile_states,
)
from bayescrust.profile import HalfSpaceState, HeatFlow, Profile, exact_profile
from bayescrust.profile.exact import exact_design

_SMALL = {"n_layer": 2**11, "n_thermal": 128}


def _two_layer(**kw):
    th = HalfSpaceState(age_myr=Uniform(1.0, 20.0), mantle_temperature_c=1350.0,
                        scatter_c=60.0)
    layers = [Layer("L1", top_km=3.0, bottom_km=5.0, vp=(7.3, 0.15)),
              Layer("L2", top_km=5.0, bottom_km=7.0, vp=(7.7, 0.15))]
    return Profile(layers, th, water_depth_km=3.0, rocks=[("gabbro", "harzburgite")] * 2,
                   priors=[{"melt_fraction": 0.0}] * 2, pressure="reference", **kw)


def _separable(scatter_c=5.0):
    """One gabbro layer whose temperature follows the age closely (small scatter): hot or cold
    gabbro is then a function of the age, hence of the heat flow."""
    th = HalfSpaceState(age_myr=Uniform(0.2, 3.0), mantle_temperature_c=1350.0,
                        scatter_c=scatter_c)
    return Profile([Layer("g", top_km=3.0, bottom_km=5.0, vp=(6.9, 0.3))], th,
                   water_depth_km=3.0, rocks=[("gabbro",)], priors=[{"melt_fraction": 0.0}],
                   pressure="reference")


@pytest.fixture(scope="module")
def two_layer_plan():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DegeneracyWarning)
        return plan_profile(_two_layer(), seed=4, n_simulations=500, **_SMALL, candidates=[
            ("heat_flow", 10.0), Candidate("heat_flow", 10.0, mode="lower_bound"),
            Candidate("vs", 0.1, layer="L1")])


def test_law_of_total_probability_boundary_and_layers(two_layer_plan):
    """E_y[P(outcome | d, y)] = P(outcome | d) (law of total probability), within 4 MCSE, for
    every candidate and for the boundary (profile-level) and layer questions; the check is not
    vacuous (each question has at least two checkable outcomes)."""
    pp = two_layer_plan
    for q in (BOUNDARY_QUESTION, "L1", "L2"):
        plan = pp.plans[q]
        cal = plan.calibration
        n = plan.settings["n_simulations"]
        checkable = cal[np.minimum(cal["today"], 1 - cal["today"]) * n >= 10]
        assert checkable["hypothesis"].nunique() >= 2, q
        z = np.abs(checkable["average_updated"] - checkable["today"]) / checkable["mcse"]
        assert float(z.max()) < 4.0, (q, checkable)
        assert float(plan.table["calibration_max_z"].max()) < 4.0


def test_plan_reports_every_question(two_layer_plan):
    pp = two_layer_plan
    assert set(pp.questions) == {"L1", "L2", BOUNDARY_QUESTION, "thermal: age_myr"}
    t = pp.table
    assert len(t) == 3 * 4
    thermal = t[t["kind"] == "thermal"]
    assert thermal["information_gain_bits"].isna().all()
    assert thermal["interval_unit"].eq("Myr").all()
    # heat flow measures the age (through the half-space law), a Vs datum in L1 barely does
    hf = thermal.loc["heat flow ± 10 mW/m^2"]
    vs = thermal.loc["Vs ± 0.1 km/s in L1"]
    assert hf["interval_narrowing"] > 4 * hf["interval_narrowing_mcse"]
    assert hf["interval_narrowing"] > 5 * abs(vs["interval_narrowing"])
    assert set(pp.sentences) == set(pp.ranking.index)
    assert all("age_myr interval" in s for s in pp.sentences.values())


def _ensemble(profile, question, group, seed=0):
    design = exact_design(profile, n_replicates=2, seed=seed, **_SMALL)
    states = profile_states(profile, design, np.random.default_rng(seed + 1), 16)
    return profile_ensemble(profile, design, states, question, group)


def _z(a, sa, b, sb):
    return abs(a - b) / math.sqrt(sa * sa + sb * sb)


@pytest.mark.parametrize("y", [120.0, 260.0])
def test_reweighting_agrees_with_rerunning_exact_path_heat_flow(y):
    """Posterior mean age and boundary probabilities after a heat-flow datum y +- 10 mW/m^2:
    importance reweighting of today's joint states against the exact path rerun with that heat
    flow, |z| < 4 (the age moves by several Myr from today's, so a wrong update would show)."""
    prof = _two_layer()
    cand = Candidate("heat_flow", 10.0)
    ens = _ensemble(prof, BOUNDARY_QUESTION, None)
    u = update(ens, cand, [y], means=("age_myr",))
    rerun = exact_profile(dataclasses.replace(prof, heat_flow=HeatFlow(y, 10.0)), seed=7,
                          n_replicates=4, **_SMALL)
    age = rerun.thermal.set_index("parameter").loc["age_myr"]
    today = float(ens.weights() @ ens.quantities["age_myr"])
    assert abs(age["mean"] - today) > 2.0  # the datum matters
    assert _z(u["means"]["age_myr"][0], u["means_mcse"]["age_myr"][0], age["mean"],
              age["mcse"]) < 4.0
    b = rerun.boundary
    for k, name in enumerate(ens.hypotheses):
        row = b[b["outcome"] == name].iloc[0]
        z = _z(u["hypothesis_probabilities"][0, k], u["hypothesis_mcse"][0, k],
               row["probability"], row["mcse"])
        assert z < 4.0, (name, u["hypothesis_probabilities"][0, k], row["probability"])


def test_reweighting_agrees_with_rerunning_exact_path_layer_vs():
    """The same for a Vs datum in layer L1 (which has only Vp today: the Vs candidate follows
    the layer likelihood with correlated Vp/Vs model errors, as the rerun does)."""
    prof = _two_layer()
    cand = Candidate("vs", 0.1, layer="L1")
    y = 4.25
    ens_b = _ensemble(prof, BOUNDARY_QUESTION, "L1")
    ens_l = _ensemble(prof, "L1", "L1")
    ub, ul = update(ens_b, cand, [y]), update(ens_l, cand, [y])
    layers = (dataclasses.replace(prof.layers[0], vs=(y, 0.1)), prof.layers[1])
    rerun = exact_profile(dataclasses.replace(prof, layers=layers), seed=8, n_replicates=4,
                          **_SMALL)
    b = rerun.boundary
    for k, name in enumerate(ens_b.hypotheses):
        row = b[b["outcome"] == name].iloc[0]
        assert _z(ub["hypothesis_probabilities"][0, k], ub["hypothesis_mcse"][0, k],
                  row["probability"], row["mcse"]) < 4.0, name
    h = rerun.hypotheses
    checked = 0
    for k, name in enumerate(ens_l.hypotheses):
        row = h[(h["layer"] == "L1") & (h["hypothesis"] == name)].iloc[0]
        if row["probability"] < 0.02:
            continue
        checked += 1
        assert _z(ul["hypothesis_probabilities"][0, k], ul["hypothesis_mcse"][0, k],
                  row["probability"], row["mcse"]) < 4.0, name
    assert checked >= 2


def test_heat_flow_without_information_has_zero_value():
    """Infinite sigma and mode "off": no change of any answer, to rounding."""
    cands = [("heat_flow", math.inf), Candidate("heat_flow", 5.0, mode="off")]
    pp = plan_profile(_separable(), seed=3, candidates=cands, n_simulations=200, **_SMALL)
    t = pp.table
    cls = t[t["kind"] != "thermal"]
    assert np.all(np.abs(cls["information_gain_bits"]) < 1e-9)
    assert np.all(np.abs(t["interval_narrowing"]) < 1e-6 * t["today_interval_width"] + 1e-9)
    assert np.all(t["degenerate"] == 0)


def test_tiny_heat_flow_error_is_near_maximal_when_separable():
    """Age the only free thermal parameter and a small scatter: a heat flow +- 0.5 mW/m^2 fixes
    the age (94 % interval < 10 % of today's) and leaves the hot / cold gabbro question almost
    without entropy (today it is open), each answer decisive in >= 90 % of cases."""
    with pytest.warns(DegeneracyWarning):
        pp = plan_profile(_separable(), seed=3, candidates=[("heat_flow", 0.5)],
                          n_simulations=300, **_SMALL)
    today = pp.plans["g"].today
    assert today["entropy_bits"] > 0.5  # the question is open today
    row = pp.plans["g"].table.iloc[0]
    assert row["expected_entropy_bits"] < 0.15
    assert row["information_gain_bits"] > 0.8 * today["entropy_bits"]
    assert row["p_decisive"] > 0.9
    age = pp.plans["thermal: age_myr"]
    assert age.table.iloc[0]["expected_interval_width"] < 0.1 * age.today["interval_width"]


def test_lower_bound_density_is_the_profile_law_up_to_a_constant():
    """Closed form: p(y | q) = [Phi((q - y)/s) - Phi((q - D - y)/s)] / D; away from the cap it
    equals the profile's HeatFlow(..., "lower_bound") law (log Phi((q - y)/s), scipy) minus
    log D."""
    y, s, d = 120.0, 8.0, 300.0
    q = np.linspace(60.0, 380.0, 81)
    ours = datum_log_likelihood(np.array([[y]]), q[None, :], np.full((1, q.size), s),
                                likelihood="lower_bound", deficit=d)[0]
    closed = np.log(stats.norm.cdf((q - y) / s) - stats.norm.cdf((q - d - y) / s)) - math.log(d)
    np.testing.assert_allclose(ours, closed, rtol=0, atol=1e-9)
    profile_law = HeatFlow(y, s, "lower_bound").log_likelihood(q) - math.log(d)
    away = q - y < d - 8 * s
    np.testing.assert_allclose(ours[away], profile_law[away], rtol=0, atol=1e-9)
    # simulated data follow the same density (mean of the uniform deficit, sd in quadrature)
    rng = np.random.default_rng(0)
    sim = simulate_datum(rng, np.full(200_000, 200.0), np.full(200_000, s),
                         likelihood="lower_bound", deficit=d)
    assert abs(sim.mean() - (200.0 - d / 2)) < 4 * math.sqrt(d * d / 12 + s * s) / math.sqrt(2e5)


def test_lower_bound_heat_flow_is_one_sided():
    """After a lower-bound datum y: states predicting less than y - 5 sigma are excluded, the
    odds between two groups of states predicting more than y + 5 sigma do not move; a Gaussian
    datum at the same value moves them."""
    prof = _two_layer()
    ens = _ensemble(prof, BOUNDARY_QUESTION, None)
    q = ens.quantities["heat_flow"]
    order = np.argsort(q)
    cdf = np.cumsum(ens.weights()[order])
    y, s = float(q[order][np.searchsorted(cdf, 0.3)]), 5.0  # today's 30 % quantile
    hi = q > y + 5 * s
    split = float(np.median(q[hi]))
    hyps = {"low": q < y - 5 * s, "high A": hi & (q < split), "high B": hi & (q >= split)}
    from bayescrust.plan.ensemble import make_classes

    classes, names = make_classes(hyps)
    ens2 = dataclasses.replace(ens, hypotheses=hyps, classes=classes, class_names=names,
                               prior_probabilities=np.full(len(names), 1.0 / len(names)))
    w = ens2.weights()
    p_low, p_a, p_b = (float(w[h].sum()) for h in hyps.values())
    assert min(p_low, p_a, p_b) > 0.05
    lb = update(ens2, Candidate("heat_flow", s, mode="lower_bound", max_deficit=400.0), [y])
    plow, pa, pb = lb["hypothesis_probabilities"][0]
    assert plow < 1e-5 * p_low
    assert pa / pb == pytest.approx(p_a / p_b, rel=1e-6)
    g = update(ens2, Candidate("heat_flow", s), [y])["hypothesis_probabilities"][0]
    assert g[1] / g[2] > 10 * p_a / p_b


def test_bad_profile_candidates_are_refused():
    prof = _two_layer()
    with pytest.raises(ValueError, match="layer 'L9' is not in the profile"):
        plan_profile(prof, candidates=[Candidate("vs", 0.1, layer="L9")], **_SMALL)
    with pytest.raises(ValueError, match="name its layer"):
        plan_profile(prof, candidates=[("vs", 0.1)], **_SMALL)
    with pytest.raises(ValueError, match="heat_flow only"):
        Candidate("vs", 0.1, mode="lower_bound")
    with pytest.raises(ValueError, match="not used with heat flow"):
        Candidate("heat_flow", 5.0, layer="L1")
    with pytest.raises(ValueError, match="rank_question"):
        plan_profile(prof, candidates=[("heat_flow", 5.0)], rank_question="L7", **_SMALL)
    from bayescrust.plan import plan_layer

    with pytest.raises(ValueError, match="name other layers"):
        plan_layer(prof.layers[0], candidates=[Candidate("vs", 0.1, layer="L2")])
    with pytest.raises(ValueError, match="plan it on a profile"):
        plan_layer(prof.layers[0], candidates=[("heat_flow", 5.0)])


def test_prior_class_probabilities_closed_form():
    """Two rocks with the default Dirichlet(1, 1) fractions: the ultramafic fraction is uniform on
    [0, 1] (closed form), so each layer is mantle with prior probability 1/2 whatever the thermal
    state, and the first mantle layer of two is L1 / L2 / none with 1/2, 1/4, 1/4; a layer is
    "mostly" gabbro or mantle with 1 - MOSTLY each and mixed with 2 MOSTLY - 1."""
    from bayescrust.inference.hypotheses import MOSTLY
    from bayescrust.plan.profile_questions import _questions

    prof = _two_layer()
    design = exact_design(prof, n_replicates=2, seed=0, **_SMALL)
    states = profile_states(prof, design, np.random.default_rng(1), 16)
    q = _questions(prof, design, states)
    np.testing.assert_allclose(q[BOUNDARY_QUESTION][3], [0.5, 0.25, 0.25], atol=0.01)
    names, prior = q["L1"][2], q["L1"][3]
    gabbro = sum(p for n, p in zip(names, prior, strict=True) if "gabbro" in n)
    mantle = sum(p for n, p in zip(names, prior, strict=True) if "mantle" in n)
    assert gabbro == pytest.approx(1 - MOSTLY, abs=0.01)
    assert mantle == pytest.approx(1 - MOSTLY, abs=0.01)
    assert prior[list(names).index("mixed / transition")] == pytest.approx(2 * MOSTLY - 1,
                                                                            abs=0.01)


def test_today_from_joint_states_agrees_with_exact_profile():
    """Today's boundary probabilities from the stratified joint states against exact_profile
    (independent designs), |z| < 4 with both errors."""
    prof = _two_layer()
    ens = _ensemble(prof, BOUNDARY_QUESTION, None, seed=5)
    u = update(ens, Candidate("heat_flow", math.inf), [0.0])
    res = exact_profile(prof, seed=9, n_replicates=4, **_SMALL)
    b = res.boundary
    for k, name in enumerate(ens.hypotheses):
        row = b[b["outcome"] == name].iloc[0]
        assert _z(u["hypothesis_probabilities"][0, k], u["hypothesis_mcse"][0, k],
                  row["probability"], row["mcse"]) < 4.0, name


@pytest.mark.slow
def test_law_of_total_probability_many_seeds():
    """Slow version: 2000 simulated data per candidate and five seeds; over every checkable
    (seed, candidate, question, outcome) the |z| of the law-of-total-probability check follow
    the standard normal: fewer than 2 % beyond 3 (expected 0.27 %) and none beyond 5."""
    zs = []
    for seed in range(5):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DegeneracyWarning)
            pp = plan_profile(_two_layer(), seed=100 + seed, n_simulations=2000, **_SMALL,
                              candidates=[("heat_flow", 10.0),
                                          Candidate("heat_flow", 10.0, mode="lower_bound"),
                                          Candidate("vs", 0.1, layer="L1"),
                                          Candidate("density", 0.05, layer="L2")])
        for q, plan in pp.plans.items():
            if pp.questions[q] == "thermal":
                continue
            cal = plan.calibration
            ok = np.minimum(cal["today"], 1 - cal["today"]) * 2000 >= 10
            zs += list((np.abs(cal["average_updated"] - cal["today"]) / cal["mcse"])[ok])
    zs = np.asarray(zs)
    assert zs.size > 50
    assert np.mean(zs > 3) < 0.02 and zs.max() < 5, np.sort(zs)[-5:]


@pytest.mark.slow
@pytest.mark.xfail(strict=True, reason="a profile plan's Monte Carlo errors cover the simulated "
                   "data only: over 12 seeds (1024 x 64 design points, 200 data) the L1 values "
                   "of Vs +-0.1 in L1 scattered ~2x (E[P(true)]), ~6x (E[entropy]) and ~70x "
                   "(interval narrowing) their reported errors; docs/plan.md, README caution")
def test_profile_plan_errors_cover_the_spread_over_seeds():
    # a reported Monte Carlo error must match the spread of the value over seeds (each seed: a
    # new design, new joint states, new simulated data); the sample sd of 12 draws lies below
    # sqrt(chi2.ppf(0.975, 11) / 11) = 1.47 of the true sd with 97.5 % probability (scipy)
    prof = _two_layer()
    cand = [Candidate("vs", 0.1, layer="L1")]
    rows = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for seed in range(12):
            pp = plan_profile(prof, seed=seed, n_simulations=200, n_layer=1024, n_thermal=64,
                              candidates=cand)
            t = pp.table
            rows.append(t[t["question"] == "L1"].iloc[0])
    hi = math.sqrt(stats.chi2.ppf(0.975, 11) / 11)
    for k in ("expected_p_true", "expected_entropy_bits", "interval_narrowing"):
        v = np.array([r[k] for r in rows], float)
        e = np.array([r[f"{k}_mcse"] for r in rows], float)
        assert np.std(v, ddof=1) / math.sqrt(np.mean(e**2)) < hi, k
