"""Mixing rules and bounds for the elastic moduli of a multi-phase aggregate.

Every function takes volume ``fractions`` with the phases on the **last** axis and broadcasts over
any leading (batch) axes. Moduli are in GPa. Fluid phases have shear modulus 0; dry pores have
``k = g = 0``. Zero moduli are handled exactly (no NaN, no floating-point warnings): a phase with
zero modulus and a positive fraction sends the Reuss average and the lower bounds to 0.

The interchangeable rules in :data:`MIXING_RULES` share one signature,
``rule(fractions, k, g) -> (k, g)``.

References
----------
.. [1] Voigt, W. (1910). *Lehrbuch der Kristallphysik*. Teubner, Leipzig.
.. [2] Reuss, A. (1929). Berechnung der Fliessgrenze von Mischkristallen auf Grund der
   Plastizitätsbedingung für Einkristalle. *Z. Angew. Math. Mech.*, 9, 49-58.
.. [3] Hill, R. (1952). The elastic behaviour of a crystalline aggregate. *Proc. Phys. Soc. A*,
   65, 349-354.
.. [4] Hashin, Z., & Shtrikman, S. (1963). A variational approach to the theory of the elastic
   behaviour of multiphase materials. *J. Mech. Phys. Solids*, 11, 127-140.
.. [5] Berryman, J. G. (1995). Mixture theories for rock properties. In T. J. Ahrens (Ed.),
   *Rock Physics and Phase Relations: A Handbook of Physical Constants*, AGU Reference Shelf 3,
   205-228.
.. [6] Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook* (2nd ed.),
   sections 4.1-4.2. Cambridge University Press.
"""

from __future__ import annotations

import numpy as np

from ._checks import as_float_array

__all__ = [
    "voigt",
    "reuss",
    "hill",
    "hashin_shtrikman",
    "hs_average",
    "MIXING_RULES",
]

#: Allowed departure of ``sum(fractions)`` from 1.
FRACTION_SUM_TOL = 1e-6
#: Moduli (GPa) at or below this count as exactly zero in harmonic averages.
_ZERO_MODULUS = 1e-200


# --------------------------------------------------------------------------------------------
# validation
# --------------------------------------------------------------------------------------------
def _check_fractions(fractions) -> np.ndarray:
    """Validate volume fractions: finite, non-negative, summing to 1 along the last axis."""
    f = as_float_array("fractions", fractions)
    if f.ndim == 0:
        raise ValueError("fractions must have a phase axis (last axis); got a scalar")
    if np.any(f < 0.0):
        bad = f[f < 0.0].ravel()[0]
        raise ValueError(f"fractions must be in [0, 1]; got {bad:g}")
    total = f.sum(axis=-1)
    off = np.abs(total - 1.0) > FRACTION_SUM_TOL
    if np.any(off):
        bad = total[off].ravel()[0] if np.ndim(total) else float(total)
        raise ValueError(
            f"fractions must sum to 1 (within {FRACTION_SUM_TOL:g}) along the last axis; "
            f"got a sum of {bad:.8g}"
        )
    return f


def _check_modulus(name: str, value, fractions: np.ndarray) -> np.ndarray:
    """Validate a modulus array: finite, non-negative, broadcastable against ``fractions``."""
    m = as_float_array(name, value)
    if np.any(m < 0.0):
        bad = m[m < 0.0].ravel()[0]
        raise ValueError(f"{name} must be >= 0 GPa; got {bad:g}")
    try:
        np.broadcast_shapes(m.shape, fractions.shape)
    except ValueError as exc:
        raise ValueError(
            f"{name} with shape {m.shape} does not broadcast against fractions with shape "
            f"{fractions.shape} (phases on the last axis)"
        ) from exc
    return m


# --------------------------------------------------------------------------------------------
# kernels (no validation; called from the forward model)
# --------------------------------------------------------------------------------------------
def _voigt(f, m):
    return np.sum(f * m, axis=-1)


