"""Sampler honesty: no crash on stuck walkers, errors measured on the ensemble, MCMC against the
exact path on a two-mode posterior.

The two-mode case: Vp 7.6 +- 0.05 and Vs 4.2 +- 0.05 km/s, 4-6 km below the seafloor under
3 km of water, gabbro + harzburgite, no pores. Its posterior has a small cold, serpentinised
mode (T <= 300 C, ~17 %) beside a broad warm one. The reference is computed in each test by
the exact path (independently scrambled Sobol designs), so the checks do not depend on the
forward model's present numbers.
"""

import math
import warnings

import numpy as np
import pytest

import bayescrust as bc
from bayescrust.inference.sampler import ensemble_mcse, run_ensemble

TWO_MODE = bc.Layer("two-mode", top_km=4.0, bottom_km=6.0, water_depth_km=3.0,
                    vp=(7.6, 0.05), vs=(4.2, 0.05))
KW = dict(rocks=("gabbro", "harzburgite"), priors={"porosity": 0.0},
          hypotheses={"cold": {"temperature_c": (None, 300.0)}})


def test_stuck_walker_is_not_a_crash():
    # A unit Gaussian with a needle of +30 in log density at (2, 2) of width 1e-9: a walker
    # started on the needle never moves (its autocorrelation is 0/0 = NaN, which used to raise
    # "cannot convert float NaN to integer"). It must be re-seeded and the run must converge
    # to the Gaussian (the needle's mass, ~1e-18 * e^30, is negligible).
    def log_prob(x):
        lp = -0.5 * np.sum(x * x, axis=1)
        return lp + np.where(np.all(np.abs(x - 2.0) < 1e-9, axis=1), 30.0, 0.0)

    rng = np.random.default_rng(1)
    init = rng.standard_normal((32, 2))
    init[0] = 2.0
    run = run_ensemble(log_prob, init, rng=rng, min_ess=500)
    assert run.n_reseeded >= 1
    assert run.converged and np.all(np.isfinite(run.tau))
    flat = run.samples.reshape(-1, 2)
    # unit Gaussian: mean 0, sd 1 (emcee's own test tolerances, |mean| < 0.08, |sd - 1| < 0.05)
    assert np.all(np.abs(flat.mean(axis=0)) < 0.08)
    assert np.all(np.abs(flat.std(axis=0) - 1.0) < 0.05)


def test_ensemble_mcse_sees_correlated_walkers():
    # W walkers sharing one AR(1) series a_t = rho a_{t-1} + e_t (plus small independent
    # noise): the walkers are not independent chains. The standard error of the mean of a
    # stationary AR(1) of unit variance over n steps is sqrt(tau / n) with integrated time
    # tau = (1 + rho) / (1 - rho) (e.g. Sokal 1997, Monte Carlo methods in statistical
    # mechanics, eq. 2.19-2.21); treating walkers as independent would report it sqrt(W)
    # = 8 times too small.
    rng = np.random.default_rng(3)
    rho, n, w = 0.9, 20000, 64
    e = rng.standard_normal(n) * math.sqrt(1 - rho**2)
    a = np.empty(n)
    a[0] = rng.standard_normal()
    for t in range(1, n):  # building the test series, not a sampler
        a[t] = rho * a[t - 1] + e[t]
    values = a[None, :] + 0.1 * rng.standard_normal((w, n))
    _, mcse, tau = ensemble_mcse(values)
    exact = math.sqrt((1 + rho) / (1 - rho) / n)
    # the estimate of tau from one series of ~1000 tau is good to ~10 %; 20 % allowed
    assert abs(mcse / exact - 1) < 0.2, (mcse, exact)
    assert abs(tau / 19.0 - 1) < 0.25


def _cold(res):
    return res.probability("cold"), float(res.hypotheses.loc["cold", "posterior_mcse"])


def _exact_reference():
    ex = bc.exact_layer(TWO_MODE, seed=11, n_points=2**17, **KW)
    return _cold(ex)


def _z_scores(seeds, p_ex, se_ex, **kw):
    z, est, err = [], [], []
    for s in seeds:
        mc = bc.invert_layer(TWO_MODE, seed=s, evidence=False, n_prior=200, **KW, **kw)
        assert mc.diagnostics["converged"]
        p, se = _cold(mc)
        est.append(p)
        err.append(se)
        z.append((p - p_ex) / math.hypot(se, se_ex))
    return np.array(z), np.array(est), np.array(err)


def test_exact_path_errors_are_honest():
    # Spread of the exact path's estimates over N independent designs against its reported
    # error (8 scrambles each, the default). Under honest errors the squared ratio follows
    # F(N - 1, N (K - 1)): the numerator is a variance from N designs, the denominator the
    # pooled within-design variance from N (K - 1) degrees of freedom (the reported error is
    # itself noisy; the former bound took only the numerator's chi2(N - 1) into account).
    # Designs of 2^13 points (8 x 1024) let N = 48 designs cost what 6 full ones do: the 99 %
    # range of the ratio is then [0.73, 1.30], so a 1.3x understatement fails. Stage 1 only
    # (the scramble errors are what is checked). Measured on this case: the true sd of a
    # 2^16-point design's P(cold) from 128 scrambles is 1.03x the rms reported error; the 1.69
    # of the former 12-design test was a 0.3 % event under F(11, 84) (36 other designs: 1.05).
    # The plain Monte Carlo formula used before overstated the error ~11x (ratio ~0.09).
    from scipy.stats import f

    n, k = 48, 8
    ps, ses, zs, zes = [], [], [], []
    for s in range(n):
        ex = bc.exact_layer(TWO_MODE, seed=200 + s, n_points=2**13, n_scrambles=k,
                            min_importance_ess=0, **KW)
        assert ex.settings["exact"]["n_scrambles"] == k
        p, se = _cold(ex)
        ps.append(p)
        ses.append(se)
        zs.append(ex.log_evidence)
        zes.append(ex.log_evidence_error)
    lo, hi = (math.sqrt(f.ppf(c, n - 1, n * (k - 1))) for c in (0.005, 0.995))
    r_p = np.std(ps, ddof=1) / np.sqrt(np.mean(np.square(ses)))
    r_z = np.std(zs, ddof=1) / np.sqrt(np.mean(np.square(zes)))
    assert lo < r_p < hi, (r_p, lo, hi)
    assert lo < r_z < hi, (r_z, lo, hi)


