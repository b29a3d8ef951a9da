"""Elastic moduli of a solid containing spheroidal inclusions (pores, cracks, melt films).

The three schemes share one signature,

``scheme(k_m, g_m, k_i, g_i, aspect_i, frac_i) -> (k, g)``

with the matrix moduli ``k_m, g_m`` shaped ``batch`` and the inclusion phases stacked on the
**last** axis of ``k_i, g_i, aspect_i, frac_i`` (shape ``batch + (m,)``, e.g. seawater pores and
melt films together). ``frac_i`` are volume fractions of the whole rock; the matrix occupies
``1 - sum(frac_i)``. Moduli in GPa; ``aspect_i`` is the ratio of the short to the long semi-axis
(< 1 oblate, 1 sphere, > 1 prolate).

Public functions validate their input; the private kernels in :data:`_INCLUSION_KERNELS` skip the
checks and are what the forward model calls.

References
----------
.. [1] Wu, T. T. (1966). The effect of inclusion shape on the elastic moduli of a two-phase
   material. *Int. J. Solids Struct.*, 2, 1-8.
.. [2] Kuster, G. T., & Toksöz, M. N. (1974). Velocity and attenuation of seismic waves in
   two-phase media: Part I. Theoretical formulations. *Geophysics*, 39, 587-606.
.. [3] Berryman, J. G. (1980). Long-wavelength propagation in composite elastic media II.
   Ellipsoidal inclusions. *J. Acoust. Soc. Am.*, 68, 1820-1831.
.. [4] Norris, A. N. (1985). A differential scheme for the effective moduli of composites.
   *Mech. Mater.*, 4, 1-16.
.. [5] Berryman, J. G., Pride, S. R., & Wang, H. F. (2002). A differential scheme for elastic
   properties of rocks with dry or saturated cracks. *Geophys. J. Int.*, 151, 597-611.
.. [6] Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook* (2nd ed.),
   sections 4.7-4.11. Cambridge University Press.
"""

from __future__ import annotations

import math
import warnings

import numpy as np

from . import _jit
from ._checks import check_range
from .spheroids import ASPECT_RANGE, _geometry, _pq, _pq_host, spheroid_pq

__all__ = [
    "spheroid_pq",
    "kuster_toksoz",
    "self_consistent",
    "dem",
    "INCLUSION_SCHEMES",
]

#: Kuster-Toksöz is rejected beyond this "crack porosity" sum(frac_i / aspect_i) (dilute limit).
KT_MAX_POROSITY_OVER_ASPECT = 1.0
#: Fixed-step RK4 steps of the DEM integration in t = -ln(1 - y) (accuracy measured in the tests).
DEM_STEPS = 12
#: Adaptive DEM (the default): largest log-modulus change per RK4 step, and the step cap
#: (relative error < 1e-4 of the converged reference for fluid-filled and dry inclusions,
#: porosity <= 0.5, aspect 1e-3..1: measured in tests/physics/test_inclusions.py).
DEM_LOG_CHANGE_PER_STEP = 0.45
DEM_MAX_STEPS = 128
#: Step-count multiplier for elements whose inclusions have a shear modulus (solid phases).
DEM_SOLID_INCLUSION_FACTOR = 5.0
#: Columns of the batch per block of the RK4 loop (cache-sized temporaries).
DEM_BLOCK = 2048
#: Fixed number of self-consistent fixed-point iterations.
SC_ITERATIONS = 60
#: Relative change of the last self-consistent iteration above which a warning is issued.
SC_TOLERANCE = 1e-6
#: Floor (relative to the matrix modulus) for a background shear modulus that has vanished.
_TINY = 1e-12

# --------------------------------------------------------------------------------------------
# kernels
# --------------------------------------------------------------------------------------------
def _kt_from_pq(k_m, g_m, k_i, g_i, p, q, frac_i):
    """Solve the Kuster-Toksoz equations for given factors P, Q (inclusion phases last)."""
    k_m = np.asarray(k_m, dtype=float)
    g_m = np.asarray(g_m, dtype=float)
    zk = 4.0 / 3.0 * g_m
    zg = g_m / 6.0 * (9.0 * k_m + 8.0 * g_m) / (k_m + 2.0 * g_m)
    a = np.sum(frac_i * (k_i - k_m[..., None]) * p, axis=-1) / (k_m + zk)
    b = np.sum(frac_i * (g_i - g_m[..., None]) * q, axis=-1) / (g_m + zg)
    return (k_m + a * zk) / (1.0 - a), (g_m + b * zg) / (1.0 - b)


