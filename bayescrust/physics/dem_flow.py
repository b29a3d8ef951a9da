"""The DEM of empty (dry) spheroidal pores as a one-dimensional flow, solved once and tabulated.

The differential effective medium equations (Norris 1985, Mech. Mater. 4, 1-16; Berryman,
Pride & Wang 2002, Geophys. J. Int. 151, 597-611, eq. 3) for one phase of inclusions with
K_i = G_i = 0, in t = -ln(1 - phi), read (see :func:`bayescrust.physics.inclusions._dem`)

    d ln K*/dt = -P(x, alpha),    d ln G*/dt = -Q(x, alpha),    x = ln(G*/K*),

because the polarisation factors P, Q of Berryman (1980) depend on the host only through
R = 3G/(3K + 4G), a function of x, once K_i/K* = G_i/G* = 0. So x obeys the autonomous
equation dx/dt = P - Q, which has one attracting fixed point x*(alpha) (the Poisson's ratio
the porous frame tends to: 0.2 for spheres, about 0.001 for alpha = 1e-3; a host at or
beyond it, Poisson's ratio <= nu*, takes the exact integration), and the moduli
follow by quadrature. Every start x0 of a host lies on one trajectory per alpha, the one
started from X_LO (Poisson's ratio 0.49): with s(x) the time that trajectory takes to reach x
and L(x) = integral of P dt along it,

    ln K*(t) - ln K0 = -[L(x1) - L(x0)],   s(x1) = s(x0) + t,
    ln G*(t) - ln G0 = ln K*(t) - ln K0 + x1 - x0.

This is exact. :func:`build` integrates the trajectory for a grid of aspect ratios with
scipy's DOP853 (the converged-reference method of ``inclusions._dem_reference``) in two
forms: table A gives (sigma, L) against u = ln(x* - x), table B gives (G/K = exp(x), L)
against sigma = lambda t, lambda being the decay rate of x* - x at the fixed point (the
scaling makes the tables alike across aspect ratios; past table B's end the element sits at
the fixed point and L grows linearly). The lookup :func:`_dry_dem` interpolates both tables
with 4-point Lagrange cubics in (ln alpha, u) and (ln alpha, sqrt sigma): about a hundred
operations (~0.2 us compiled), against 4 x 15-128 evaluations of P, Q for the RK4
integration (~1-6 us). While building, P - Q within NEAR_ZONE of x* is its Taylor
polynomial (see :func:`_rate_near`). Elements the tables do not cover (alpha outside
ALPHA_RANGE, a host outside X_LO..x* or within 1.5e-8 of x*) are reported back for the exact
integration. Accuracy against the converged reference: tests/physics/test_dem_flow.py.

The moduli are floored at 1e-12 of the matrix's, as in the RK4 integration, but at the end:
the integration floors them along the path (its rates stay finite), so where K* falls below
its floor (dry cracks with phi/alpha beyond ~60) its G* follows the floored K* rather than the
theory. Both are then below 1e-12 of the matrix in K* and, in G*, far below anything a
velocity can resolve; the tables give the theory's G*.
"""

from __future__ import annotations

import functools
import math

import numpy as np

from ._jit import jitable, switch
from .inclusions import _TINY
from .spheroids import _geometry, _pq

