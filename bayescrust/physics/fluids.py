"""Density and adiabatic bulk modulus of pore fluids: seawater (NaCl brine) and basaltic melt.

Both phases have zero shear modulus. Seawater follows the brine relations of Batzle & Wang (1992);
basaltic melt a Murnaghan compression of a shock-wave/ultrasonic bulk modulus with linear thermal
expansion. Literature numbers live in ``physics/data/fluids.toml`` with source and tag.

The kernels (:func:`_seawater`, :func:`_basaltic_melt`) are called inside hot rock by the forward
model, so they never extrapolate a fitted polynomial: temperature and pressure are held at the
nearest edge of the fitted range, and the result is always finite.
"""

from __future__ import annotations

import numpy as np

from bayescrust.physics._checks import check_range
from bayescrust.physics._data import load_table
from bayescrust.physics._jit import jitable

__all__ = ["FLUID_DATA", "basaltic_melt", "seawater"]


#: Parsed ``data/fluids.toml`` (read-only mapping).
FLUID_DATA = load_table("fluids")

_BW = FLUID_DATA["batzle_wang_1992"]
_RHO_W = np.asarray(_BW["water_density_coeffs"], dtype=float)  # [T power, P power]
_RHO_W_SCALE = float(_BW["water_density_scale"])
_RHO_B = {k: float(v) for k, v in _BW["brine_density"].items()}
# eq. 27b's coefficients as plain floats (the kernels are also compiled, where a dict is not)
_RB_S1, _RB_S2, _RB_SCALE = _RHO_B["s1"], _RHO_B["s2"], _RHO_B["scale"]
_RB_P, _RB_PS, _RB_T, _RB_TT = _RHO_B["p"], _RHO_B["ps"], _RHO_B["t"], _RHO_B["tt"]
_RB_TS, _RB_TP, _RB_TPS = _RHO_B["ts"], _RHO_B["tp"], _RHO_B["tps"]
_V_W = np.asarray(_BW["water_velocity"]["w"], dtype=float)  # [T power, P power]
_V_B = _BW["brine_velocity"]
_V_B_S1_T = np.asarray(_V_B["s1_t"], dtype=float)
_V_B_S1_P = np.asarray(_V_B["s1_p"], dtype=float)
_V_B_S1_TP = float(_V_B["s1_tp"])
_V_B_S15_P = np.asarray(_V_B["s15_p"], dtype=float)
_V_B_S2 = float(_V_B["s2"])
_T_FIT_C = tuple(float(x) for x in _BW["validity"]["temperature_c"])
_P_FIT_MPA = tuple(float(x) for x in _BW["validity"]["pressure_mpa"])

_MELT = FLUID_DATA["basaltic_melt"]
_MELT_RHO0 = float(_MELT["density_ref"])
_MELT_T0_C = float(_MELT["temperature_ref_c"])
_MELT_ALPHA = float(_MELT["thermal_expansion_per_k"])
_MELT_K0 = float(_MELT["ks0_gpa"])
_MELT_KP = float(_MELT["ksp"])
_MELT_T_WINDOW_C = tuple(float(x) for x in _MELT["temperature_window_c"])

_MPA_PER_GPA = 1.0e3
_KM_S_PER_M_S = 1.0e-3

# Public validation ranges. Wider than the fitted ranges on purpose: the kernels hold the state at
# the edge of the fitted range, so any geologically meaningful input is accepted.
_T_RANGE_C = (-2.5, 2000.0)
_P_RANGE_GPA = (0.0, 15.0)
_S_RANGE = (0.0, 0.3)


@jitable
def _poly2(coeffs, x, y):
    """Evaluate sum_ij coeffs[i, j] x**i y**j by Horner's rule in x (broadcasting x, y; also
    on scalars in the compiled kernels)."""
    out = 0.0 * x * y
    for i in range(coeffs.shape[0] - 1, -1, -1):
        inner = 0.0 * y
        for j in range(coeffs.shape[1] - 1, -1, -1):
            inner = inner * y + coeffs[i, j]
        out = out * x + inner
    return out


@jitable
def _poly1(coeffs, x):
    """Evaluate sum_i coeffs[i] x**i by Horner's rule (numpy's polyval order of operations)."""
    out = coeffs[coeffs.shape[0] - 1] + 0.0 * x
    for i in range(coeffs.shape[0] - 2, -1, -1):
        out = coeffs[i] + out * x
    return out


def _seawater(temperature_c, pressure_gpa, salinity):
    """Kernel: density (g/cm^3) and adiabatic bulk modulus (GPa) of NaCl brine; no checks.

    Temperature and pressure are held inside the fitted box of Batzle & Wang (1992)
    (``data/fluids.toml``, ``[batzle_wang_1992.validity]``), so the result is finite for any
    finite input. Arguments broadcast against each other.
    """
    return _brine(np.asarray(temperature_c, dtype=float), np.asarray(pressure_gpa, dtype=float),
                  np.asarray(salinity, dtype=float))


