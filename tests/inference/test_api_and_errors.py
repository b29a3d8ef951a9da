"""Public interface: result structure, reproducibility, clear errors, priors."""

import math
import warnings

import numpy as np
import pytest
from scipy import integrate, stats

import bayescrust as bc
from bayescrust.inference.model import LayerModel

LOWER = dict(top_km=4.0, bottom_km=6.0, water_depth_km=3.0)
FAST = dict(rocks=("gabbro", "harzburgite"), priors={"porosity": 0.0},
            forward={"inclusion_scheme": "kuster_toksoz"})


def _short_run(seed):
    layer = bc.Layer("lc", vp=(7.1, 0.1), vs=(3.9, 0.1), **LOWER)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", bc.ConvergenceWarning)
        return bc.invert_layer(layer, seed=seed, min_ess=200, max_steps=400, n_evidence=512,
                               n_prior=200, **FAST)


def test_same_seed_bit_identical_and_result_structure():
    a, b, c = _short_run(5), _short_run(5), _short_run(6)
    for var in ("temperature_c", "harzburgite", "vp"):
        assert np.array_equal(a.idata.posterior[var].values, b.idata.posterior[var].values)
    assert a.log_evidence == b.log_evidence
    assert not np.array_equal(a.idata.posterior["temperature_c"].values,
                              c.idata.posterior["temperature_c"].values)
    idata = a.idata
    for g in ("posterior", "prior", "observed_data", "log_likelihood", "sample_stats"):
        assert hasattr(idata, g), g
    for v in ("vp", "vs", "density", "vp_vs", "ultramafic_fraction", "melt_fraction_effective",
              "serpentinization_effective"):
        assert v in idata.posterior
    assert set(idata.log_likelihood.data_vars) == {"vp", "vs"}
    assert float(idata.constant_data["vp_sigma"].values[0]) == 0.1  # observed 1-sigma kept
    assert idata.attrs["parameter_names"].split(",")[0] == "gabbro"
    assert idata.attrs["seed"] == 5
    assert list(a.hypotheses.columns) == ["prior_probability", "prior_mcse",
                                          "posterior_probability", "posterior_mcse",
                                          "bayes_factor_bound", "bayes_factor",
                                          "log10_bayes_factor", "log10_bayes_factor_mcse",
                                          "evidence_category", "mixing_quantity",
                                          "mixing_median", "mixing_q05", "mixing_q95",
                                          "data_fit", "converged"]
    assert idata.attrs["data_fit"] == "ok" and idata.attrs["converged"] in ("yes", "NO")
    assert {"mean", "sd", "median", "hdi_low", "hdi_high", "r_hat", "ess_bulk"} <= set(
        a.summary.columns)
    assert a.settings["seed"] == 5 and a.settings["rocks"] == ["gabbro", "harzburgite"]
    # effective values are zero where the constraint forbids them (the prior construction)
    post = idata.posterior
    hot = post["temperature_c"].values >= a.settings["serpentine_stability_c"]
    assert np.all(post["serpentinization_effective"].values[hot] == 0)
    cold = post["temperature_c"].values <= post["solidus_c"].values
    assert np.all(post["melt_fraction_effective"].values[cold] == 0)


def test_log_prob_vectorised_equals_looped_and_minus_inf_outside():
    model = LayerModel.build(bc.Layer("lc", vp=(7.1, 0.1), **LOWER), **FAST)
    rng = np.random.default_rng(0)
    th = model.sample_prior(rng, 16)
    th[3, 0] = 40.0         # logit of the first of two fractions: 1 - 4e-18, inside
    th[5, 1] = -50.0        # temperature outside its prior
    lp = model.log_prob(th)
    looped = np.array([model.log_prob(t[None])[0] for t in th])
    np.testing.assert_allclose(lp, looped, rtol=1e-12)
    assert lp[5] == -np.inf
    assert np.all(np.isfinite(np.delete(lp, [5])))
    # three rocks: stick-breaking logits cover the simplex, every coordinate is inside
    three = LayerModel.build(bc.Layer("lc", vp=(7.1, 0.1), **LOWER),
                             **{**FAST, "rocks": ("gabbro", "harzburgite", "dunite")})
    th = three.sample_prior(rng, 8)
    th[3, :2] = [40.0, -40.0]
    f = three.fractions(th)
    assert np.all(f >= 0) and np.allclose(f.sum(axis=1), 1.0, rtol=0, atol=1e-15)
    assert np.all(np.isfinite(three.log_prob(th)))