#: Aspect ratios tabulated: oblate pores and cracks (down to the 1e-6 that crack closure can
#: leave, see pores.close_cracks) and spheres.
ALPHA_RANGE = (1e-6, 1.0)
#: Nodes in ln(alpha), uniform.
N_ALPHA = 257
#: Lowest x = ln(G/K) of a host (Poisson's ratio 0.49): G/K = 3(1 - 2 nu) / (2 (1 + nu)).
X_LO = math.log(3.0 * (1.0 - 2.0 * 0.49) / (2.0 * (1.0 + 0.49)))
#: Table A: u = ln(x* - x) from U_MIN up to ln(x* - X_LO), as v = (u - U_MIN)/(u_max - U_MIN)
#: in [0, 1] on N_V uniform nodes. Below U_MIN (x within 1.5e-8 of x*) the exact path is used.
U_MIN = -18.0
N_V = 384
#: Table B: sigma = lambda t on N_S nodes over [0, SIGMA_MAX], uniform in sqrt(sigma) (the
#: path bends most at its start); beyond SIGMA_MAX the element is at the fixed point (within
#: 1.5e-8 in x, checked when built): G/K = exp(x*) and L grows at P*/lambda per unit sigma.
SIGMA_MAX = 28.0
N_S = 512
#: Distance x* - x below which P - Q is taken as its Taylor polynomial while building.
NEAR_ZONE = 1e-4


def _pq_dry(x, geo):
    """P, Q of empty inclusions in a host with ln(G/K) = x (``geo`` from spheroids._geometry)."""
    e = np.exp(x)
    return _pq(0.0, 0.0, 3.0 * e / (3.0 + 4.0 * e), geo)


def _rate_near(eu, xs, lam, curv, geo):
    """P and P - Q at x = x* - eu. Within NEAR_ZONE of the fixed point P - Q is taken as its
    Taylor polynomial lambda eu + curv eu^2 / 2 (error O(eu^3)): there the difference of the
    two large numbers P, Q is rounding noise (for thin cracks P ~ 0.4/alpha and the terms of
    P carry relative rounding ~1e-16/alpha), which stalls the step control of the
    integration."""
    p, q = _pq_dry(xs - eu, geo)
    return p, np.where(eu < NEAR_ZONE, lam * eu + 0.5 * curv * eu * eu, p - q)


def _fixed_point(geo, n):
    """x* (P = Q), lambda = -d(P - Q)/dx and curv = d^2(P - Q)/dx^2 at x*, for each of ``n``
    aspect ratios (central differences, step 1e-5 and 1e-3)."""
    def f(x):
        return np.subtract(*_pq_dry(x, geo))

    lo = np.full(n, X_LO)
    hi = np.full(n, math.log(1.5) - 1e-12)  # G/K -> 1.5 is Poisson's ratio -1
    if np.any(f(lo) <= 0.0) or np.any(f(hi) >= 0.0):
        raise RuntimeError("dry DEM flow: no fixed point inside (X_LO, ln 1.5)")
    for _ in range(200):  # bisection to rounding
        mid = 0.5 * (lo + hi)
        pos = f(mid) > 0.0
        lo = np.where(pos, mid, lo)
        hi = np.where(pos, hi, mid)
    xs = 0.5 * (lo + hi)
    h = 1e-5
    lam = -(f(xs + h) - f(xs - h)) / (2 * h)
    h = 1e-3
    curv = (f(xs + h) - 2.0 * f(xs) + f(xs - h)) / (h * h)
    return xs, lam, curv


