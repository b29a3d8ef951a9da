"""Thermal state of oceanic lithosphere: solidi, serpentine stability, geotherms, pressure.

All functions are public, validate their input, and broadcast over array arguments. Literature
numbers live in ``physics/data/thermal.toml`` with source and tag; the keyword defaults below are
read from that file.
"""

from __future__ import annotations

import numpy as np
from scipy.special import erf, erfc

from bayescrust.physics._checks import check_range
from bayescrust.physics._data import load_table

__all__ = [
    "THERMAL_DATA",
    "gabbro_solidus_c",
    "half_space_temperature_c",
    "lithostatic_pressure_gpa",
    "peridotite_solidus_c",
    "plate_temperature_c",
    "serpentine_stability_c",
]


#: Parsed ``data/thermal.toml`` (read-only mapping).
THERMAL_DATA = load_table("thermal")

_PER = THERMAL_DATA["peridotite_solidus"]
_GAB = THERMAL_DATA["gabbro_solidus"]
_LIZ = THERMAL_DATA["serpentine"]["lizardite"]
_ATG = THERMAL_DATA["serpentine"]["antigorite"]
_ATG_P = np.asarray(_ATG["pressure_gpa"], dtype=float)
_ATG_T = np.asarray(_ATG["temperature_c"], dtype=float)
_HS = THERMAL_DATA["half_space"]
_PL = THERMAL_DATA["plate"]
_SEC_PER_MYR = float(THERMAL_DATA["time"]["seconds_per_myr"])
_LITHO = THERMAL_DATA["lithostatic"]

_M_PER_KM = 1.0e3
# Numerical guard (not a literature number): ages are floored at 1e-12 Myr (~30 s) so that
# erf(z / 2 sqrt(kappa t)) is evaluated at a finite argument; z > 0 then gives the mantle
# temperature and z = 0 the surface temperature, never 0/0.
_AGE_FLOOR_MYR = 1.0e-12

SERPENTINE_KINDS = ("lizardite", "antigorite")

# Public validation ranges.
_P_RANGE_GPA = (0.0, 15.0)
_DEPTH_RANGE_KM = (0.0, 700.0)
_AGE_RANGE_MYR = (0.0, 4600.0)


def peridotite_solidus_c(pressure_gpa):
    """Anhydrous peridotite solidus, deg C.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa, in [0, 10] (the range of the fit).

    Returns
    -------
    numpy.ndarray
        Solidus temperature, deg C, shaped like ``pressure_gpa``.

    Raises
    ------
    ValueError
        If ``pressure_gpa`` is non-finite or outside [0, 10].

    Notes
    -----
    Hirschmann (2000), fit to experimental solidus brackets (abstract):
    :math:`T = -5.104 P^2 + 132.899 P + 1120.661`.

    References
    ----------
    Hirschmann, M.M. (2000). Mantle solidus: experimental constraints and the effects of
    peridotite composition. Geochem. Geophys. Geosyst. 1, 1042.

    Examples
    --------
    >>> round(float(peridotite_solidus_c(1.0)), 1)
    1248.5
    """
    lo, hi = _PER["pressure_range_gpa"]
    p = check_range("pressure_gpa", pressure_gpa, lo, hi, unit="GPa")
    return np.polynomial.polynomial.polyval(p, np.asarray(_PER["coeffs"], dtype=float))


def gabbro_solidus_c(pressure_gpa):
    """Dry (anhydrous) gabbro / basalt solidus, deg C.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa, in [0, 3].

    Returns
    -------
    numpy.ndarray
        Solidus temperature, deg C, shaped like ``pressure_gpa``.

    Raises
    ------
    ValueError
        If ``pressure_gpa`` is non-finite or outside [0, 3].

    Notes
    -----
    Linear approximation :math:`T = 1100 + 100 P` (deg C, GPa) to the dry gabbro melting curve
    compiled by Lambert & Wyllie (1972). The coefficients are recalled, not read from the
    source (tag ``from memory`` in ``data/thermal.toml``); treat as +-50 deg C. Water lowers the
    solidus by some 200 deg C.

    References
    ----------
    Lambert, I.B. & Wyllie, P.J. (1972). Melting of gabbro (quartz eclogite) with excess water
    to 35 kilobars, with geological applications. J. Geol. 80, 693-708.

    Examples
    --------
    >>> float(gabbro_solidus_c(0.5))
    1150.0
    """
    lo, hi = _GAB["pressure_range_gpa"]
    p = check_range("pressure_gpa", pressure_gpa, lo, hi, unit="GPa")
    return float(_GAB["t0_c"]) + float(_GAB["slope_c_per_gpa"]) * p


