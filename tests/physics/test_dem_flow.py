"""The tabulated DEM of dry pores (bayescrust/physics/dem_flow.py) against the theory.

The tables hold the solution of the DEM equations for empty spheroids (Norris 1985; Berryman,
Pride & Wang 2002) as a one-dimensional flow; the check value is the same equations
integrated to convergence by scipy's DOP853 (``inclusions._dem_reference``, rtol 1e-12),
without a floor along the path. Issue target: 1e-4 relative in the moduli everywhere in the
documented ranges (aspect ratio 1e-4..1 of the inputs, down to the 1e-6 crack closure can
leave; porosity up to 0.5; any host Poisson's ratio up to 0.49).
"""

import math

import numpy as np
import pytest

from bayescrust.physics import dem_flow, inclusions

#: Measured worst error of ln K*, ln G* on the grid below: 3.8e-6 (the issue asks 1e-4).
TOL_LOG = 1e-5


def _host(nu, k=80.0):
    """Host moduli (GPa) of bulk modulus ``k`` and Poisson's ratio ``nu``."""
    nu = np.asarray(nu, dtype=float)
    return np.broadcast_to(k, nu.shape) * 1.0, k * 3.0 * (1.0 - 2.0 * nu) / (2.0 * (1.0 + nu))


def _table(km, gm, alpha, phi, log=True):
    """(ok, ln K*/K0, ln G*/G0) from the tables (not floored), or (ok, K*, G*) floored."""
    tabs = dem_flow.build()
    if not log:
        out = [dem_flow._dry_dem(k, g, a, -math.log1p(-p), *tabs)
               for k, g, a, p in np.broadcast(km, gm, alpha, phi)]
        return tuple(np.array(x) for x in zip(*out, strict=True))
    out = [dem_flow._dry_dem_path(k, g, a, -math.log1p(-p), *tabs)
           for k, g, a, p in np.broadcast(km, gm, alpha, phi)]
    ok, dlk, ratio = (np.array(x) for x in zip(*out, strict=True))
    km, gm = np.broadcast_to(km, ok.shape), np.broadcast_to(gm, ok.shape)
    return ok, dlk, np.where(ok, dlk + np.log(np.where(ok, ratio, 1.0)) - np.log(gm / km), 0.0)


def test_dense_grid_against_converged_integration():
    # aspect ratios between the table's nodes (and its two ends), the thinnest cracks and
    # the highest porosities, hosts from Poisson's ratio 0.05 to 0.4899
    alphas = np.geomspace(1e-6, 1.0, 19) * math.exp(0.013)
    alphas[[0, -1]] = 1e-6, 1.0
    phis = np.array([1e-4, 0.01, 0.05, 0.1, 0.2, 0.3, 0.4, 0.5])
    nus = np.array([0.05, 0.15, 0.201, 0.25, 0.3, 0.35, 0.42, 0.45, 0.48, 0.4899])
    worst, compared, floored = 0.0, 0, 0
    for a in alphas:
        phi, nu = (x.ravel() for x in np.meshgrid(phis, nus))
        km, gm = _host(nu)
        ok, dlk, dlg = _table(km, gm, a, phi)
        # the tables refuse exactly the hosts at or beyond the fixed point (nu <= nu*)
        xs = dem_flow.build()[2][0]
        assert np.all(ok | (np.log(gm / km) >= xs.min() - 1e-9))
        assert np.all(ok[nu >= 0.201])
        # where the theory's moduli underflow (ln K* below -600) the reference cannot follow;
        # there both moduli are the floor
        deep = ok & (dlk < -600.0)
        if deep.any():
            kf, gf = _table(km[deep], gm[deep], a, phi[deep], log=False)[1:]
            assert np.all(kf == inclusions._TINY * km[deep])
            assert np.all(gf == inclusions._TINY * gm[deep])
            floored += deep.sum()
        sel = ok & ~deep
        zero = np.zeros((sel.sum(), 1))
        with np.errstate(all="ignore"):
            kr, gr = inclusions._dem_reference(km[sel], gm[sel], zero, zero,
                                               np.full((sel.sum(), 1), a), phi[sel, None],
                                               floor=0.0)
        err = np.maximum(np.abs(dlk[sel] - np.log(kr / km[sel])),
                         np.abs(dlg[sel] - np.log(gr / gm[sel])))
        worst = max(worst, err.max())
        compared += sel.sum()
    assert worst <= TOL_LOG, f"worst log-modulus error {worst:.2e}"
    assert compared > 1000 and floored > 50  # not vacuous: both regimes are visited


