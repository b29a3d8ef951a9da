"""Compiled (numba) per-element kernels: the forward model's hot spots and, for its default
settings, the whole forward model in one loop (:func:`forward`).

Imported only when numba is installed and :func:`bayescrust.physics._jit.enabled` is true. The
physics is not restated here: the kernels call the same functions as the numpy reference
(:func:`bayescrust.physics.spheroids._pq`, the mineral-state formulas of
:mod:`bayescrust.physics.minerals`), which :func:`~bayescrust.physics._jit.jitable` lets numba
compile. What is here is the loop over elements that numpy does with whole-array operations:
the same equations, step rule, limits and order of floating-point operations, so that the
compiled and numpy results agree to rounding (tested in tests/physics/test_accel.py).

:func:`_forward_loop` restates only the *order* of the steps of ``ForwardModel._solid`` and
``_finish`` (which formula is applied to what); every formula is a shared jitable function.

Every tunable constant of this module is an argument (not a global). The module-level constants
of the shared functions (literature coefficients read from ``data/*.toml``) are frozen into
the compiled code; :func:`_drop_stale_cache` empties numba's on-disk cache (``cache=True``)
when those modules or tables change.
"""

from __future__ import annotations

import math
import weakref

import numpy as np
from numba import njit
from numba.extending import register_jitable

from ._data import CELSIUS_TO_KELVIN
from ._jit import JITABLE
from .anelastic import _band_factors, _j02_q_inv
from .dem_flow import _dry_dem
from .fluids import _brine, _melt
from .minerals import _state_formula, _table_columns
from .pores import _close, _gassmann_k
from .serpentinization import _hs_upper
from .spheroids import _geometry_terms, _pq, _theta_f1

# the shared physics functions become callable from compiled code (they stay the same objects)
for _fn in JITABLE:
    register_jitable(inline="always" if _fn._jit_inline else "never")(_fn)
del _fn

#: LLVM fast-math flags without "no NaN / no inf" (the floors and clips must see inf and NaN
#: as numpy does): reassociation and reciprocals change results at the rounding level only.
_FASTMATH = {"nsz", "arcp", "contract", "afn", "reassoc"}


# Few arguments per compiled call: numba's dispatcher types every argument on every call
# (microseconds each), which is most of a batch-1 call. Inputs are packed into one array each.
_N_GEO = 15  # aspect-only terms of spheroids._geometry
_K, _G, _W, _GEO = 0, 1, 2, 3  # rows of the packed inclusion array


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _dem_rate1(lk, lg, lk_lo, lk_hi, lg_lo, lg_hi, inc, e):
    """d ln K*/dt, d ln G*/dt of one element ``e``: :func:`inclusions._dem_rate` per element."""
    k = math.exp(min(max(lk, lk_lo), lk_hi))
    g = math.exp(min(max(lg, lg_lo), lg_hi))
    r = 3.0 * g / (3.0 * k + 4.0 * g)
    dk = 0.0
    dg = 0.0
    for j in range(inc.shape[1]):
        w = inc[_W, j, e]
        if w == 0.0:
            continue
        rk = inc[_K, j, e] / k
        rg = inc[_G, j, e] / g
        ge = (inc[3, j, e], inc[4, j, e], inc[5, j, e], inc[6, j, e], inc[7, j, e],
              inc[8, j, e], inc[9, j, e], inc[10, j, e], inc[11, j, e], inc[12, j, e],
              inc[13, j, e], inc[14, j, e], inc[15, j, e], inc[16, j, e], inc[17, j, e])
        p, q = _pq(rk, rg, r, ge)
        dk += ((rk - 1.0) * w) * p
        dg += ((rg - 1.0) * w) * q
    return dk, dg


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _dem_loop(host, inc, par):
    """The DEM integration of :func:`inclusions._dem` element by element (see :func:`dem`)."""
    n = host.shape[1]
    out = np.empty((2, n))
    for e in range(n):
        out[0, e], out[1, e] = _dem_el(host[0, e], host[1, e], host[2, e], inc, e, par)
    return out


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _dem_el(km, gm, te, inc, e, par):
    """K*, G* of element ``e``: host (km, gm), t_end ``te``, inclusions ``inc[:, :, e]``."""
    n_fixed = int(par[0])
    log_change, max_steps, solid_factor, tiny = par[1], par[2], par[3], par[4]
    m = inc.shape[1]
    kmax = km
    gmax = gm
    solid = False
    for j in range(m):
        kmax = max(kmax, inc[_K, j, e])
        gmax = max(gmax, inc[_G, j, e])
        if inc[_G, j, e] > 0.0 and inc[_W, j, e] > 0.0:
            solid = True
    lk_lo = math.log(tiny * km)
    lg_lo = math.log(tiny * gm)
    lk_hi = math.log(2.0 * kmax)
    lg_hi = math.log(2.0 * gmax)
    lk = math.log(km)
    lg = math.log(gm)
    a_k, a_g = _dem_rate1(lk, lg, lk_lo, lk_hi, lg_lo, lg_hi, inc, e)
    if n_fixed < 0:
        if not te > 0.0:
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
            a_k, a_g = _dem_rate1(lk, lg, lk_lo, lk_hi, lg_lo, lg_hi, inc, e)
        b_k, b_g = _dem_rate1(lk + h2 * a_k, lg + h2 * a_g, lk_lo, lk_hi, lg_lo, lg_hi,
                              inc, e)
        c_k, c_g = _dem_rate1(lk + h2 * b_k, lg + h2 * b_g, lk_lo, lk_hi, lg_lo, lg_hi,
                              inc, e)
        d_k, d_g = _dem_rate1(lk + h * c_k, lg + h * c_g, lk_lo, lk_hi, lg_lo, lg_hi,
                              inc, e)
        lk = max(lk + ((a_k + d_k) + 2.0 * (b_k + c_k)) * h6, lk_lo)
        lg = max(lg + ((a_g + d_g) + 2.0 * (b_g + c_g)) * h6, lg_lo)
    return math.exp(lk), math.exp(lg)


