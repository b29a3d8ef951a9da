"""Tests of bayescrust.physics.inclusions: P/Q limits, reference values, identities, DEM accuracy.

Reference values are [computed] from the Kuster & Toksöz (1974), Berryman (1980) self-consistent
and Norris (1985) / Berryman, Pride & Wang (2002) DEM formulas as given in Mavko, Mukerji &
Dvorkin 2009 (Rock Physics Handbook, §4.7-4.11), with matrix K 80, G 40 GPa; water K 2.3, G 0;
dry pores K = G = 0. The shape-specific P, Q formulas below (sphere, needle, penny crack) are
transcribed from Berryman (1980) / Mavko, Mukerji & Dvorkin (2009) Table 4.8.1; they are
independent of the general-spheroid code they check.
"""

import numpy as np
import pytest

from bayescrust.physics import inclusions
from bayescrust.physics.inclusions import (
    DEM_STEPS,
    INCLUSION_SCHEMES,
    dem,
    kuster_toksoz,
    self_consistent,
    spheroid_pq,
)
from bayescrust.physics.mixing import hashin_shtrikman

KM, GM = 80.0, 40.0
WATER = (2.3, 0.0)
DRY = (0.0, 0.0)
SCHEMES = sorted(INCLUSION_SCHEMES)


# ---------------------------------------------------------------------------------------------
# shape-specific formulas (Berryman 1980; Mavko et al. 2009 Table 4.8.1)
# ---------------------------------------------------------------------------------------------
def _beta(k, g):
    return g * (3 * k + g) / (3 * k + 4 * g)


def _gamma(k, g):
    return g * (3 * k + g) / (3 * k + 7 * g)


def _zeta(k, g):
    return g / 6 * (9 * k + 8 * g) / (k + 2 * g)


def pq_sphere(km, gm, ki, gi):
    return (km + 4 * gm / 3) / (ki + 4 * gm / 3), (gm + _zeta(km, gm)) / (gi + _zeta(km, gm))


def pq_needle(km, gm, ki, gi):
    p = (km + gm + gi / 3) / (ki + gm + gi / 3)
    q = 0.2 * (4 * gm / (gm + gi) + 2 * (gm + _gamma(km, gm)) / (gi + _gamma(km, gm))
               + (ki + 4 * gm / 3) / (ki + gm + gi / 3))
    return p, q


def pq_penny(km, gm, ki, gi, a):
    b = _beta(km, gm)
    p = (km + 4 * gi / 3) / (ki + 4 * gi / 3 + np.pi * a * b)
    q = 0.2 * (1 + 8 * gm / (4 * gi + np.pi * a * (gm + 2 * b))
               + 2 * (ki + 2 * (gi + gm) / 3) / (ki + 4 * gi / 3 + np.pi * a * b))
    return p, q


INCLUSION_MODULI = [(0.0, 0.0), (2.3, 0.0), (20.0, 0.0), (20.0, 10.0), (150.0, 90.0)]


# ---------------------------------------------------------------------------------------------
# spheroid P and Q
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize("ki, gi", INCLUSION_MODULI)
def test_pq_sphere_limit(ki, gi):
    # alpha = 1 (series branch) and alpha -> 1 from both sides give the sphere formulas;
    # 1e-12 relative: the series is exact to rounding at alpha = 1, error O(1 - alpha) nearby
    ref = pq_sphere(KM, GM, ki, gi)
    assert spheroid_pq(KM, GM, ki, gi, 1.0) == pytest.approx(ref, rel=1e-12)
    for a in (1.0 - 1e-9, 1.0 + 1e-9):
        assert spheroid_pq(KM, GM, ki, gi, a) == pytest.approx(ref, rel=1e-8)


def test_pq_continuous_across_series_switch():
    # the closed forms take over from the series at |1 - alpha^2| = 0.1; both sides agree to
    # 1e-12 relative (the switch must not show as a jump in a posterior)
    for u in (0.1, -0.1):
        a_lo, a_hi = np.sqrt(1.0 - u - 1e-13), np.sqrt(1.0 - u + 1e-13)
        for ki, gi in INCLUSION_MODULI:
            lo = spheroid_pq(KM, GM, ki, gi, a_lo)
            hi = spheroid_pq(KM, GM, ki, gi, a_hi)
            assert lo == pytest.approx(hi, rel=1e-11)
    a = np.linspace(0.5, 2.0, 3001)
    p, q = spheroid_pq(KM, GM, 2.3, 0.0, a)
    assert np.all(np.isfinite(p)) and np.all(np.isfinite(q))
    assert np.max(np.abs(np.diff(p))) < 1e-3 and np.max(np.abs(np.diff(q))) < 1e-3


