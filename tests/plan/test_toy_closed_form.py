"""Preposterior values on a linear-Gaussian toy with a threshold hypothesis, against closed forms.

Toy (invented numbers, not check values; the checks are the closed forms): prior
theta ~ N(0, 1); one existing datum y0 = 0.8 with error 1, so today's posterior is N(0.4, 0.5);
a candidate datum y = theta + e, e ~ N(0, s^2). Hypotheses H1: theta > c and H2: theta <= c with
c = 0.5. Conjugate normal updating (e.g. Gelman et al. 2013, Bayesian Data Analysis, 3rd ed.,
sec. 2.5): posterior variance v1 = 1 / (1/v0 + 1/s^2), mean m1(y) = v1 (m0/v0 + y/s^2); the
preposterior (predictive) law of y is N(m0, v0 + s^2). Expectations over y are computed here by
scipy.integrate.quad; the chance of a decisive answer is a normal probability of the two tails of
y where P(H1 | y) crosses its thresholds.

Tolerances: 4 Monte Carlo standard errors of the plan's own estimate (a false failure has
probability ~6e-5 per check), plus the ensemble's resolution where stated.
"""

import math

import numpy as np
import pytest
from scipy import integrate, stats
from scipy.stats import qmc

from bayescrust.inference.hypotheses import indicators
from bayescrust.plan import Candidate, DegeneracyWarning, Ensemble, preposterior
from bayescrust.plan.ensemble import make_classes

M0, V0, C = 0.4, 0.5, 0.5
PI1 = 1.0 - stats.norm.cdf(C)  # prior P(theta > c) under N(0, 1)
PRIOR = np.array([PI1, 1.0 - PI1])
BOXES = {"above": {"vs": (C, math.inf)}, "below": {"vs": (-math.inf, C)}}


def toy_ensemble(n_log2=14, seed=0):
    """The exact path on the toy: scrambled-Sobol prior design weighted by today's likelihood."""
    u = qmc.Sobol(1, scramble=True, rng=np.random.default_rng(seed)).random_base2(n_log2)[:, 0]
    theta = stats.norm.ppf(np.clip(u, 1e-12, 1 - 1e-12))
    q = {"vs": theta, "temperature_c": theta}
    ind = indicators(BOXES, q)
    classes, names = make_classes(ind)
    assert names == ("above", "below")
    return Ensemble(quantities=q, log_weights=stats.norm.logpdf(0.8, theta, 1.0),
                    hypotheses=ind, boxes=BOXES, classes=classes, class_names=names,
                    prior_probabilities=PRIOR, model_error={"vs": 0.0})


def closed_form(s):
    v1 = 1.0 / (1.0 / V0 + 1.0 / s**2)
    pred = stats.norm(M0, math.sqrt(V0 + s**2))

    def p1(y):
        m1 = v1 * (M0 / V0 + y / s**2)
        return stats.norm.sf((C - m1) / math.sqrt(v1))

    def h2(p):
        return 0.0 if p <= 0 or p >= 1 else -(p * math.log2(p) + (1 - p) * math.log2(1 - p))

    lim = (M0 - 12 * pred.std(), M0 + 12 * pred.std())
    e_ptrue = integrate.quad(lambda y: (p1(y) ** 2 + (1 - p1(y)) ** 2) * pred.pdf(y), *lim,
                             limit=200)[0]
    e_ent = integrate.quad(lambda y: h2(p1(y)) * pred.pdf(y), *lim, limit=200)[0]
    # decisive: P1 >= t_hi or P1 <= t_lo; Bayes factor 10 against the prior odds
    o1 = 10.0 * PI1 / (1 - PI1)
    o2 = 10.0 * (1 - PI1) / PI1
    t_hi = min(0.9, o1 / (1 + o1))
    t_lo = 1.0 - min(0.9, o2 / (1 + o2))

    def y_at(p):  # P1(y) = p  <=>  m1 = c - sqrt(v1) * Phi^-1(1 - p)
        m1 = C - math.sqrt(v1) * stats.norm.ppf(1 - p)
        return (m1 / v1 - M0 / V0) * s**2

    p_dec = pred.sf(y_at(t_hi)) + pred.cdf(y_at(t_lo))
    width0 = 2 * stats.norm.ppf(0.97) * math.sqrt(V0)
    width1 = 2 * stats.norm.ppf(0.97) * math.sqrt(v1)
    p0 = stats.norm.sf((C - M0) / math.sqrt(V0))
    return {"expected_p_true": e_ptrue, "information_gain_bits": h2(p0) - e_ent,
            "p_decisive": p_dec, "interval_narrowing": width0 - width1, "width1": width1}