def _shifted_harmonic(f, m, z):
    """Return ``<1/(m + z)>^-1 - z`` (Berryman's Lambda / Gamma), exact when ``m + z = 0``.

    A phase with ``m + z = 0`` and a positive fraction makes the harmonic sum infinite and the
    result ``-z``; it is computed without a division by zero. Sums below ``_ZERO_MODULUS`` GPa
    count as zero (a subnormal modulus would otherwise overflow ``1/d``).
    """
    d = m + z
    d = np.broadcast_to(d, np.broadcast_shapes(np.shape(d), np.shape(f)))
    present = f > 0.0
    zero = present & (d <= _ZERO_MODULUS)
    s = np.sum(np.divide(f, d, out=np.zeros(np.broadcast_shapes(d.shape, f.shape)),
                         where=present & ~zero), axis=-1)
    any_zero = np.any(zero, axis=-1)
    inv = np.divide(1.0, s, out=np.zeros_like(s), where=~any_zero & (s > 0.0))
    return inv - z[..., 0] if np.ndim(z) else inv - z


def _reuss(f, m):
    return _shifted_harmonic(f, m, 0.0)


def _zeta(k, g):
    """Berryman's zeta(K, G) = (G/6)(9K + 8G)/(K + 2G); 0 when K = G = 0."""
    den = 6.0 * (k + 2.0 * g)
    return np.divide(g * (9.0 * k + 8.0 * g), den, out=np.zeros(np.broadcast(k, g).shape),
                     where=den > 0.0)


def _hashin_shtrikman(f, k, g):
    f, k, g = np.broadcast_arrays(f, k, g)
    present = f > 0.0
    g_max = np.max(np.where(present, g, -np.inf), axis=-1, keepdims=True)
    g_min = np.min(np.where(present, g, np.inf), axis=-1, keepdims=True)
    k_max = np.max(np.where(present, k, -np.inf), axis=-1, keepdims=True)
    k_min = np.min(np.where(present, k, np.inf), axis=-1, keepdims=True)
    k_up = _shifted_harmonic(f, k, 4.0 / 3.0 * g_max)
    k_lo = _shifted_harmonic(f, k, 4.0 / 3.0 * g_min)
    g_up = _shifted_harmonic(f, g, _zeta(k_max, g_max))
    g_lo = _shifted_harmonic(f, g, _zeta(k_min, g_min))
    return k_lo, k_up, g_lo, g_up


def _hs_average(f, k, g):
    k_lo, k_up, g_lo, g_up = _hashin_shtrikman(f, k, g)
    return 0.5 * (k_lo + k_up), 0.5 * (g_lo + g_up)


def _voigt_rule(f, k, g):
    return _voigt(f, k), _voigt(f, g)


def _reuss_rule(f, k, g):
    return _reuss(f, k), _reuss(f, g)


def _hill_rule(f, k, g):
    return 0.5 * (_voigt(f, k) + _reuss(f, k)), 0.5 * (_voigt(f, g) + _reuss(f, g))


# --------------------------------------------------------------------------------------------
# public functions
# --------------------------------------------------------------------------------------------
def voigt(fractions, m):
    r"""Voigt (arithmetic, iso-strain) average of a modulus.

    Parameters
    ----------
    fractions : array_like, shape ``batch + (n,)``
        Volume fractions of the ``n`` phases (last axis), non-negative, summing to 1.
    m : array_like, broadcastable to ``fractions``
        Modulus of each phase, GPa.

    Returns
    -------
    numpy.ndarray, shape ``batch``
        Voigt average, GPa.

    Notes
    -----
    :math:`M_V = \sum_i f_i M_i` (Voigt 1910 [1]_; Mavko et al. 2009 [2]_, eq. 4.1.1). It is the
    upper bound on the modulus of an aggregate for any geometry.

    References
    ----------
    .. [1] Voigt, W. (1910). *Lehrbuch der Kristallphysik*. Teubner.
    .. [2] Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook*, §4.1.

    Examples
    --------
    >>> float(voigt([0.5, 0.5], [36.0, 2.2]))
    19.1
    """
    f = _check_fractions(fractions)
    return _voigt(f, _check_modulus("m", m, f))


def reuss(fractions, m):
    r"""Reuss (harmonic, iso-stress) average of a modulus.

    Parameters
    ----------
    fractions : array_like, shape ``batch + (n,)``
        Volume fractions of the ``n`` phases (last axis), non-negative, summing to 1.
    m : array_like, broadcastable to ``fractions``
        Modulus of each phase, GPa (0 allowed, e.g. the shear modulus of a fluid).

    Returns
    -------
    numpy.ndarray, shape ``batch``
        Reuss average, GPa; exactly 0 if a phase with zero modulus is present.

    Notes
    -----
    :math:`1/M_R = \sum_i f_i / M_i` (Reuss 1929 [1]_; Mavko et al. 2009 [2]_, eq. 4.1.2); the
    lower bound on the modulus for any geometry.

    References
    ----------
    .. [1] Reuss, A. (1929). *Z. Angew. Math. Mech.*, 9, 49-58.
    .. [2] Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook*, §4.1.

    Examples
    --------
    >>> float(reuss([0.5, 0.5], [45.0, 0.0]))
    0.0
    """
    f = _check_fractions(fractions)
    return _reuss(f, _check_modulus("m", m, f))