def _kuster_toksoz(k_m, g_m, k_i, g_i, aspect_i, frac_i):
    p, q = _pq_host(k_m, g_m, k_i, g_i, _geometry(aspect_i))
    return _kt_from_pq(k_m, g_m, k_i, g_i, p, q, frac_i)


def _sc_iterate(k_m, g_m, k_i, g_i, aspect_i, frac_i, n_iter):
    """Fixed-point iteration of the self-consistent equations; also returns the last change.

    Kernel of :func:`self_consistent`, no checks. Solves the self-consistent (coherent
    potential) equations of Berryman (1980), J. Acoust. Soc. Am. 68, 1820-1831, eqs. (26)-(27)
    (Mavko, Mukerji & Dvorkin 2009, eq. 4.11.1), sum_j x_j (M_j - M*) P*j = 0 for K and the
    same with Q for G, the matrix being one more phase of spherical grains. Starting from the
    Voigt average it applies K <- sum x_j K_j P*j / sum x_j P*j (likewise G with Q) ``n_iter``
    times with P, Q from :func:`_pq` in the current estimate; G is floored at 1e-12 ``g_m``.
    """
    k_m = np.asarray(k_m, dtype=float)
    g_m = np.asarray(g_m, dtype=float)
    shape = np.broadcast_shapes(k_m.shape + (1,), g_m.shape + (1,), np.shape(k_i),
                                np.shape(g_i), np.shape(aspect_i), np.shape(frac_i))
    batch = shape[:-1]
    # phases on the FIRST axis (contiguous inner loops); the matrix is phase 0 (spherical grains)
    def lead(x):
        return np.moveaxis(np.broadcast_to(x, shape), -1, 0)

    frac = lead(frac_i)
    xx = np.concatenate([(1.0 - frac.sum(axis=0))[None], frac])
    kk = np.concatenate([np.broadcast_to(k_m, batch)[None], lead(k_i)])
    gg = np.concatenate([np.broadcast_to(g_m, batch)[None], lead(g_i)])
    geo = _geometry(np.concatenate([np.ones((1,) + batch), lead(aspect_i)]))
    g_floor = _TINY * g_m
    xk = xx * kk
    xg = xx * gg
    # start from the Voigt average (an upper estimate)
    k = xk.sum(axis=0)
    g = xg.sum(axis=0)
    change = np.zeros(batch)
    for _ in range(n_iter):
        p, q = _pq(kk / k, gg / g, 3.0 * g / (3.0 * k + 4.0 * g), geo)
        k_new = np.einsum("i...,i...->...", xk, p) / np.einsum("i...,i...->...", xx, p)
        g_new = np.maximum(
            np.einsum("i...,i...->...", xg, q) / np.einsum("i...,i...->...", xx, q), g_floor
        )
        # change relative to the modulus, with a floor of 1e-3 of the matrix modulus so that a
        # modulus that is vanishing (above the percolation threshold) does not count as moving
        change = np.maximum(np.abs(k_new - k) / (k_new + 1e-3 * k_m),
                            np.abs(g_new - g) / (g_new + 1e-3 * g_m))
        k, g = k_new, g_new
    return k, g, change


def _self_consistent(k_m, g_m, k_i, g_i, aspect_i, frac_i, n_iter=SC_ITERATIONS):
    k, g, _ = _sc_iterate(k_m, g_m, k_i, g_i, aspect_i, frac_i, n_iter)
    return k, g


def _dem_rate(lk, lg, lk_lim, lg_lim, k_i, g_i, w, geo):
    """d ln K*/dt and d ln G*/dt of the DEM equations (see :func:`_dem`), inclusion axis first.

    ``lk_lim``, ``lg_lim`` are (floor, ceiling) pairs of the log-moduli: the floor is 1e-12 of
    the matrix modulus, the ceiling twice the stiffest phase (outside the bounds a converged
    solution can reach; it only keeps trial stages of a step finite).
    """
    k = np.exp(np.clip(lk, *lk_lim))
    g = np.exp(np.clip(lg, *lg_lim))
    rk = k_i / k
    rg = g_i / g
    p, q = _pq(rk, rg, 3.0 * g / (3.0 * k + 4.0 * g), geo)
    rk -= 1.0
    rg -= 1.0
    rk *= w
    rg *= w
    return np.einsum("i...,i...->...", rk, p), np.einsum("i...,i...->...", rg, q)


