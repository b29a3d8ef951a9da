"""The per-step shortcuts of the driver change no number: the vectorised accept step of the moves,
the sampler's vectorised ``compute_log_prob`` and uncopied random state, and the layer model's
log-probability path without the other derived quantities.

The references are emcee's own code (``RedBlueMove.propose``, ``EnsembleSampler``) and the
model's general ``quantities`` path; equality is to the bit (same draws, same arithmetic).
"""

from __future__ import annotations

import types

import numpy as np
import pytest

emcee = pytest.importorskip("emcee")


def _toy(x):
    # a correlated 3-D Gaussian with a hard wall: -inf outside x0 > -2 (rejections happen)
    cov = np.array([[1.0, 0.8, 0.1], [0.8, 1.0, 0.0], [0.1, 0.0, 0.5]])
    prec = np.linalg.inv(cov)
    lp = -0.5 * np.einsum("ni,ij,nj->n", x, prec, x)
    return np.where(x[:, 0] > -2.0, lp, -np.inf)


def _run(moves, sampler_factory, n=150, seed=4):
    s = sampler_factory(moves)
    s.random_state = np.random.RandomState(seed).get_state()
    x0 = np.random.default_rng(seed).standard_normal((24, 3)) * 0.5
    s.run_mcmc(x0, n, progress=False)
    return s.get_chain(), s.get_log_prob(), s.acceptance_fraction


def _plain(moves):
    return emcee.EnsembleSampler(24, 3, _toy, moves=moves, vectorize=True)


def _loop_accept(moves):
    """The same moves with emcee's walker-by-walker ``RedBlueMove.propose``."""
    from emcee.moves.red_blue import RedBlueMove

    for mv, _ in moves:
        mv.propose = types.MethodType(RedBlueMove.propose, mv)
    return moves


@pytest.mark.parametrize("which", ["kde", "de", "de_gamma1", "snooker", "mix"])
def test_vectorised_accept_gives_emcee_loop_chain(which):
    from bayescrust.inference.sampler import default_moves

    def moves():
        mix = default_moves()
        pick = {"kde": 0, "de": 1, "de_gamma1": 2, "snooker": 3}
        return mix if which == "mix" else [(mix[pick[which]][0], 1.0)]

    ref = _run(_loop_accept(moves()), _plain)
    new = _run(moves(), _plain)
    for a, b in zip(ref, new, strict=True):
        np.testing.assert_array_equal(a, b)
    assert 0.05 < np.mean(new[2]) < 0.95  # the test exercised both accepts and rejects


def test_vectorised_accept_keeps_blobs_like_emcee():
    """With blobs (a plain emcee sampler whose log-probability returns them) the moves take
    emcee's own ``update``; chain, log-probability and blobs equal emcee's walker loop."""
    from bayescrust.inference.sampler import default_moves

    def with_blobs(x):  # emcee's vectorised form: one row (log-prob, blob) per walker
        return np.column_stack([_toy(x), x[:, 0] ** 2])

    def run(moves):
        s = emcee.EnsembleSampler(24, 3, with_blobs, moves=moves, vectorize=True)
        s.random_state = np.random.RandomState(4).get_state()
        x0 = np.random.default_rng(4).standard_normal((24, 3)) * 0.5
        s.run_mcmc(x0, 120, progress=False)
        return s.get_chain(), s.get_log_prob(), s.get_blobs()

    ref = run(_loop_accept(default_moves()))
    new = run(default_moves())
    for a, b in zip(ref, new, strict=True):
        np.testing.assert_array_equal(a, b)
    # the blobs follow the accepted states
    np.testing.assert_array_equal(new[2].reshape(new[0].shape[:2]), new[0][..., 0] ** 2)


def test_driver_sampler_gives_emcee_chain():
    from bayescrust.inference.sampler import _sampler, default_moves

    ref = _run(default_moves(), _plain)
    new = _run(default_moves(), lambda m: _sampler(24, 3, _toy, m))
    for a, b in zip(ref, new, strict=True):
        np.testing.assert_array_equal(a, b)


def test_driver_sampler_keeps_emcee_checks():
    from bayescrust.inference.sampler import _sampler, default_moves

    s = _sampler(24, 3, lambda x: np.full(x.shape[0], np.nan), default_moves())
    with pytest.raises(ValueError, match="NaN"):
        s.compute_log_prob(np.zeros((24, 3)))
    s = _sampler(24, 3, lambda x: np.zeros(x.shape[0] + 1), default_moves())
    with pytest.raises(ValueError, match="one value per walker"):
        s.compute_log_prob(np.zeros((24, 3)))
    s = _sampler(24, 3, _toy, default_moves())
    with pytest.raises(ValueError, match="infinite"):
        s.compute_log_prob(np.full((24, 3), np.inf))