def hill(fractions, k, g):
    r"""Voigt-Reuss-Hill average of bulk and shear moduli.

    Parameters
    ----------
    fractions : array_like, shape ``batch + (n,)``
        Volume fractions (last axis), non-negative, summing to 1.
    k, g : array_like, broadcastable to ``fractions``
        Bulk and shear moduli of each phase, GPa.

    Returns
    -------
    k, g : numpy.ndarray, shape ``batch``
        Hill averages, GPa.

    Notes
    -----
    :math:`M_{VRH} = (M_V + M_R)/2` (Hill 1952 [1]_; Mavko et al. 2009 [2]_, eq. 4.1.3).

    References
    ----------
    .. [1] Hill, R. (1952). *Proc. Phys. Soc. A*, 65, 349-354.
    .. [2] Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook*, §4.1.

    Examples
    --------
    >>> kh, gh = hill([1.0], [36.0], [45.0])
    >>> float(kh), float(gh)
    (36.0, 45.0)
    """
    f = _check_fractions(fractions)
    return _hill_rule(f, _check_modulus("k", k, f), _check_modulus("g", g, f))


def hashin_shtrikman(fractions, k, g):
    r"""Hashin-Shtrikman bounds on the bulk and shear moduli of an N-phase isotropic aggregate.

    Parameters
    ----------
    fractions : array_like, shape ``batch + (n,)``
        Volume fractions (last axis), non-negative, summing to 1.
    k, g : array_like, broadcastable to ``fractions``
        Bulk and shear moduli of each phase, GPa. ``g = 0`` (fluids) and ``k = g = 0`` (empty
        pores) are allowed.

    Returns
    -------
    k_lower, k_upper, g_lower, g_upper : numpy.ndarray, shape ``batch``
        The bounds, GPa. With a fluid present, ``g_lower`` is exactly 0.

    Notes
    -----
    Berryman's (1995) [2]_ N-phase form (Mavko et al. 2009 [3]_, eqs. 4.2.3-4.2.6):

    .. math::

        K^{HS\pm} = \Lambda(G_{\max/\min}),\quad
        \Lambda(z) = \Big\langle \frac{1}{K + \tfrac43 z}\Big\rangle^{-1} - \tfrac43 z,

        G^{HS\pm} = \Gamma\big(\zeta(K_{\max/\min}, G_{\max/\min})\big),\quad
        \Gamma(z) = \Big\langle \frac{1}{G + z}\Big\rangle^{-1} - z,\quad
        \zeta(K, G) = \frac{G}{6}\,\frac{9K + 8G}{K + 2G},

    with :math:`\langle\cdot\rangle` the volume average and the extremes taken over the phases
    present (positive fraction). For two phases this is the Hashin-Shtrikman (1963) [1]_ result;
    for more than two phases with the stiffest bulk and shear moduli in different phases the
    "upper bound" is Walpole's slightly wider, still rigorous, bound.

    References
    ----------
    .. [1] Hashin, Z., & Shtrikman, S. (1963). *J. Mech. Phys. Solids*, 11, 127-140.
    .. [2] Berryman, J. G. (1995). Mixture theories for rock properties. AGU Reference Shelf 3,
       205-228.
    .. [3] Mavko, G., Mukerji, T., & Dvorkin, J. (2009). *The Rock Physics Handbook*, §4.2.

    Examples
    --------
    >>> kl, ku, gl, gu = hashin_shtrikman([0.8, 0.2], [36.0, 2.2], [45.0, 0.0])
    >>> round(float(ku), 3), round(float(gu), 3), float(gl)
    (26.589, 29.483, 0.0)
    """
    f = _check_fractions(fractions)
    return _hashin_shtrikman(f, _check_modulus("k", k, f), _check_modulus("g", g, f))


