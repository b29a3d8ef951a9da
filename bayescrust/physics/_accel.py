"""Compiled (numba) per-element kernels for the hot spots of the forward model.

Imported only when numba is installed and :func:`bayescrust.physics._jit.enabled` is true. The
physics is not restated here: the kernels call the same functions as the numpy reference
(:func:`bayescrust.physics.inclusions._pq`, the mineral-state formulas of
:mod:`bayescrust.physics.minerals`), which :func:`~bayescrust.physics._jit.jitable` lets numba
compile. What is here is the loop over elements that numpy does with whole-array operations:
the same equations, step rule, limits and order of floating-point operations, so that the
compiled and numpy results agree to rounding (tested in tests/physics/test_accel.py).

Every tunable constant is an argument (not a global), so that numba's on-disk cache
(``cache=True``) can never hold a stale value of it.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .inclusions import _pq
from .minerals import _state_formula, _table_columns

#: LLVM fast-math flags without "no NaN / no inf" (the floors and clips must see inf and NaN
#: as numpy does): reassociation and reciprocals change results at the rounding level only.
_FASTMATH = {"nsz", "arcp", "contract", "afn", "reassoc"}


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _dem_rate1(lk, lg, lk_lo, lk_hi, lg_lo, lg_hi, k_i, g_i, w, geo, e):
    """d ln K*/dt, d ln G*/dt of one element ``e``: :func:`inclusions._dem_rate` per element."""
    k = math.exp(min(max(lk, lk_lo), lk_hi))
    g = math.exp(min(max(lg, lg_lo), lg_hi))
    r = 3.0 * g / (3.0 * k + 4.0 * g)
    dk = 0.0
    dg = 0.0
    for j in range(k_i.shape[0]):
        if w[j, e] == 0.0:
            continue
        rk = k_i[j, e] / k
        rg = g_i[j, e] / g
        ge = (geo[0, j, e], geo[1, j, e], geo[2, j, e], geo[3, j, e], geo[4, j, e],
              geo[5, j, e], geo[6, j, e], geo[7, j, e], geo[8, j, e], geo[9, j, e],
              geo[10, j, e], geo[11, j, e], geo[12, j, e], geo[13, j, e], geo[14, j, e])
        p, q = _pq(rk, rg, r, ge)
        dk += ((rk - 1.0) * w[j, e]) * p
        dg += ((rg - 1.0) * w[j, e]) * q
    return dk, dg


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def dem_elements(km, gm, k_i, g_i, w, t_end, geo, n_fixed, log_change, max_steps,
                 solid_factor, tiny):
    """The DEM integration of :func:`inclusions._dem` element by element.

    ``km, gm, t_end`` shape (n,); ``k_i, g_i, w`` shape (m, n) (inclusion axis first, weights
    w_i = x_i / phi); ``geo`` shape (15, m, n) from :func:`inclusions._geometry`. ``n_fixed``
    < 0 chooses the step count per element from its stiffness (the rule of :func:`_dem`,
    with ``log_change`` = DEM_LOG_CHANGE_PER_STEP, ``max_steps`` = DEM_MAX_STEPS,
    ``solid_factor`` = DEM_SOLID_INCLUSION_FACTOR); otherwise every element takes ``n_fixed``
    classical RK4 steps. ``tiny`` is the floor of the moduli relative to the matrix.
    Returns K*, G* (GPa), shape (n,).
    """
    m, n = k_i.shape
    out_k = np.empty(n)
    out_g = np.empty(n)
    for e in range(n):
        kmax = km[e]
        gmax = gm[e]
        solid = False
        phi_pos = False
        for j in range(m):
            kmax = max(kmax, k_i[j, e])
            gmax = max(gmax, g_i[j, e])
            if g_i[j, e] > 0.0 and w[j, e] > 0.0:
                solid = True
        lk_lo = math.log(tiny * km[e])
        lg_lo = math.log(tiny * gm[e])
        lk_hi = math.log(2.0 * kmax)
        lg_hi = math.log(2.0 * gmax)
        lk = math.log(km[e])
        lg = math.log(gm[e])
        te = t_end[e]
        phi_pos = te > 0.0
        a_k, a_g = _dem_rate1(lk, lg, lk_lo, lk_hi, lg_lo, lg_hi, k_i, g_i, w, geo, e)
        if n_fixed < 0:
            if not phi_pos:
                n_el = 0
            else:
                stiff = te * max(abs(a_k), abs(a_g))
                if solid:
                    stiff *= solid_factor
                n_el = int(min(max(math.ceil(stiff / log_change), 1.0), max_steps))
        else:
            n_el = n_fixed
        h = te / max(n_el, 1)
        h2 = 0.5 * h
        h6 = h / 6.0
        for step in range(n_el):
            if step:
                a_k, a_g = _dem_rate1(lk, lg, lk_lo, lk_hi, lg_lo, lg_hi, k_i, g_i, w, geo, e)
            b_k, b_g = _dem_rate1(lk + h2 * a_k, lg + h2 * a_g, lk_lo, lk_hi, lg_lo, lg_hi,
                                  k_i, g_i, w, geo, e)
            c_k, c_g = _dem_rate1(lk + h2 * b_k, lg + h2 * b_g, lk_lo, lk_hi, lg_lo, lg_hi,
                                  k_i, g_i, w, geo, e)
            d_k, d_g = _dem_rate1(lk + h * c_k, lg + h * c_g, lk_lo, lk_hi, lg_lo, lg_hi,
                                  k_i, g_i, w, geo, e)
            lk = max(lk + ((a_k + d_k) + 2.0 * (b_k + c_k)) * h6, lk_lo)
            lg = max(lg + ((a_g + d_g) + 2.0 * (b_g + c_g)) * h6, lg_lo)
        out_k[e] = math.exp(lk)
        out_g[e] = math.exp(lg)
    return out_k, out_g


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _mineral_state_loop(t, p, rho0, ks0, g0, a0, a1, a2, half_a1, gamma_th, delta_s, gamma_g,
                        log_offset, bm_b, three_ksp, three_gp):
    n = t.size
    m = rho0.size
    rho = np.empty((n, m))
    ks = np.empty((n, m))
    g = np.empty((n, m))
    for i in range(n):
        for j in range(m):
            rho[i, j], ks[i, j], g[i, j] = _state_formula(
                t[i], p[i], rho0[j], ks0[j], g0[j], a0[j], a1[j], a2[j], half_a1[j],
                gamma_th[j], delta_s[j], gamma_g[j], log_offset[j], bm_b[j], three_ksp[j],
                three_gp[j])
    return rho, ks, g


def mineral_state(table, temperature_k, pressure_gpa):
    """:func:`minerals._mineral_state` by the compiled loop over (sample, mineral)."""
    t = np.asarray(temperature_k, dtype=float)
    p = np.asarray(pressure_gpa, dtype=float)
    batch = np.broadcast_shapes(t.shape, p.shape)
    def flat(x):  # a fresh array: views of np.broadcast_arrays warn when numba types them
        return np.array(np.broadcast_to(x, batch), dtype=float).ravel()

    out = _mineral_state_loop(flat(t), flat(p), *_table_columns(table))
    shape = batch + (len(table.names),)
    return tuple(x.reshape(shape) for x in out)