def serpentine_stability_c(pressure_gpa, kind="antigorite"):
    """Upper temperature stability limit of serpentine, deg C.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa, in [0, 15]. Beyond the tabulated pressures (0-5 GPa) the limit is held at
        its end value.
    kind : {"antigorite", "lizardite"}
        Serpentine mineral. ``"lizardite"`` stands for the low-temperature lizardite/chrysotile
        serpentinite of oceanic lithosphere.

    Returns
    -------
    numpy.ndarray
        Temperature above which the serpentine is unstable, deg C, shaped like ``pressure_gpa``.

    Raises
    ------
    ValueError
        If ``pressure_gpa`` is non-finite or out of range, or ``kind`` is unknown.

    Notes
    -----
    Lizardite: a constant 300 deg C, the upper end of the 50-300 deg C range where lizardite is
    the predominant serpentine (Evans 2010). Antigorite: piecewise-linear through
    (0, 500), (0.5, 560) (Evans et al. 1976, from memory) and (2, 720), (3, 690), (5, 620)
    (GPa, deg C; Ulmer & Trommsdorff 1995, abstract). Al-free antigorite breaks down some
    30-60 deg C lower (Bromiley & Pawley 2003).

    References
    ----------
    Evans, B.W. (2010). Lizardite versus antigorite serpentinite: magnetite, hydrogen, and
    life(?). Geology 38, 879-882.

    Evans, B.W., Johannes, W., Oterdoom, H. & Trommsdorff, V. (1976). Stability of chrysotile
    and antigorite in the serpentinite multisystem. Schweiz. Mineral. Petrogr. Mitt. 56, 79-93.

    Ulmer, P. & Trommsdorff, V. (1995). Serpentine stability to mantle depths and
    subduction-related magmatism. Science 268, 858-861.

    Bromiley, G.D. & Pawley, A.R. (2003). The stability of antigorite in the systems MgO-SiO2-H2O
    and MgO-Al2O3-SiO2-H2O. Am. Mineral. 88, 99-108.

    Examples
    --------
    >>> float(serpentine_stability_c(2.0)), float(serpentine_stability_c(1.0, kind="lizardite"))
    (720.0, 300.0)
    """
    if kind not in SERPENTINE_KINDS:
        raise ValueError(f"kind must be one of {list(SERPENTINE_KINDS)}; got {kind!r}")
    p = check_range("pressure_gpa", pressure_gpa, *_P_RANGE_GPA, unit="GPa")
    if kind == "lizardite":
        return np.full(p.shape, float(_LIZ["temperature_c"]))
    return np.interp(p, _ATG_P, _ATG_T)


def _validate_geotherm_args(depth_km, age_myr, mantle_temperature_c, surface_temperature_c,
                            diffusivity_m2_s):
    z = check_range("depth_km", depth_km, *_DEPTH_RANGE_KM, unit="km")
    t = check_range("age_myr", age_myr, *_AGE_RANGE_MYR, unit="Myr")
    tm = check_range("mantle_temperature_c", mantle_temperature_c, 500.0, 2000.0, unit="deg C")
    ts = check_range("surface_temperature_c", surface_temperature_c, -5.0, 100.0, unit="deg C")
    kappa = check_range("diffusivity_m2_s", diffusivity_m2_s, 1e-8, 1e-4, unit="m^2/s")
    return z, t, tm, ts, kappa


def half_space_temperature_c(
    depth_km,
    age_myr,
    *,
    mantle_temperature_c=float(_HS["mantle_temperature_c"]),
    surface_temperature_c=float(_HS["surface_temperature_c"]),
    diffusivity_m2_s=float(_HS["diffusivity_m2_s"]),
):
    """Half-space cooling geotherm, deg C.

    Parameters
    ----------
    depth_km : array_like
        Depth below the seafloor, km, in [0, 700].
    age_myr : array_like
        Plate age, Myr, in [0, 4600]. Age 0 gives the mantle temperature at every depth > 0.
    mantle_temperature_c : float or array_like, optional
        Initial (mantle) temperature, deg C; default 1350.
    surface_temperature_c : float or array_like, optional
        Seafloor temperature, deg C; default 0.
    diffusivity_m2_s : float or array_like, optional
        Thermal diffusivity, m^2/s; default 1e-6.

    Returns
    -------
    numpy.ndarray
        Temperature, deg C, broadcast shape of the inputs.

    Raises
    ------
    ValueError
        If an argument is non-finite or out of range.

    Notes
    -----
    Turcotte & Schubert (Geodynamics, half-space cooling, eq. 4-113 of the 2nd ed.):
    :math:`T = T_s + (T_m - T_s)\\,\\mathrm{erf}\\big(z / 2\\sqrt{\\kappa t}\\big)`.

    References
    ----------
    Turcotte, D.L. & Schubert, G. (2002). Geodynamics, 2nd ed. Cambridge University Press.

    Examples
    --------
    >>> round(float(half_space_temperature_c(10.0, 10.0)), 1)
    417.7
    """
    z, t, tm, ts, kappa = _validate_geotherm_args(
        depth_km, age_myr, mantle_temperature_c, surface_temperature_c, diffusivity_m2_s
    )
    t_s = np.maximum(t, _AGE_FLOOR_MYR) * _SEC_PER_MYR
    arg = z * _M_PER_KM / (2.0 * np.sqrt(kappa * t_s))
    return ts + (tm - ts) * erf(arg)


