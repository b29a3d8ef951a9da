"""Tests for bayescrust.physics.anelastic: published laws, identities, limits, errors."""

import numpy as np
import pytest

from bayescrust.physics import anelastic
from bayescrust.physics._data import CELSIUS_TO_KELVIN
from bayescrust.physics.anelastic import (
    ATTENUATION_LAWS,
    dispersion_factor,
    q_shear,
    qp_inverse_from_qs,
)

# --- values from the published laws ------------------------------------------------------------


@pytest.mark.parametrize(("q", "alpha", "dv_percent"), [(50.0, 0.25, 2.414), (80.0, 0.27, 1.384)])
def test_karato_correction(q, alpha, dv_percent):
    # [computed from Karato 1993, GRL 20:1623, eq. 3]: 1 - V/V0 = cot(alpha pi/2)/(2Q).
    # Tolerance 5e-4 %: the expected values are written to 4 significant figures.
    assert 100.0 * (1.0 - dispersion_factor(1.0 / q, alpha)) == pytest.approx(dv_percent, abs=5e-4)


@pytest.mark.parametrize(
    ("t_c", "d_mm", "q_expected"), [(1300.0, 10.0, 66.9), (1200.0, 1.0, 65.1)]
)
def test_jackson2002_law(t_c, d_mm, q_expected):
    # [computed from the Jackson, Fitz Gerald, Faul & Tan 2002 JGR 107(B12):2360 law, abstract
    # verified: A = 750, alpha = 0.26, E = 424 kJ/mol]:
    # 1300 C, d = 1 cm, To = 1 s -> Q = 66.9; 1200 C, 1 mm, 1 s -> Q = 65.1 (+-0.1).
    # Evaluated at the 0.2 GPa confining pressure of the experiments, where the pressure term
    # (referenced to that pressure) vanishes and the law is exactly the published one.
    q_inv = q_shear(t_c, 0.2, frequency_hz=1.0, grain_size_mm=d_mm)
    assert 1.0 / q_inv == pytest.approx(q_expected, abs=0.1)


def test_jackson2002_q_inverse_value():
    # [computed from the Jackson et al. 2002 law as above]: Q^-1 = 0.01495 at 1300 C, 1 cm, 1 s
    # (4 significant figures).
    q_inv = q_shear(1300.0, 0.2, frequency_hz=1.0, grain_size_mm=10.0)
    assert q_inv == pytest.approx(0.01495, abs=5e-6)


@pytest.mark.parametrize(
    ("ratio", "qp_over_qs"), [(np.sqrt(3.0), 2.25), (1.75, 2.30), (1.80, 2.43)]
)
def test_qp_over_qs(ratio, qp_over_qs):
    # [computed from Anderson, Ben-Menahem & Archambeau 1965 / Anderson & Given 1982, no bulk
    # loss]: Q_P/Q_S = (3/4)(Vp/Vs)^2: 2.25 at sqrt(3) (exact identity), 2.30 at 1.75, 2.43 at
    # 1.80 (values rounded to 0.01).
    qs_inv = 0.02
    qp_inv = qp_inverse_from_qs(qs_inv, ratio, 1.0)
    assert qs_inv / qp_inv == pytest.approx(qp_over_qs, abs=5e-3)


def test_poisson_solid_identity_exact():
    # Identity: Q_P / Q_S = 9/4 exactly for Vp/Vs = sqrt(3); rounding-level tolerance.
    assert 0.01 / qp_inverse_from_qs(0.01, np.sqrt(3.0), 1.0) == pytest.approx(9.0 / 4.0, rel=1e-12)


# --- identities and limits -----------------------------------------------------------------------


def test_dispersion_factor_tends_to_one():
    q = np.array([1e-2, 1e-4, 1e-8, 0.0])
    f = dispersion_factor(q, 0.26)
    assert f[-1] == 1.0
    assert np.all(np.diff(f) > 0) and np.all(f <= 1.0)
    assert 1.0 - f[2] < 1e-7


def test_cold_rock_unaffected():
    # [common practice] anelastic dispersion is negligible in cold rock: at 400 C the factors
    # exceed 0.999 (grain size 0.1-10 mm, 0.1-10 Hz; the law gives Q^-1 ~ 1e-6 or less there).
    t_k = 400.0 + CELSIUS_TO_KELVIN
    d = np.array([0.1, 1.0, 10.0])[:, None]
    f = np.array([0.1, 1.0, 10.0])[None, :]
    fp, fs, _ = anelastic._anelastic_factors(t_k, 0.3, f, d, 7.0, 3.9)
    assert np.all(fp > 0.999) and np.all(fs > 0.999)


def test_q_decreases_with_temperature_increases_with_grain_size():
    t = np.linspace(600.0, 1400.0, 41)
    q_inv = q_shear(t, 1.0, frequency_hz=0.1, grain_size_mm=5.0)
    assert np.all(np.diff(q_inv) >= 0)  # Q^-1 up, Q down with T
    assert np.all(np.diff(q_inv[q_inv < 0.1]) > 0)
    d = np.logspace(-2, 1, 20)
    q_inv_d = q_shear(1100.0, 1.0, frequency_hz=0.1, grain_size_mm=d)
    assert np.all(np.diff(q_inv_d) < 0)  # Q up with grain size