@functools.lru_cache(maxsize=1)
def build(n_alpha=N_ALPHA, n_v=N_V, n_s=N_S, rtol=1e-9):
    """The tables of :func:`_dry_dem`: ``(tab_a, tab_b, scal, grid)``.

    ``tab_a`` (n_alpha, n_v, 2): sigma and L at v; ``tab_b`` (n_alpha, n_s, 2): G/K = exp(x)
    and L at sigma; ``scal`` (4, n_alpha): x*, lambda alpha, P*/lambda, u_max; ``grid``: ln
    alpha of the first node and spacing, v spacing, sigma's nodes per sqrt(sigma), the node
    counts, U_MIN, X_LO, the floor (relative to the matrix), SIGMA_MAX. Built with scipy's DOP853 at
    relative and absolute tolerance ``rtol`` (about 0.2 s; cached).
    """
    from scipy.integrate import solve_ivp

    la = np.linspace(math.log(ALPHA_RANGE[0]), math.log(ALPHA_RANGE[1]), n_alpha)
    geo = tuple(_geometry(np.exp(la)))
    xs, lam, curv = _fixed_point(geo, n_alpha)
    p_star = _pq_dry(xs, geo)[0]
    u_max = np.log(xs - X_LO)
    span = u_max - U_MIN

    def rhs_a(v, y):  # d(sigma, L)/dv along the trajectory, x = x* - exp(u(v))
        eu = np.exp(U_MIN + v * span)
        p, d = _rate_near(eu, xs, lam, curv, geo)
        c = -span * eu / d
        return np.concatenate([lam * c, p * c])

    v = np.linspace(0.0, 1.0, n_v)
    sol = solve_ivp(rhs_a, (1.0, 0.0), np.zeros(2 * n_alpha), method="DOP853", rtol=rtol,
                    atol=rtol, t_eval=v[::-1])
    if not sol.success:  # pragma: no cover - the reference integration must converge
        raise RuntimeError(f"dry DEM table A: {sol.message}")
    tab_a = np.stack([sol.y[:n_alpha, ::-1], sol.y[n_alpha:, ::-1]], axis=-1)

    def rhs_b(_s, y):  # d(u, L)/dsigma
        u = y[:n_alpha]
        eu = np.exp(u)
        p, d = _rate_near(eu, xs, lam, curv, geo)
        return np.concatenate([-d / (lam * eu), p / lam])

    s = SIGMA_MAX * np.linspace(0.0, 1.0, n_s) ** 2
    s[-1] = SIGMA_MAX
    sol = solve_ivp(rhs_b, (0.0, SIGMA_MAX), np.concatenate([u_max, np.zeros(n_alpha)]),
                    method="DOP853", rtol=rtol, atol=rtol, t_eval=s)
    if not sol.success:  # pragma: no cover
        raise RuntimeError(f"dry DEM table B: {sol.message}")
    if np.any(sol.y[:n_alpha, -1] > U_MIN):  # the continuation needs the fixed point
        raise RuntimeError("dry DEM table B ends before the fixed point's neighbourhood")
    ratio = np.exp(xs[:, None] - np.exp(sol.y[:n_alpha]))
    tab_b = np.stack([ratio, sol.y[n_alpha:]], axis=-1)
    # lambda ~ 1/alpha for thin cracks: lambda alpha varies slowly and interpolates closely
    scal = np.stack([xs, lam * np.exp(la), p_star / lam, u_max])
    grid = np.array([la[0], la[1] - la[0], v[1] - v[0], (n_s - 1) / math.sqrt(SIGMA_MAX),
                     n_alpha, n_v, n_s, U_MIN, X_LO, _TINY, SIGMA_MAX])
    return tab_a, tab_b, scal, grid


@jitable
def _lagrange4(z, n):
    """Start index and 4-point Lagrange weights at fractional node position ``z`` (nodes 0..n-1;
    the stencil is shifted inward at the ends)."""
    i = int(math.floor(z)) - 1
    i = min(max(i, 0), n - 4)
    w0, w1, w2, w3 = _lagrange_weights(z - i)
    return i, w0, w1, w2, w3


@jitable
def _lagrange_weights(d):
    """The 4-point Lagrange weights at position ``d`` of a stencil with nodes 0, 1, 2, 3
    (scalars or arrays)."""
    d1 = d - 1.0
    d2 = d - 2.0
    d3 = d - 3.0
    return -d1 * d2 * d3 / 6.0, d * d2 * d3 / 2.0, -d * d1 * d3 / 2.0, d * d1 * d2 / 6.0


@jitable
def _cubic(row, j, w0, w1, w2, w3):
    """sum_b w_b row[j + b] (written out: the compiled loop runs it ~10^6 times a second)."""
    return w0 * row[j] + w1 * row[j + 1] + w2 * row[j + 2] + w3 * row[j + 3]


