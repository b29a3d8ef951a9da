"""Polarisation factors P and Q of a spheroidal inclusion in an isotropic host (Wu 1966;
Berryman 1980), the building block of every inclusion scheme of :mod:`~.inclusions`.

Berryman's :math:`\\theta(\\alpha)` and :math:`f(\\alpha)` come in three forms: array
(:func:`_theta_f`, the numpy reference), one aspect ratio (:func:`_theta_f1`, called by the
compiled kernels) and, near the sphere where both closed forms are 0/0, an exact power series
in :math:`u = 1 - \\alpha^2`. :func:`_geometry_terms` holds the aspect-only constants of the
F-functions and :func:`_pq` the ratio-only part, so that the DEM integration recomputes only
what changes along its path.

References
----------
Wu, T. T. (1966). The effect of inclusion shape on the elastic moduli of a two-phase material.
*Int. J. Solids Struct.*, 2, 1-8.

Berryman, J. G. (1980). Long-wavelength propagation in composite elastic media II. Ellipsoidal
inclusions. *J. Acoust. Soc. Am.*, 68, 1820-1831.

Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook* (2nd ed.), section
4.8. Cambridge University Press.
"""

from __future__ import annotations

import math

import numpy as np

from ._checks import check_range
from ._jit import jitable

__all__ = ["spheroid_pq", "ASPECT_RANGE"]

#: Allowed aspect ratios (oblate 1e-4 ... sphere 1 ... prolate 1e4).
ASPECT_RANGE = (1e-4, 1e4)

# series in u = 1 - alpha**2 about the sphere (alpha = 1)
_N_SERIES = 24
_SERIES_U = 0.1  # series in u = 1 - alpha**2 used for |u| < _SERIES_U


def _series_coefficients():
    """Coefficients of theta/alpha and (3 theta - 2)/(1 - alpha^2) as power series in u.

    theta = alpha * g(u) with g(u) = sum_n 2 c_n u^n / (2n + 3), c_n = binom(2n, n) / 4^n
    (term-by-term integral of 2 t^2 / sqrt(1 - t^2)); alpha = sqrt(1 - u) = sum_k a_k u^k.
    """
    n = _N_SERIES + 1
    g = [2.0 * math.comb(2 * j, j) / 4.0**j / (2 * j + 3) for j in range(n)]
    a = [(-1) ** k * math.prod(0.5 - i for i in range(k)) / math.factorial(k) for k in range(n)]
    p = [sum(a[j] * g[k - j] for j in range(k + 1)) for k in range(n)]  # alpha * g(u)
    h = [3.0 * p[k] for k in range(1, n)]  # (3 alpha g - 2)/u, since 3 p_0 = 2
    return np.array(g[::-1]), np.array(h[::-1])


_G_COEF, _H_COEF = _series_coefficients()


def _theta_f(alpha):
    r"""Berryman's (1980) :math:`\theta(\alpha)` and :math:`f(\alpha)` for any spheroid."""
    alpha = np.asarray(alpha, dtype=float)
    u = 1.0 - alpha * alpha
    near = np.abs(u) < _SERIES_U
    oblate = u >= _SERIES_U
    # closed forms away from the sphere (oblate: the usual case of pores, cracks and melt films)
    uo = np.where(oblate, u, 1.0)
    ao = np.where(oblate, alpha, 0.0)
    theta = ao / uo**1.5 * (np.arccos(ao) - ao * np.sqrt(uo))
    # the series and prolate branches cost ~60 array operations: only when some element needs them
    if not np.all(oblate):
        up = np.where(u <= -_SERIES_U, -u, 1.0)
        ap = np.where(u <= -_SERIES_U, alpha, math.sqrt(2.0))
        theta_p = ap / up**1.5 * (ap * np.sqrt(up) - np.arccosh(ap))
        theta = np.where(oblate, theta, theta_p)
    uc = np.where(near, 1.0, u)
    f = alpha * alpha * (3.0 * theta - 2.0) / uc
    if np.any(near):
        us = np.where(near, u, 0.0)
        theta = np.where(near, alpha * np.polyval(_G_COEF, us), theta)
        f = np.where(near, alpha * alpha * np.polyval(_H_COEF, us), f)
    return theta, f