@pytest.mark.parametrize("ki, gi", INCLUSION_MODULI)
def test_pq_penny_crack_limit(ki, gi):
    # the penny-crack formulas are the first-order asymptote as alpha -> 0: the relative
    # difference must be O(alpha): < 5 alpha, and shrink ~10x per decade of alpha
    diffs = []
    for a in (1e-2, 1e-3, 1e-4):
        p, q = spheroid_pq(KM, GM, ki, gi, a)
        pp, qq = pq_penny(KM, GM, ki, gi, a)
        d = max(abs(p / pp - 1.0), abs(q / qq - 1.0))
        assert d < 5.0 * a
        diffs.append(d)
    assert diffs[1] / diffs[2] == pytest.approx(10.0, rel=0.2)


@pytest.mark.parametrize("ki, gi", INCLUSION_MODULI)
def test_pq_needle_limit(ki, gi):
    # prolate alpha -> infinity gives the needle formulas; at alpha = 1e4 the remainder is
    # O(ln(alpha)/alpha^2), well below 1e-4
    assert spheroid_pq(KM, GM, ki, gi, 1e4) == pytest.approx(pq_needle(KM, GM, ki, gi), rel=1e-4)


def test_pq_broadcasts():
    p, q = spheroid_pq(KM, GM, [[2.3], [20.0]], 0.0, [1e-3, 0.1, 1.0])
    assert p.shape == q.shape == (2, 3)
    assert p[1, 2] == pytest.approx(spheroid_pq(KM, GM, 20.0, 0.0, 1.0)[0], rel=1e-14)


# ---------------------------------------------------------------------------------------------
# Kuster-Toksoz
# ---------------------------------------------------------------------------------------------
def test_kt_spheres_equal_hs_upper():
    # [computed from the Mavko, Mukerji & Dvorkin 2009 (Rock Physics Handbook) formulas with
    # quartz K 36, G 45 + 20 % water spheres K 2.2, G 0]; KT with spheres is the HS bound with
    # the matrix as host (Berryman 1995 identity); quoted to 0.001 GPa
    k, g = kuster_toksoz(36.0, 45.0, [2.2], [0.0], [1.0], [0.2])
    np.testing.assert_allclose([k, g], [26.589, 29.483], atol=0.001)
    _, k_up, _, g_up = hashin_shtrikman([0.8, 0.2], [36.0, 2.2], [45.0, 0.0])
    np.testing.assert_allclose([k, g], np.ravel([k_up, g_up]), rtol=1e-12)


def test_kt_spheres_equal_hs_bound_random():
    # same identity on random two-phase inputs with the matrix stiffer in K and G: KT = HS+
    rng = np.random.default_rng(1)
    km, gm = rng.uniform(50, 150, 50), rng.uniform(20, 80, 50)
    ki, gi = rng.uniform(0, 40, 50), rng.uniform(0, 15, 50)
    x = rng.uniform(0, 0.4, 50)
    k, g = kuster_toksoz(km, gm, ki[:, None], gi[:, None], np.ones((50, 1)), x[:, None])
    _, k_up, _, g_up = hashin_shtrikman(np.stack([1 - x, x], -1), np.stack([km, ki], -1),
                                        np.stack([gm, gi], -1))
    np.testing.assert_allclose(k, k_up, rtol=1e-12)
    np.testing.assert_allclose(g, g_up, rtol=1e-12)


