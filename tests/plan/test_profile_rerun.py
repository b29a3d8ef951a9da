"""The profile planner's exact rerun for degenerate updates (:mod:`bayescrust.plan.rerun`).

Checks that could fail:

- rerun against brute force: for one fixed datum (heat flow; Vs in a layer; heat flow with the
  uncoupled state) the rerun's probabilities for the crust-mantle boundary and a layer agree
  with the structured exact path run on the profile with that datum added as a real
  observation (a larger, independent design), within 4 combined Monte Carlo errors (the
  rerun's error from its spread over six independent small designs, in which reweighting the
  joint states is degenerate);
- a degenerate configuration (few thermal points) now reruns (``reruns > 0`` wherever updates
  are degenerate), the law of total probability still holds with the rerun stratum, and the
  degeneracy warning names only what stayed degenerate after the reruns;
- ``max_reruns=0`` keeps the old behaviour (values kept, one warning).
"""

import dataclasses
import math
import warnings

import numpy as np
import pytest
from test_profile_plan import _two_layer  # the planner tests' two-layer profile

from bayescrust import Layer
from bayescrust.plan import Candidate, DegeneracyWarning, update
from bayescrust.plan.preposterior import Settings
from bayescrust.plan.profile import (
    BOUNDARY_QUESTION,
    plan_profile,
    profile_ensemble,
    profile_states,
)
from bayescrust.profile import HeatFlow, Profile, exact_profile
from bayescrust.profile.exact import exact_design
from bayescrust.profile.thermal import Uncoupled

_SETTINGS = Settings(quantity="interval quantity")
_N_DESIGNS = 6
_MAX_RERUNS = 25


def _uncoupled():
    layers = [Layer("U1", top_km=1.0, bottom_km=3.0, vp=(6.9, 0.2)),
              Layer("U2", top_km=3.0, bottom_km=5.0, vp=(7.6, 0.2))]
    return Profile(layers, Uncoupled(lo=0.0, hi=1300.0), water_depth_km=3.0,
                   rocks=[("gabbro", "harzburgite")] * 2, priors=[{"melt_fraction": 0.0}] * 2,
                   pressure="reference")


def _reruns(prof, cand, y, questions, group, n_thermal=32, states=4):
    """Rerun answers (hypothesis probabilities) per question over independent small designs,
    and the reweighting's effective sizes for the same datum."""
    out = {q: [] for q in questions}
    ess_rw, ess_rr = [], []
    for k in range(_N_DESIGNS):
        d = exact_design(prof, n_replicates=2, seed=100 + k, n_layer=2**11, n_thermal=n_thermal)
        st = profile_states(prof, d, np.random.default_rng(k), states)
        for q in questions:
            ens = profile_ensemble(prof, d, st, q, group)
            ess_rw.append(float(update(ens, cand, [y])["importance_ess"][0]))
            p, h, ess, _ = ens.rerun(ens, cand, y, np.random.default_rng(50 + k), _SETTINGS,
                                     {})
            assert p.shape == (1, len(ens.class_names)) and h.shape == (1, len(ens.hypotheses))
            np.testing.assert_allclose(p.sum(), 1.0, atol=1e-9)  # probabilities (closed form)
            out[q].append(h[0])
            ess_rr.append(float(ess[0]))
    names = {q: list(ens.hypotheses) for q, ens in
             ((q, profile_ensemble(prof, d, st, q, group)) for q in questions)}
    res = {q: (np.mean(v, axis=0), np.std(v, axis=0, ddof=1) / math.sqrt(len(v)), names[q])
           for q, v in out.items()}
    return res, np.array(ess_rw), np.array(ess_rr)


def _compare(res, ref, layer, min_p=0.02):
    """|z| < 4 for every boundary outcome and layer hypothesis with probability >= min_p."""
    checked = 0
    b = ref.boundary
    mean, se, names = res[BOUNDARY_QUESTION]
    for k, name in enumerate(names):
        row = b[b["outcome"] == name].iloc[0]
        if row["probability"] < min_p:
            continue
        z = abs(mean[k] - row["probability"]) / math.hypot(se[k], row["mcse"])
        assert z < 4.0, (name, mean[k], se[k], row["probability"], row["mcse"])
        checked += 1
    h = ref.hypotheses
    mean, se, names = res[layer]
    for k, name in enumerate(names):
        row = h[(h["layer"] == layer) & (h["hypothesis"] == name)].iloc[0]
        if row["probability"] < min_p:
            continue
        z = abs(mean[k] - row["probability"]) / math.hypot(se[k], row["mcse"])
        assert z < 4.0, (layer, name, mean[k], se[k], row["probability"], row["mcse"])
        checked += 1
    return checked