def _rk4_step(x_k, x_g, first, h, lk_lim, lg_lim, k_i, g_i, w, geo):
    """One classical RK4 step of the DEM equations, in place on the log-moduli ``x_k, x_g``.

    ``first`` holds the rates at the start of the step when they are already known.
    """
    if first is None:
        a_k, a_g = _dem_rate(x_k, x_g, lk_lim, lg_lim, k_i, g_i, w, geo)
    else:
        a_k, a_g = first[0].copy(), first[1].copy()
    h2 = 0.5 * h
    b_k, b_g = _dem_rate(x_k + h2 * a_k, x_g + h2 * a_g, lk_lim, lg_lim, k_i, g_i, w, geo)
    c_k, c_g = _dem_rate(x_k + h2 * b_k, x_g + h2 * b_g, lk_lim, lg_lim, k_i, g_i, w, geo)
    d_k, d_g = _dem_rate(x_k + h * c_k, x_g + h * c_g, lk_lim, lg_lim, k_i, g_i, w, geo)
    b_k += c_k
    b_g += c_g
    a_k += d_k
    a_g += d_g
    a_k += 2.0 * b_k
    a_g += 2.0 * b_g
    h6 = h / 6.0
    a_k *= h6
    a_g *= h6
    x_k += a_k
    x_g += a_g
    np.maximum(x_k, lk_lim[0], out=x_k)
    np.maximum(x_g, lg_lim[0], out=x_g)


def _dem_one(km, gm, k_i, g_i, w, t_end, geo, n_steps):
    """:func:`_dem` for a single element, in Python floats (a batch-1 call is dominated by the
    ~70 numpy calls of one vectorised rate evaluation, ~1 us each; here one costs a few us).

    The same equations, step rule, limits and the same :func:`_pq` (which takes Python floats
    as well as arrays); equal to the vectorised path to rounding (tested).
    """
    phases = [(float(k_i[j]), float(g_i[j]), float(w[j]), tuple(float(c[j]) for c in geo))
              for j in range(k_i.shape[0]) if w[j] > 0.0]
    lk_lo, lg_lo = math.log(_TINY * km), math.log(_TINY * gm)
    lk_hi = math.log(2.0 * max(km, float(k_i.max())))
    lg_hi = math.log(2.0 * max(gm, float(g_i.max())))

    def rate(lk, lg):
        k = math.exp(min(max(lk, lk_lo), lk_hi))
        g = math.exp(min(max(lg, lg_lo), lg_hi))
        r = 3.0 * g / (3.0 * k + 4.0 * g)
        dk = dg = 0.0
        for ki, gi, wi, ge in phases:
            rk, rg = ki / k, gi / g
            p, q = _pq(rk, rg, r, ge)
            dk += wi * (rk - 1.0) * p
            dg += wi * (rg - 1.0) * q
        return dk, dg

    lk, lg = math.log(km), math.log(gm)
    if not phases or t_end <= 0.0:
        return km, gm
    a_k, a_g = rate(lk, lg)
    if n_steps is None:
        stiff = t_end * max(abs(a_k), abs(a_g))
        if any(p[1] > 0.0 for p in phases):
            stiff *= DEM_SOLID_INCLUSION_FACTOR
        n = int(min(max(math.ceil(stiff / DEM_LOG_CHANGE_PER_STEP), 1), DEM_MAX_STEPS))
    else:
        n = int(n_steps)
    h = t_end / n
    for step in range(n):
        if step:
            a_k, a_g = rate(lk, lg)
        b_k, b_g = rate(lk + 0.5 * h * a_k, lg + 0.5 * h * a_g)
        c_k, c_g = rate(lk + 0.5 * h * b_k, lg + 0.5 * h * b_g)
        d_k, d_g = rate(lk + h * c_k, lg + h * c_g)
        lk = max(lk + h / 6.0 * (a_k + 2.0 * (b_k + c_k) + d_k), lk_lo)
        lg = max(lg + h / 6.0 * (a_g + 2.0 * (b_g + c_g) + d_g), lg_lo)
    return math.exp(lk), math.exp(lg)


