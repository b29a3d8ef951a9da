"""Seismic attenuation and the velocity dispersion it implies.

An attenuation law gives the shear dissipation :math:`Q_S^{-1}` and its frequency exponent
:math:`\\alpha` at (T, P, frequency, grain size). The velocities computed from unrelaxed
(high-frequency) moduli are then lowered to the seismic frequency with Karato's (1993)
first-order absorption-band correction, with :math:`Q_P^{-1}` from :math:`Q_S^{-1}` assuming no
bulk dissipation.

Laws are plain functions with one shared signature, chosen by name from
:data:`ATTENUATION_LAWS`::

    law(temperature_k, pressure_gpa, frequency_hz, grain_size_mm, vp, vs) -> (fp, fs, q_s_inv)

where ``fp, fs <= 1`` multiply unrelaxed Vp and Vs. Two laws are registered:

- ``"jackson2002"`` (default, :data:`DEFAULT_ATTENUATION_LAW`): the Jackson et al. (2002)
  absorption band with Karato's first-order dispersion;
- ``"yamauchi_takei2016"``: the near-solidus ("pre-melting") master curve of Yamauchi & Takei
  (2016), a full complex compliance (:mod:`~.premelting`), so no first-order expansion.

To add a first-order law, write its ``(temperature_k, pressure_gpa, frequency_hz,
grain_size_mm) -> (q_s_inv, alpha)`` function, register it in ``_SHEAR_Q``, and register a
module-level wrapper calling :func:`_factors` in ``ATTENUATION_LAWS`` (see
:func:`_factors_jackson2002`); a law with its own compliance returns ``alpha=None`` in
``_SHEAR_Q`` (see :func:`_factors_yamauchi_takei2016`). Add its name to
``config.forward.FORWARD_KEYS`` (a test checks the two agree).
Numbers live in ``physics/data/anelastic.toml``.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from bayescrust.physics import premelting
from bayescrust.physics._checks import as_float_array, check_range
from bayescrust.physics._data import CELSIUS_TO_KELVIN, load_table
from bayescrust.physics._jit import jitable

__all__ = [
    "ANELASTIC_DATA",
    "ATTENUATION_LAWS",
    "DEFAULT_ATTENUATION_LAW",
    "dispersion_factor",
    "q_shear",
    "qp_inverse_from_qs",
    "velocity_factors",
]


#: Parsed ``data/anelastic.toml`` (read-only mapping).
ANELASTIC_DATA = load_table("anelastic")

_R = float(ANELASTIC_DATA["constants"]["gas_constant_j_mol_k"])
_Q_INV_MAX = float(ANELASTIC_DATA["constants"]["q_inv_max"])

_J02 = ANELASTIC_DATA["jackson2002"]
_J02_A = float(_J02["a"])
_J02_ALPHA = float(_J02["alpha"])
_J02_E = float(_J02["activation_energy_j_mol"])
_J02_V = float(_J02["activation_volume_m3_mol"])
_J02_PREF = float(_J02["reference_pressure_gpa"])

_UM_PER_MM = 1.0e3
_PA_PER_GPA = 1.0e9

# Numerical guards of the kernel (not literature numbers): temperatures and grain sizes are kept
# strictly positive so that exp() and d^-1 stay finite.
_T_MIN_K = 1.0
_D_MIN_UM = 1.0e-6


def _q_inv_jackson2002(temperature_k, pressure_gpa, frequency_hz, grain_size_mm):
    """Shear Q^-1 (unclipped) and frequency exponent of Jackson et al. (2002); no checks."""
    q = _j02_q_inv(np.asarray(temperature_k, dtype=float), np.asarray(pressure_gpa, dtype=float),
                   np.asarray(frequency_hz, dtype=float), np.asarray(grain_size_mm, dtype=float))
    return q, _J02_ALPHA


@jitable
def _j02_q_inv(temperature_k, pressure_gpa, frequency_hz, grain_size_mm):
    """Unclipped shear Q^-1 of Jackson et al. (2002) on arrays or scalars (the compiled forward
    model calls it per element): A [T_o d^-1 exp(-(E + (P - P_r) V)/(R T))]^alpha."""
    t = np.maximum(temperature_k, _T_MIN_K)
    d_um = np.maximum(grain_size_mm * _UM_PER_MM, _D_MIN_UM)
    period = 1.0 / frequency_hz
    h = _J02_E + (pressure_gpa - _J02_PREF) * _PA_PER_GPA * _J02_V
    # Work in logs: exp(-E/RT) underflows in cold rock, where Q^-1 -> 0 is the right answer.
    log_x = np.log(period) - np.log(d_um) - h / (_R * t)
    return _J02_A * np.exp(_J02_ALPHA * log_x)


def _q_inv_yamauchi_takei2016(temperature_k, pressure_gpa, frequency_hz, grain_size_mm):
    """Shear Q^-1 = J2/J1 of Yamauchi & Takei (2016) (:mod:`~.premelting`); no checks."""
    j1, j2 = premelting.compliance_ratio(temperature_k, pressure_gpa, frequency_hz, grain_size_mm)
    return j2 / j1, None


#: Shear-dissipation laws: name -> f(temperature_k, pressure_gpa, frequency_hz, grain_size_mm)
#: returning (unclipped q_s_inv, alpha); alpha is None for laws with a full compliance.
_SHEAR_Q: dict[str, Callable] = {
    "jackson2002": _q_inv_jackson2002,
    "yamauchi_takei2016": _q_inv_yamauchi_takei2016,
}


def _half_cot(alpha):
    return 0.5 / np.tan(0.5 * np.pi * np.asarray(alpha, dtype=float))


def _factors(q_s_inv, alpha, vp, vs):
    """Clip Q_S^-1, derive Q_P^-1 (no bulk loss) and return (fp, fs, q_s_inv); no checks.

    Q_S^-1 is clipped at ``q_inv_max`` of ``data/anelastic.toml``. Q_P^-1 follows from Q_S^-1
    with no bulk dissipation, Q_P^-1 = (4/3)(Vs/Vp)^2 Q_S^-1 (Anderson, Ben-Menahem & Archambeau
    1965, J. Geophys. Res. 70, 1441-1448; Anderson & Given 1982, Absorption band Q model for
    the Earth, J. Geophys. Res. 87). Each factor is Karato's (1993, Geophys. Res. Lett. 20,
    1623-1626, eq. 3) first-order absorption-band dispersion,
    V/V0 = 1 - cot(alpha pi/2) Q^-1 / 2.
    """
    q_s_inv = np.minimum(q_s_inv, _Q_INV_MAX)
    vp = np.asarray(vp, dtype=float)
    vs = np.asarray(vs, dtype=float)
    ratio2 = np.divide(vs * vs, vp * vp, out=np.zeros(np.broadcast(vp, vs).shape), where=vp > 0)
    fp, fs = _band_factors(q_s_inv, _half_cot(alpha), ratio2)
    return fp, fs, q_s_inv


@jitable
def _band_factors(q_s_inv, half_cot, ratio2):
    """fp, fs of :func:`_factors` from the clipped Q_S^-1, cot(alpha pi/2)/2 and (Vs/Vp)^2."""
    q_p_inv = (4.0 / 3.0) * ratio2 * q_s_inv
    return 1.0 - half_cot * q_p_inv, 1.0 - half_cot * q_s_inv


def _factors_jackson2002(temperature_k, pressure_gpa, frequency_hz, grain_size_mm, vp, vs):
    """Dispersion factors (fp, fs, q_s_inv) with the Jackson et al. (2002) law; no checks."""
    q_s_inv, alpha = _q_inv_jackson2002(temperature_k, pressure_gpa, frequency_hz, grain_size_mm)
    return _factors(q_s_inv, alpha, vp, vs)


def _factors_yamauchi_takei2016(temperature_k, pressure_gpa, frequency_hz, grain_size_mm, vp,
                                vs):
    """Dispersion factors (fp, fs, q_s_inv) of Yamauchi & Takei (2016); no checks.

    fs follows from the complex compliance exactly (:func:`premelting.shear_velocity_factor`);
    with no bulk dissipation the relaxed P modulus is K + (4/3) mu_U fs^2, so
    fp^2 = 1 - (4/3)(Vs/Vp)^2 (1 - fs^2) (the same no-bulk-loss rule as Anderson & Given 1982).
    Q_S^-1 = J2/J1 is not clipped: no first-order expansion is involved.
    """
    j1, j2 = premelting.compliance_ratio(temperature_k, pressure_gpa, frequency_hz, grain_size_mm)
    fs = premelting.shear_velocity_factor(j1, j2)
    vp = np.asarray(vp, dtype=float)
    vs = np.asarray(vs, dtype=float)
    ratio2 = np.divide(vs * vs, vp * vp, out=np.zeros(np.broadcast(vp, vs).shape), where=vp > 0)
    fp = np.sqrt(1.0 - (4.0 / 3.0) * ratio2 * (1.0 - fs * fs))
    return fp, fs, j2 / j1


#: Attenuation laws by name, each ``(temperature_k, pressure_gpa, frequency_hz, grain_size_mm,
#: vp, vs) -> (fp, fs, q_s_inv)``; ``fp, fs`` multiply unrelaxed velocities. Module-level
#: functions, so they pickle by reference.
ATTENUATION_LAWS: dict[str, Callable] = {
    "jackson2002": _factors_jackson2002,
    "yamauchi_takei2016": _factors_yamauchi_takei2016,
}

#: The default law (docs/physics.md, "Anelasticity", gives the reasons).
DEFAULT_ATTENUATION_LAW = "jackson2002"


def _anelastic_factors(temperature_k, pressure_gpa, frequency_hz, grain_size_mm, vp, vs,
                       law="jackson2002"):
    """Kernel: multiplicative dispersion factors for unrelaxed Vp, Vs, and Q_S^-1; no checks.

    Parameters
    ----------
    temperature_k, pressure_gpa, frequency_hz, grain_size_mm : array_like
        Temperature (K), pressure (GPa), seismic frequency (Hz), grain size (mm); broadcast.
    vp, vs : array_like
        Unrelaxed velocities (km/s); only their ratio is used.
    law : str, optional
        Key of :data:`ATTENUATION_LAWS`.

    Returns
    -------
    fp, fs : numpy.ndarray
        Factors in (0.88, 1] to apply to Vp and Vs.
    q_s_inv : numpy.ndarray
        Shear dissipation, clipped to ``q_inv_max`` (0.1) of ``data/anelastic.toml``.
    """
    return ATTENUATION_LAWS[law](temperature_k, pressure_gpa, frequency_hz, grain_size_mm, vp, vs)


def _check_law(law: str) -> None:
    if law not in ATTENUATION_LAWS:
        raise ValueError(f"law must be one of {sorted(ATTENUATION_LAWS)}; got {law!r}")


def q_shear(temperature_c, pressure_gpa, *, frequency_hz, grain_size_mm, law="jackson2002"):
    """Shear-wave dissipation :math:`Q_S^{-1}` at (T, P, frequency, grain size).

    Parameters
    ----------
    temperature_c : array_like
        Temperature, deg C, in [-20, 2000].
    pressure_gpa : array_like
        Pressure, GPa, in [0, 15].
    frequency_hz : array_like
        Seismic frequency, Hz, in [1e-5, 1e3]; the oscillation period is ``1/frequency_hz``.
    grain_size_mm : array_like
        Grain size, mm, in (0, 100].
    law : str, optional
        Name in :data:`ATTENUATION_LAWS`; default ``"jackson2002"``.
        ``"yamauchi_takei2016"`` is the near-solidus master-curve model of
        :mod:`~.premelting` (Q_S^-1 = J2/J1).

    Returns
    -------
    numpy.ndarray
        :math:`Q_S^{-1}` (dimensionless), broadcast shape of the inputs; for the first-order
        law (Jackson 2002) clipped to at most 0.1 (:math:`Q_S \\ge 10`); essentially zero in
        cold rock.

    Raises
    ------
    ValueError
        If an argument is non-finite or out of range, or ``law`` is unknown.

    Notes
    -----
    Jackson et al. (2002), abstract and their eq. for the absorption band of melt-free olivine:

    .. math:: Q^{-1} = A \\left[T_o d^{-1} \\exp\\left(-\\frac{E + (P - P_r) V^*}{RT}\\right)
              \\right]^{\\alpha}

    with :math:`A = 750` s\\ :sup:`-α` µm\\ :sup:`α`, :math:`\\alpha = 0.26`,
    :math:`E = 424` kJ/mol, :math:`T_o = 1/f`, :math:`d` in µm. The law has no pressure term of
    its own; :math:`V^* = 13.4` cm³/mol (dunite creep, Ross et al. 1979) is referenced to the
    0.2 GPa confining pressure of the experiments. The fit spans 1000-1300 deg C, 1-100 s and
    3-23 µm; use at crustal grain sizes, other minerals, or far outside this window is an
    extrapolation.

    References
    ----------
    Jackson, I., Fitz Gerald, J.D., Faul, U.H. & Tan, B.H. (2002). Grain-size-sensitive seismic
    wave attenuation in polycrystalline olivine. J. Geophys. Res. 107(B12), 2360.

    Ross, J.V., Ave Lallemant, H.G. & Carter, N.L. (1979). Activation volume for creep in the
    upper mantle. Science 203, 261-263.

    Examples
    --------
    >>> q = q_shear(1300.0, 0.2, frequency_hz=1.0, grain_size_mm=10.0)
    >>> round(1.0 / float(q), 1)
    66.9
    """
    _check_law(law)
    t = check_range("temperature_c", temperature_c, -20.0, 2000.0, unit="deg C")
    p = check_range("pressure_gpa", pressure_gpa, 0.0, 15.0, unit="GPa")
    f = check_range("frequency_hz", frequency_hz, 1e-5, 1e3, unit="Hz")
    d = check_range("grain_size_mm", grain_size_mm, 0.0, 100.0, lo_open=True, unit="mm")
    q_s_inv, alpha = _SHEAR_Q[law](t + CELSIUS_TO_KELVIN, p, f, d)
    # the first-order (Karato) laws are bounded at q_inv_max; full-compliance laws are not
    return q_s_inv if alpha is None else np.minimum(q_s_inv, _Q_INV_MAX)


def velocity_factors(temperature_c, pressure_gpa, *, frequency_hz, grain_size_mm, vp_vs=1.8,
                     law=DEFAULT_ATTENUATION_LAW):
    """Factors on unrelaxed Vp and Vs, and Q_S^-1, of an attenuation law (checked).

    Parameters
    ----------
    temperature_c, pressure_gpa, frequency_hz, grain_size_mm : array_like
        As in :func:`q_shear`; broadcast.
    vp_vs : array_like, optional
        Unrelaxed Vp/Vs, in [1.2, 3] (only P is affected by it; default 1.8).
    law : str, optional
        Name in :data:`ATTENUATION_LAWS`.

    Returns
    -------
    fp, fs, q_s_inv : numpy.ndarray
        ``Vp = fp Vp_unrelaxed``, ``Vs = fs Vs_unrelaxed`` (both <= 1) and Q_S^-1.

    Raises
    ------
    ValueError
        If an argument is non-finite or out of range, or ``law`` is unknown.

    Examples
    --------
    >>> fp, fs, q = velocity_factors(600.0, 0.3, frequency_hz=5.0, grain_size_mm=5.0,
    ...                              law="yamauchi_takei2016")
    >>> bool(fs > 0.99)
    True
    """
    _check_law(law)
    t = check_range("temperature_c", temperature_c, -20.0, 2000.0, unit="deg C")
    p = check_range("pressure_gpa", pressure_gpa, 0.0, 15.0, unit="GPa")
    f = check_range("frequency_hz", frequency_hz, 1e-5, 1e3, unit="Hz")
    d = check_range("grain_size_mm", grain_size_mm, 0.0, 100.0, lo_open=True, unit="mm")
    r = check_range("vp_vs", vp_vs, 1.2, 3.0)
    return ATTENUATION_LAWS[law](t + CELSIUS_TO_KELVIN, p, f, d, r, np.ones_like(r))


def dispersion_factor(q_inv, alpha):
    """Karato (1993) first-order factor relating relaxed to unrelaxed velocity.

    Parameters
    ----------
    q_inv : array_like
        Dissipation :math:`Q^{-1}` of the wave type, in [0, 0.1].
    alpha : array_like
        Frequency exponent of the absorption band, in (0, 1).

    Returns
    -------
    numpy.ndarray
        :math:`V/V_0 = 1 - \\tfrac12 \\cot(\\alpha\\pi/2)\\, Q^{-1}` (<= 1), broadcast shape.

    Raises
    ------
    ValueError
        If an argument is non-finite or out of range.

    Notes
    -----
    Karato (1993), eq. 3 (absorption band with :math:`Q^{-1} \\propto \\omega^{-\\alpha}`):
    :math:`V(\\omega, T) = V_0 [1 - \\tfrac12 \\cot(\\alpha\\pi/2) Q^{-1}(\\omega, T)]`, valid for
    :math:`Q \\gg 1`; hence the upper bound on ``q_inv``.

    References
    ----------
    Karato, S. (1993). Importance of anelasticity in the interpretation of seismic tomography.
    Geophys. Res. Lett. 20, 1623-1626.

    Examples
    --------
    >>> round(1.0 - float(dispersion_factor(1 / 50, 0.25)), 5)
    0.02414
    """
    q = check_range("q_inv", q_inv, 0.0, _Q_INV_MAX)
    a = check_range("alpha", alpha, 0.0, 1.0, lo_open=True, hi_open=True)
    return 1.0 - _half_cot(a) * q


def qp_inverse_from_qs(qs_inv, vp, vs):
    """P-wave dissipation from shear dissipation assuming no bulk loss.

    Parameters
    ----------
    qs_inv : array_like
        Shear dissipation :math:`Q_S^{-1}`, >= 0.
    vp, vs : array_like
        P and S velocities, km/s; ``vp > 0`` and ``0 <= vs/vp <= sqrt(3)/2`` (non-negative bulk
        modulus).

    Returns
    -------
    numpy.ndarray
        :math:`Q_P^{-1}`, broadcast shape of the inputs.

    Raises
    ------
    ValueError
        If an argument is non-finite or out of range.

    Notes
    -----
    With :math:`Q_K^{-1} = 0` (Anderson, Ben-Menahem & Archambeau 1965; Anderson & Given 1982),
    :math:`Q_P^{-1} = \\tfrac43 (V_S/V_P)^2 Q_S^{-1}`, so :math:`Q_P = \\tfrac94 Q_S` for a
    Poisson solid (:math:`V_P/V_S = \\sqrt3`).

    References
    ----------
    Anderson, D.L., Ben-Menahem, A. & Archambeau, C.B. (1965). Attenuation of seismic energy in
    the upper mantle. J. Geophys. Res. 70, 1441-1448.

    Examples
    --------
    >>> round(0.01 / float(qp_inverse_from_qs(0.01, 3 ** 0.5, 1.0)), 6)
    2.25
    """
    q = check_range("qs_inv", qs_inv, 0.0, np.inf)
    p = check_range("vp", vp, 0.0, np.inf, lo_open=True, unit="km/s")
    s = as_float_array("vs", vs)
    ratio = s / p
    bad = (ratio < 0) | (ratio > np.sqrt(3.0) / 2.0)
    if np.any(bad):
        raise ValueError(
            "vs/vp must be in [0, 0.866] (non-negative bulk modulus); "
            f"got {np.broadcast_to(ratio, bad.shape)[bad].ravel()[0]:g}"
        )
    return (4.0 / 3.0) * ratio * ratio * q