def test_continuity_at_table_nodes():
    # one node of the aspect grid and its neighbourhood give the same moduli (no seam)
    tabs = dem_flow.build()
    la0, dla = tabs[3][0], tabs[3][1]
    a = math.exp(la0 + 100 * dla)
    km, gm = _host(0.27)
    # (the smooth change over 1e-12 in ln alpha is 2e-10; a seam would be the interpolation
    # error, ~1e-6)
    near = [_table(km, gm, a * math.exp(s), 0.1) for s in (-1e-12, 0.0, 1e-12)]
    assert np.ptp([n[1] for n in near]) < 1e-8 and np.ptp([n[2] for n in near]) < 1e-8


def test_fixed_points_of_the_dry_flow():
    # Dry spherical pores drive the DEM frame to Poisson's ratio 0.2 (from memory: the known
    # limit of DEM with empty spheres, e.g. Zimmerman 1991), and thin dry cracks towards 0
    # (O'Connell & Budiansky 1974 find nu -> 0 for dry cracks in their self-consistent scheme;
    # from memory); the tables' x* = ln(G/K) at the fixed point, converted
    _, _, scal, grid = dem_flow.build()
    nu = lambda x: (3.0 - 2.0 * math.exp(x)) / (2.0 * (3.0 + math.exp(x)))  # noqa: E731
    assert nu(scal[0, -1]) == pytest.approx(0.2, abs=1e-9)  # alpha = 1, the last node
    assert nu(scal[0, 0]) < 1e-5  # alpha = 1e-6
    assert np.all(np.diff(scal[0]) < 0)  # thinner pores, lower fixed-point ratio


def test_refusals_are_reported():
    km, gm = _host(0.3)
    tabs = dem_flow.build()
    t = -math.log1p(-0.1)
    assert not dem_flow._dry_dem(km[()], gm[()], 2.0, t, *tabs)[0]  # prolate: not tabulated
    assert not dem_flow._dry_dem(km[()], gm[()], 1e-7, t, *tabs)[0]  # below the range
    k2, g2 = _host(0.1)  # host below the spheres' fixed point (nu* = 0.2)
    assert not dem_flow._dry_dem(k2[()], g2[()], 1.0, t, *tabs)[0]
    k3, g3 = _host(0.495)  # beyond X_LO
    assert not dem_flow._dry_dem(k3[()], g3[()], 0.1, t, *tabs)[0]
    from bayescrust.physics import _accel  # the stand-in of tabulate=False covers nothing

    pytest.importorskip("numba")
    assert not dem_flow._dry_dem(km[()], gm[()], 0.1, t, *_accel._NO_DRY)[0]


def test_array_lookup_equals_scalar_lookup():
    # the numpy forward model's lookup (dry_dem_arrays) against the scalar one the compiled
    # kernel uses (checked against the converged theory above): the same to rounding, and the
    # same elements refused
    rng = np.random.default_rng(3)
    n = 3000
    alpha = 10 ** rng.uniform(-6.5, 0.3, n)  # below, inside and above the tabulated range
    phi = rng.uniform(0.0, 0.5, n)
    km, gm = _host(rng.uniform(0.0, 0.495, n), k=rng.uniform(30.0, 120.0, n))
    t = -np.log1p(-phi)
    ok, k, g = dem_flow.dry_dem_arrays(km, gm, alpha, t)
    ref = [dem_flow._dry_dem(*x, *dem_flow.build()) for x in zip(km, gm, alpha, t, strict=True)]
    ok_r, k_r, g_r = (np.array(x) for x in zip(*ref, strict=True))
    assert np.array_equal(ok, ok_r) and 0.5 < ok.mean() < 0.95  # both kinds of element
    np.testing.assert_allclose(k[ok], k_r[ok], rtol=1e-12)  # measured 1.4e-14
    np.testing.assert_allclose(g[ok], g_r[ok], rtol=1e-12)  # measured 1.7e-14