@jitable
def _brine(temperature_c, pressure_gpa, salinity):
    """:func:`_seawater` on arrays or scalars (the compiled forward model calls it per element):
    Batzle & Wang (1992) eqs. 27a, 27b, 28 and 29."""
    t = np.minimum(np.maximum(temperature_c, _T_FIT_C[0]), _T_FIT_C[1])
    p = np.minimum(np.maximum(pressure_gpa * _MPA_PER_GPA, _P_FIT_MPA[0]), _P_FIT_MPA[1])
    s = np.maximum(salinity, 0.0)

    rho_w = 1.0 + _RHO_W_SCALE * _poly2(_RHO_W, t, p)  # eq. 27a
    rho = rho_w + s * (  # eq. 27b
        _RB_S1
        + _RB_S2 * s
        + _RB_SCALE
        * (_RB_P * p + _RB_PS * p * s + t * (_RB_T + _RB_TT * t + _RB_TS * s + _RB_TP * p
                                             + _RB_TPS * p * s))
    )

    v_w = _poly2(_V_W, t, p)  # eq. 28, m/s
    s1 = _poly1(_V_B_S1_T, t) + _V_B_S1_P[0] * p + _V_B_S1_P[1] * p**2
    s1 = s1 + _V_B_S1_TP * t * p
    s15 = _V_B_S15_P[0] + _V_B_S15_P[1] * p + _V_B_S15_P[2] * p**2
    v_b = v_w + s * s1 + s**1.5 * s15 + _V_B_S2 * s**2  # eq. 29, m/s

    v = v_b * _KM_S_PER_M_S
    return rho, rho * v * v


def _basaltic_melt(temperature_c, pressure_gpa):
    """Kernel: density (g/cm^3) and adiabatic bulk modulus (GPa) of dry basaltic melt; no checks.

    One-bar density rho0(T) = rho_r exp[-alpha (T - T_r)], with rho_r = 2.61 g/cm^3 at 1400 C
    (Rigden, Ahrens & Stolper 1989, J. Geophys. Res. 94, 9508-9522, molten diopside; from
    memory for the An36Di64 liquid) and alpha ~ 1e-4 /K (Lange & Carmichael 1987, Geochim.
    Cosmochim. Acta 51, 2931-2946); Murnaghan compression rho = rho0 (1 + K' P/K0)^(1/K'),
    K = K0 + K' P with K0 = 23 GPa, K' = 4 of An36Di64 model basalt (Rigden, Ahrens & Stolper
    1984, Science 226, 1071-1074). Numbers and tags in ``[basaltic_melt]`` of
    ``data/fluids.toml``. Temperature is held inside ``temperature_window_c`` and pressure at
    >= 0, so the result is finite for any finite input. Arguments broadcast.
    """
    return _melt(np.asarray(temperature_c, dtype=float), np.asarray(pressure_gpa, dtype=float))


@jitable
def _melt(temperature_c, pressure_gpa):
    """:func:`_basaltic_melt` on arrays or scalars (called per element by the compiled model)."""
    t = np.minimum(np.maximum(temperature_c, _MELT_T_WINDOW_C[0]), _MELT_T_WINDOW_C[1])
    p = np.maximum(pressure_gpa, 0.0)
    rho0 = _MELT_RHO0 * np.exp(-_MELT_ALPHA * (t - _MELT_T0_C))
    x = 1.0 + _MELT_KP * p / _MELT_K0
    rho = rho0 * x ** (1.0 / _MELT_KP)
    k = _MELT_K0 * x
    return rho, k