def dem(km, gm, k_i, g_i, w, t_end, geo, n_steps, log_change, max_steps, solid_factor, tiny):
    """The DEM integration of :func:`inclusions._dem` by the compiled loop over elements.

    ``km, gm, t_end`` shape (n,); ``k_i, g_i, w`` shape (m, n) (inclusion axis first, weights
    w_i = x_i / phi); ``geo`` shape (15, m, n) from :func:`spheroids._geometry`. ``n_steps``
    None chooses the step count per element from its stiffness (the rule of
    :func:`inclusions._dem`, with ``log_change`` = DEM_LOG_CHANGE_PER_STEP, ``max_steps`` =
    DEM_MAX_STEPS, ``solid_factor`` = DEM_SOLID_INCLUSION_FACTOR); an integer forces that many
    classical RK4 steps on every element. ``tiny`` is the floor of the moduli relative to the
    matrix. Returns K*, G* (GPa), shape (n,).
    """
    host = np.stack([km, gm, t_end])  # fresh arrays (broadcast views warn when numba types them)
    inc = np.concatenate([np.stack([k_i, g_i, w]), geo])
    par = np.array([-1.0 if n_steps is None else float(n_steps), log_change, max_steps,
                    solid_factor, tiny])
    out = _dem_loop(host, inc, par)
    return out[0], out[1]


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _mineral_state_loop(t, p, c):
    n = t.size
    m = c.shape[1]
    out = np.empty((3, n, m))
    for i in range(n):
        for j in range(m):
            out[0, i, j], out[1, i, j], out[2, i, j] = _state_formula(
                t[i], p[i], c[0, j], c[1, j], c[2, j], c[3, j], c[4, j], c[5, j], c[6, j],
                c[7, j], c[8, j], c[9, j], c[10, j], c[11, j], c[12, j], c[13, j])
    return out


_COLUMNS: dict[int, tuple] = {}  # id(table) -> (table, packed columns); tables live for a run


def _packed_columns(table):
    """The columns of a mineral table stacked into one array (14, n_minerals), cached."""
    hit = _COLUMNS.get(id(table))
    if hit is None or hit[0] is not table:
        hit = _COLUMNS[id(table)] = (table, np.stack(_table_columns(table)))
    return hit[1]