def test_ensemble_continues_after_reseed_like_emcee():
    """A run in blocks (as run_ensemble does) equals one uninterrupted emcee run."""
    from bayescrust.inference.sampler import _sampler, default_moves

    ref = _run(default_moves(), _plain, n=120)
    s = _sampler(24, 3, _toy, default_moves())
    s.random_state = np.random.RandomState(4).get_state()
    state = np.random.default_rng(4).standard_normal((24, 3)) * 0.5
    for k in (50, 70):
        state = s.run_mcmc(state, k, progress=False, skip_initial_state_check=s.iteration > 0)
        state = emcee.State(state.coords, log_prob=state.log_prob, random_state=state.random_state)
    np.testing.assert_array_equal(s.get_chain(), ref[0])


@pytest.mark.parametrize("case", ["two_rocks", "three_rocks_log", "student_fixed"])
def test_layer_log_prob_equals_quantities_path(case):
    import bayescrust as bc
    from bayescrust.inference.model import LayerModel
    from bayescrust.inference.priors import LogUniform

    lower = bc.Layer("lc", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(7.1, 0.1))
    upper = bc.Layer("l2", top_km=1.0, bottom_km=2.5, water_depth_km=2.5, vp=(5.5, 0.15),
                     vs=(3.0, 0.1), density=(2.7, 0.05))
    layer, kw = {
        "two_rocks": (lower, dict(priors={"porosity": 0.0})),
        "three_rocks_log": (upper, dict(rocks=("basalt", "gabbro", "harzburgite"),
                                        priors={"aspect_ratio": LogUniform(0.01, 1)})),
        "student_fixed": (upper, dict(likelihood="student_t",
                                      priors={"gabbro": 0.4, "harzburgite": 0.6})),
    }[case]
    m = LayerModel.build(layer, **kw)
    rng = np.random.default_rng(2)
    theta = m.sample_prior(rng, 400)
    theta[:60] += rng.normal(0.0, 0.5, (60, m.ndim))
    # some outside the prior's support (logit coordinates have none: temperature's)
    theta[:20, m.parameter_names.index("temperature_c")] = -10.0
    lp = m.log_prob(theta)
    ref = m.log_prior(theta)
    ok = np.isfinite(ref)
    ref[ok] += sum(m.log_likelihood_terms(m.quantities(theta[ok])).values())
    ref[np.isnan(ref)] = -np.inf
    np.testing.assert_array_equal(lp, ref)
    assert np.isfinite(lp).sum() > 100 and (~np.isfinite(lp)).sum() > 0
    q = m.quantities(theta[ok])
    pred = m.predict(theta[ok])
    for k in ("vp", "vs", "density", "vp_vs"):
        np.testing.assert_array_equal(pred[k], q[k])


def test_forward_callable_without_rows_takes_the_keyword_path():
    """A ready forward model without flat rows (a user's compatible callable) is called with
    keywords; its predictions equal the flat-row path's to the bit."""
    import bayescrust as bc
    from bayescrust.inference.model import LayerModel
    from bayescrust.physics.rocks import ForwardModel

    class NoRows:  # ForwardModel's interface without ``rows``
        def __init__(self, fm):
            self._fm = fm

        def __getattr__(self, name):
            if name == "rows":
                raise AttributeError(name)
            return getattr(self._fm, name)

        def __call__(self, *args, **kwargs):
            return self._fm(*args, **kwargs)

    layer = bc.Layer("l2", top_km=1.0, bottom_km=2.5, water_depth_km=2.5, vp=(5.5, 0.15),
                     vs=(3.0, 0.1))
    fm = ForwardModel(rocks=("basalt", "gabbro"))
    a = LayerModel.build(layer, forward=fm)
    b = LayerModel.build(layer, forward=NoRows(fm))
    assert getattr(b.forward, "rows", None) is None
    theta = a.sample_prior(np.random.default_rng(3), 200)
    pa, pb = a.predict(theta), b.predict(theta)
    for k in ("vp", "vs", "density", "vp_vs"):
        np.testing.assert_array_equal(pa[k], pb[k])
    np.testing.assert_array_equal(a.log_prob(theta), b.log_prob(theta))