@pytest.mark.parametrize("s", [0.3, 0.7])
def test_matches_closed_form(s):
    ens = toy_ensemble(n_log2=15)  # 2^14 leaves an odd tail datum with < 50 effective states
    plan = preposterior(ens, [Candidate("vs", s, model_error=0.0)], seed=11,
                        n_simulations=4000)
    row = plan.table.iloc[0]
    ref = closed_form(s)
    for key in ("expected_p_true", "information_gain_bits", "p_decisive"):
        se = row[f"{key}_mcse"]
        assert abs(row[key] - ref[key]) <= 4 * se, (key, row[key], ref[key], se)
    # interval ends are sample quantiles of ~1e4 effective states: se of a 3 % quantile is
    # sqrt(p (1 - p) / n) / phi(z_p) (Cramer 1946, Mathematical Methods of Statistics, 28.5)
    n_eff = plan.settings["ensemble_importance_ess"] * (1.0 - 0.0)
    q_se = math.sqrt(0.03 * 0.97 / n_eff) / stats.norm.pdf(stats.norm.ppf(0.97)) * math.sqrt(V0)
    tol = 4 * (math.sqrt(2) * q_se + row["interval_narrowing_mcse"])
    assert abs(row["interval_narrowing"] - ref["interval_narrowing"]) <= tol


def test_law_of_total_probability():
    ens = toy_ensemble(n_log2=15, seed=3)
    # the identity holds for every update, degenerate or not: min_ess lowered so that a rare
    # tail datum of the prior design does not warn
    plan = preposterior(ens, [("vs", 0.2), ("vs", 1.0)], seed=5, n_simulations=2000, min_ess=5)
    cal = plan.calibration
    assert np.all(np.abs(cal["average_updated"] - cal["today"]) <= 4 * cal["mcse"])
    assert np.all(cal["mcse"] > 0)


def test_infinite_error_has_no_value():
    ens = toy_ensemble()
    plan = preposterior(ens, [Candidate("vs", math.inf)], seed=2, n_simulations=1000)
    row = plan.table.iloc[0]
    assert row["information_gain_bits"] == pytest.approx(0.0, abs=1e-12)
    assert row["interval_narrowing"] == pytest.approx(0.0, abs=1e-9)
    assert row["p_decisive"] == float(plan.today["decisive"])
    # today's expected probability of the true class is sum p^2; the plan draws the truth
    p = plan.today["class_probabilities"]
    assert abs(row["expected_p_true"] - np.sum(p**2)) <= 4 * row["expected_p_true_mcse"]


def test_tiny_error_has_maximal_value():
    # the hypotheses are separated by the observable itself: a perfect datum settles them
    ens = toy_ensemble()
    with pytest.warns(DegeneracyWarning):  # no layer model here to rerun the exact path
        plan = preposterior(ens, [Candidate("vs", 1e-9, model_error=0.0)], seed=4,
                            n_simulations=500)
    row = plan.table.iloc[0]
    assert row["expected_entropy_bits"] < 0.01
    assert row["information_gain_bits"] > 0.99 * plan.today["entropy_bits"]
    assert row["expected_p_true"] > 0.99 and row["p_decisive"] > 0.99


def test_value_falls_with_error():
    ens = toy_ensemble()
    plan = preposterior(ens, [("vs", 0.1), ("vs", 0.5), ("vs", 2.0)], seed=8,
                        n_simulations=600)
    gain = plan.table.sort_values("sigma")["information_gain_bits"].to_numpy()
    assert gain[0] > gain[1] > gain[2] > 0
    assert list(plan.table["rank"]) == [1, 2, 3]


@pytest.mark.slow
@pytest.mark.parametrize("s", [0.1, 0.2, 0.5, 1.0, 2.0])
def test_matches_closed_form_large(s):
    # the default test's check at more errors and 5x the simulated data
    ens = toy_ensemble(n_log2=16, seed=21)
    plan = preposterior(ens, [Candidate("vs", s, model_error=0.0)], seed=31,
                        n_simulations=20000, min_ess=5)
    row = plan.table.iloc[0]
    ref = closed_form(s)
    for key in ("expected_p_true", "information_gain_bits", "p_decisive"):
        assert abs(row[key] - ref[key]) <= 4 * row[f"{key}_mcse"], (key, row[key], ref[key])