def mineral_state(table, temperature_k, pressure_gpa):
    """:func:`minerals._mineral_state` by the compiled loop over (sample, mineral)."""
    cols = _packed_columns(table)
    t = np.asarray(temperature_k, dtype=float)
    p = np.asarray(pressure_gpa, dtype=float)
    if t.shape == p.shape and t.ndim == 1:
        out = _mineral_state_loop(np.array(t), np.array(p), cols)
        return out[0], out[1], out[2]
    batch = np.broadcast_shapes(t.shape, p.shape)

    def flat(x):  # a fresh array: views of np.broadcast_arrays warn when numba types them
        return np.array(np.broadcast_to(x, batch), dtype=float).ravel()

    out = _mineral_state_loop(flat(t), flat(p), cols).reshape((3,) + batch + (-1,))
    return out[0], out[1], out[2]


# --------------------------------------------------------------------------------------------
# the whole forward model of the default settings, one element at a time
# --------------------------------------------------------------------------------------------
#: Entries of the settings vector of :func:`_forward_loop` (see :func:`forward`).
_FP_SALINITY, _FP_CLOSURE, _FP_ANELASTIC, _FP_FREQ, _FP_GRAIN, _FP_HALF_COT, _FP_QMAX = range(7)
_FP_DEM = 7  # five DEM settings follow (the ``par`` of :func:`_dem_loop`)


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _dem_single(km, gm, k_i, alpha, frac, inc, par):
    """DEM of one fluid (or empty) inclusion phase: :func:`inclusions._dem` for one element."""
    theta, f = _theta_f1(alpha)
    geo = _geometry_terms(theta, f)
    inc[0, 0, 0] = k_i
    inc[1, 0, 0] = 0.0
    inc[2, 0, 0] = 1.0  # w = frac / frac
    for j in range(_N_GEO):
        inc[3 + j, 0, 0] = geo[j]
    return _dem_el(km, gm, -math.log1p(-frac), inc, 0, par)


#: Grid of the per-recipe table of :func:`_forward_loop`: temperature (K) linear over
#: ``_TAB_T_N`` nodes, pressure (GPa) by 4-point Lagrange cubics over ``_TAB_P_N`` nodes.
#: Measured interpolation error of the tabulated sums: 2.4e-7 relative at most (tests/physics/
#: test_accel.py); elements outside the grid take the exact formulas.
_TAB_T_K = (-20.0 + CELSIUS_TO_KELVIN, 1800.0 + CELSIUS_TO_KELVIN)
_TAB_T_N = 1024
_TAB_P_GPA = (0.0, 4.0)
_TAB_P_N = 33


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _recipe_sums(t_k, p, recipes, cols, q, rho_m, k_m, g_m):
    """Exact sums of each recipe (row of ``recipes``) at (T, P) into ``q`` (5, n_recipes):
    density, Voigt K, Reuss 1/K, Voigt G and Reuss 1/G sums over its minerals."""
    for j in range(cols.shape[1]):
        rho_m[j], k_m[j], g_m[j] = _state_formula(
            t_k, p, cols[0, j], cols[1, j], cols[2, j], cols[3, j], cols[4, j], cols[5, j],
            cols[6, j], cols[7, j], cols[8, j], cols[9, j], cols[10, j], cols[11, j],
            cols[12, j], cols[13, j])
    for r in range(recipes.shape[0]):
        a = 0.0
        b = 0.0
        c = 0.0
        d = 0.0
        e = 0.0
        for j in range(cols.shape[1]):
            x = recipes[r, j]
            a += x * rho_m[j]
            b += x * k_m[j]
            c += x / k_m[j]
            d += x * g_m[j]
            e += x / g_m[j]
        q[0, r] = a
        q[1, r] = b
        q[2, r] = c
        q[3, r] = d
        q[4, r] = e


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _recipe_table(recipes, cols, grid):
    """The sums of :func:`_recipe_sums` on the (T, P) grid ``grid`` = (T0, dT, nT, P0, dP, nP):
    array (nT, nP, 5, n_recipes)."""
    n_t = int(grid[2])
    n_p = int(grid[5])
    m = cols.shape[1]
    out = np.empty((n_t, n_p, 5, recipes.shape[0]))
    rho_m = np.empty(m)
    k_m = np.empty(m)
    g_m = np.empty(m)
    for i in range(n_t):
        for j in range(n_p):
            _recipe_sums(grid[0] + i * grid[1], grid[3] + j * grid[4], recipes, cols,
                         out[i, j], rho_m, k_m, g_m)
    return out


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _recipe_lookup(t_k, p, tab, grid, q):
    """Tabulated recipe sums at (T, P) into ``q``: linear in T, 4-point Lagrange in P. Returns
    False (``q`` untouched) outside the grid."""
    u = (t_k - grid[0]) / grid[1]
    v = (p - grid[3]) / grid[4]
    n_t = int(grid[2])
    n_p = int(grid[5])
    if not (u >= 0.0 and u <= n_t - 1 and v >= 0.0 and v <= n_p - 1):
        return False
    i = min(int(u), n_t - 2)
    ft = u - i
    j = min(max(int(v) - 1, 0), n_p - 4)
    x = v - j  # in [0, 3]
    w0 = -(x - 1.0) * (x - 2.0) * (x - 3.0) / 6.0
    w1 = x * (x - 2.0) * (x - 3.0) / 2.0
    w2 = -x * (x - 1.0) * (x - 3.0) / 2.0
    w3 = x * (x - 1.0) * (x - 2.0) / 6.0
    a0 = 1.0 - ft
    for k in range(5):
        for r in range(q.shape[1]):
            lo = (w0 * tab[i, j, k, r] + w1 * tab[i, j + 1, k, r] + w2 * tab[i, j + 2, k, r]
                  + w3 * tab[i, j + 3, k, r])
            hi = (w0 * tab[i + 1, j, k, r] + w1 * tab[i + 1, j + 1, k, r]
                  + w2 * tab[i + 1, j + 2, k, r] + w3 * tab[i + 1, j + 3, k, r])
            q[k, r] = a0 * lo + ft * hi
    return True