def _dem_layout(k_m, g_m, k_i, g_i, aspect_i, frac_i):
    """Broadcast DEM inputs and lay them out with the inclusion axis FIRST and the batch
    flattened: host quantities (shape n) broadcast along the leading axis, and a leading slice
    ``[:, :a]`` of the batch stays cheap to take. Returns ``(batch_shape, k_m, g_m, k_i, g_i,
    frac_i, aspect_i)``, the host moduli (n,) and the inclusion arrays (m, n)."""
    k_m = np.asarray(k_m, dtype=float)
    g_m = np.asarray(g_m, dtype=float)
    incl = (k_i, g_i, frac_i, aspect_i)
    if (k_m.ndim == 1 and g_m.shape == k_m.shape
            and all(isinstance(x, np.ndarray) and x.shape == k_i.shape for x in incl)
            and k_i.ndim == 2 and k_i.shape[0] == k_m.size):
        # the forward model's layout, host (n,) and inclusions (n, m): transposed copies only
        return (k_m.shape, k_m, g_m, *(np.ascontiguousarray(x.T, dtype=float) for x in incl))
    shape = np.broadcast_shapes(k_m.shape + (1,), g_m.shape + (1,), np.shape(k_i),
                                np.shape(g_i), np.shape(aspect_i), np.shape(frac_i))
    batch, m = shape[:-1], shape[-1]

    def lead(x):
        return np.moveaxis(np.broadcast_to(x, shape), -1, 0).reshape(m, -1).astype(float)

    return (batch, np.broadcast_to(k_m, batch).ravel(), np.broadcast_to(g_m, batch).ravel(),
            lead(k_i), lead(g_i), lead(frac_i), lead(aspect_i))


def _dem(k_m, g_m, k_i, g_i, aspect_i, frac_i, n_steps=None):
    """Differential effective medium moduli; kernel of :func:`dem`, no checks.

    Integrates the DEM equations of Norris (1985), Mech. Mater. 4, 1-16, and Berryman, Pride &
    Wang (2002), Geophys. J. Int. 151, 597-611, eq. (3) (Mavko, Mukerji & Dvorkin 2009,
    eq. 4.9.1), all inclusion phases added together in fixed proportions, as
    d ln K*/dt = sum_i w_i (K_i/K* - 1) P*i and likewise for G with Q, in t = -ln(1 - y).
    Classical RK4. With ``n_steps=None`` each element takes its own number of equal steps,
    n = ceil(L / DEM_LOG_CHANGE_PER_STEP) (at most DEM_MAX_STEPS), L being the log-change of one
    Euler step over the whole range (the rule described in :func:`dem`); an integer ``n_steps``
    forces that number of steps for every element. The elements are sorted by step count, so
    that the ones still stepping are a leading slice of the arrays: the work is the sum of the
    elements' step counts, not the batch size times the largest count. Converged reference:
    :func:`_dem_reference`.
    """
    batch, km, gm, k_i, g_i, frac_i, aspect = _dem_layout(k_m, g_m, k_i, g_i, aspect_i, frac_i)
    geo = np.stack(_geometry(aspect))
    n = km.size
    if n == 0:
        return np.empty(batch), np.empty(batch)
    phi = frac_i.sum(axis=0)
    # inclusion mix added in fixed proportion w_i; integrate in t = -ln(1 - y), t in [0, T]
    w = frac_i / np.maximum(phi, np.finfo(float).tiny)
    t_end = -np.log1p(-phi)
    if _jit.enabled():  # the compiled per-element loop (same equations; tested to rounding)
        from . import _accel

        k, g = _accel.dem(km, gm, k_i, g_i, w, t_end, geo, n_steps, DEM_LOG_CHANGE_PER_STEP,
                          DEM_MAX_STEPS, DEM_SOLID_INCLUSION_FACTOR, _TINY)
        return k.reshape(batch), g.reshape(batch)
    if n == 1:
        k, g = _dem_one(float(km[0]), float(gm[0]), k_i[:, 0], g_i[:, 0], w[:, 0],
                        float(t_end[0]), geo[:, :, 0], n_steps)
        return np.full(batch, k), np.full(batch, g)
    # log-modulus limits: floor 1e-12 of the matrix modulus (dry thin cracks far beyond
    # phi/alpha ~ 1 drive both moduli towards 0: there the result means "zero"), ceiling twice
    # the stiffest phase
    lk_lim = np.stack([np.log(_TINY * km), np.log(2.0 * np.maximum(km, k_i.max(axis=0)))])
    lg_lim = np.stack([np.log(_TINY * gm), np.log(2.0 * np.maximum(gm, g_i.max(axis=0)))])
    lk = np.log(km)
    lg = np.log(gm)
    a_k, a_g = _dem_rate(lk, lg, lk_lim, lg_lim, k_i, g_i, w, geo)
    if n_steps is None:
        # per-element step count from the element's own stiffness: L = T max|d ln M/dt| at
        # t = 0 is the log-change a single Euler step would make (accuracy against the
        # converged reference measured in the tests)
        stiff = t_end * np.maximum(np.abs(a_k), np.abs(a_g))
        # inclusions with shear strength make the path more curved for the same log-change
        # (measured in the tests): they take steps of a fifth of the size
        solid = np.any((g_i > 0.0) & (w > 0.0), axis=0)
        stiff[solid] *= DEM_SOLID_INCLUSION_FACTOR
        n_el = np.clip(np.ceil(stiff / DEM_LOG_CHANGE_PER_STEP), 1, DEM_MAX_STEPS)
        n_el[phi <= 0.0] = 0  # nothing to add: the matrix itself
    else:
        n_el = np.full(n, float(n_steps))
    h = t_end / np.maximum(n_el, 1.0)
    order = None
    if n > 1 and np.any(n_el != n_el[0]):
        order = np.argsort(-n_el, kind="stable")
        k_i, g_i, w, geo = k_i[:, order], g_i[:, order], w[:, order], geo[:, :, order]
        lk_lim, lg_lim = lk_lim[:, order], lg_lim[:, order]
        lk, lg, h, a_k, a_g, n_el = (x[order] for x in (lk, lg, h, a_k, a_g, n_el))
    n_loop = int(n_el[0]) if order is not None else int(n_el.max())
    # number of elements still stepping at each step (n_el sorted in descending order)
    active = np.searchsorted(-n_el, -np.arange(n_loop), side="left") if order is not None \
        else np.full(n_loop, n)
    for step in range(n_loop):
        na = int(active[step])
        # the active prefix in cache-sized column blocks (elements are independent)
        for j0 in range(0, na, DEM_BLOCK):
            sl = slice(j0, min(j0 + DEM_BLOCK, na))
            _rk4_step(lk[sl], lg[sl], (a_k[sl], a_g[sl]) if step == 0 else None, h[sl],
                      lk_lim[:, sl], lg_lim[:, sl], k_i[:, sl], g_i[:, sl], w[:, sl],
                      tuple(geo[:, :, sl]))
    if order is not None:
        lk[order] = lk.copy()
        lg[order] = lg.copy()
    return np.exp(lk).reshape(batch), np.exp(lg).reshape(batch)

