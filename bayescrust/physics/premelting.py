"""Near-solidus ("pre-melting") anelasticity of Yamauchi & Takei (2016).

A master-curve model of polycrystal anelasticity: the complex shear compliance
:math:`J^* = J_1 - iJ_2` depends on the period only through the period normalised by the
Maxwell time, :math:`\\tau' = \\tau_S / (2\\pi\\tau_M)`, :math:`\\tau_M = \\eta/\\mu_U`. A
power-law background is topped by a high-frequency absorption peak whose amplitude and width
grow with the homologous temperature :math:`T' = T/T_s` above 0.91, and the viscosity falls
by an extra factor :math:`\\gamma` between :math:`T'_\\eta` and the solidus. Below
:math:`T' = 0.91` only the Arrhenius and grain-size terms of the viscosity change with T.

The homologous temperature uses the dry peridotite solidus of Hirschmann (2000)
(:func:`bayescrust.physics.thermal.peridotite_solidus_c`) for every rock, as the olivine laws
of :mod:`~.anelastic` are applied to every rock. Numbers live in ``data/anelastic.toml``
(``[yamauchi_takei2016]``).

References
----------
Yamauchi, H. & Takei, Y. (2016). Polycrystal anelasticity at near-solidus temperatures.
J. Geophys. Res. Solid Earth 121, 7790-7820.

Hirschmann, M.M. (2000). Mantle solidus: experimental constraints and the effects of
peridotite composition. Geochem. Geophys. Geosyst. 1, 1042.
"""

from __future__ import annotations

import numpy as np
from scipy.special import erfc

from bayescrust.physics._data import load_table

__all__ = [
    "compliance_ratio",
    "homologous_temperature",
    "mantle_shear_modulus_gpa",
    "peak_parameters",
    "shear_velocity_factor",
]

_DATA = load_table("anelastic")
_R = float(_DATA["constants"]["gas_constant_j_mol_k"])
_YT = _DATA["yamauchi_takei2016"]
_A_B = float(_YT["background_amplitude"])
_ALPHA_B = float(_YT["background_exponent"])
_TAU_P = float(_YT["peak_period_normalised"])
_AP_LO, _AP_HI = float(_YT["peak_amplitude_low"]), float(_YT["peak_amplitude_high"])
_AP_T0, _AP_T1 = float(_YT["peak_amplitude_t_lo"]), float(_YT["peak_amplitude_t_hi"])
_SP_LO, _SP_HI = float(_YT["peak_width_low"]), float(_YT["peak_width_high"])
_SP_T0, _SP_T1 = float(_YT["peak_width_t_lo"]), float(_YT["peak_width_t_hi"])
_ETA_R = float(_YT["viscosity_ref_pa_s"])
_T_R = float(_YT["reference_temperature_k"])
_P_R = float(_YT["reference_pressure_gpa"]) * 1e9
_D_R = float(_YT["reference_grain_size_mm"])
_M = float(_YT["grain_size_exponent"])
_E = float(_YT["activation_energy_j_mol"])
_V = float(_YT["activation_volume_m3_mol"])
_GAMMA = float(_YT["viscosity_drop_factor"])
_T_ETA = float(_YT["viscosity_drop_onset"])

_MREF = _YT["mantle_reference"]
_MU0 = float(_MREF["shear_modulus_gpa"])
_DMU_DT = float(_MREF["dmu_dt_gpa_k"])
_DMU_DP = float(_MREF["dmu_dp"])
_MU_T0 = float(_MREF["modulus_reference_temperature_k"])

_SOL = load_table("thermal")["peridotite_solidus"]
_SOL_COEFFS = np.asarray(_SOL["coeffs"], dtype=float)
_SOL_P = tuple(float(x) for x in _SOL["pressure_range_gpa"])

_C_TO_K = 273.15
# Numerical guards (not literature numbers): temperature and grain size floored so that exp()
# and logs stay finite.
_T_MIN_K = 1.0
_D_MIN_MM = 1e-9


def homologous_temperature(temperature_k, pressure_gpa):
    """T / T_s with the Hirschmann (2000) dry peridotite solidus (kelvin over kelvin); no checks.

    Pressures outside the solidus fit (0-10 GPa) are clamped to its ends.
    """
    p = np.clip(np.asarray(pressure_gpa, dtype=float), *_SOL_P)
    t_s = np.polynomial.polynomial.polyval(p, _SOL_COEFFS) + _C_TO_K
    return np.asarray(temperature_k, dtype=float) / t_s


def peak_parameters(t_h):
    """Amplitude A_P and width sigma_P of the high-frequency peak (YT16), piecewise in T/T_s.

    A_P = 0.01 below T' = 0.91, linear to 0.03 at 0.96, then 0.03; sigma_P = 4 below 0.92,
    linear to 7 at 1, then 7 (melt terms omitted). Vectorised; no checks.
    """
    t_h = np.asarray(t_h, dtype=float)
    a_p = _AP_LO + (_AP_HI - _AP_LO) * np.clip((t_h - _AP_T0) / (_AP_T1 - _AP_T0), 0.0, 1.0)
    s_p = _SP_LO + (_SP_HI - _SP_LO) * np.clip((t_h - _SP_T0) / (_SP_T1 - _SP_T0), 0.0, 1.0)
    return a_p, s_p