def plate_temperature_c(
    depth_km,
    age_myr,
    *,
    plate_thickness_km=float(_PL["plate_thickness_km"]),
    mantle_temperature_c=float(_PL["mantle_temperature_c"]),
    surface_temperature_c=float(_HS["surface_temperature_c"]),
    diffusivity_m2_s=float(_HS["diffusivity_m2_s"]),
):
    """Cooling-plate geotherm, deg C (GDH1 thickness and basal temperature by default).

    Parameters
    ----------
    depth_km : array_like
        Depth below the seafloor, km, in [0, 700]; below the plate base the basal temperature is
        returned.
    age_myr : array_like
        Plate age, Myr, in [0, 4600]. Age 0 gives the basal temperature at every depth > 0.
    plate_thickness_km : float or array_like, optional
        Plate thickness :math:`a`, km, in [10, 300]; default 95 (GDH1).
    mantle_temperature_c : float or array_like, optional
        Basal (and initial) temperature, deg C; default 1450 (GDH1).
    surface_temperature_c : float or array_like, optional
        Seafloor temperature, deg C; default 0.
    diffusivity_m2_s : float or array_like, optional
        Thermal diffusivity, m^2/s; default 1e-6.

    Returns
    -------
    numpy.ndarray
        Temperature, deg C, broadcast shape of the inputs.

    Raises
    ------
    ValueError
        If an argument is non-finite or out of range.

    Notes
    -----
    Plate model (Parsons & Sclater 1977; Turcotte & Schubert, eq. 4-130 of the 2nd ed.), with
    :math:`\\tau = \\kappa t / a^2`:

    .. math:: \\frac{T - T_s}{T_m - T_s} = \\frac{z}{a} + \\frac{2}{\\pi}\\sum_{n\\ge1}
              \\frac1n e^{-n^2\\pi^2\\tau}\\sin\\frac{n\\pi z}{a}.

    The Fourier series converges slowly for young plates (Gibbs oscillation at t -> 0), so for
    :math:`\\tau < 0.05` the equivalent image series of the same boundary-value problem is used,
    :math:`1 - \\sum_{k\\ge0}[\\mathrm{erfc}\\frac{2ka + z}{2\\sqrt{\\kappa t}} -
    \\mathrm{erfc}\\frac{2(k+1)a - z}{2\\sqrt{\\kappa t}}]`, whose first term is the half-space
    solution. With 60 Fourier and 6 image terms both are converged to far below 1e-9 of
    :math:`T_m - T_s` on their side of the switch.

    References
    ----------
    Parsons, B. & Sclater, J.G. (1977). An analysis of the variation of ocean floor bathymetry
    and heat flow with age. J. Geophys. Res. 82, 803-827.

    Stein, C.A. & Stein, S. (1992). A model for the global variation in oceanic depth and heat
    flow with lithospheric age. Nature 359, 123-129.

    Examples
    --------
    >>> round(float(plate_temperature_c(50.0, 100.0)), 1)
    792.3
    """
    z, t, tm, ts, kappa = _validate_geotherm_args(
        depth_km, age_myr, mantle_temperature_c, surface_temperature_c, diffusivity_m2_s
    )
    a_km = check_range("plate_thickness_km", plate_thickness_km, 10.0, 300.0, unit="km")
    z, t, tm, ts, kappa, a_km = np.broadcast_arrays(z, t, tm, ts, kappa, a_km)
    a = a_km * _M_PER_KM
    zz = np.minimum(z * _M_PER_KM, a)
    t_s = np.maximum(t, _AGE_FLOOR_MYR) * _SEC_PER_MYR
    tau = kappa * t_s / (a * a)

    # Fourier series (old plates).
    n = np.arange(1, int(_PL["n_fourier_terms"]) + 1, dtype=float)
    decay = np.exp(-np.multiply.outer(np.maximum(tau, float(_PL["image_series_below"])),
                                      n * n * np.pi**2))
    sines = np.sin(np.multiply.outer(zz / a, n * np.pi))
    theta_fourier = zz / a + (2.0 / np.pi) * np.sum(decay * sines / n, axis=-1)

    # Image series (young plates).
    k = np.arange(int(_PL["n_image_terms"]), dtype=float)
    s = (2.0 * np.sqrt(kappa * t_s))[..., None]
    a_ = a[..., None]
    z_ = zz[..., None]
    images = erfc((2.0 * k * a_ + z_) / s) - erfc((2.0 * (k + 1.0) * a_ - z_) / s)
    theta_image = 1.0 - np.sum(images, axis=-1)

    theta = np.where(tau < float(_PL["image_series_below"]), theta_image, theta_fourier)
    return ts + (tm - ts) * theta