def _dem_reference(k_m, g_m, k_i, g_i, aspect_i, frac_i, rtol=1e-12, floor=_TINY):
    """Converged DEM integration: the definition the fast kernel :func:`_dem` is tested against.

    The same equations, variables and floors as :func:`_dem` (Norris 1985; Berryman, Pride &
    Wang 2002, eq. 3): d ln K*/dt = sum_i w_i (K_i/K* - 1) P*i, d ln G*/dt likewise with Q, in
    t = -ln(1 - y), with K*, G* floored at 1e-12 of the matrix moduli. Each element's interval is
    mapped to tau in [0, 1] and the whole batch is one system for scipy's ``solve_ivp`` with the
    8th-order Dormand-Prince method (DOP853) at relative tolerance ``rtol`` and absolute
    tolerance ``rtol`` on the log-moduli. Slow; for tests and benchmarks, not the forward model.
    ``floor=0`` integrates the theory without the floor (empty inclusions only, whose rates
    stay finite for any moduli that do not underflow, ln K*/K0 > -700).
    """
    from scipy.integrate import solve_ivp

    batch, km, gm, k_i, g_i, frac_i, aspect = _dem_layout(k_m, g_m, k_i, g_i, aspect_i, frac_i)
    geo = _geometry(aspect)
    n = km.size
    phi = frac_i.sum(axis=0)
    w = frac_i / np.maximum(phi, np.finfo(float).tiny)
    t_end = -np.log1p(-phi)
    with np.errstate(divide="ignore"):  # floor 0: log 0 = -inf, no floor
        lk_min, lg_min = np.log(floor * km), np.log(floor * gm)

    def rhs(_tau, y):
        lk, lg = y[:n], y[n:]
        k = np.exp(np.maximum(lk, lk_min))
        g = np.exp(np.maximum(lg, lg_min))
        rk, rg = k_i / k, g_i / g
        p, q = _pq(rk, rg, 3.0 * g / (3.0 * k + 4.0 * g), geo)
        return np.concatenate([t_end * np.sum(w * (rk - 1.0) * p, axis=0),
                               t_end * np.sum(w * (rg - 1.0) * q, axis=0)])

    sol = solve_ivp(rhs, (0.0, 1.0), np.concatenate([np.log(km), np.log(gm)]), method="DOP853",
                    rtol=rtol, atol=rtol, t_eval=[1.0])
    if not sol.success:  # pragma: no cover - the reference must converge
        raise RuntimeError(f"DEM reference integration failed: {sol.message}")
    y = sol.y[:, -1]
    k = np.exp(np.maximum(y[:n], lk_min)).reshape(batch)
    g = np.exp(np.maximum(y[n:], lg_min)).reshape(batch)
    return k, g