def test_bit_identical_exact():
    layer = bc.Layer("lc", vp=(7.1, 0.1), **LOWER)
    a = bc.exact_layer(layer, seed=3, **FAST)
    b = bc.exact_layer(layer, seed=3, **FAST)
    assert a.hypotheses.equals(b.hypotheses) and a.log_evidence == b.log_evidence


@pytest.mark.parametrize(
    "kwargs, match",
    [
        (dict(vp=(7.1, -0.1)), "vp sigma"),
        (dict(vp=(math.nan, 0.1)), "vp must be"),
        (dict(vp=(7.1, 0.1), top_km=6.0, bottom_km=4.0), "top_km must be < bottom_km"),
        (dict(vp=(7.1, 0.1), water_depth_km=-1.0), "water_depth_km"),
        (dict(), "observes nothing"),
    ],
)
def test_bad_observations(kwargs, match):
    args = {**LOWER, **kwargs}
    with pytest.raises(ValueError, match=match):
        bc.Layer("bad", **args)


@pytest.mark.parametrize(
    "priors, match",
    [
        ({"temprature_c": 100.0}, "unknown parameter"),
        ({"porosity": bc.priors.Uniform(0.0, 0.9)}, "porosity"),
        ({"temperature_c": "hot"}, "temperature_c"),
        ({"melt_fraction": math.inf}, "melt_fraction"),
        ({"temperature_c": bc.priors.Uniform(0, 1900)}, r"must lie in \[-5, 1800\]"),
    ],
)
def test_bad_priors(priors, match):
    layer = bc.Layer("lc", vp=(7.1, 0.1), **LOWER)
    with pytest.raises(ValueError, match=match):
        bc.exact_layer(layer, rocks=("gabbro", "harzburgite"), priors=priors)


def test_kuster_toksoz_needs_priors_inside_its_dilute_limit():
    # the default shallow priors (porosity to 0.3, aspect ratio from 0.01) reach 31 times the
    # dilute limit; they used to be cut silently where the forward model gave NaN
    from bayescrust.physics.rocks import ForwardModel

    layer = bc.Layer("2A", top_km=0.0, bottom_km=0.5, water_depth_km=3.0, vp=(4.0, 0.1))
    fm = ForwardModel(rocks=("basalt",), inclusion_scheme="kuster_toksoz")
    with pytest.raises(ValueError, match="dilute theory.*reach 31"):
        LayerModel.build(layer, rocks=("basalt",), forward=fm)
    m = LayerModel.build(layer, rocks=("basalt",), forward=fm, priors={
        "porosity": bc.priors.Uniform(0.0, 0.05), "aspect_ratio": 0.1, "melt_fraction": 0.0})
    assert np.all(np.isfinite(m.log_prob(m.sample_prior(np.random.default_rng(0), 200))))


def test_user_vp_vs_model_error_sets_the_vp_vs_correlation():
    # with Vp and Vs observed, a model error given for Vp/Vs must be the Vp/Vs error the
    # likelihood implies (c^2 = a^2 + b^2 - 2 rho a b for ln Vp/Vs = ln Vp - ln Vs); it was
    # ignored (the calibrated correlation 0.643 gave 0.0169 for a = b = 0.02, c = 0.01)
    layer = bc.Layer("lc", vp=(7.1, 1e-6), vs=(3.9, 1e-6), **LOWER)
    me = {"vp": 0.02, "vs": 0.02, "vp_vs": 0.01}
    m = LayerModel.build(layer, rocks=("gabbro", "harzburgite"), model_error=me)
    pred = {"vp": np.full(200000, 7.0), "vs": np.full(200000, 3.9)}
    obs = m.simulate_observations(pred, np.random.default_rng(0))
    sd = np.std(np.log(obs["vp"] / obs["vs"]))
    assert abs(sd - 0.01) < 5e-4, sd  # first order in the errors; 200000 draws: +-2e-5
    assert m.settings["model_error_correlation"] == pytest.approx(0.875)


def test_bad_prior_constructors_and_hypotheses():
    with pytest.raises(ValueError, match="lower < upper"):
        bc.priors.Uniform(5, 1)
    with pytest.raises(ValueError, match="sigma must be > 0"):
        bc.priors.Normal(0, -1)
    with pytest.raises(ValueError, match="lower bound must be > 0"):
        bc.priors.LogUniform(0, 1)
    layer = bc.Layer("lc", vp=(7.1, 0.1), **LOWER)
    with pytest.raises(ValueError, match="unknown quantity 'granite'"):
        bc.exact_layer(layer, hypotheses={"x": {"granite": (0.5, 1)}})
    with pytest.raises(ValueError, match="lo < hi"):
        bc.exact_layer(layer, hypotheses={"x": {"temperature_c": (900, 100)}})
    with pytest.raises(ValueError, match="unknown rock"):
        bc.default_hypotheses(("gabbro", "granite"))
    with pytest.raises(ValueError, match="model_error"):
        bc.exact_layer(layer, model_error=-0.1)
    with pytest.raises(ValueError, match="likelihood"):
        bc.exact_layer(layer, likelihood="cauchy")