def test_q_increases_with_frequency_and_pressure():
    f = np.logspace(-2, 1, 10)
    assert np.all(np.diff(q_shear(1150.0, 1.0, frequency_hz=f, grain_size_mm=3.0)) < 0)
    p = np.linspace(0.0, 5.0, 10)
    assert np.all(np.diff(q_shear(1150.0, p, frequency_hz=1.0, grain_size_mm=3.0)) < 0)


def test_clipping_bounds_the_correction():
    # Very hot, fine-grained, low frequency: Q^-1 is clipped to q_inv_max = 0.1 (Q >= 10).
    fp, fs, q = anelastic._anelastic_factors(2000.0, 0.0, 1e-3, 1e-3, 7.0, 3.9)
    assert q == pytest.approx(0.1)
    assert 0.85 < fs < fp < 1.0


def test_kernel_is_finite_at_extremes():
    t = np.array([0.0, 1.0, 273.0, 3000.0])
    fp, fs, q = anelastic._anelastic_factors(t, 0.0, 1.0, 0.0, 7.0, 0.0)
    assert np.all(np.isfinite(fp)) and np.all(np.isfinite(fs)) and np.all(np.isfinite(q))
    assert np.all(fp == 1.0)  # vs = 0 (fluid): no shear, no P dissipation without bulk loss


def test_kernel_matches_public_functions():
    t_c, p, f, d, vp, vs = 1250.0, 1.5, 0.5, 2.0, 8.0, 4.5
    fp, fs, q = anelastic._anelastic_factors(t_c + CELSIUS_TO_KELVIN, p, f, d, vp, vs)
    q_pub = q_shear(t_c, p, frequency_hz=f, grain_size_mm=d)
    alpha = anelastic.ANELASTIC_DATA["jackson2002"]["alpha"]
    assert q == pytest.approx(q_pub, rel=1e-14)
    assert fs == pytest.approx(dispersion_factor(q_pub, alpha), rel=1e-14)
    assert fp == pytest.approx(dispersion_factor(qp_inverse_from_qs(q_pub, vp, vs), alpha),
                               rel=1e-14)


def test_laws_share_signature():
    for law in ATTENUATION_LAWS.values():
        fp, fs, q = law(np.full(3, 1500.0), 1.0, 1.0, 1.0, np.full(3, 8.0), np.full(3, 4.6))
        assert fp.shape == fs.shape == q.shape == (3,)


def test_vectorised_equals_looped():
    rng = np.random.default_rng(7)
    shape = (3, 4)
    t = rng.uniform(300.0, 1700.0, shape)
    p = rng.uniform(0.0, 3.0, shape)
    f = rng.uniform(0.05, 5.0, shape)
    d = rng.uniform(0.05, 10.0, shape)
    vp = rng.uniform(6.0, 8.5, shape)
    vs = vp / rng.uniform(1.7, 2.0, shape)
    fp, fs, q = anelastic._anelastic_factors(t, p, f, d, vp, vs)
    for idx in np.ndindex(shape):
        a, b, c = anelastic._anelastic_factors(t[idx], p[idx], f[idx], d[idx], vp[idx], vs[idx])
        np.testing.assert_allclose([fp[idx], fs[idx], q[idx]], [a, b, c], rtol=1e-14)


# --- errors --------------------------------------------------------------------------------------


def test_rejects_bad_input():
    with pytest.raises(ValueError, match="grain_size_mm"):
        q_shear(1000.0, 1.0, frequency_hz=1.0, grain_size_mm=-1.0)
    with pytest.raises(ValueError, match="grain_size_mm"):
        q_shear(1000.0, 1.0, frequency_hz=1.0, grain_size_mm=0.0)
    with pytest.raises(ValueError, match="frequency_hz"):
        q_shear(1000.0, 1.0, frequency_hz=0.0, grain_size_mm=1.0)
    with pytest.raises(ValueError, match="law"):
        q_shear(1000.0, 1.0, frequency_hz=1.0, grain_size_mm=1.0, law="nope")
    with pytest.raises(ValueError, match="q_inv"):
        dispersion_factor(0.5, 0.26)
    with pytest.raises(ValueError, match="alpha"):
        dispersion_factor(0.01, 1.0)
    with pytest.raises(ValueError, match="vs/vp"):
        qp_inverse_from_qs(0.01, 5.0, 4.9)
    with pytest.raises(ValueError, match="vp"):
        qp_inverse_from_qs(0.01, 0.0, 1.0)


def test_laws_pickle_by_reference():
    import pickle

    for name, law in ATTENUATION_LAWS.items():
        assert pickle.loads(pickle.dumps(law)) is law, name
    assert set(ATTENUATION_LAWS) == set(anelastic._SHEAR_Q)