# [computed from the Kuster & Toksöz 1974 equations with the Table 4.8.1 sphere and needle P, Q
# of Mavko, Mukerji & Dvorkin 2009], matrix 80/40; quoted to 0.01 GPa
@pytest.mark.parametrize(
    "aspect, phi, dry, wet",
    [
        (1.0, 0.01, (78.03, 39.24), (78.16, 39.24)),
        (1.0, 0.05, (70.70, 36.32), (71.30, 36.32)),
        (1e4, 0.05, (68.99, 35.80), (69.82, 35.81)),  # needles: prolate alpha = 1e4
    ],
)
def test_kt_sphere_needle_reference_values(aspect, phi, dry, wet):
    for moduli, ref in ((DRY, dry), (WATER, wet)):
        k, g = kuster_toksoz(KM, GM, [moduli[0]], [moduli[1]], [aspect], [phi])
        assert (k, g) == pytest.approx(ref, abs=0.01)


@pytest.mark.parametrize(
    "aspect, phi, dry, wet",
    [
        (0.01, 0.01, (32.93, 28.44), (62.95, 31.05)),  # penny alpha = 0.01, 1 %, +-0.02
        (0.1, 0.01, (73.10, 38.61), (74.62, 38.68)),  # penny alpha = 0.1, 1 %
        (0.1, 0.05, (51.42, 33.48), (56.85, 33.77)),  # penny alpha = 0.1, 5 %
    ],
)
def test_kt_penny_reference_values(aspect, phi, dry, wet):
    # [computed from the Kuster & Toksöz 1974 equations with the penny-crack P, Q of Mavko,
    # Mukerji & Dvorkin 2009 Table 4.8.1] (first order in alpha). Check the module's KT solve
    # with those P, Q to 0.02 GPa (the expected values are rounded to 0.01) ...
    for moduli, ref in ((DRY, dry), (WATER, wet)):
        p, q = pq_penny(KM, GM, *moduli, aspect)
        k, g = inclusions._kt_from_pq(KM, GM, moduli[0], moduli[1], p, q, phi)
        assert (k, g) == pytest.approx(ref, abs=0.02)
    # ... and the exact-spheroid KT at alpha = 0.01 within 1 % of the penny result: the
    # spheroid P, Q differ from the penny asymptote by O(alpha) (< 3 % in Q at alpha = 0.01)
    if aspect == 0.01:
        for moduli, ref in ((DRY, dry), (WATER, wet)):
            k, g = kuster_toksoz(KM, GM, [moduli[0]], [moduli[1]], [aspect], [phi])
            assert (k, g) == pytest.approx(ref, rel=0.01)


def test_kt_rejects_non_dilute_cracks():
    # [computed from the Kuster & Toksöz 1974 equations with penny-crack P, Q]: dry penny
    # alpha = 0.01, phi = 0.05 gives K < 0 (phi/alpha = 5), beyond the dilute limit
    with pytest.raises(ValueError, match="dilute"):
        kuster_toksoz(KM, GM, [0.0], [0.0], [0.01], [0.05])


def test_kt_rejects_negative_modulus(monkeypatch):
    # with the phi/alpha guard lifted, the non-physical result itself is caught
    monkeypatch.setattr(inclusions, "KT_MAX_POROSITY_OVER_ASPECT", np.inf)
    with pytest.raises(ValueError, match="non-physical"):
        kuster_toksoz(KM, GM, [0.0], [0.0], [0.01], [0.05])


# ---------------------------------------------------------------------------------------------
# self-consistent and DEM
# ---------------------------------------------------------------------------------------------
def test_sc_and_dem_spheres_water():
    # [computed from the Berryman 1980 self-consistent and Norris 1985 / Berryman, Pride & Wang
    # 2002 DEM equations (Mavko, Mukerji & Dvorkin 2009 eqs. 4.11.1, 4.9.1); expected DEM by RK4,
    # 2e4 steps]; quoted to 0.05 GPa; both must lie inside the HS bounds (K 29.75-71.30,
    # G 0-36.32)
    k_sc, g_sc = self_consistent(KM, GM, [2.3], [0.0], [1.0], [0.05])
    k_dem, g_dem = dem(KM, GM, [2.3], [0.0], [1.0], [0.05])
    assert (k_sc, g_sc) == pytest.approx((70.84, 36.15), abs=0.05)
    assert (k_dem, g_dem) == pytest.approx((71.08, 36.24), abs=0.05)
    k_lo, k_up, g_lo, g_up = hashin_shtrikman([0.95, 0.05], [KM, 2.3], [GM, 0.0])
    for k, g in ((k_sc, g_sc), (k_dem, g_dem)):
        assert k_lo <= k <= k_up and g_lo <= g <= g_up