def _log_viscosity(temperature_k, pressure_gpa, grain_size_mm, t_h):
    """ln of the YT16 diffusion-creep viscosity (Pa s) with the near-solidus drop A_eta."""
    t = np.maximum(np.asarray(temperature_k, dtype=float), _T_MIN_K)
    p = np.asarray(pressure_gpa, dtype=float) * 1e9
    d = np.maximum(np.asarray(grain_size_mm, dtype=float), _D_MIN_MM)
    ln_eta = (np.log(_ETA_R) + _M * np.log(d / _D_R) + (_E / _R) * (1.0 / t - 1.0 / _T_R)
              + (_V / _R) * (p / t - _P_R / _T_R))
    # A_eta: 1 below T'_eta; exp[-(T'-T_eta)/(T'-T' T_eta) ln gamma] up to the solidus; 1/gamma
    # above it (no direct melt term).
    th = np.clip(t_h, _T_ETA, 1.0)
    ln_a = -(th - _T_ETA) / (th * (1.0 - _T_ETA)) * np.log(_GAMMA)
    return ln_eta + ln_a


def mantle_shear_modulus_gpa(temperature_k, pressure_gpa):
    """YT16's unrelaxed shear modulus of the mantle, GPa; no checks.

    mu_U = mu_0 + (dmu/dT)(T - 273 K) + (dmu/dP) P, with their calibrated mu_0 = 72.45 GPa,
    dmu/dT = -0.01094 GPa/K and dmu/dP = 1.987 (``[yamauchi_takei2016.mantle_reference]``).
    It sets the Maxwell time eta/mu_U of the law, as in YT16's calibration of eta_r.
    """
    return (_MU0 + _DMU_DT * (np.asarray(temperature_k, dtype=float) - _MU_T0)
            + _DMU_DP * np.asarray(pressure_gpa, dtype=float))


def compliance_ratio(temperature_k, pressure_gpa, frequency_hz, grain_size_mm,
                     shear_modulus_gpa=None, t_h=None):
    """J1/J_U and J2/J_U of Yamauchi & Takei (2016) at the seismic period; no checks.

    Parameters
    ----------
    temperature_k, pressure_gpa, frequency_hz, grain_size_mm : array_like
        State and seismic frequency (period ``1/frequency_hz``); broadcast.
    shear_modulus_gpa : array_like, optional
        Unrelaxed shear modulus mu_U (GPa), which sets the Maxwell time eta/mu_U; default
        YT16's mantle modulus (:func:`mantle_shear_modulus_gpa`), with which eta_r was
        calibrated.
    t_h : array_like, optional
        Homologous temperature T/T_s; default from :func:`homologous_temperature`.

    Returns
    -------
    j1, j2 : numpy.ndarray
        Real and imaginary compliance relative to the unrelaxed compliance (J1/J_U >= 1).

    Notes
    -----
    YT16: with :math:`\\tau'` the normalised period,
    :math:`J_1/J_U = 1 + A_B\\tau'^{\\alpha_B}/\\alpha_B + \\tfrac{\\sqrt{2\\pi}}{2} A_P\\sigma_P
    [1 - \\mathrm{erf}(\\ln(\\tau'_P/\\tau')/(\\sqrt2\\sigma_P))]` and
    :math:`J_2/J_U = \\tfrac{\\pi}{2}[A_B\\tau'^{\\alpha_B} + A_P\\exp(-\\ln^2(\\tau'_P/\\tau')
    /(2\\sigma_P^2))] + \\tau'`.
    """
    t_k = np.asarray(temperature_k, dtype=float)
    if t_h is None:
        t_h = homologous_temperature(t_k, pressure_gpa)
    ln_eta = _log_viscosity(t_k, pressure_gpa, grain_size_mm, t_h)
    if shear_modulus_gpa is None:
        shear_modulus_gpa = mantle_shear_modulus_gpa(t_k, pressure_gpa)
    mu_pa = np.maximum(np.asarray(shear_modulus_gpa, dtype=float), 1e-12) * 1e9
    # ln tau' = ln(tau_S) - ln(2 pi) - ln(eta / mu_U)
    ln_tau = -np.log(np.asarray(frequency_hz, dtype=float)) - np.log(2.0 * np.pi) - ln_eta
    ln_tau += np.log(mu_pa)
    a_p, s_p = peak_parameters(t_h)
    x = np.log(_TAU_P) - ln_tau  # ln(tau_P'/tau')
    bg = _A_B * np.exp(_ALPHA_B * ln_tau)  # A_B tau'^alpha_B; underflows to 0 harmlessly
    z = x / (np.sqrt(2.0) * s_p)
    j1 = 1.0 + bg / _ALPHA_B + 0.5 * np.sqrt(2.0 * np.pi) * a_p * s_p * erfc(z)
    j2 = 0.5 * np.pi * (bg + a_p * np.exp(-z * z)) + np.exp(ln_tau)
    return j1, j2


def shear_velocity_factor(j1, j2):
    """Vs / Vs_unrelaxed from the relative compliances (YT16, exact for a complex modulus).

    V_S = (rho J1)^-1/2 [(1 + sqrt(1 + (J2/J1)^2)) / 2]^-1/2, so the factor on the unrelaxed
    speed (rho J_U)^-1/2 is (J1/J_U)^-1/2 [(1 + sqrt(1 + (J2/J1)^2)) / 2]^-1/2.
    """
    r = j2 / j1
    return 1.0 / np.sqrt(j1 * 0.5 * (1.0 + np.sqrt(1.0 + r * r)))