def test_numpy_diagnostics_match_arviz_numba_path_and_restore_the_switch():
    """ESS and R-hat on arviz's numpy path equal its numba path to rounding; the switch is
    restored after the block, also when the block raises."""
    az = pytest.importorskip("arviz")
    from bayescrust.inference._arviz import numpy_diagnostics

    switch = getattr(az, "Numba", None)
    if switch is None or not switch.numba_flag:
        pytest.skip("arviz without a numba path (arviz 1.x, or numba not installed)")
    rng = np.random.default_rng(0)
    x = np.cumsum(rng.standard_normal((8, 300)), axis=1) * 0.1 + rng.standard_normal((8, 300))
    ref = (float(az.ess(x, method="bulk")), float(az.ess(x[:1], method="mean")),
           float(az.rhat(x)))
    with numpy_diagnostics() as a:
        assert not switch.numba_flag
        new = (float(a.ess(x, method="bulk")), float(a.ess(x[:1], method="mean")),
               float(a.rhat(x)))
    assert switch.numba_flag
    # the two paths differ only in the summation order of variances (a few ulp)
    np.testing.assert_allclose(new, ref, rtol=1e-10)
    with pytest.raises(RuntimeError), numpy_diagnostics():
        raise RuntimeError("inside")
    assert switch.numba_flag


def test_summary_reuses_the_row_of_an_identical_quantity():
    from bayescrust.inference.results import summarize

    rng = np.random.default_rng(1)
    x = rng.standard_normal((16, 120)).cumsum(axis=1) * 0.05 + rng.standard_normal((16, 120))
    y = rng.standard_normal((16, 120))
    both = summarize({"a": x, "b": x.copy(), "c": y})
    alone = summarize({"b": x, "c": y})
    for col in both.columns:
        assert both.loc["b", col] == alone.loc["b", col]
        assert both.loc["a", col] == alone.loc["b", col]
        assert both.loc["c", col] == alone.loc["c", col]
    assert list(both.index) == ["a", "b", "c"]


@pytest.mark.parametrize("alpha", [(1.0, 1.0, 1.0), (2.0, 3.0, 5.0)])
def test_layer_log_prior_against_scipy(alpha):
    """The prior density of the sampled coordinates of three rock fractions (stick-breaking
    logits, inference/coordinates.py): scipy's Dirichlet of the fractions times the Jacobian
    of the map, here by central differences, times the uniform temperature prior."""
    from scipy import stats

    import bayescrust as bc
    from bayescrust.inference.model import LayerModel

    layer = bc.Layer("l2", top_km=1.0, bottom_km=2.5, water_depth_km=2.5, vp=(5.5, 0.15))
    m = LayerModel.build(layer, rocks=("basalt", "gabbro", "harzburgite"),
                         priors={"fractions": bc.priors.Dirichlet(list(alpha)),
                                 "porosity": 0.0, "melt_fraction": 0.0,
                                 "serpentinization": 0.0, "aspect_ratio": 0.1})
    assert m.parameter_names == ("basalt", "gabbro", "temperature_c")
    rng = np.random.default_rng(3)
    theta = m.sample_prior(rng, 200)
    lo, hi = m.scalar_priors["temperature_c"].bounds

    def head(z):  # the first two fractions, by stick-breaking written out
        v0, v1 = 1 / (1 + np.exp(-z[:, 0])), 1 / (1 + np.exp(-z[:, 1]))
        return np.column_stack([v0, (1 - v0) * v1])

    h = 1e-6
    jac = np.empty((theta.shape[0], 2, 2))
    for j in range(2):
        up, dn = theta.copy(), theta.copy()
        up[:, j] += h
        dn[:, j] -= h
        jac[:, :, j] = (head(up) - head(dn)) / (2 * h)
    f2 = head(theta)
    f = np.column_stack([f2, 1.0 - f2.sum(axis=1)])
    np.testing.assert_allclose(m.fractions(theta), f, rtol=1e-12, atol=1e-15)
    ref = (stats.dirichlet(alpha).logpdf(f.T) + np.log(np.abs(np.linalg.det(jac)))
           - np.log(hi - lo))
    # rtol: the central differences (h = 1e-6) carry ~1e-10 rounding in the Jacobian
    np.testing.assert_allclose(m.log_prior(theta), ref, rtol=1e-7)
    # prior draws through the map: the fractions' means are scipy's Dirichlet means
    draws = m.fractions(m.sample_prior(rng, 20000))
    np.testing.assert_allclose(draws.mean(axis=0), stats.dirichlet(alpha).mean(), atol=0.01)
    off = theta[:5].copy()
    off[:, 2] = hi + 1.0  # temperature outside its prior
    assert np.all(m.log_prior(off) == -np.inf)