def test_rerun_heat_flow_agrees_with_exact_path_with_the_datum():
    """A heat flow of 300 +- 5 mW/m^2 (a young age: far in today's tail): 32 thermal points per
    design leave the reweighted joint states degenerate (ESS < 50, the regime of the rerun);
    the rerun's boundary and L1 probabilities match exact_profile with HeatFlow(300, 5)."""
    prof = _two_layer()
    cand = Candidate("heat_flow", 5.0)
    y = 300.0
    res, ess_rw, ess_rr = _reruns(prof, cand, y, (BOUNDARY_QUESTION, "L1"), None)
    assert np.all(ess_rw < 50.0)  # reweighting alone is degenerate here
    assert np.mean(ess_rr) > 2.0 * np.mean(ess_rw)
    ref = exact_profile(dataclasses.replace(prof, heat_flow=HeatFlow(y, 5.0)), seed=7,
                        n_replicates=4, n_layer=2**12, n_thermal=256)
    assert _compare(res, ref, "L1") >= 4


def test_rerun_layer_vs_agrees_with_exact_path_with_the_datum():
    """A Vs datum of 4.1 +- 0.05 km/s in L1 (which has only Vp today: the rerun uses the
    planner's law with correlated Vp/Vs model errors, as the exact path's layer likelihood)."""
    prof = _two_layer()
    cand = Candidate("vs", 0.05, layer="L1")
    y = 4.1
    res, _, ess_rr = _reruns(prof, cand, y, (BOUNDARY_QUESTION, "L1"), "L1", states=2)
    assert np.all(np.isfinite(ess_rr))
    layers = (dataclasses.replace(prof.layers[0], vs=(y, 0.05)), prof.layers[1])
    ref = exact_profile(dataclasses.replace(prof, layers=layers), seed=8, n_replicates=4,
                        n_layer=2**12, n_thermal=256)
    assert _compare(res, ref, "L1") >= 3


def test_rerun_uncoupled_heat_flow_agrees_with_exact_path():
    """Uncoupled state (no thermal parameters): the rerun reweighs every point of the stored
    layer designs; a heat flow of 40 +- 5 mW/m^2 (the top layer's conductive gradient) against
    exact_profile with that heat flow."""
    prof = _uncoupled()
    cand = Candidate("heat_flow", 5.0)
    y = 40.0
    res, _, _ = _reruns(prof, cand, y, (BOUNDARY_QUESTION, "U1"), None, states=8)
    ref = exact_profile(dataclasses.replace(prof, heat_flow=HeatFlow(y, 5.0)), seed=9,
                        n_replicates=4, n_layer=2**13)
    assert _compare(res, ref, "U1") >= 3


@pytest.fixture(scope="module")
def degenerate_plan():
    """Few thermal points (16) and few states per point: a heat flow +- 5 mW/m^2 is
    degenerate for every simulated datum."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        pp = plan_profile(_two_layer(), seed=21, n_simulations=300, n_layer=2**11,
                          n_thermal=16, states_per_thermal=4, max_reruns=_MAX_RERUNS,
                          candidates=[("heat_flow", 5.0), Candidate("vs", 0.1, layer="L1")])
    return pp, caught


def _check_warnings(pp, caught):
    """One DegeneracyWarning per candidate that stayed degenerate after its reruns, naming how
    many; none that says nothing was rerun; no other warning."""
    t = pp.table
    msgs = [str(w.message) for w in caught if issubclass(w.category, DegeneracyWarning)]
    assert not any("no model" in m or "max_reruns" in m for m in msgs), msgs
    still = t.groupby(level=0)["degenerate_after_rerun"].max()
    for lab, n in still.items():
        mine = [m for m in msgs if m.startswith(f"candidate {lab!r}")]
        assert len(mine) == (1 if n else 0), (lab, n, mine)
        if n:
            assert "still degenerate after the exact rerun" in mine[0]
            assert f"for up to {n} of" in mine[0]
    others = [w for w in caught if not issubclass(w.category, DegeneracyWarning)]
    assert not others, [str(w.message) for w in others]


def test_degenerate_configuration_reruns(degenerate_plan):
    """Degenerate updates are rerun (a subsample of max_reruns) and the reruns are not
    degenerate (new thermal points: 3 x min_ess of them at least)."""
    pp, caught = degenerate_plan
    t = pp.table
    hf = t.loc["heat flow ± 5 mW/m^2"]
    assert int(hf["degenerate"].min()) > 100  # the configuration is degenerate
    deg = t[t["degenerate"] > 0]
    assert np.all(deg["reruns"] == np.minimum(deg["degenerate"], _MAX_RERUNS))
    assert np.all(t["degenerate_after_rerun"] <= t["reruns"])
    assert int(hf["degenerate_after_rerun"].sum()) < 0.05 * int(hf["reruns"].sum())
    _check_warnings(pp, caught)


def test_still_degenerate_is_counted_and_warned():
    """Uncoupled state and a heat flow +- 1 mW/m^2 (about 1 K of the top layer's temperature):
    sharper than the stored layer design resolves, and the fresh layer design of the rerun
    does not resolve it either; the reruns that stay degenerate are counted and named in the
    one warning."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        pp = plan_profile(_uncoupled(), seed=3, n_simulations=100, n_layer=2**11,
                          states_per_thermal=64, max_reruns=8, candidates=[("heat_flow", 1.0)])
    t = pp.table
    assert np.all(t["reruns"] == 8)
    assert int(t["degenerate_after_rerun"].max()) > 0
    _check_warnings(pp, caught)