@njit(cache=True, nogil=True, error_model="numpy", fastmath=_FASTMATH)
def _forward_loop(fr, sc, recipes, um, cols, par, tab, grid, dry):
    """Vp, Vs, density of every element: ``ForwardModel._solid`` then ``_finish``, fused.

    ``fr`` (n, r) rock fractions; ``sc`` (8, n) temperature (C), pressure, porosity, aspect
    ratio, melt fraction, melt aspect ratio, serpentinisation, pore pressure; ``recipes``
    (r + 1, m) the mineral modes of the rocks and, last, of serpentinite; ``um`` (r,) the
    ultramafic mask; ``cols`` (14, m) the packed mineral table; ``par`` the settings
    (``_FP_*``); ``tab``, ``grid`` from :func:`_recipe_table`; ``dry`` the tables of
    :func:`dem_flow.build` (the dry-pore DEM; elements they do not cover are integrated).

    The solid is built from sums over each recipe's minerals (density, Voigt and Reuss sums of
    K and G), which are linear in the recipe weights: for mineral fractions
    x = sum_r w_r m_r, sum_j x_j M_j = sum_r w_r (sum_j m_rj M_j), and so for 1/M_j. The rock
    weights are w_r = f_r (1 - s um_r), serpentinite's s sum_r f_r um_r, exactly the mineral
    fractions of ``ForwardModel.mineral_fractions``; the sums come from the table inside its
    grid and from the mineral formulas outside it.
    """
    n, nr = fr.shape
    m = cols.shape[1]
    rho_m = np.empty(m)
    k_m = np.empty(m)
    g_m = np.empty(m)
    q = np.empty((5, nr + 1))
    inc = np.zeros((3 + _N_GEO, 1, 1))
    dem_par = par[_FP_DEM:_FP_DEM + 5]
    out = np.empty((3, n))
    for e in range(n):
        t_c = sc[0, e]
        p = sc[1, e]
        phi = sc[2, e]
        ar = sc[3, e]
        melt = sc[4, e]
        serp = sc[6, e]
        t_k = t_c + CELSIUS_TO_KELVIN
        # --- the solid: recipe sums at (P, T), Hill mean, serpentinite (HS)
        if not _recipe_lookup(t_k, p, tab, grid, q):
            _recipe_sums(t_k, p, recipes, cols, q, rho_m, k_m, g_m)
        um_sum = 0.0
        for i in range(nr):
            um_sum += fr[e, i] * um[i]
        s_rock = serp * um_sum
        rho_s = s_rock * q[0, nr]
        kv = 0.0
        kr = 0.0
        gv = 0.0
        gr = 0.0
        for i in range(nr):
            w = fr[e, i] - serp * (fr[e, i] * um[i])
            rho_s += w * q[0, i]
            kv += w * q[1, i]
            kr += w * q[2, i]
            gv += w * q[3, i]
            gr += w * q[4, i]
        if s_rock > 0.0:
            fresh = 1.0 - s_rock
            if fresh > 1e-9:  # the fresh part alone, renormalised
                kv /= fresh
                kr /= fresh
                gv /= fresh
                gr /= fresh
            else:  # no fresh part: any valid mix stands in (weight 0), as in _solid
                kv += s_rock * q[1, nr]
                kr += s_rock * q[2, nr]
                gv += s_rock * q[3, nr]
                gr += s_rock * q[4, nr]
            k_s, g_s = _hs_upper(0.5 * (kv + 1.0 / kr), 0.5 * (gv + 1.0 / gr),
                                 0.5 * (q[1, nr] + 1.0 / q[2, nr]),
                                 0.5 * (q[3, nr] + 1.0 / q[4, nr]), s_rock)
        else:
            k_s = 0.5 * (kv + 1.0 / kr)
            g_s = 0.5 * (gv + 1.0 / gr)
        # --- melt films, then empty pores in the melt-bearing solid, saturated by Gassmann
        k = k_s
        g = g_s
        rho = rho_s
        if phi > 0.0 or melt > 0.0:
            p_pore = sc[7, e]
            rho_w = 1.0
            k_w = 1.0
            rho_l = 1.0
            k_l = 1.0
            if phi > 0.0:
                rho_w, k_w = _brine(t_c, p_pore, par[_FP_SALINITY])
            if melt > 0.0:
                rho_l, k_l = _melt(t_c, p)
            phi_i = phi
            ar_i = ar
            if par[_FP_CLOSURE] != 0.0:
                phi_i, ar_i = _close(phi, ar, p - p_pore, k_s, g_s)
            k_h = k_s
            g_h = g_s
            if melt > 0.0:
                fm = melt / max(1.0 - phi_i, 1e-12)
                k_h, g_h = _dem_single(k_h, g_h, k_l, sc[5, e], fm, inc, dem_par)
            k = k_h
            g = g_h
            if phi_i > 0.0:
                ok, k_d, g = _dry_dem(k_h, g_h, ar_i, -math.log1p(-phi_i), dry[0], dry[1],
                                      dry[2], dry[3])
                if not ok:
                    k_d, g = _dem_single(k_h, g_h, 0.0, ar_i, phi_i, inc, dem_par)
                k = _gassmann_k(k_d, k_h, k_w, phi_i)
            rho = (1.0 - phi_i - melt) * rho_s + phi_i * rho_w + melt * rho_l
        vp = math.sqrt((k + 4.0 / 3.0 * g) / rho)
        vs = math.sqrt(g / rho)
        if par[_FP_ANELASTIC] != 0.0:
            q_s = min(_j02_q_inv(t_k, p, par[_FP_FREQ], par[_FP_GRAIN]), par[_FP_QMAX])
            ratio2 = vs * vs / (vp * vp) if vp > 0.0 else 0.0
            fp, fs = _band_factors(q_s, par[_FP_HALF_COT], ratio2)
            vp = vp * fp
            vs = vs * fs
        out[0, e] = vp
        out[1, e] = vs
        out[2, e] = rho
    return out