def test_two_mode_mcmc_agrees_with_exact():
    # Three seeds: each z-score within 3 (two-sided 0.3 % each), and the errors small enough
    # that the check has power (the cold mode's probability was 0.008 low before the fix).
    p_ex, se_ex = _exact_reference()
    assert 0.05 < p_ex < 0.5  # the case is two-mode: the small mode holds real mass
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        z, _, err = _z_scores([1, 2, 3], p_ex, se_ex)
    assert np.all(np.abs(z) < 3.0), z
    assert np.all(err < 0.012), err


@pytest.mark.slow
def test_two_mode_mcse_matches_spread_over_seeds():
    # 60 seeds: z-scores against the exact path have mean within +-0.5 and rms <= 1.2 (the
    # issue's target), and the spread of the estimates over seeds matches the reported MCSE
    # (ratio in [0.8, 1.25]; with 60 seeds the ratio's own sampling error is ~9 %).
    p_ex, se_ex = _exact_reference()
    z, est, err = _z_scores(range(100, 160), p_ex, se_ex)
    print(f"z mean {z.mean():.2f} rms {np.sqrt(np.mean(z**2)):.2f}; spread/mcse "
          f"{np.std(est, ddof=1) / np.sqrt(np.mean(err**2)):.2f}")
    assert abs(z.mean()) <= 0.5
    assert np.sqrt(np.mean(z**2)) <= 1.2
    assert 0.8 <= np.std(est, ddof=1) / np.sqrt(np.mean(err**2)) <= 1.25


def test_progress_bar_ends_at_full_length(capsys):
    # the bar is sized to the planned chain, re-sized at every check, and ends at 100 % when
    # the stopping rule is met (not at a few per cent of max_steps)
    def log_prob(x):
        return -0.5 * np.sum(np.asarray(x) ** 2, axis=-1)

    rng = np.random.default_rng(4)
    run = run_ensemble(log_prob, rng.standard_normal((32, 2)), rng=rng, min_ess=200,
                       max_steps=20000, progress=True)
    assert run.converged
    err = capsys.readouterr().err
    last = err.replace("\r", "\n").strip().splitlines()[-1]
    assert "100%" in last and f"{run.n_steps}/{run.n_steps}" in last, last


def test_an_unconverged_run_keeps_half_its_chain():
    # stopped at max_steps, the burn-in (5 tau from an early tau estimate) reached the end of
    # the chain and one step was kept: 64 draws, an MCSE below even the independent-draw error
    layer = bc.Layer("lower crust", vp=(7.1, 0.1), top_km=4, bottom_km=6, water_depth_km=3)
    with pytest.warns(bc.ConvergenceWarning):
        r = bc.invert_layer(layer, seed=1, max_steps=100, min_ess=1000)
    assert not r.converged and r.diagnostics["n_steps"] == 100
    assert r.diagnostics["burn"] <= 50
    assert r.idata.posterior.sizes["draw"] * r.diagnostics["thin"] >= 50
    # the verdict travels with the tables and posterior.nc, each of which may be read alone
    assert not r.hypotheses["converged"].any() and r.idata.attrs["converged"] == "NO"


def test_prior_comparison_errors_cover_a_larger_design():
    # compare_priors gave the Bayes factors between thermal-state priors and the priors'
    # probabilities with no Monte Carlo error; their stated errors (independent log-evidence
    # errors, conservative: the priors share a seed) must cover a 16x larger design
    layer = bc.Layer("lc", vp=(7.1, 0.1), top_km=4, bottom_km=6, water_depth_km=3)
    tp = {"uniform": bc.UniformTemperature(0, 1400), "hot axis": bc.HotAxial()}
    kw = dict(rocks=("gabbro", "harzburgite"), priors={"porosity": 0.0}, method="exact",
              forward={"inclusion_scheme": "kuster_toksoz"})
    ref = bc.compare_priors(layer, thermal_priors=tp, seed=99, n_points=2**16, **kw)
    b_ref = ref.bayes_factors.loc["hot axis", "uniform"]
    e_ref = ref.bayes_factor_errors.loc["hot axis", "uniform"]
    p_ref, pe_ref = ref.evidence.loc["hot axis", ["posterior_probability",
                                                  "posterior_probability_error"]]
    assert 0 < e_ref < 0.05 and 0 < pe_ref < 0.05
    for s in range(6):
        c = bc.compare_priors(layer, thermal_priors=tp, seed=s, n_points=2**12, **kw)
        b, e = (c.bayes_factors.loc["hot axis", "uniform"],
                c.bayes_factor_errors.loc["hot axis", "uniform"])
        assert abs(b - b_ref) < 3 * math.hypot(e, e_ref), (s, b, e, b_ref)
        p, pe = c.evidence.loc["hot axis", ["posterior_probability",
                                            "posterior_probability_error"]]
        assert abs(p - p_ref) < 3 * math.hypot(pe, pe_ref), (s, p, pe, p_ref)
