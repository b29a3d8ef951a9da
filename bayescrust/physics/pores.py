"""Pore fluid and crack closure: connected (Gassmann) or isolated fluid, cracks shut by pressure.

Two effects of the pore space that a single inclusion calculation misses:

- **Crack closure** (Walsh 1965). A thin spheroidal crack of aspect ratio alpha in a matrix of
  Young's modulus E and Poisson's ratio nu closes at the effective pressure
  ``P_c = pi alpha E / (4 (1 - nu^2))`` (~ alpha E). Below it, linear elasticity thins the crack
  in proportion, so its aspect ratio and its volume both scale with ``1 - P_e / P_c`` (Mavko,
  Mukerji & Dvorkin 2009, section 7.x on crack closure). The effective pressure is confining
  minus pore pressure. :func:`close_cracks` applies this; at depth thin cracks cannot stay open.
- **Pore-fluid relaxation.** At seismic frequencies fluid in connected pores has time to
  equalise its pressure between pores: the rock is a dry frame (pores empty, computed by the
  inclusion scheme with zero-modulus inclusions) saturated by Gassmann's (1951) relation
  (``"connected"``, the relaxed limit). In the ultrasonic laboratory, or for isolated pores, the
  fluid is trapped: the fluid-filled inclusions themselves are averaged (``"isolated"``, the
  unrelaxed limit; the former behaviour). See docs/physics.md for the choice of default.
"""

from __future__ import annotations

import numpy as np

from bayescrust.physics._jit import jitable

__all__ = ["POROUS_FLUID_MODES", "close_cracks", "gassmann", "walsh_closing_pressure_gpa"]

#: Pore-fluid modes of the forward model.
POROUS_FLUID_MODES = ("connected", "isolated")


def walsh_closing_pressure_gpa(aspect_ratio, k_m, g_m):
    """Effective pressure (GPa) that closes a thin crack of ``aspect_ratio`` in a solid.

    Parameters
    ----------
    aspect_ratio : array_like
        Crack aspect ratio (thickness / diameter), < ~0.1 for the formula to hold.
    k_m, g_m : array_like
        Bulk and shear modulus of the solid, GPa.

    Returns
    -------
    numpy.ndarray
        ``P_c = pi alpha E / (4 (1 - nu^2))``, GPa.

    Notes
    -----
    Walsh (1965), for a flat elliptical crack under uniform compression; E = 9KG/(3K + G),
    nu = (3K - 2G)/(2(3K + G)).

    References
    ----------
    Walsh, J. B. (1965) The effect of cracks on the compressibility of rock. J. Geophys. Res.
    70:381-389.

    Examples
    --------
    >>> round(float(walsh_closing_pressure_gpa(1e-3, 80.0, 40.0)), 3)
    0.088
    """
    return _walsh(np.asarray(aspect_ratio, float), np.asarray(k_m, float),
                  np.asarray(g_m, float))


@jitable
def _walsh(aspect_ratio, k_m, g_m):
    """:func:`walsh_closing_pressure_gpa` on arrays or scalars (compiled forward model)."""
    e = 9.0 * k_m * g_m / (3.0 * k_m + g_m)
    nu = (3.0 * k_m - 2.0 * g_m) / (2.0 * (3.0 * k_m + g_m))
    return np.pi * aspect_ratio * e / (4.0 * (1.0 - nu * nu))


def close_cracks(porosity, aspect_ratio, effective_pressure_gpa, k_m, g_m):
    """Porosity and aspect ratio of cracks left open at an effective pressure.

    Parameters
    ----------
    porosity, aspect_ratio : array_like
        Crack porosity and aspect ratio at zero effective pressure.
    effective_pressure_gpa : array_like
        Confining minus pore pressure, GPa (negative values are treated as 0).
    k_m, g_m : array_like
        Moduli of the solid, GPa.

    Returns
    -------
    porosity, aspect_ratio : numpy.ndarray
        Both scaled by ``max(0, 1 - P_e / P_c)`` (linear-elastic thinning, Walsh 1965); the
        aspect ratio is floored at a tiny positive value so the inclusion schemes stay defined
        (the porosity of a closed crack is exactly 0).

    Notes
    -----
    Only flat cracks close this way; for aspect ratios near 1 (pores) P_c is far above crustal
    pressures and the scaling leaves them essentially unchanged.
    """
    return _close(*(np.asarray(x, float) for x in (porosity, aspect_ratio,
                                                    effective_pressure_gpa, k_m, g_m)))


@jitable
def _close(porosity, aspect_ratio, effective_pressure_gpa, k_m, g_m):
    """:func:`close_cracks` on arrays or scalars (compiled forward model)."""
    pc = _walsh(aspect_ratio, k_m, g_m)
    pe = np.maximum(effective_pressure_gpa, 0.0)
    frac = np.minimum(np.maximum(1.0 - pe / pc, 0.0), 1.0)
    return porosity * frac, np.maximum(aspect_ratio * frac, 1e-6)


def gassmann(k_dry, g_dry, k_mineral, k_fluid, porosity):
    """Gassmann's (1951) saturated moduli of a dry frame filled with fluid.

    Parameters
    ----------
    k_dry, g_dry : array_like
        Dry-frame bulk and shear modulus, GPa.
    k_mineral : array_like
        Bulk modulus of the solid (mineral) phase, GPa.
    k_fluid : array_like
        Bulk modulus of the pore fluid, GPa.
    porosity : array_like
        Porosity (fraction), > 0 where the fluid matters.

    Returns
    -------
    k_sat, g_sat : numpy.ndarray
        ``K_sat = K_dry + (1 - K_dry/K0)^2 / (phi/K_fl + (1 - phi)/K0 - K_dry/K0^2)``;
        ``G_sat = G_dry``. At zero porosity the dry frame is the mineral and K_sat = K0.

    References
    ----------
    Gassmann, F. (1951) Vierteljahrsschr. Naturforsch. Ges. Zuerich 96:1-23; Mavko, Mukerji &
    Dvorkin (2009) The Rock Physics Handbook, section 6.3.

    Examples
    --------
    >>> round(float(gassmann(40.0, 30.0, 80.0, 2.3, 0.05)[0]), 2)
    49.14
    """
    k_dry = np.asarray(k_dry, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        k_sat = _gassmann_k(k_dry, np.asarray(k_mineral, float), np.asarray(k_fluid, float),
                            np.asarray(porosity, float))
    return k_sat, np.asarray(g_dry, float) + 0.0 * k_sat


@jitable
def _gassmann_k(k_dry, k0, k_fluid, phi):
    """Gassmann's K_sat on arrays or scalars (compiled forward model); the fluid term is 0 where
    its denominator is not positive (no fluid-filled porosity)."""
    b = 1.0 - k_dry / k0
    den = phi / k_fluid + (1.0 - phi) / k0 - k_dry / (k0 * k0)
    return k_dry + (den > 0.0) * (b * b / np.maximum(den, 1e-300))