def _geometry(aspect):
    """Aspect-only constants of the Wu / Berryman F-functions (computed once per call)."""
    t, f = _theta_f(aspect)
    return _geometry_terms(t, f)


@jitable
def _theta_f1(alpha):
    """:func:`_theta_f` of one aspect ratio (the compiled forward model): the same closed forms
    and series, chosen by a branch instead of masks (tested equal in test_accel.py)."""
    u = 1.0 - alpha * alpha
    if abs(u) < _SERIES_U:
        gs = 0.0
        hs = 0.0
        for c in _G_COEF:
            gs = gs * u + c
        for c in _H_COEF:
            hs = hs * u + c
        return alpha * gs, alpha * alpha * hs
    if u > 0.0:
        theta = alpha / u**1.5 * (np.arccos(alpha) - alpha * np.sqrt(u))
    else:
        theta = alpha / (-u) ** 1.5 * (alpha * np.sqrt(-u) - np.arccosh(alpha))
    return theta, alpha * alpha * (3.0 * theta - 2.0) / u


@jitable
def _geometry_terms(t, f):
    """The 15 aspect-only terms c1..c13, f, theta of :func:`_pq` from theta and f."""
    return (
        1.5 * (f + t),  # c1
        1.5 * f + 2.5 * t - 4.0 / 3.0,  # c2
        1.5 * f + 2.5 * t,  # c3
        f + t,  # c4
        f - t + 2.0 * t * t,  # c5
        1.0 - f - 1.5 * t,  # c6
        0.25 * (f + 3.0 * t),  # c7
        0.25 * (f - t),  # c8
        f + t - 4.0 / 3.0,  # c9
        0.75 * f + 2.25 * t,  # c10
        0.75 * f + 1.25 * t,  # c11
        0.5 * f + 2.5 * t,  # c12
        -0.5 * f - 1.5 * t,  # c13
        f,
        t,
    )


@jitable
def _pq(rk, rg, r, geo):
    """P and Q from the modulus ratios rk = K_i/K, rg = G_i/G and R = 3G/(3K + 4G) of the host.

    Kernel of :func:`spheroid_pq`, no checks. Evaluates the polarisation factors of a spheroidal
    inclusion of Berryman (1980), J. Acoust. Soc. Am. 68, 1820-1831, eqs. (A1)-(A6) (from Wu's
    1966 strain tensor), in the form of the functions F1-F9 tabulated by Mavko, Mukerji &
    Dvorkin (2009), *The Rock Physics Handbook*, 2nd ed., Table 4.8.2: with A = rg - 1,
    B = (rk - rg)/3 and the aspect-only terms ``geo`` of :func:`_geometry` (built from θ and f
    of the spheroid), P = F1/F2 and Q = [2/F3 + 1/F4 + (F4 F5 + F6 F7 - F8 F9)/(F2 F4)]/5.
    ``r`` must carry a trailing length-1 axis so it broadcasts against the inclusion axis.
    """
    c1, c2, c3, c4, c5, c6, c7, c8, c9, c10, c11, c12, c13, f, t = geo
    a = rg - 1.0
    b = (rk - rg) / 3.0
    s = 3.0 - 4.0 * r
    bs = b * s
    bts = bs * t
    b1ts = bs - bts
    f1 = 1.0 + a * (c1 - r * c2)
    f2 = 1.0 + a * (1.0 + c1 - r * c3) + bs + 0.5 * a * (a + 3.0 * b) * s * (c4 - r * c5)
    f3 = 1.0 + a * (c6 + r * c4)
    f4 = 1.0 + a * (c7 - r * c8)
    f5 = a * (r * c9 - f) + bts
    f6 = 1.0 + a * (1.0 + f - r * c4) + b1ts
    f7 = 2.0 + a * (c10 - r * c11) + bts
    f8 = a * (1.0 - 2.0 * r + r * c12 + c13) + b1ts
    f9 = a * (4.0 * r * c8 - f) + bts
    p = f1 / f2
    # Q = (2/F3 + 1/F4 + (F4 F5 + F6 F7 - F8 F9)/(F2 F4))/5, with 1/F4 folded into the fraction
    q = 0.2 * (2.0 / f3 + (f2 + f4 * f5 + f6 * f7 - f8 * f9) / (f2 * f4))
    return p, q