def seawater(temperature_c, pressure_gpa, salinity=0.035):
    """Density and adiabatic bulk modulus of seawater (NaCl brine) at (T, P, salinity).

    Parameters
    ----------
    temperature_c : array_like
        Temperature, deg C, in [-2.5, 2000]. Values outside the fitted range [0, 100] deg C are
        held at its edge (see Notes).
    pressure_gpa : array_like
        Fluid (pore) pressure, GPa, in [0, 15]. Values above 0.1 GPa are held at 0.1 GPa.
    salinity : array_like, optional
        NaCl weight fraction in [0, 0.3]; 0.035 for ordinary seawater (35 per mil).

    Returns
    -------
    rho : numpy.ndarray
        Density, g/cm^3, shaped like the broadcast inputs.
    k : numpy.ndarray
        Adiabatic bulk modulus ``rho * V^2``, GPa, same shape. The shear modulus is zero.

    Raises
    ------
    ValueError
        If an argument is non-finite or outside its range.

    Notes
    -----
    Batzle & Wang (1992): pure-water density (their eq. 27a), brine density (eq. 27b), water
    velocity as a double polynomial in T and P with the coefficients of their Table 1 (eq. 28)
    and brine velocity (eq. 29); T in deg C, P in MPa, S weight fraction. The bulk modulus is
    :math:`K_S = \\rho V_B^2`.

    The velocity polynomial is fitted to about 100 deg C and 100 MPa and diverges quickly
    outside. Because the forward model evaluates pore water inside hot rock, T and P are held at
    the nearest edge of [0, 100] deg C x [0, 100] MPa: the result is the fluid at the edge of the
    valid range, never NaN. Real water above ~150 deg C at crustal pressures is much more
    compressible than this (near-critical collapse of K), so the held value is an upper bound on
    the fluid modulus there.

    With NaCl standing in for sea salt, the density at 0 deg C, 35 per mil is ~0.4 % below the
    EOS-80 value (1.0281 g/cm^3) and the sound speed ~0.15 % below Mackenzie (1981).

    References
    ----------
    Batzle, M. & Wang, Z. (1992). Seismic properties of pore fluids. Geophysics 57, 1396-1408.

    Mackenzie, K.V. (1981). Nine-term equation for sound speed in the oceans. J. Acoust. Soc.
    Am. 70, 807-812.

    Examples
    --------
    >>> rho, k = seawater(2.0, 0.0001)
    >>> round(float(rho), 3), round(float(k), 2)
    (1.024, 2.17)
    """
    t = check_range("temperature_c", temperature_c, *_T_RANGE_C, unit="deg C")
    p = check_range("pressure_gpa", pressure_gpa, *_P_RANGE_GPA, unit="GPa")
    s = check_range("salinity", salinity, *_S_RANGE, unit="(NaCl weight fraction)")
    return _seawater(t, p, s)


def basaltic_melt(temperature_c, pressure_gpa):
    """Density and adiabatic bulk modulus of dry basaltic melt at (T, P).

    Parameters
    ----------
    temperature_c : array_like
        Temperature, deg C, in [-2.5, 2000]. The density law is applied in [1000, 1600] deg C;
        outside, T is held at the nearest edge (a melt below its solidus is not described).
    pressure_gpa : array_like
        Pressure, GPa, in [0, 15].

    Returns
    -------
    rho : numpy.ndarray
        Density, g/cm^3, shaped like the broadcast inputs.
    k : numpy.ndarray
        Adiabatic bulk modulus, GPa, same shape. The relaxed shear modulus is zero.

    Raises
    ------
    ValueError
        If an argument is non-finite or outside its range.

    Notes
    -----
    One-bar density :math:`\\rho_0(T) = \\rho_r \\exp[-\\alpha (T - T_r)]` with
    :math:`\\rho_r = 2.61` g/cm^3 at :math:`T_r = 1400` deg C and :math:`\\alpha = 10^{-4}`/K.
    Compression follows the Murnaghan equation with the bulk modulus and its pressure derivative
    of the An36Di64 model basalt of Rigden et al. (1984), :math:`K_S = 23` GPa and
    :math:`K' = 4`:

    .. math:: \\rho = \\rho_0 (1 + K' P / K_0)^{1/K'}, \\qquad K = K_0 + K' P.

    For :math:`K' = 4` the Murnaghan and third-order Birch-Murnaghan curves agree to better than
    0.2 % in density below 3 GPa. :math:`K_0` is taken independent of temperature (no sourced
    dK/dT is used).

    References
    ----------
    Rigden, S.M., Ahrens, T.J. & Stolper, E.M. (1984). Densities of liquid silicates at high
    pressures. Science 226, 1071-1074.

    Rigden, S.M., Ahrens, T.J. & Stolper, E.M. (1989). High-pressure equation of state of molten
    anorthite and diopside. J. Geophys. Res. 94, 9508-9522.

    Lange, R.A. & Carmichael, I.S.E. (1987). Densities of Na2O-K2O-CaO-MgO-FeO-Fe2O3-Al2O3-TiO2-
    SiO2 liquids. Geochim. Cosmochim. Acta 51, 2931-2946.

    Examples
    --------
    >>> rho, k = basaltic_melt(1200.0, 0.0)
    >>> round(float(rho), 3), float(k)
    (2.663, 23.0)
    """
    t = check_range("temperature_c", temperature_c, *_T_RANGE_C, unit="deg C")
    p = check_range("pressure_gpa", pressure_gpa, *_P_RANGE_GPA, unit="GPa")
    return _basaltic_melt(t, p)