# --------------------------------------------------------------------------------------------
# public schemes
# --------------------------------------------------------------------------------------------
def _check_scheme_input(k_m, g_m, k_i, g_i, aspect_i, frac_i):
    k_m = check_range("k_m", k_m, 0.0, np.inf, lo_open=True, unit="GPa")
    g_m = check_range("g_m", g_m, 0.0, np.inf, lo_open=True, unit="GPa")
    k_i = check_range("k_i", k_i, 0.0, np.inf, unit="GPa")
    g_i = check_range("g_i", g_i, 0.0, np.inf, unit="GPa")
    aspect_i = check_range("aspect_i", aspect_i, *ASPECT_RANGE)
    frac_i = check_range("frac_i", frac_i, 0.0, 1.0)
    if frac_i.ndim == 0:
        raise ValueError("frac_i must have an inclusion-phase axis (last axis); got a scalar")
    try:
        shape = np.broadcast_shapes(k_m.shape + (1,), g_m.shape + (1,), k_i.shape, g_i.shape,
                                    aspect_i.shape, frac_i.shape)
    except ValueError as exc:
        raise ValueError(
            "k_m, g_m (shape batch) and k_i, g_i, aspect_i, frac_i (shape batch + (m,)) do not "
            f"broadcast: {k_m.shape}, {g_m.shape}, {k_i.shape}, {g_i.shape}, {aspect_i.shape}, "
            f"{frac_i.shape}"
        ) from exc
    total = frac_i.sum(axis=-1)
    if np.any(total >= 1.0):
        bad = np.asarray(total)[np.asarray(total) >= 1.0].ravel()[0]
        raise ValueError(f"sum(frac_i) (total inclusion fraction) must be in [0, 1); got {bad:g}")
    return (np.broadcast_to(k_m, shape[:-1]), np.broadcast_to(g_m, shape[:-1]),
            k_i, g_i, aspect_i, frac_i)


_SCHEME_PARAMS = """
    Parameters
    ----------
    k_m, g_m : array_like, shape ``batch``
        Bulk and shear moduli of the solid matrix, GPa (> 0).
    k_i, g_i : array_like, shape ``batch + (m,)``
        Moduli of the ``m`` inclusion phases (last axis), GPa (>= 0; fluids ``g_i = 0``).
    aspect_i : array_like, shape ``batch + (m,)``
        Aspect ratio of each inclusion phase, in [1e-4, 1e4].
    frac_i : array_like, shape ``batch + (m,)``
        Volume fraction of each inclusion phase in the whole rock; ``sum(frac_i) < 1``.

    Returns
    -------
    k, g : numpy.ndarray, shape ``batch``
        Effective bulk and shear moduli, GPa.
"""


def kt_crack_sum(porosity, aspect_ratio, melt_fraction, melt_aspect_ratio):
    """``porosity / aspect_ratio + melt_fraction / melt_aspect_ratio``: the sum of
    ``frac_i / aspect_i`` that Kuster-Toksoz keeps at or below ``KT_MAX_POROSITY_OVER_ASPECT``."""
    return porosity / aspect_ratio + melt_fraction / melt_aspect_ratio