@pytest.mark.parametrize("prior", [
    bc.priors.Uniform(-1, 3), bc.priors.LogUniform(1e-3, 1), bc.priors.Normal(2, 0.5),
    bc.priors.TruncatedNormal(1100, 100, 800, 1250), bc.priors.Beta(2, 5, 0, 0.3),
])
def test_priors_normalised_and_quantiles_match_scipy(prior):
    lo, hi = prior.bounds
    lo, hi = (max(lo, -10), min(hi, 10)) if not np.isfinite(lo + hi) else (lo, hi)
    total, _ = integrate.quad(lambda x: np.exp(prior.logpdf(x)), lo, hi, limit=200,
                              points=None if hi - lo < 100 else [1100])
    assert total == pytest.approx(1.0, abs=1e-6)  # quadrature accuracy
    u = np.array([0.05, 0.3, 0.5, 0.9])
    ref = {
        "Uniform": lambda: stats.uniform(-1, 4).ppf(u),
        "LogUniform": lambda: stats.loguniform(1e-3, 1).ppf(u),
        "Normal": lambda: stats.norm(2, 0.5).ppf(u),
        "TruncatedNormal": lambda: stats.truncnorm(-3, 1.5, 1100, 100).ppf(u),
        "Beta": lambda: stats.beta(2, 5, 0, 0.3).ppf(u),
    }[type(prior).__name__]()
    np.testing.assert_allclose(prior.ppf(u), ref, rtol=1e-9)


def test_tabulated_ppf_inverts_cdf_and_dirichlet_transform():
    g = np.linspace(0, 10, 11)
    t = bc.priors.Tabulated(g, 1 + np.sin(g) ** 2)
    x = t.ppf(np.array([0.1, 0.5, 0.97]))
    cdf = [integrate.quad(lambda z: np.exp(t.logpdf(z)), 0, xi, points=g[1:-1])[0] for xi in x]
    np.testing.assert_allclose(cdf, [0.1, 0.5, 0.97], atol=1e-8)
    model = LayerModel.build(bc.Layer("lc", vp=(7.1, 0.1), **LOWER),
                             rocks=("gabbro", "harzburgite", "basalt"),
                             priors={"fractions": bc.priors.Dirichlet([2.0, 3.0, 5.0]),
                                     "melt_fraction": 0.0},  # inside KT's dilute limit
                             forward={"inclusion_scheme": "kuster_toksoz"})
    f = model.fractions(model.sample_prior(np.random.default_rng(1), 40000))
    # Dirichlet means alpha / sum(alpha) = (0.2, 0.3, 0.5); 40000 draws: sd of mean < 0.002
    np.testing.assert_allclose(f.mean(axis=0), [0.2, 0.3, 0.5], atol=0.01)


def test_half_space_prior_matches_direct_integration():
    # The tabulated marginal density agrees with brute-force Monte Carlo of the same model.
    from bayescrust.physics.thermal import half_space_temperature_c

    hs = bc.HalfSpaceCooling(age_myr=bc.priors.Uniform(2, 20),
                             mantle_temperature_c=bc.priors.Normal(1350, 50), scatter_c=50)
    layer = bc.Layer("lc", vp=(7.1, 0.1), **LOWER)
    prior = hs.for_layer(layer)
    rng = np.random.default_rng(4)
    n = 200000
    t = half_space_temperature_c(5.0, rng.uniform(2, 20, n),
                                 mantle_temperature_c=rng.normal(1350, 50, n))
    t = t + 50 * rng.standard_normal(n)
    t = t[(t >= 0) & (t <= 1600)]
    # quartiles agree within 3 deg C (MC error of a quartile here ~0.5 deg C; table spacing 2 C)
    np.testing.assert_allclose(prior.ppf(np.array([0.25, 0.5, 0.75])),
                               np.quantile(t, [0.25, 0.5, 0.75]), atol=3.0)