def test_dem_dry_spheres_reference_value():
    # [computed from the Norris 1985 / Berryman, Pride & Wang 2002 DEM equations with sphere P, Q]:
    # dry spheres, 10 %: 61.75 / 32.65; quoted to 0.01 GPa
    assert dem(KM, GM, [0.0], [0.0], [1.0], [0.1]) == pytest.approx((61.75, 32.65), abs=0.01)


def test_dem_penny_reference_value_with_penny_factors():
    # "DEM penny alpha = 0.1, 5 % water: 57.59 / 33.60" [computed from the same DEM equations
    # with the penny-crack P, Q of Mavko et al. 2009 Table 4.8.1]; with the exact spheroid P, Q
    # the DEM result is softer (O(alpha) = several % in Q here).
    k, g = dem(KM, GM, [2.3], [0.0], [0.1], [0.05])
    assert 0.95 * 57.59 < k < 57.59 and 0.9 * 33.60 < g < 33.60


@pytest.mark.parametrize("moduli", [WATER, DRY, (20.0, 0.0)])
def test_dem_spheres_inside_hs_bounds(moduli):
    # DEM is a realisable geometry, so it must respect the HS bounds up to phi = 0.3
    phi = np.linspace(0.0, 0.3, 31)
    k, g = dem(np.full(31, KM), GM, [moduli[0]], [moduli[1]], [1.0], phi[:, None])
    k_lo, k_up, g_lo, g_up = hashin_shtrikman(np.stack([1 - phi, phi], -1), [KM, moduli[0]],
                                              [GM, moduli[1]])
    tol = 1e-9 * KM
    assert np.all(k >= k_lo - tol) and np.all(k <= k_up + tol)
    assert np.all(g >= g_lo - tol) and np.all(g <= g_up + tol)


@pytest.mark.parametrize("aspect", [1e-3, 1e-4])
def test_dem_cracks_stay_positive_and_finite(aspect):
    phi = np.linspace(0.0, 0.3, 16)[:, None]
    for moduli in (WATER, DRY):
        k, g = dem(np.full(16, KM), GM, [moduli[0]], [moduli[1]], [aspect], phi)
        assert np.all(np.isfinite(k)) and np.all(np.isfinite(g))
        assert np.all(k > 0.0) and np.all(g > 0.0)
        assert np.all(np.diff(k) <= 0.0) and np.all(np.diff(g) <= 0.0)  # softer with porosity


def test_dem_step_count_accuracy():
    # DEM_STEPS fixed RK4 steps against 4096 steps, fluid-filled inclusions (water K 2.3, melt
    # K 20), phi <= 0.3, alpha >= 1e-3, single phases and a water + melt mix:
    # relative error < 1e-3 (the documented target) wherever the modulus exceeds 1e-3 of the
    # matrix modulus; absolute error < 1e-4 of the matrix modulus everywhere. (For thin cracks
    # at high porosity G falls to ~1e-25 GPa, where a relative error is meaningless.)
    ph, al, kf = (a.ravel() for a in np.meshgrid([0.01, 0.05, 0.1, 0.2, 0.3],
                                                [1e-3, 3e-3, 1e-2, 3e-2, 0.1, 0.3, 1.0],
                                                [2.3, 20.0], indexing="ij"))
    n = ph.size
    cases = [
        (kf[:, None], np.zeros((n, 1)), al[:, None], ph[:, None]),
        (np.stack([np.full(n, 2.3), np.full(n, 20.0)], -1), np.zeros((n, 2)),
         np.stack([al, np.full(n, 0.01)], -1), np.stack([ph / 2, ph / 2], -1)),
    ]
    km, gm = np.full(n, KM), np.full(n, GM)
    for ki, gi, ai, fi in cases:
        fast = inclusions._dem(km, gm, ki, gi, ai, fi, n_steps=DEM_STEPS)
        fine = inclusions._dem(km, gm, ki, gi, ai, fi, n_steps=4096)
        for m, mf, m0 in zip(fast, fine, (KM, GM), strict=True):
            big = mf > 1e-3 * m0
            assert np.max(np.abs(m[big] / mf[big] - 1.0)) < 1e-3
            assert np.max(np.abs(m - mf)) < 1e-4 * m0