def kuster_toksoz(k_m, g_m, k_i, g_i, aspect_i, frac_i):
    """Kuster-Toksöz (1974) dilute estimate for spheroidal inclusions in a solid matrix.
    {params}
    Raises
    ------
    ValueError
        On invalid input; if ``sum(frac_i / aspect_i)`` exceeds
        ``KT_MAX_POROSITY_OVER_ASPECT`` (= 1), i.e. far beyond the dilute limit for cracks; or
        if the result is non-physical (a modulus < 0 or infinite).

    Notes
    -----
    Berryman's (1980) [2]_ form of Kuster & Toksöz (1974) [1]_ eqs. (15)-(16), with
    :math:`\\zeta_m = (G_m/6)(9K_m + 8G_m)/(K_m + 2G_m)` (Mavko et al. 2009 [3]_, eqs. 4.7.1-4.7.2):

    .. math::

        (K - K_m)\\frac{K_m + \\tfrac43 G_m}{K + \\tfrac43 G_m}
            = \\sum_i x_i (K_i - K_m) P^{mi},\\qquad
        (G - G_m)\\frac{G_m + \\zeta_m}{G + \\zeta_m} = \\sum_i x_i (G_i - G_m) Q^{mi},

    solved explicitly for K and G, with P, Q from :func:`spheroid_pq` in the matrix. The
    inclusions do not interact, so the scheme is valid only while ``x_i / alpha_i`` is small;
    for spheres it equals the Hashin-Shtrikman bound with the matrix as the host (Berryman 1995).

    References
    ----------
    .. [1] Kuster, G. T., & Toksöz, M. N. (1974). *Geophysics*, 39, 587-606.
    .. [2] Berryman, J. G. (1980). *J. Acoust. Soc. Am.*, 68, 1820-1831.
    .. [3] Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook*, §4.7.

    Examples
    --------
    >>> k, g = kuster_toksoz(36.0, 45.0, [2.2], [0.0], [1.0], [0.2])
    >>> round(float(k), 3), round(float(g), 3)
    (26.589, 29.483)
    """
    args = _check_scheme_input(k_m, g_m, k_i, g_i, aspect_i, frac_i)
    crack = np.sum(args[5] / args[4], axis=-1)
    if np.any(crack > KT_MAX_POROSITY_OVER_ASPECT):
        bad = crack[crack > KT_MAX_POROSITY_OVER_ASPECT].ravel()[0] if crack.ndim else crack
        raise ValueError(
            "Kuster-Toksoz is a dilute theory: sum(frac_i / aspect_i) must be <= "
            f"{KT_MAX_POROSITY_OVER_ASPECT:g}; got {float(bad):g} (use dem or self_consistent)"
        )
    k, g = _kuster_toksoz(*args)
    bad = ~(np.isfinite(k) & np.isfinite(g) & (k >= 0.0) & (g >= 0.0))
    if np.any(bad):
        raise ValueError(
            "Kuster-Toksoz gives a non-physical result (negative or infinite modulus: "
            f"K = {np.asarray(k)[bad].ravel()[0]:g}, G = {np.asarray(g)[bad].ravel()[0]:g} GPa); "
            "the inclusion concentration is beyond the dilute limit"
        )
    return k, g


def self_consistent(k_m, g_m, k_i, g_i, aspect_i, frac_i):
    """Berryman (1980) self-consistent (coherent potential) estimate.
    {params}
    Raises
    ------
    ValueError
        On invalid input.

    Warns
    -----
    RuntimeWarning
        If the fixed-point iteration has not converged to a relative change below
        ``SC_TOLERANCE`` after ``SC_ITERATIONS`` iterations (close to the percolation threshold,
        where the iteration slows down).

    Notes
    -----
    Berryman (1980) [1]_ eqs. (26)-(27) (Mavko et al. 2009 [2]_, eq. 4.11.1), with the matrix
    as one more phase (spherical grains, fraction ``1 - sum(frac_i)``) and P, Q evaluated in the
    unknown effective medium:

    .. math:: \\sum_j x_j (K_j - K_{SC}) P^{*j} = 0,\\qquad \\sum_j x_j (G_j - G_{SC}) Q^{*j} = 0.

    Solved by the fixed-point iteration :math:`K \\leftarrow \\sum x_j K_j P^{*j}/\\sum x_j P^{*j}`
    (likewise G) from the Voigt average, a fixed number of times, vectorised over the batch.
    Above the percolation porosity of the inclusions the shear modulus tends to 0; it is floored
    at ``1e-12 g_m``.

    References
    ----------
    .. [1] Berryman, J. G. (1980). *J. Acoust. Soc. Am.*, 68, 1820-1831.
    .. [2] Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook*, §4.11.

    Examples
    --------
    >>> k, g = self_consistent(80.0, 40.0, [2.3], [0.0], [1.0], [0.05])
    >>> round(float(k), 2), round(float(g), 2)
    (70.84, 36.15)
    """
    args = _check_scheme_input(k_m, g_m, k_i, g_i, aspect_i, frac_i)
    k, g, change = _sc_iterate(*args, n_iter=SC_ITERATIONS)
    if np.any(change > SC_TOLERANCE):
        warnings.warn(
            f"self-consistent iteration did not converge in {SC_ITERATIONS} iterations "
            f"(relative change {float(np.max(change)):.2g}); the inclusion fraction is close to "
            "the percolation threshold of the inclusion shape",
            RuntimeWarning,
            stacklevel=2,
        )
    return k, g