# id(model) -> (recipes, packed columns, table, grid); an entry leaves with its model
_RECIPES: dict[int, tuple] = {}
# (recipes, packed columns) as bytes -> table: models of the same rocks and minerals (every
# LayerModel.build makes its own ForwardModel) share one table, built in ~0.05 s
_TABLES: dict[bytes, np.ndarray] = {}
_TABLES_MAX = 32


def _recipes(model, tabulate=True):
    hit = _RECIPES.get(id(model))
    if hit is None:
        recipes = np.vstack([model._modes, model._serp_modes])
        cols = _packed_columns(model._table)
        grid = np.array([_TAB_T_K[0], (_TAB_T_K[1] - _TAB_T_K[0]) / (_TAB_T_N - 1), _TAB_T_N,
                         _TAB_P_GPA[0], (_TAB_P_GPA[1] - _TAB_P_GPA[0]) / (_TAB_P_N - 1),
                         _TAB_P_N])
        key = recipes.tobytes() + b"|" + cols.tobytes() + b"|" + bytes(str(recipes.shape), "ascii")
        table = _TABLES.get(key)
        if table is None:
            if len(_TABLES) >= _TABLES_MAX:
                _TABLES.pop(next(iter(_TABLES)))  # the oldest
            table = _TABLES[key] = _recipe_table(recipes, cols, grid)
        hit = _RECIPES[id(model)] = (recipes, cols, table, grid)
        weakref.finalize(model, _RECIPES.pop, id(model), None)
    if not tabulate:  # a grid no element is inside: the exact formulas everywhere
        return hit[0], hit[1], hit[2][:1, :1], np.array([0.0, 1.0, 0.0, 0.0, 1.0, 0.0])
    return hit