def _dem_grid(nu, k_ratio, aspect, phi, km=80.0):
    """Single inclusion phase on a grid of matrix Poisson's ratio, K_i/K_m, aspect, porosity."""
    n_, r_, a_, p_ = (x.ravel() for x in np.meshgrid(nu, k_ratio, aspect, phi, indexing="ij"))
    k = np.full(n_.size, km)
    g = k * 1.5 * (1.0 - 2.0 * n_) / (1.0 + n_)  # G from K and Poisson's ratio
    return k, g, (r_ * k)[:, None], np.zeros((n_.size, 1)), a_[:, None], p_[:, None]


def _assert_matches_reference(args, rel=1e-4):
    # relative error < rel wherever the converged modulus is above 1e-10 of the matrix modulus;
    # below that (dry thin cracks far beyond phi/alpha ~ 1, moduli falling to the 1e-12 floor)
    # the fast result must be "zero" too (< 1e-9 of the matrix modulus)
    fast = inclusions._dem(*args)
    ref = inclusions._dem_reference(*args)
    worst = []
    for m, mr, m0 in zip(fast, ref, args[:2], strict=True):
        big = mr > 1e-10 * m0
        err = np.abs(m[big] / mr[big] - 1.0)
        assert err.max() < rel, f"max relative error {err.max():.2e}"
        assert np.all(m[~big] < 1e-9 * m0[~big])
        worst.append(err.max())
    return worst


# grid of the documented ranges: matrix Poisson's ratio 0.1-0.35 (oceanic-crust minerals),
# K_i/K_m 0.01-0.6 (seawater in a stiff matrix ... melt in a soft one), aspect 1e-3..1 (the
# thinnest cracks), porosity up to 0.5 (the highest the forward model accepts)
_NU = [0.1, 0.2, 0.25, 0.3, 0.35]
_PHI = [1e-3, 0.01, 0.05, 0.1, 0.2, 0.3, 0.4, 0.5]


def test_dem_fluid_matches_converged_reference_on_dense_grid():
    # the default adaptive RK4 against the converged reference integration of the same theory
    # (scipy DOP853, tolerance 1e-12; scipy is the outside reference): 2600 fluid-filled cases
    args = _dem_grid(_NU, [0.01, 0.03, 0.1, 0.3, 0.6], np.logspace(-3, 0, 13), _PHI)
    _assert_matches_reference(args)


def test_dem_dry_matches_converged_reference():
    args = _dem_grid(_NU, [0.0], np.logspace(-3, 0, 13), _PHI)
    _assert_matches_reference(args)


@pytest.mark.slow
def test_dem_matches_converged_reference_on_denser_grid():
    args = _dem_grid(np.linspace(0.05, 0.4, 8), [0.0, 0.005, 0.02, 0.05, 0.2, 0.5, 0.9],
                     np.logspace(-3, 0, 31), np.linspace(0.02, 0.5, 13))
    _assert_matches_reference(args)


def test_dem_reference_is_converged():
    # the reference itself: tolerance 1e-12 and 1e-10 agree to < 1e-7, and 4096 fixed RK4 steps
    # (an independent integrator of the same equations) agree with it to < 1e-7
    args = _dem_grid([0.15, 0.3], [0.02, 0.3], [1e-3, 1e-2, 0.1, 1.0], [0.05, 0.3, 0.5])
    ref = inclusions._dem_reference(*args)
    loose = inclusions._dem_reference(*args, rtol=1e-10)
    rk4 = inclusions._dem(*args, n_steps=4096)
    for m, ml, mk in zip(ref, loose, rk4, strict=True):
        assert np.max(np.abs(ml / m - 1.0)) < 1e-7
        assert np.max(np.abs(mk / m - 1.0)) < 1e-7