@jitable
def _cubic2(tab, i, j, w0, w1, w2, w3):
    """Both columns of sum_b w_b tab[i, j + b, :] (a table of pairs)."""
    r = tab[i]
    return (w0 * r[j, 0] + w1 * r[j + 1, 0] + w2 * r[j + 2, 0] + w3 * r[j + 3, 0],
            w0 * r[j, 1] + w1 * r[j + 1, 1] + w2 * r[j + 2, 1] + w3 * r[j + 3, 1])


@jitable
def _bicubic2(tab, i, a0, a1, a2, a3, j, b0, b1, b2, b3):
    """Tensor-product 4 x 4 Lagrange interpolation of both columns of ``tab[i:i+4, j:j+4]``."""
    p0, q0 = _cubic2(tab, i, j, b0, b1, b2, b3)
    p1, q1 = _cubic2(tab, i + 1, j, b0, b1, b2, b3)
    p2, q2 = _cubic2(tab, i + 2, j, b0, b1, b2, b3)
    p3, q3 = _cubic2(tab, i + 3, j, b0, b1, b2, b3)
    return a0 * p0 + a1 * p1 + a2 * p2 + a3 * p3, a0 * q0 + a1 * q1 + a2 * q2 + a3 * q3


@jitable(inline=True)
def _dry_dem(k0, g0, alpha, t, tab_a, tab_b, scal, grid):
    """K*, G* of a host (k0, g0) with empty spheroids of aspect ``alpha`` added to
    t = -ln(1 - phi), from the tables of :func:`build`, floored at 1e-12 of k0, g0. Returns
    (ok, K*, G*); ok False where the tables do not apply and the exact integration must be
    used."""
    ok, dlk, ratio = _dry_dem_path(k0, g0, alpha, t, tab_a, tab_b, scal, grid)
    if not ok:
        return False, 0.0, 0.0
    k = k0 * math.exp(dlk)
    return True, max(k, grid[9] * k0), max(k * ratio, grid[9] * g0)


@jitable(inline=True)
def _dry_dem_path(k0, g0, alpha, t, tab_a, tab_b, scal, grid):
    """(ok, ln(K*/k0), G*/K*) of :func:`_dry_dem`, not floored."""
    n_a = int(grid[4])
    if n_a < 4:  # no table
        return False, 0.0, 0.0
    za = (math.log(alpha) - grid[0]) / grid[1]
    if not (za >= 0.0 and za <= n_a - 1.0):
        return False, 0.0, 0.0
    x0 = math.log(g0 / k0)
    ia, a0, a1, a2, a3 = _lagrange4(za, n_a)
    xs = _cubic(scal[0], ia, a0, a1, a2, a3)
    if not (x0 >= grid[8] and x0 < xs):
        return False, 0.0, 0.0
    umax = _cubic(scal[3], ia, a0, a1, a2, a3)
    u0 = math.log(xs - x0)
    zv = (u0 - grid[7]) / (umax - grid[7]) / grid[2]
    if not zv >= 0.0:  # within 1.5e-8 of the fixed point
        return False, 0.0, 0.0
    n_v = int(grid[5])
    iv, b0, b1, b2, b3 = _lagrange4(min(zv, n_v - 1.0), n_v)
    s0, l0 = _bicubic2(tab_a, ia, a0, a1, a2, a3, iv, b0, b1, b2, b3)
    s1 = s0 + _cubic(scal[1], ia, a0, a1, a2, a3) / alpha * t
    n_s = int(grid[6])
    if s1 < grid[10]:
        js, b0, b1, b2, b3 = _lagrange4(math.sqrt(s1) * grid[3], n_s)
        ratio, l1 = _bicubic2(tab_b, ia, a0, a1, a2, a3, js, b0, b1, b2, b3)
    else:  # at the fixed point: G/K = exp(x*), L grows at P*/lambda per unit sigma
        ratio, l1 = _bicubic2(tab_b, ia, a0, a1, a2, a3, n_s - 4, 0.0, 0.0, 0.0, 1.0)
        l1 += _cubic(scal[2], ia, a0, a1, a2, a3) * (s1 - grid[10])
    return True, l0 - l1, ratio


