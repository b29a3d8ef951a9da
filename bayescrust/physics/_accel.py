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
from numba.extending import register_jitable

from ._jit import JITABLE
from .inclusions import _pq
from .minerals import _state_formula, _table_columns

# the shared physics functions become callable from compiled code (they stay the same objects)
for _fn in JITABLE:
    register_jitable(_fn)
del _fn

#: LLVM fast-math flags without "no NaN / no inf" (the floors and clips must see inf and NaN
#: as numpy does): reassociation and reciprocals change results at the rounding level only.
_FASTMATH = {"nsz", "arcp", "contract", "afn", "reassoc"}


# Few arguments per compiled call: numba's dispatcher types every argument on every call
# (microseconds each), which is most of a batch-1 call. Inputs are packed into one array each.
_N_GEO = 15  # aspect-only terms of inclusions._geometry
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
    n_fixed = int(par[0])
    log_change, max_steps, solid_factor, tiny = par[1], par[2], par[3], par[4]
    m = inc.shape[1]
    n = host.shape[1]
    out = np.empty((2, n))
    for e in range(n):
        km = host[0, e]
        gm = host[1, e]
        te = host[2, e]
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
        out[0, e] = math.exp(lk)
        out[1, e] = math.exp(lg)
    return out


def dem(km, gm, k_i, g_i, w, t_end, geo, n_steps, log_change, max_steps, solid_factor, tiny):
    """The DEM integration of :func:`inclusions._dem` by the compiled loop over elements.

    ``km, gm, t_end`` shape (n,); ``k_i, g_i, w`` shape (m, n) (inclusion axis first, weights
    w_i = x_i / phi); ``geo`` shape (15, m, n) from :func:`inclusions._geometry`. ``n_steps``
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


def mineral_state(table, temperature_k, pressure_gpa):
    """:func:`minerals._mineral_state` by the compiled loop over (sample, mineral)."""
    hit = _COLUMNS.get(id(table))
    if hit is None or hit[0] is not table:
        hit = _COLUMNS[id(table)] = (table, np.stack(_table_columns(table)))
    t = np.asarray(temperature_k, dtype=float)
    p = np.asarray(pressure_gpa, dtype=float)
    if t.shape == p.shape and t.ndim == 1:
        out = _mineral_state_loop(np.array(t), np.array(p), hit[1])
        return out[0], out[1], out[2]
    batch = np.broadcast_shapes(t.shape, p.shape)

    def flat(x):  # a fresh array: views of np.broadcast_arrays warn when numba types them
        return np.array(np.broadcast_to(x, batch), dtype=float).ravel()

    out = _mineral_state_loop(flat(t), flat(p), hit[1]).reshape((3,) + batch + (-1,))
    return out[0], out[1], out[2]


def _drop_stale_cache(kernels=(_dem_loop, _mineral_state_loop, _dem_rate1)) -> None:
    """Delete numba's cached machine code of this module when a shared physics function changed.

    numba's on-disk cache is keyed on this file only: an edit of a :func:`~._jit.jitable`
    function in another module (e.g. :func:`inclusions._pq`) would otherwise leave the old
    physics compiled in. A hash of their source is kept beside the cache; a different hash
    empties this module's entries (they recompile on first use).
    """
    import glob
    import hashlib
    import inspect
    import os

    src = "".join(inspect.getsource(f) for f in JITABLE)
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