def test_layer_log_prior_mixed_priors_against_scipy():
    """The prior density in the sampled coordinates: scipy's density of every parameter times
    the Jacobian of its coordinate (logit, logit of ln x, pore compliance, linear)."""
    from scipy import stats

    import bayescrust as bc
    from bayescrust.inference.model import LayerModel
    from bayescrust.inference.priors import Beta, LogUniform, TruncatedNormal, Uniform

    layer = bc.Layer("l2", top_km=1.0, bottom_km=2.5, water_depth_km=2.5, vp=(5.5, 0.15))
    m = LayerModel.build(layer, rocks=("basalt", "gabbro"), priors={
        "temperature_c": TruncatedNormal(300.0, 100.0, 0.0, 1000.0),
        "porosity": Uniform(0.0, 0.2), "aspect_ratio": LogUniform(0.01, 1.0),
        "melt_fraction": 0.0, "serpentinization": 0.0,
        "melt_aspect_ratio": Beta(2.0, 5.0, 0.01, 0.5)})
    assert m.parameter_names == ("basalt", "temperature_c", "porosity", "aspect_ratio",
                                 "melt_aspect_ratio")
    assert m.coordinates.names("logit_log") == ("aspect_ratio",)
    assert m.coordinates.paired == {"porosity": "aspect_ratio"}
    assert m.coordinates.names("logit") == ("melt_aspect_ratio",)
    rng = np.random.default_rng(4)
    theta = m.sample_prior(rng, 300)
    theta[:40] += rng.normal(0.0, 0.3, (40, m.ndim))  # perturbed
    theta[:20, 1] = -10.0  # temperature outside its support
    b, t, w, lar, mar = theta.T
    # the coordinates (bayescrust.inference.coordinates): the first of two fractions and the
    # Beta-distributed melt aspect ratio as logits, the aspect ratio as the logit of ln alpha,
    # porosity as w = ln phi + ln(1 + A / alpha) (a unit-Jacobian shear of ln phi); each term
    # is scipy's density of the value times |dx/dz|
    from scipy.special import expit

    from bayescrust.inference.coordinates import PORE_CROSSOVER

    def log_jac(z, width):  # ln |d/dz (lo + width * expit(z))|
        return np.log(width) + np.log(expit(z)) + np.log(expit(-z))

    lna = np.log(0.01) + np.log(100.0) * expit(lar)
    lphi = w - np.log1p(PORE_CROSSOVER * np.exp(-lna))
    x_mar = 0.01 + 0.49 * expit(mar)
    with np.errstate(divide="ignore"):
        ref = (stats.beta(1, 1).logpdf(expit(b)) + log_jac(b, 1.0)
               + stats.truncnorm(-3.0, 7.0, loc=300.0, scale=100.0).logpdf(t)
               + stats.uniform(0, 0.2).logpdf(np.exp(lphi)) + lphi
               + stats.loguniform(0.01, 1.0).logpdf(np.exp(lna)) + lna
               + log_jac(lar, np.log(100.0))
               + stats.beta(2.0, 5.0, loc=0.01, scale=0.49).logpdf(x_mar) + log_jac(mar, 0.49))
    lp = m.log_prior(theta)
    assert np.isfinite(lp).sum() > 200 and (~np.isfinite(lp)).sum() >= 20
    np.testing.assert_array_equal(np.isfinite(lp), np.isfinite(ref))
    ok = np.isfinite(ref)
    np.testing.assert_allclose(lp[ok], ref[ok], rtol=1e-11, atol=1e-11)


@pytest.mark.parametrize("shape", [(300, 24, 3), (1037, 64, 4), (50, 2, 1)])
def test_batched_integrated_time_equals_emcee(shape):
    from bayescrust.inference.sampler import _integrated_time

    rng = np.random.default_rng(shape[0])
    e = rng.standard_normal(shape)
    x = np.empty(shape)
    x[0] = e[0]
    for t in range(1, shape[0]):  # AR(1) series with tau = (1 + 0.8) / (1 - 0.8) = 9
        x[t] = 0.8 * x[t - 1] + e[t]
    x += rng.standard_normal(shape[1:]) * 3.0  # walker offsets: the means must be removed
    ref = emcee.autocorr.integrated_time(x, c=5, tol=0, quiet=True)
    np.testing.assert_allclose(_integrated_time(x, c=5), ref, rtol=1e-9)