# --------------------------------------------------------------------------------------------
# the same lookup on arrays (the numpy forward model), and the switch of both paths
# --------------------------------------------------------------------------------------------
_state = {"on": True}
_FOUR = np.arange(4)


def tables_on() -> bool:
    """Whether the forward model reads the dry-pore DEM from the tables (default) or
    integrates it (both paths; see :func:`use_tables`)."""
    return _state["on"]


def use_tables(on: bool):
    """Read the dry-pore DEM from the tables (``True``) or integrate it by RK4 (``False``) in
    both the numpy and the compiled forward model, inside a ``with`` block (tests, benchmarks).
    """
    return switch(_state, on)


def _weights(z, n):
    """:func:`_lagrange4` on an array of positions: start indices (m,) and weights (4, m)."""
    i = np.clip(np.floor(z).astype(np.intp) - 1, 0, n - 4)
    return i, np.stack(_lagrange_weights(z - i))


def _bicubic2_arrays(tab, rows, wa, j, wb):
    """:func:`_bicubic2` for arrays: ``rows`` (4, m) aspect nodes, ``wa`` (4, m) their weights,
    ``j`` (m,) the first node and ``wb`` (4, m) the weights along the other axis."""
    v = tab[rows[:, None, :], (j[None, :] + _FOUR[:, None])[None, :, :]]  # (4, 4, m, 2)
    w = (wa[:, None, :] * wb[None, :, :])[..., None]
    out = (w * v).sum(axis=(0, 1))
    return out[:, 0], out[:, 1]


def dry_dem_arrays(k0, g0, alpha, t):
    """:func:`_dry_dem` for arrays (shape (m,)): (ok, K*, G*). The same interpolation in the
    same arithmetic, equal to the scalar lookup to rounding (tests/physics/test_dem_flow.py);
    K*, G* are meaningless where ok is False (the caller integrates those)."""
    tab_a, tab_b, scal, grid = build()
    n_a, n_v, n_s = int(grid[4]), int(grid[5]), int(grid[6])
    k0, g0, alpha, t = (np.asarray(x, dtype=float) for x in np.broadcast_arrays(k0, g0, alpha, t))
    with np.errstate(all="ignore"):
        za = (np.log(alpha) - grid[0]) / grid[1]
        ok = (za >= 0.0) & (za <= n_a - 1.0)
        ia, wa = _weights(np.where(ok, za, 0.0), n_a)
        rows = ia[None, :] + _FOUR[:, None]

        def cubic(k):
            return (wa * scal[k][rows]).sum(axis=0)

        x0 = np.log(g0 / k0)
        xs = cubic(0)
        ok &= (x0 >= grid[8]) & (x0 < xs)
        u0 = np.log(np.where(ok, xs - x0, 1.0))
        zv = (u0 - grid[7]) / (cubic(3) - grid[7]) / grid[2]
        ok &= zv >= 0.0
        iv, wv = _weights(np.clip(zv, 0.0, n_v - 1.0), n_v)
        s0, l0 = _bicubic2_arrays(tab_a, rows, wa, iv, wv)
        s1 = s0 + cubic(1) / alpha * t
        beyond = ~(s1 < grid[10])
        js, ws = _weights(np.sqrt(np.where(beyond, 0.0, s1)) * grid[3], n_s)
        js = np.where(beyond, n_s - 4, js)
        ws = np.where(beyond, np.array([[0.0], [0.0], [0.0], [1.0]]), ws)
        ratio, l1 = _bicubic2_arrays(tab_b, rows, wa, js, ws)
        l1 = l1 + np.where(beyond, cubic(2) * (s1 - grid[10]), 0.0)
        k = k0 * np.exp(l0 - l1)
        return ok, np.maximum(k, grid[9] * k0), np.maximum(k * ratio, grid[9] * g0)