def hs_average(fractions, k, g):
    """Mean of the Hashin-Shtrikman upper and lower bounds.

    Parameters
    ----------
    fractions : array_like, shape ``batch + (n,)``
        Volume fractions (last axis), non-negative, summing to 1.
    k, g : array_like, broadcastable to ``fractions``
        Bulk and shear moduli of each phase, GPa.

    Returns
    -------
    k, g : numpy.ndarray, shape ``batch``
        ``((k_lower + k_upper)/2, (g_lower + g_upper)/2)``, GPa.

    Notes
    -----
    The bounds are those of :func:`hashin_shtrikman` (Berryman 1995 [1]_); their mean is a
    common-practice estimate for well-mixed solid aggregates, where the bounds are close.

    References
    ----------
    .. [1] Berryman, J. G. (1995). Mixture theories for rock properties. AGU Reference Shelf 3,
       205-228.

    Examples
    --------
    >>> kk, gg = hs_average([1.0], [129.4], [78.0])
    >>> round(float(kk), 10), round(float(gg), 10)
    (129.4, 78.0)
    """
    f = _check_fractions(fractions)
    return _hs_average(f, _check_modulus("k", k, f), _check_modulus("g", g, f))


def _voigt_pair(fractions, k, g):
    """Voigt averages of ``k`` and ``g`` (validated); the ``"voigt"`` entry of the rules."""
    f = _check_fractions(fractions)
    return _voigt_rule(f, _check_modulus("k", k, f), _check_modulus("g", g, f))


def _reuss_pair(fractions, k, g):
    """Reuss averages of ``k`` and ``g`` (validated); the ``"reuss"`` entry of the rules."""
    f = _check_fractions(fractions)
    return _reuss_rule(f, _check_modulus("k", k, f), _check_modulus("g", g, f))


#: Mixing rules by name, each ``rule(fractions, k, g) -> (k, g)``; validated versions.
MIXING_RULES = {
    "voigt": _voigt_pair,
    "reuss": _reuss_pair,
    "hill": hill,
    "hashin_shtrikman": hs_average,
}


# Kernels for strictly positive moduli (no zero-phase guard): Voigt (1910, reprinted 1928)
# arithmetic mean sum f_i M_i, Reuss (1929) harmonic mean (sum f_i / M_i)^-1 and their Hill
# (1952) mean, Mavko, Mukerji & Dvorkin (2009) eqs. 4.1.1-4.1.3. Each computes only what it
# returns.
def _positive_voigt(f, k, g):
    """Voigt averages (K_V, G_V) = (sum f_i K_i, sum f_i G_i); Voigt 1910 (reprinted 1928)."""
    return np.einsum("...i,...i->...", f, k), np.einsum("...i,...i->...", f, g)


def _positive_reuss(f, k, g):
    """Reuss averages (K_R, G_R) = ((sum f_i/K_i)^-1, (sum f_i/G_i)^-1); Reuss 1929."""
    return (1.0 / np.einsum("...i,...i->...", f, 1.0 / k),
            1.0 / np.einsum("...i,...i->...", f, 1.0 / g))


def _positive_voigt_reuss(f, k, g):
    """Voigt and Reuss averages of K and G for strictly positive moduli (no zero-phase guard).

    Returns (K_V, K_R, G_V, G_R): the Voigt (1910, reprinted 1928; *Lehrbuch der
    Kristallphysik*) iso-strain mean sum_i f_i M_i and the Reuss (1929; *Z. Angew. Math.
    Mech.* 9, 49-58) iso-stress mean (sum_i f_i / M_i)^-1, the upper and lower bounds whose
    arithmetic mean is the Hill (1952; *Proc. Phys. Soc. A* 65, 349-354) estimate (Mavko,
    Mukerji & Dvorkin 2009, eqs. 4.1.1-4.1.3). Used by :func:`_positive_hill`.
    """
    kv, gv = _positive_voigt(f, k, g)
    kr, gr = _positive_reuss(f, k, g)
    return kv, kr, gv, gr


def _positive_hill(f, k, g):
    """Hill (1952) mean of the Voigt and Reuss averages, (K_VRH, G_VRH)."""
    kv, kr, gv, gr = _positive_voigt_reuss(f, k, g)
    return 0.5 * (kv + kr), 0.5 * (gv + gr)


#: The same rules without input validation, for the forward-model hot path, where every phase
#: is a mineral with strictly positive moduli (fluids enter through ``inclusions`` instead).
_MIXING_KERNELS = {
    "voigt": _positive_voigt,
    "reuss": _positive_reuss,
    "hill": _positive_hill,
    "hashin_shtrikman": _hs_average,
}