def test_student_t_likelihood_and_fixed_everything():
    layer = bc.Layer("lc", vp=(7.1, 0.1), **LOWER)
    res = bc.exact_layer(layer, likelihood="student_t", nu=4, seed=1, **FAST)
    assert res.settings["likelihood"] == "student_t" and np.isfinite(res.log_evidence)
    # all fixed: evidence is the likelihood at the fixed point (exact, no error)
    fixed = {"gabbro": 1.0, "harzburgite": 0.0, "temperature_c": 100.0, "porosity": 0.0,
             "melt_fraction": 0.0, "serpentinization": 0.0}
    res = bc.exact_layer(layer, rocks=("gabbro", "harzburgite"), priors=fixed, model_error=0.0,
                         forward={"inclusion_scheme": "kuster_toksoz"}, seed=1, n_draws=10)
    vp = res.idata.posterior["vp"].values.ravel()[0]
    assert res.log_evidence == pytest.approx(stats.norm(vp, 0.1).logpdf(7.1), rel=1e-12)


def test_hypothesis_table_handles_certain_posteriors():
    # a posterior probability of exactly 0 or 1 gives a bounded Bayes factor (never inf), and
    # no Bayes factor where the prior gives no draws and neither does the posterior
    from bayescrust.inference.results import hypothesis_table

    t = hypothesis_table({"a": 0.3, "b": 0.7, "c": 0.0}, {"a": 1.0, "b": 0.0, "c": 0.0},
                         {"a": 0.0, "b": 0.0, "c": 0.0}, {"a": 1000, "b": 1000, "c": 1000},
                         n_post=1000)
    assert t.loc["a", "bayes_factor_bound"] == ">" and np.isfinite(t.loc["a", "bayes_factor"])
    assert t.loc["b", "bayes_factor_bound"] == "<" and t.loc["b", "bayes_factor"] > 0
    assert np.isnan(t.loc["c", "bayes_factor"]) and t.loc["c", "bayes_factor_bound"] == ""


def test_bayes_factor_mcse_matches_replicate_spread():
    # delta-method error of log10 B against the spread of B over simulated replicate estimates
    # (binomial prior and posterior counts); 15 % tolerance: 4000 replicates estimate an sd to
    # ~1 %, the delta method itself is first order
    from bayescrust.inference.results import hypothesis_table

    rng = np.random.default_rng(5)
    pi, p, n_pi, n_p = 0.2, 0.6, 20000, 3000
    se_p = math.sqrt(p * (1 - p) / n_p)
    t = hypothesis_table({"h": pi}, {"h": p}, {"h": se_p}, {"h": n_pi})
    pi_hat = rng.binomial(n_pi, pi, 4000) / n_pi
    p_hat = rng.binomial(n_p, p, 4000) / n_p
    lbf = np.log10((p_hat / (1 - p_hat)) / (pi_hat / (1 - pi_hat)))
    assert t.loc["h", "log10_bayes_factor_mcse"] == pytest.approx(np.std(lbf), rel=0.15)
    assert t.loc["h", "prior_mcse"] == pytest.approx(math.sqrt(pi * (1 - pi) / n_pi))


def test_serpentinite_end_member_needs_temperatures_below_its_stability():
    # lizardite serpentinite is stable only below ~300 C (Evans 2010, verified): a serpentinite
    # end member with a temperature prior reaching 1400 C is refused with the reason and the fix
    layer = bc.Layer("lc", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(5.6, 0.1))
    with pytest.raises(ValueError, match=r"'serpentinite' \(lizardite\) is stable only below"):
        LayerModel.build(layer, rocks=("gabbro", "serpentinite"))
    model = LayerModel.build(layer, rocks=("gabbro", "serpentinite"),
                             priors={"temperature_c": bc.priors.Uniform(0, 250)})
    assert model.ndim == 1 + len(model.free)


def test_a_quantity_constant_in_every_draw_has_sd_zero_not_rounding_noise():
    # A basalt-only layer has basalt fraction 1 and one solidus in every draw: their sd is 0,
    # not the 2e-16 / 5e-13 of floating-point rounding (summary.csv printed those), and the
    # effective sample size of a constant is undefined (common practice).
    res = bc.exact_layer(bc.Layer("2A", top_km=0.0, bottom_km=0.6, water_depth_km=3.0,
                                  vp=(4.4, 0.2)), rocks=("basalt",), seed=1, n_points=2**12)
    for q in ("basalt", "solidus_c"):
        assert res.summary.loc[q, "sd"] == 0.0, q
        assert math.isnan(res.summary.loc[q, "ess_bulk"]), q
    res = bc.exact_layer(bc.Layer("2B", top_km=0.6, bottom_km=2.0, water_depth_km=3.0,
                                  vp=(5.9, 0.15)), rocks=("diabase", "gabbro"), seed=1,
                         n_points=2**12)
    assert res.summary.loc["solidus_c", "sd"] == 0.0
