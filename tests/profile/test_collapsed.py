"""Collapsed profile MCMC: its tabulated marginal likelihoods and its conditional layer draws."""

import math

import numpy as np
import pytest
from scipy import stats

import bayescrust as bc
from bayescrust import Layer
from bayescrust.inference.evidence import prior_design, weigh_design
from bayescrust.inference.priors import Uniform
from bayescrust.profile import HalfSpaceState, Profile, invert_profile
from bayescrust.profile.collapsed import LayerTable


def _profile():
    layers = [Layer("3", top_km=1.0, bottom_km=4.0, vp=(6.8, 0.12)),
              Layer("M", top_km=4.0, bottom_km=7.0, vp=(7.6, 0.15))]
    return Profile(layers, HalfSpaceState(age_myr=Uniform(0.5, 10.0), scatter_c=40.0),
                   water_depth_km=3.0)


def test_tabulated_log_likelihood_and_conditionals_match_direct_weighing():
    prof = _profile()
    m = prof.layer_models()[1]
    rng = np.random.default_rng(0)
    _, q, _ = prior_design(m, rng, 2**10, n_scrambles=2)
    ll, _ = weigh_design(m, q)
    ind = (q["ultramafic_fraction"] >= 0.5).astype(float)[:, None]
    lo, hi = prof.temperature_range_c
    grid = np.linspace(lo - 320.0, hi + 320.0, 801)
    tab = LayerTable(prof, ll, q["temperature_c"], ind, 2, grid)
    g = rng.uniform(lo - 100.0, hi + 100.0, 200)
    # direct: the importance estimate with the truncated-normal conditional temperature density
    # from scipy (independent of the fast outer-product form the table uses)
    cond = stats.truncnorm.pdf(q["temperature_c"][None, :], (lo - g[:, None]) / 40.0,
                               (hi - g[:, None]) / 40.0, loc=g[:, None], scale=40.0)
    w = np.exp(ll)[None, :] * cond * (hi - lo)
    direct = np.log(w.mean(axis=1))
    assert np.max(np.abs(tab.log_l(g) - direct)) < 1e-6
    p_direct = (w @ ind[:, 0]) / w.sum(axis=1)
    assert np.max(np.abs(tab.cond(g)[:, 0] - p_direct)) < 1e-6
    # outside the grid the table falls back to direct weighing
    assert abs(tab.log_l(np.array([hi + 1000.0]))[0] - tab.log_l(np.array([hi + 1000.0]),
                                                                 direct=True)[0]) == 0.0


def test_layer_draws_are_the_importance_weights():
    # rejection sampling from the chunk envelope draws each design point with its normalised
    # importance weight: chi-square test of the draw counts (seeded; fails when the law differs)
    prof = _profile()
    m = prof.layer_models()[1]
    rng = np.random.default_rng(1)
    _, q, _ = prior_design(m, rng, 2**9, n_scrambles=2)
    ll, _ = weigh_design(m, q)
    tab = LayerTable(prof, ll, q["temperature_c"], np.zeros((ll.size, 1)), 2,
                     np.linspace(-400.0, 2000.0, 601))
    k = tab.draw(np.full(40000, 450.0), rng)
    lw = tab.log_weights(np.array([450.0]))[0]
    w = np.exp(lw - lw.max())
    w /= w.sum()
    big = w > 5.0 / k.size  # cells with expected counts >= 5, the rest pooled
    obs = np.append(np.bincount(k, minlength=w.size)[big], np.sum(~big[k]))
    exp = np.append(w[big], w[~big].sum()) * k.size
    assert stats.chisquare(obs, exp).pvalue > 1e-3


@pytest.fixture(scope="module")
def collapsed():
    return invert_profile(_profile(), seed=2, n_layer=2**11, min_ess=400)


def test_collapsed_reports_its_approximations(collapsed):
    d = collapsed.diagnostics
    assert d["scheme"] == "collapsed" and d["converged"]
    assert d["interpolation_error_max"] < 1e-4
    assert 0.0 < d["log_likelihood_design_sd"]["median"] <= d["log_likelihood_design_sd"]["max"]
    assert collapsed.pressure_bound is not None
    assert np.all(collapsed.pressure_bound["delta_log_likelihood"] >= 0.0)


def test_layer_draws_follow_the_rao_blackwellised_probabilities(collapsed):
    # the equal-weight layer draws (importance resampling given each kept thermal state) and
    # the chain average of the conditional probabilities estimate the same posterior
    r = collapsed
    for i, name in enumerate(r.profile.names):
        p = r.probability(name, "mantle rock")
        frac = float(np.mean(r.draws["layers"]["ultramafic_fraction"][:, i] >= 0.5))
        n = r.draws["layers"]["ultramafic_fraction"].shape[0]
        se = math.hypot(math.sqrt(max(p * (1 - p), 1e-4) / n),
                        float(r.hypotheses.set_index(["layer", "hypothesis"])
                              .loc[(name, "mantle rock"), "mcse"]))
        assert abs(frac - p) < 4 * se + 1e-9, (name, frac, p)


def test_profile_mcmc_follows_the_one_convergence_rule(collapsed):
    # the layer path's rule (stopping rule and every R-hat < RHAT_MAX; Vehtari et al. 2021 for
    # the rank-normalised R-hat) applies to the profile too; it used the stopping rule alone
    from bayescrust.inference.trust import RHAT_MAX
    from bayescrust.profile import collapsed as col
    from bayescrust.report.profile import convergence_line

    d = collapsed.diagnostics
    assert d["sampler_converged"] and d["converged"] and d["max_r_hat"] < RHAT_MAX
    assert set(d["r_hat"]) == set(d["coordinates"])
    assert "R-hat" in convergence_line(collapsed)
    # an injected failure: one walker group stuck far off gives a large R-hat, the verdict NO
    run = type("Run", (), {})()
    x = np.random.default_rng(0).normal(size=(400, 32, 1))
    x[:, ::4] += 5.0  # one of the four groups (walker w joins group w mod 4) shifted
    run.samples, run.converged = x, True
    with pytest.warns(bc.ConvergenceWarning, match="R-hat"):
        v = col._verdict(run, ["age_myr"])
    assert not v["converged"] and v["max_r_hat"] > RHAT_MAX


def test_bad_scheme_is_refused():
    with pytest.raises(ValueError, match="scheme"):
        invert_profile(_profile(), scheme="gibbs")