def dem(k_m, g_m, k_i, g_i, aspect_i, frac_i):
    """Differential effective medium (DEM) estimate, all inclusion phases added together.
    {params}
    Notes
    -----
    Norris (1985) [1]_; Berryman et al. (2002) [2]_ eq. (3); Mavko et al. (2009) [3]_ eq. 4.9.1.
    The inclusion phases are added simultaneously in the fixed proportions
    :math:`w_i = x_i/\\phi`, :math:`\\phi = \\sum_i x_i`, to a host that starts as the matrix:

    .. math:: (1-y)\\frac{dK^*}{dy} = \\sum_i w_i (K_i - K^*) P^{*i}(y),\\qquad
              (1-y)\\frac{dG^*}{dy} = \\sum_i w_i (G_i - G^*) Q^{*i}(y),\\qquad 0 \\le y \\le \\phi.

    With :math:`t = -\\ln(1-y)` the factor :math:`1-y` disappears; the equations are integrated
    for :math:`\\ln K^*, \\ln G^*` (which keeps both moduli positive and makes the equations for
    fluid-filled cracks mildly stiff only):
    :math:`d\\ln K^*/dt = \\sum_i w_i (K_i/K^* - 1) P^{*i}`, likewise for G with Q, over
    :math:`t \\in [0, -\\ln(1-\\phi)]` with classical Runge-Kutta steps whose number is
    chosen per element from its stiffness, :math:`n = \\lceil L/0.45 \\rceil` (1 to 128), with
    :math:`L` the log-change of one Euler step over the whole range. Against the converged
    reference integration (``_dem_reference``: scipy DOP853, tolerance 1e-12) the relative error
    is < 1e-4 for fluid-filled and dry inclusions, porosity up to 0.5 and aspect ratio
    :math:`\\ge 10^{-3}`, wherever the modulus is above 1e-10 of the matrix modulus (measured on a
    dense grid in the tests); dilute or round inclusions take one or two steps, crack-rich
    Layer 2 tens. Elements are sorted by step count so that the work is the sum of their own
    step counts. Both moduli are floored at 1e-12 of the matrix modulus; dry thin cracks far
    beyond :math:`\\phi/\\alpha \\sim 1` reach that floor (there the result means "zero", it
    is not accurate).

    References
    ----------
    .. [1] Norris, A. N. (1985). *Mech. Mater.*, 4, 1-16.
    .. [2] Berryman, J. G., Pride, S. R., & Wang, H. F. (2002). *Geophys. J. Int.*, 151, 597-611.
    .. [3] Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook*, §4.9.

    Examples
    --------
    >>> k, g = dem(80.0, 40.0, [2.3], [0.0], [1.0], [0.05])
    >>> round(float(k), 2), round(float(g), 2)
    (71.08, 36.24)
    """
    return _dem(*_check_scheme_input(k_m, g_m, k_i, g_i, aspect_i, frac_i))


for _fn in (kuster_toksoz, self_consistent, dem):
    _fn.__doc__ = _fn.__doc__.replace("{params}", _SCHEME_PARAMS)
del _fn

#: Inclusion schemes by name, ``scheme(k_m, g_m, k_i, g_i, aspect_i, frac_i) -> (k, g)``.
INCLUSION_SCHEMES = {
    "dem": dem,
    "self_consistent": self_consistent,
    "kuster_toksoz": kuster_toksoz,
}

#: The same schemes without input validation, for the forward-model hot path.
_INCLUSION_KERNELS = {
    "dem": _dem,
    "self_consistent": _self_consistent,
    "kuster_toksoz": _kuster_toksoz,
}