def test_dem_several_phases_match_reference_and_are_batch_independent():
    # seawater cracks + round pores + melt films (three phases), random within the documented
    # ranges (porosity + melt <= 0.5); then each element alone gives the same result (a single
    # element runs the Python-float path of the same equations: equal to rounding, 1e-13)
    rng = np.random.default_rng(7)
    n = 1500
    km = rng.uniform(30, 130, n)
    gm = km * rng.uniform(0.35, 0.85, n)
    total = rng.uniform(0, 0.5, n)
    split = rng.dirichlet(np.ones(3), n)
    ki = np.stack([rng.uniform(1.5, 3.0, n), rng.uniform(1.5, 3.0, n),
                   rng.uniform(10, 25, n)], -1)
    ai = np.stack([10 ** rng.uniform(-3, -1.5, n), 10 ** rng.uniform(-0.5, 0, n),
                   10 ** rng.uniform(-3, 0, n)], -1)
    fi = total[:, None] * split
    gi = np.zeros_like(ki)
    _assert_matches_reference((km, gm, ki, gi, ai, fi))
    k, g = inclusions._dem(km, gm, ki, gi, ai, fi)
    for i in rng.choice(n, 20, replace=False):
        k1, g1 = inclusions._dem(km[i], gm[i], ki[i], gi[i], ai[i], fi[i])
        assert k1 == pytest.approx(k[i], rel=1e-13) and g1 == pytest.approx(g[i], rel=1e-13)
    # and a sub-batch in another order gives the same bits as the whole batch
    idx = rng.permutation(n)[:300]
    k2, g2 = inclusions._dem(km[idx], gm[idx], ki[idx], gi[idx], ai[idx], fi[idx])
    assert np.array_equal(k2, k[idx]) and np.array_equal(g2, g[idx])


def test_dem_single_element_path_equals_vectorised():
    # batch of one (Python floats) against the vectorised path, fluid and solid inclusions,
    # default and fixed step counts: equal to rounding
    rng = np.random.default_rng(11)
    n = 300
    km, gm = rng.uniform(40, 120, n), rng.uniform(20, 60, n)
    ki = np.stack([rng.uniform(1.5, 3.0, n), rng.uniform(5, 150, n)], -1)
    gi = np.stack([np.zeros(n), np.where(rng.uniform(size=n) < 0.5, 0.0, rng.uniform(1, 80, n))],
                  -1)
    ai = 10 ** rng.uniform(-3, 0, (n, 2))
    fi = rng.uniform(0, 0.2, (n, 2)) * (rng.uniform(size=(n, 2)) < 0.8)
    for n_steps in (None, 3):
        k, g = inclusions._dem(km, gm, ki, gi, ai, fi, n_steps=n_steps)
        for i in range(0, n, 7):
            k1, g1 = inclusions._dem(km[i], gm[i], ki[i], gi[i], ai[i], fi[i], n_steps=n_steps)
            assert k1.shape == g1.shape == ()
            # at the 1e-12 floor of a modulus the clipped equations have a kink that amplifies
            # rounding: elements that touch it agree to 1e-6, all others to 1e-13
            rel = 1e-13 if min(k[i] / km[i], g[i] / gm[i]) > 1e-10 else 1e-6
            assert k1 == pytest.approx(k[i], rel=rel) and g1 == pytest.approx(g[i], rel=rel)


def test_dem_solid_inclusions_match_reference():
    # inclusions with shear strength (stiffer and softer than the matrix): the general P, Q path
    rng = np.random.default_rng(3)
    n = 400
    km, gm = rng.uniform(40, 120, n), rng.uniform(20, 60, n)
    ki, gi = rng.uniform(5, 200, (n, 2)), rng.uniform(2, 100, (n, 2))
    ai = 10 ** rng.uniform(-3, 0, (n, 2))
    fi = rng.uniform(0, 0.25, (n, 2))
    _assert_matches_reference((km, gm, ki, gi, ai, fi))


def test_dilute_limit_schemes_agree():
    # to first order in phi all three schemes give M_m + phi * (M_i - M_m) * P (or Q) with the
    # matrix as host; at phi = 1e-5 the second-order terms are < 1e-3 of the slope
    phi = 1e-5
    for aspect in (1.0, 0.1, 0.01):
        slopes = []
        for name in SCHEMES:
            k, g = INCLUSION_SCHEMES[name](KM, GM, [2.3], [0.0], [aspect], [phi])
            slopes.append(((k - KM) / phi, (g - GM) / phi))
        p, q = spheroid_pq(KM, GM, 2.3, 0.0, aspect)
        expected = ((2.3 - KM) * p, (0.0 - GM) * q)
        for s in slopes:
            assert s == pytest.approx(expected, rel=1e-3)