def test_law_of_total_probability_with_reruns():
    """E_y[P(outcome | d, y)] = P(outcome | d) within 4 MCSE, for the boundary and the layer
    questions, with the degenerate stratum represented by its reruns (law of total
    probability; a biased rerun would move the average). The ensemble must represent today's
    posterior well (128 thermal points, 32 states each): the reruns answer from the exact
    path, the other data from the ensemble."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DegeneracyWarning)
        pp = plan_profile(_two_layer(), seed=21, n_simulations=300, n_layer=2**11,
                          n_thermal=128, states_per_thermal=32, candidates=[("heat_flow", 3.0)])
    t = pp.table
    for q in (BOUNDARY_QUESTION, "L1", "L2"):
        assert int(t[t["question"] == q]["reruns"].iloc[0]) > 0, q
        plan = pp.plans[q]
        cal = plan.calibration
        n = plan.settings["n_simulations"]
        checkable = cal[np.minimum(cal["today"], 1 - cal["today"]) * n >= 10]
        assert checkable["hypothesis"].nunique() >= 2, q
        z = np.abs(checkable["average_updated"] - checkable["today"]) / checkable["mcse"]
        assert float(z.max()) < 4.0, (q, checkable)


def test_no_reruns_keeps_values_and_warns():
    with pytest.warns(DegeneracyWarning) as rec:
        pp = plan_profile(_two_layer(), seed=21, n_simulations=200, n_layer=2**11,
                          n_thermal=16, states_per_thermal=4, max_reruns=0,
                          candidates=[("heat_flow", 5.0)])
    msgs = [str(w.message) for w in rec]
    assert any("max_reruns is 0" in m for m in msgs)
    # 16 thermal points cannot hold 50 effective states: today's design is flagged too
    assert any("today's importance effective size below min_ess" in m and "thermal design"
               in m for m in msgs)
    t = pp.table
    assert int(t["degenerate"].max()) > 0
    assert np.all(t["reruns"] == 0)


@pytest.mark.slow
@pytest.mark.parametrize("y, sigma, mode", [(200.0, 3.0, "gaussian"), (420.0, 5.0, "gaussian"),
                                            (250.0, 5.0, "lower_bound")])
def test_rerun_heat_flow_against_exact_path_slow(y, sigma, mode):
    """Slow version of the heat-flow check: more data, a lower bound (the planner's law is the
    profile's one-sided law up to a constant away from the cap, tested in
    test_profile_plan.py), each against exact_profile with that heat flow, |z| < 4."""
    prof = _two_layer()
    cand = Candidate("heat_flow", sigma, mode=mode)
    res, _, _ = _reruns(prof, cand, y, (BOUNDARY_QUESTION, "L1", "L2"), None)
    ref = exact_profile(dataclasses.replace(prof, heat_flow=HeatFlow(y, sigma, mode)), seed=17,
                        n_replicates=4, n_layer=2**12, n_thermal=256)
    assert _compare(res, ref, "L1") >= 3
    assert _compare(res, ref, "L2") >= 3