def lithostatic_pressure_gpa(
    depth_below_seafloor_km,
    *,
    water_depth_km,
    crust_density=float(_LITHO["crust_density"]),
    crust_thickness_km=float(_LITHO["crust_thickness_km"]),
    mantle_density=float(_LITHO["mantle_density"]),
    water_density=float(_LITHO["water_density"]),
):
    """Lithostatic pressure under an ocean, GPa.

    Parameters
    ----------
    depth_below_seafloor_km : array_like
        Depth below the seafloor, km, in [0, 700].
    water_depth_km : array_like
        Water depth, km, in [0, 12].
    crust_density, mantle_density, water_density : float or array_like, optional
        Densities, g/cm^3 (defaults 2.9, 3.3, 1.03), each in [0.5, 5].
    crust_thickness_km : float or array_like, optional
        Crustal thickness, km, in [0, 50]; default 6.

    Returns
    -------
    numpy.ndarray
        Pressure, GPa, broadcast shape of the inputs.

    Raises
    ------
    ValueError
        If an argument is non-finite or out of range.

    Notes
    -----
    :math:`P = g(\\rho_w h_w + \\rho_c \\min(z, h_c) + \\rho_m \\max(z - h_c, 0))` with
    :math:`g = 9.81` m/s^2 [common practice]. In g/cm^3 and km,
    :math:`P[\\mathrm{GPa}] = 10^{-3} g \\sum \\rho h`.

    References
    ----------
    Turcotte, D.L. & Schubert, G. (2002). Geodynamics, 2nd ed., section 2.2.

    Examples
    --------
    >>> round(float(lithostatic_pressure_gpa(6.0, water_depth_km=4.5)) * 1e3, 1)
    216.2
    """
    z = check_range("depth_below_seafloor_km", depth_below_seafloor_km, *_DEPTH_RANGE_KM,
                    unit="km")
    hw = check_range("water_depth_km", water_depth_km, 0.0, 12.0, unit="km")
    rc = check_range("crust_density", crust_density, 0.5, 5.0, unit="g/cm^3")
    rm = check_range("mantle_density", mantle_density, 0.5, 5.0, unit="g/cm^3")
    rw = check_range("water_density", water_density, 0.5, 5.0, unit="g/cm^3")
    hc = check_range("crust_thickness_km", crust_thickness_km, 0.0, 50.0, unit="km")
    column = rw * hw + rc * np.minimum(z, hc) + rm * np.maximum(z - hc, 0.0)
    # g/cm^3 * km * m/s^2 -> 1e3 kg/m^3 * 1e3 m * m/s^2 = 1e6 Pa = 1e-3 GPa
    return 1.0e-3 * float(_LITHO["gravity_m_s2"]) * column


def hydrostatic_pore_pressure_gpa(depth_below_sea_surface_km):
    """Hydrostatic pore-water pressure at a depth below the sea surface, GPa.

    Parameters
    ----------
    depth_below_sea_surface_km : array_like
        Water depth plus depth below the seafloor, km, >= 0.

    Returns
    -------
    numpy.ndarray
        ``P_pore = rho_w g z`` with rho_w and g of ``[lithostatic]`` in ``data/thermal.toml``
        (pore water connected to the ocean; common practice, the effective pressure
        ``P_conf - P_pore`` then controls crack closure).

    Examples
    --------
    >>> round(float(hydrostatic_pore_pressure_gpa(5.0)), 4)
    0.0505
    """
    z = check_range("depth_below_sea_surface_km", depth_below_sea_surface_km, 0.0, 1000.0,
                    unit="km")
    return 1.0e-3 * float(_LITHO["gravity_m_s2"]) * float(_LITHO["water_density"]) * z