def _pq_host(k, g, k_i, g_i, geo):
    """P, Q of inclusions ``(k_i, g_i)`` (last axis) in a host ``(k, g)`` shaped ``batch``."""
    k = np.asarray(k, dtype=float)[..., None]
    g = np.asarray(g, dtype=float)[..., None]
    r = 3.0 * g / (3.0 * k + 4.0 * g)
    return _pq(k_i / k, g_i / g, r, geo)


def spheroid_pq(k_m, g_m, k_i, g_i, aspect_ratio):
    r"""Polarisation factors P and Q of a spheroidal inclusion in an isotropic host.

    Parameters
    ----------
    k_m, g_m : array_like
        Bulk and shear moduli of the host, GPa (> 0).
    k_i, g_i : array_like
        Bulk and shear moduli of the inclusion, GPa (>= 0; fluids have ``g_i = 0``).
    aspect_ratio : array_like
        Ratio of the symmetry semi-axis to the other semi-axes, in [1e-4, 1e4]
        (< 1 oblate, 1 sphere, > 1 prolate). All inputs broadcast together.

    Returns
    -------
    P, Q : numpy.ndarray
        Dimensionless factors relating the mean inclusion strain to the applied strain.

    Notes
    -----
    Berryman (1980) [2]_ eqs. (A1)-(A6), from Wu's (1966) [1]_ tensor, as tabulated in Mavko et
    al. (2009) [3]_ §4.8: with :math:`A = G_i/G_m - 1`, :math:`B = (K_i/K_m - G_i/G_m)/3`,
    :math:`R = 3G_m/(3K_m + 4G_m)`,

    .. math::

        \theta = \frac{\alpha}{(1-\alpha^2)^{3/2}}\left[\arccos\alpha
                 - \alpha(1-\alpha^2)^{1/2}\right]\ (\alpha<1),\quad
        \theta = \frac{\alpha}{(\alpha^2-1)^{3/2}}\left[\alpha(\alpha^2-1)^{1/2}
                 - \operatorname{arccosh}\alpha\right]\ (\alpha>1),\quad
        f = \frac{\alpha^2}{1-\alpha^2}(3\theta - 2),

    the functions :math:`F_1 \ldots F_9` of Mavko et al. Table 4.8.2, and
    :math:`P = F_1/F_2`,
    :math:`Q = \tfrac15\,[2/F_3 + 1/F_4 + (F_4F_5 + F_6F_7 - F_8F_9)/(F_2F_4)]`.

    Near the sphere both θ and f are 0/0; for :math:`|1-\alpha^2| < 0.1` they are evaluated from
    their exact power series in :math:`u = 1-\alpha^2`,
    :math:`\theta/\alpha = \sum_n 2\binom{2n}{n}4^{-n}u^n/(2n+3)` (integrating
    :math:`2t^2/\sqrt{1-t^2}`), which gives θ = 2/3, f = −2/5 and the sphere formulas at α = 1.
    As α → 0 the result tends to the penny-crack formulas, as α → ∞ to the needle formulas.

    References
    ----------
    .. [1] Wu, T. T. (1966). *Int. J. Solids Struct.*, 2, 1-8.
    .. [2] Berryman, J. G. (1980). *J. Acoust. Soc. Am.*, 68, 1820-1831.
    .. [3] Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook*, §4.8.

    Examples
    --------
    >>> p, q = spheroid_pq(36.0, 45.0, 2.2, 0.0, 1.0)
    >>> round(float(p), 4), round(float(q), 4)
    (1.5434, 2.1053)
    """
    k_m = check_range("k_m", k_m, 0.0, np.inf, lo_open=True, unit="GPa")
    g_m = check_range("g_m", g_m, 0.0, np.inf, lo_open=True, unit="GPa")
    k_i = check_range("k_i", k_i, 0.0, np.inf, unit="GPa")
    g_i = check_range("g_i", g_i, 0.0, np.inf, unit="GPa")
    aspect = check_range("aspect_ratio", aspect_ratio, *ASPECT_RANGE)
    k_m, g_m, k_i, g_i, aspect = np.broadcast_arrays(k_m, g_m, k_i, g_i, aspect)
    r = 3.0 * g_m / (3.0 * k_m + 4.0 * g_m)
    return _pq(k_i / k_m, g_i / g_m, r, _geometry(aspect))