#: Stand-in for the dry-pore DEM tables that covers no element (``tabulate=False``).
_NO_DRY = (np.zeros((1, 1, 2)), np.zeros((1, 1, 2)), np.zeros((4, 1)), np.zeros(11))


def forward(model, f, sc, tabulate=True):
    """Vp, Vs, density of flat rows by :func:`_forward_loop` for a ``ForwardModel`` with
    settings ``model._fused``; ``f`` (n, r), ``sc`` (8, n) as there. The recipe table is built
    on a model's first call (~0.1 s), the dry-pore DEM tables of :mod:`.dem_flow` on the first
    call of the process (~0.2 s); ``tabulate=False`` evaluates the mineral formulas and
    integrates the DEM for every element instead (the comparison in the tests), and so does
    ``dem_flow.use_tables(False)`` for the DEM alone."""
    from .dem_flow import build, tables_on

    recipes, cols, tab, grid = _recipes(model, tabulate)
    dry = build() if tabulate and tables_on() else _NO_DRY
    return _forward_loop(f, sc, recipes, model._ultramafic, cols, model._fused, tab, grid,
                         dry)


def _drop_stale_cache(kernels=(_dem_loop, _mineral_state_loop, _dem_rate1,
                                      _forward_loop)) -> None:
    """Delete numba's cached machine code of this module when a shared physics function changed.

    numba's on-disk cache is keyed on this file only: an edit of a :func:`~._jit.jitable`
    function in another module (e.g. :func:`spheroids._pq`) would otherwise leave the old
    physics compiled in, and so would an edit of a data table whose numbers are module-level
    constants of those functions (e.g. the Batzle & Wang coefficients). A hash of the source of
    every module holding a jitable function and of ``data/*.toml`` is kept beside the cache; a
    different hash empties this module's entries (they recompile on first use).
    """
    import glob
    import hashlib
    import inspect
    import os

    # the whole modules (their module-level constants are frozen into compiled code) and the
    # data tables those constants are read from
    import sys

    mods = sorted({f.__module__ for f in JITABLE} | {__name__})
    src = "".join(inspect.getsource(sys.modules[m]) for m in mods)
    data = os.path.join(os.path.dirname(__file__), "data")
    for name in sorted(glob.glob(os.path.join(data, "*.toml"))):
        with open(name, encoding="utf-8") as fh:
            src += fh.read()
    stamp = hashlib.sha256(src.encode()).hexdigest()
    path = getattr(getattr(kernels[0], "_cache", None), "_cache_path", None)
    if not path:
        return
    stamp_file = os.path.join(path, "_accel.deps")
    try:
        with open(stamp_file) as fh:
            if fh.read() == stamp:
                return
    except OSError:
        pass
    try:
        for f in glob.glob(os.path.join(path, "_accel.*.nb[ic]")):
            os.remove(f)
        os.makedirs(path, exist_ok=True)
        with open(stamp_file, "w") as fh:
            fh.write(stamp)
    except OSError:  # pragma: no cover - a read-only cache: numba compiles in memory
        pass


_drop_stale_cache()