# ---------------------------------------------------------------------------------------------
# identities shared by all schemes
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize("name", SCHEMES)
def test_zero_porosity_returns_the_solid(name):
    k, g = INCLUSION_SCHEMES[name](KM, GM, [2.3, 20.0], [0.0, 0.0], [0.01, 0.1], [0.0, 0.0])
    assert (k, g) == pytest.approx((KM, GM), rel=1e-14)


@pytest.mark.parametrize("name", SCHEMES)
def test_split_phase_equals_single_phase(name):
    # one inclusion phase split into two identical phases must not change the result
    one = INCLUSION_SCHEMES[name](KM, GM, [2.3], [0.0], [0.1], [0.04])
    two = INCLUSION_SCHEMES[name](KM, GM, [2.3, 2.3], [0.0, 0.0], [0.1, 0.1], [0.01, 0.03])
    # plain floats: pytest >= 9 refuses 0-d arrays inside a tuple in approx
    assert [float(x) for x in one] == pytest.approx([float(x) for x in two], rel=1e-12)


@pytest.mark.parametrize("name", SCHEMES)
def test_vectorised_equals_looped(name):
    rng = np.random.default_rng(7)
    shape = (3, 4)
    km, gm = rng.uniform(60, 120, shape), rng.uniform(30, 60, shape)
    ki = np.stack([rng.uniform(2.0, 2.6, shape), rng.uniform(15, 25, shape)], -1)
    gi = np.zeros_like(ki)
    ai = np.stack([10 ** rng.uniform(-1, 0, shape), 10 ** rng.uniform(-1.3, -1, shape)], -1)
    fi = np.stack([rng.uniform(0, 0.05, shape), rng.uniform(0, 0.02, shape)], -1)
    scheme = INCLUSION_SCHEMES[name]
    k, g = scheme(km, gm, ki, gi, ai, fi)
    assert k.shape == g.shape == shape
    for idx in np.ndindex(shape):
        kl, gl = scheme(km[idx], gm[idx], ki[idx], gi[idx], ai[idx], fi[idx])
        assert k[idx] == pytest.approx(kl, rel=1e-12)
        assert g[idx] == pytest.approx(gl, rel=1e-12)


def test_sc_warns_when_not_converged():
    # dry thin cracks right at the percolation threshold: the fixed-point iteration crawls
    with pytest.warns(RuntimeWarning, match="did not converge"):
        self_consistent(KM, GM, [0.0], [0.0], [0.01], [0.05])


# ---------------------------------------------------------------------------------------------
# errors
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize("name", SCHEMES)
@pytest.mark.parametrize(
    "args, match",
    [
        ((KM, GM, [2.3], [0.0], [0.1], [-0.01]), "frac_i must be in"),
        ((KM, GM, [2.3, 2.3], [0.0, 0.0], [0.1, 0.1], [0.6, 0.4]), "sum\\(frac_i\\)"),
        ((KM, GM, [2.3], [0.0], [1e-5], [0.01]), "aspect_i must be in"),
        ((KM, 0.0, [2.3], [0.0], [0.1], [0.01]), "g_m must be in"),
        ((KM, GM, [-2.3], [0.0], [0.1], [0.01]), "k_i must be in"),
        ((KM, GM, [2.3], [0.0], [0.1], 0.01), "inclusion-phase axis"),
        ((KM, GM, [2.3], [0.0], [0.1, 0.1, 0.1], [0.01, 0.01]), "do not broadcast"),
    ],
)
def test_bad_input_raises(name, args, match):
    with pytest.raises(ValueError, match=match):
        INCLUSION_SCHEMES[name](*args)


def test_spheroid_pq_bad_input_raises():
    with pytest.raises(ValueError, match="aspect_ratio must be in"):
        spheroid_pq(KM, GM, 2.3, 0.0, 0.0)
    with pytest.raises(ValueError, match="k_m must be in"):
        spheroid_pq(0.0, GM, 2.3, 0.0, 0.1)
