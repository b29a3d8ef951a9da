"""Thermoelastic properties of single minerals at pressure and temperature.

Mineral data (ambient density, adiabatic moduli, their pressure and temperature derivatives,
thermal expansion) live in ``physics/data/minerals.toml`` with a source and tag for each group of
numbers. This module loads and validates that file (``MINERALS``), packs selected minerals into
per-mineral parameter arrays (``mineral_table``) and evaluates density and adiabatic moduli at
(P, T) with a vectorised kernel (``_mineral_state``) that the forward model calls in its hot loop.
"""

from __future__ import annotations

import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from importlib import resources
from types import MappingProxyType

import numpy as np

from bayescrust.physics import _jit
from bayescrust.physics._checks import check_range
from bayescrust.physics._data import CELSIUS_TO_KELVIN

__all__ = [
    "MINERALS",
    "REFERENCE_TEMPERATURE_K",
    "Mineral",
    "MineralProperties",
    "MineralTable",
    "list_minerals",
    "load_minerals",
    "mineral_properties",
    "mineral_table",
]

#: Names other modules rely on; the loader refuses a data file that lacks any of them.
REQUIRED_MINERALS = (
    "olivine",
    "orthopyroxene",
    "clinopyroxene",
    "diopside",
    "albite",
    "andesine",
    "labradorite",
    "bytownite",
    "anorthite",
    "spinel",
    "hornblende",
    "lizardite",
    "antigorite",
    "magnetite",
)
_NUMERIC_KEYS = ("rho", "ks", "g", "ksp", "gp", "dksdt", "dgdt", "gamma_th")
_GROUPS = ("elastic", "pressure", "temperature", "thermal")
_TAGS = ("verified", "from memory", "common practice", "computed")

#: Number of Newton steps for the Eulerian strain. From the Pade starting value the error in f is
#: < 1e-12 for P <= 10 GPa and K_T >= 20 GPa, K' <= 11 (tested), well below 1e-10.
_NEWTON_STEPS = 4

# Public validation ranges (deg C, GPa).
_T_RANGE_C = (-20.0, 1800.0)
_P_RANGE_GPA = (0.0, 10.0)


@dataclass(frozen=True)
class Mineral:
    """One mineral's ambient thermoelastic parameters, as read from ``minerals.toml``.

    Attributes
    ----------
    name, description : str
        Key in the data file and composition.
    rho : float
        Density at the reference state, g/cm^3.
    ks, g : float
        Adiabatic bulk and shear modulus, GPa.
    ksp, gp : float
        Pressure derivatives dKs/dP and dG/dP.
    dksdt, dgdt : float
        Temperature derivatives at the reference temperature, GPa/K.
    alpha : tuple of float
        ``(a0, a1, a2)`` of alpha(T) = a0 + a1 T + a2 / T^2, 1/K (T in K).
    gamma_th : float
        Thermal Grueneisen parameter.
    sources, tags : Mapping[str, str]
        Source string and tag for each group (``elastic``, ``pressure``, ``temperature``,
        ``thermal``).
    note : str
        Optional remark on the choice of values ("" if none).
    """

    name: str
    description: str
    rho: float
    ks: float
    g: float
    ksp: float
    gp: float
    dksdt: float
    dgdt: float
    alpha: tuple[float, float, float]
    gamma_th: float
    sources: Mapping[str, str]
    tags: Mapping[str, str]
    note: str = ""

    def alpha_at(self, temperature_k: float) -> float:
        """Volumetric thermal expansion coefficient at ``temperature_k`` (K), in 1/K."""
        a0, a1, a2 = self.alpha
        return a0 + a1 * temperature_k + a2 / temperature_k**2


def _fail(where: str, message: str):
    raise ValueError(f"minerals.toml: {where}: {message}")


def _parse_mineral(name: str, entry: Mapping) -> Mineral:
    where = f"minerals.{name}"
    if not isinstance(entry, Mapping):
        _fail(where, "expected a table")
    values = {}
    for key in _NUMERIC_KEYS:
        if key not in entry:
            _fail(where, f"missing key {key!r}")
        val = entry[key]
        if isinstance(val, bool) or not isinstance(val, int | float) or not np.isfinite(val):
            _fail(f"{where}.{key}", f"got {val!r}, expected a finite number")
        values[key] = float(val)
    for key in ("rho", "ks", "g", "gamma_th"):
        if values[key] <= 0.0:
            _fail(f"{where}.{key}", f"got {values[key]!r}, expected a positive number")
    for key in ("dksdt", "dgdt"):
        if values[key] > 0.0:
            _fail(
                f"{where}.{key}", f"got {values[key]!r}, expected <= 0 (moduli soften on heating)"
            )
    alpha = entry.get("alpha")
    if (
        not isinstance(alpha, list)
        or len(alpha) != 3
        or not all(isinstance(a, int | float) and not isinstance(a, bool) for a in alpha)
    ):
        _fail(f"{where}.alpha", f"got {alpha!r}, expected [a0, a1, a2]")
    alpha_t = tuple(float(a) for a in alpha)
    temps = np.linspace(_T_RANGE_C[0] + CELSIUS_TO_KELVIN, _T_RANGE_C[1] + CELSIUS_TO_KELVIN, 64)
    if np.any(alpha_t[0] + alpha_t[1] * temps + alpha_t[2] / temps**2 <= 0.0):
        _fail(f"{where}.alpha", "alpha(T) must be positive over the supported temperature range")
    description = entry.get("description")
    if not isinstance(description, str) or not description:
        _fail(f"{where}.description", "missing or empty")
    sources, tags = {}, {}
    for group in _GROUPS:
        src = entry.get(f"source_{group}")
        tag = entry.get(f"tag_{group}")
        if not isinstance(src, str) or not src:
            _fail(f"{where}.source_{group}", "missing or empty")
        if tag not in _TAGS:
            _fail(f"{where}.tag_{group}", f"got {tag!r}, expected one of {list(_TAGS)}")
        sources[group] = src
        tags[group] = tag
    return Mineral(
        name=name,
        description=description,
        alpha=alpha_t,
        sources=MappingProxyType(sources),
        tags=MappingProxyType(tags),
        note=str(entry.get("note", "")),
        **values,
    )


def load_minerals(text: str | None = None) -> tuple[float, Mapping[str, Mineral]]:
    """Parse and validate the mineral data file.

    Parameters
    ----------
    text : str, optional
        TOML text to parse; by default the packaged ``physics/data/minerals.toml``.

    Returns
    -------
    reference_temperature_k : float
        Temperature (K) at which the tabulated values apply.
    minerals : Mapping[str, Mineral]
        Read-only mapping from name to :class:`Mineral`.

    Raises
    ------
    ValueError
        If a required mineral or key is missing, a modulus or density is not positive, a tag is
        unknown, or alpha(T) is not positive over the supported range; the message names the key.
    """
    if text is None:
        text = (
            resources.files("bayescrust.physics")
            .joinpath("data/minerals.toml")
            .read_text(encoding="utf-8")
        )
    data = tomllib.loads(text)
    t_ref = data.get("meta", {}).get("reference_temperature_k")
    if isinstance(t_ref, bool) or not isinstance(t_ref, int | float) or not 250.0 < t_ref < 350.0:
        _fail("meta.reference_temperature_k", f"got {t_ref!r}, expected a number in (250, 350) K")
    table = data.get("minerals")
    if not isinstance(table, Mapping):
        _fail("minerals", "missing [minerals.NAME] tables")
    missing = [name for name in REQUIRED_MINERALS if name not in table]
    if missing:
        _fail("minerals", f"missing required minerals {missing}")
    minerals = {name: _parse_mineral(name, entry) for name, entry in table.items()}
    return float(t_ref), MappingProxyType(minerals)


REFERENCE_TEMPERATURE_K, MINERALS = load_minerals()


@dataclass(frozen=True)
class MineralTable:
    """Per-mineral parameter arrays for the kernel, each of shape ``(n,)``.

    Built by :func:`mineral_table`; the derived constants are computed once here so that the
    kernel only does the (P, T)-dependent arithmetic.

    Attributes
    ----------
    names : tuple of str
        Mineral names, in the order of the last axis of the kernel output.
    rho0, ks0, g0 : numpy.ndarray
        Reference density (g/cm^3) and adiabatic moduli (GPa).
    ksp, gp : numpy.ndarray
        dKs/dP and dG/dP.
    a0, a1, a2 : numpy.ndarray
        Thermal expansion coefficients (Fei form).
    half_a1 : numpy.ndarray
        ``a1 / 2``.
    gamma_th : numpy.ndarray
        Thermal Grueneisen parameter.
    delta_s, gamma_g : numpy.ndarray
        Anderson-Grueneisen parameters for Ks and G.
    log_offset : numpy.ndarray
        ``a0 T0 + a1 T0^2 / 2 - a2 / T0`` (the antiderivative at the reference temperature T0).
    bm_b : numpy.ndarray
        ``1.5 (K' - 4)``, the third-order Birch-Murnaghan coefficient.
    three_ksp, three_gp : numpy.ndarray
        ``3 K'`` and ``3 G'``.
    """

    names: tuple[str, ...]
    rho0: np.ndarray
    ks0: np.ndarray
    g0: np.ndarray
    ksp: np.ndarray
    gp: np.ndarray
    a0: np.ndarray
    a1: np.ndarray
    a2: np.ndarray
    half_a1: np.ndarray
    gamma_th: np.ndarray
    delta_s: np.ndarray
    gamma_g: np.ndarray
    log_offset: np.ndarray
    bm_b: np.ndarray
    three_ksp: np.ndarray
    three_gp: np.ndarray


def _unknown(name) -> ValueError:
    return ValueError(f"unknown mineral {name!r}; valid names are {sorted(MINERALS)}")


def mineral_table(names: Sequence[str] | str) -> MineralTable:
    """Pack the parameters of ``names`` into arrays for :func:`_mineral_state`.

    Parameters
    ----------
    names : sequence of str or str
        Mineral names (keys of ``MINERALS``); a single string means one mineral.

    Returns
    -------
    MineralTable
        Parameter arrays of shape ``(len(names),)``, read-only.

    Raises
    ------
    ValueError
        If a name is unknown (the message lists the valid names) or ``names`` is empty.

    Notes
    -----
    The Anderson-Grueneisen parameters are fixed from the ambient data:
    delta_S = -(dKs/dT) / (alpha(T0) Ks0) and Gamma = -(dG/dT) / (alpha(T0) G0), so that the
    kernel reproduces the tabulated temperature derivatives exactly at T0.
    """
    if isinstance(names, str):
        names = (names,)
    names = tuple(names)
    if not names:
        raise ValueError("names must list at least one mineral; got an empty sequence")
    for name in names:
        if name not in MINERALS:
            raise _unknown(name)
    ms = [MINERALS[n] for n in names]
    t0 = REFERENCE_TEMPERATURE_K

    def arr(values) -> np.ndarray:
        out = np.array(values, dtype=float)
        out.flags.writeable = False
        return out

    a0 = np.array([m.alpha[0] for m in ms])
    a1 = np.array([m.alpha[1] for m in ms])
    a2 = np.array([m.alpha[2] for m in ms])
    ks0 = np.array([m.ks for m in ms])
    g0 = np.array([m.g for m in ms])
    ksp = np.array([m.ksp for m in ms])
    gp = np.array([m.gp for m in ms])
    alpha0 = a0 + a1 * t0 + a2 / t0**2
    return MineralTable(
        names=names,
        rho0=arr([m.rho for m in ms]),
        ks0=arr(ks0),
        g0=arr(g0),
        ksp=arr(ksp),
        gp=arr(gp),
        a0=arr(a0),
        a1=arr(a1),
        a2=arr(a2),
        half_a1=arr(0.5 * a1),
        gamma_th=arr([m.gamma_th for m in ms]),
        delta_s=arr(-np.array([m.dksdt for m in ms]) / (alpha0 * ks0)),
        gamma_g=arr(-np.array([m.dgdt for m in ms]) / (alpha0 * g0)),
        log_offset=arr(a0 * t0 + 0.5 * a1 * t0**2 - a2 / t0),
        bm_b=arr(1.5 * (ksp - 4.0)),
        three_ksp=arr(3.0 * ksp),
        three_gp=arr(3.0 * gp),
    )


@_jit.jitable
def _eulerian_strain(kt, bm_b, pressure):
    """Solve the third-order Birch-Murnaghan equation for the Eulerian strain f.

    Parameters
    ----------
    kt : numpy.ndarray
        Isothermal bulk modulus of the uncompressed state, GPa.
    bm_b : numpy.ndarray
        ``1.5 (K' - 4)``.
    pressure : numpy.ndarray
        Pressure, GPa; broadcasts with ``kt``.

    Returns
    -------
    numpy.ndarray
        f = ((rho / rho_T)^(2/3) - 1) / 2.

    Notes
    -----
    P(f) = 3 K_T f (1 + 2f)^(5/2) [1 + 1.5 (K' - 4) f]  (Birch 1947; e.g. Stixrude &
    Lithgow-Bertelloni 2005, eq. 20 truncated at third order). The start f0 = y / (1 + (5 + b) y),
    y = P / (3 K_T), is a Pade form of the second-order series inverse (positive for any P >= 0);
    a fixed number of Newton steps with
    dP/df = 3 K_T (1 + 2f)^(3/2) [(1 + 7f)(1 + b f) + b f (1 + 2f)] follows.
    """
    y = pressure / (3.0 * kt)
    f = y / (1.0 + (5.0 + bm_b) * y)
    for _ in range(_NEWTON_STEPS):
        s = 1.0 + 2.0 * f
        s32 = s * np.sqrt(s)
        bf1 = 1.0 + bm_b * f
        resid = 3.0 * kt * f * s32 * s * bf1 - pressure
        deriv = 3.0 * kt * s32 * ((1.0 + 7.0 * f) * bf1 + bm_b * f * s)
        f = f - resid / deriv
    return f


def _mineral_state(table: MineralTable, temperature_k, pressure_gpa):
    """Density and adiabatic moduli of each mineral of ``table`` at (P, T); no validation.

    Parameters
    ----------
    table : MineralTable
        From :func:`mineral_table`, n minerals.
    temperature_k : array_like
        Temperature, K; broadcasts with ``pressure_gpa`` to the batch shape B.
    pressure_gpa : array_like
        Pressure, GPa.

    Returns
    -------
    rho, ks, g : numpy.ndarray
        Density (g/cm^3), adiabatic bulk and shear modulus (GPa), each of shape ``B + (n,)``.

    Notes
    -----
    1. Density at (T, 0) from the Fei (1995) form alpha = a0 + a1 T + a2 / T^2:
       ln(rho(T)/rho0) = -int_{T0}^{T} alpha dT'
       = -[a0 (T - T0) + a1 (T^2 - T0^2) / 2 - a2 (1/T - 1/T0)].
    2. Adiabatic moduli at (T, 0) with the Anderson-Grueneisen parameters held constant
       (Anderson 1989, ch. 18; Anderson, Isaak & Oda 1992):
       Ks(T) = Ks0 (rho(T)/rho0)^delta_S, G(T) = G0 (rho(T)/rho0)^Gamma.
    3. Isothermal modulus for the compression: K_T(T) = Ks(T) / (1 + alpha(T) gamma_th T)
       (Anderson 1989).
    4. Compression at P by third-order Birch-Murnaghan on K_T(T), K' (see ``_eulerian_strain``),
       rho = rho(T) (1 + 2f)^(3/2).
    5. Moduli at (P, T) by third-order finite strain (Davies & Dziewonski 1975; Stixrude &
       Lithgow-Bertelloni 2005, eqs. 21-22 without the thermal term, which step 2 supplies):
       Ks = (1 + 2f)^(5/2) [Ks(T) + (3 K_T(T) Ks' - 5 Ks(T)) f],
       G  = (1 + 2f)^(5/2) [G(T)  + (3 K_T(T) G'  - 5 G(T))  f].
       Using K_T(T) in the strain coefficient makes dKs/dP = Ks' and dG/dP = G' at P = 0 exactly,
       because df/dP = 1 / (3 K_T) there.

    References
    ----------
    Anderson, D. L. (1989), Theory of the Earth, Blackwell, ch. 18.
    Anderson, O. L., Isaak, D. G. & Oda, H. (1992), High-temperature elastic constant data on
    minerals relevant to geophysics, Rev. Geophys. 30(1), 57-90.
    Birch, F. (1947), Finite elastic strain of cubic crystals, Phys. Rev. 71, 809-824.
    Davies, G. F. & Dziewonski, A. M. (1975), Homogeneity and constitution of the Earth's lower
    mantle and outer core, Phys. Earth Planet. Inter. 10, 336-343.
    Fei, Y. (1995), Thermal expansion, in Mineral Physics and Crystallography: A Handbook of
    Physical Constants, AGU Reference Shelf 2, 29-44.
    Stixrude, L. & Lithgow-Bertelloni, C. (2005), Thermodynamics of mantle minerals - I. Physical
    properties, Geophys. J. Int. 162, 610-632.
    """
    if _jit.enabled():  # the compiled loop over (sample, mineral) of the same formula
        from bayescrust.physics import _accel

        return _accel.mineral_state(table, temperature_k, pressure_gpa)
    t = np.asarray(temperature_k, dtype=float)[..., np.newaxis]
    p = np.asarray(pressure_gpa, dtype=float)[..., np.newaxis]
    return _state_formula(t, p, *_table_columns(table))


def _table_columns(table: MineralTable) -> tuple:
    """The columns of ``table`` in the argument order of :func:`_state_formula`."""
    return (table.rho0, table.ks0, table.g0, table.a0, table.a1, table.a2, table.half_a1,
            table.gamma_th, table.delta_s, table.gamma_g, table.log_offset, table.bm_b,
            table.three_ksp, table.three_gp)


@_jit.jitable
def _state_formula(t, p, rho0, ks0, g0, a0, a1, a2, half_a1, gamma_th, delta_s, gamma_g,
                   log_offset, bm_b, three_ksp, three_gp):
    """Steps 1-5 of :func:`_mineral_state` (which gives the equations and their sources) for
    temperature ``t`` (K) and pressure ``p`` (GPa) broadcasting against the mineral columns:
    numpy arrays in the reference, scalars in the compiled kernel (the same code)."""
    # Step 1-2: thermal expansion at zero pressure and Anderson-Grueneisen moduli.
    log_x = log_offset - (a0 * t + half_a1 * (t * t) - a2 / t)
    rho_t = rho0 * np.exp(log_x)
    ks_t = ks0 * np.exp(delta_s * log_x)
    g_t = g0 * np.exp(gamma_g * log_x)
    # Step 3: isothermal modulus for the compression.
    alpha_t = a0 + a1 * t + a2 / (t * t)
    kt_t = ks_t / (1.0 + alpha_t * gamma_th * t)
    # Step 4-5: Birch-Murnaghan compression and finite-strain moduli.
    f = _eulerian_strain(kt_t, bm_b, p)
    s = 1.0 + 2.0 * f
    s32 = s * np.sqrt(s)
    s52 = s32 * s
    rho = rho_t * s32
    ks = s52 * (ks_t + (three_ksp * kt_t - 5.0 * ks_t) * f)
    g = s52 * (g_t + (three_gp * kt_t - 5.0 * g_t) * f)
    return rho, ks, g


@dataclass(frozen=True)
class MineralProperties:
    """Density, moduli and velocities of one mineral at (P, T).

    Attributes
    ----------
    density : numpy.ndarray
        g/cm^3.
    bulk_modulus, shear_modulus : numpy.ndarray
        Adiabatic bulk and shear modulus, GPa.
    vp, vs : numpy.ndarray
        Compressional and shear velocity, km/s.

    All have the broadcast shape of the inputs (0-d arrays for scalar input).
    """

    density: np.ndarray
    bulk_modulus: np.ndarray
    shear_modulus: np.ndarray
    vp: np.ndarray
    vs: np.ndarray


def mineral_properties(name: str, *, temperature_c, pressure_gpa) -> MineralProperties:
    """Density, adiabatic moduli and isotropic velocities of a mineral at (P, T).

    Parameters
    ----------
    name : str
        A key of ``MINERALS`` (see :func:`list_minerals`).
    temperature_c : array_like
        Temperature, deg C, in [-20, 1800].
    pressure_gpa : array_like
        Pressure, GPa, in [0, 10]; broadcasts with ``temperature_c``.

    Returns
    -------
    MineralProperties
        Arrays of the broadcast input shape.

    Raises
    ------
    ValueError
        Unknown name (the message lists valid names), out-of-range or non-finite input, or input
        shapes that do not broadcast.

    Notes
    -----
    Vp = sqrt((Ks + 4G/3) / rho), Vs = sqrt(G / rho); GPa / (g/cm^3) = (km/s)^2. The thermoelastic
    model is described in :func:`_mineral_state`. It is anharmonic only (no anelastic
    dispersion): apply ``anelastic.py`` for seismic frequencies at high temperature.

    Examples
    --------
    >>> p = mineral_properties("olivine", temperature_c=25.0, pressure_gpa=0.0)
    >>> round(float(p.vp), 3), round(float(p.vs), 3)
    (8.341, 4.822)
    """
    if not isinstance(name, str) or name not in MINERALS:
        raise _unknown(name)
    t_c = check_range("temperature_c", temperature_c, *_T_RANGE_C, unit="deg C")
    p = check_range("pressure_gpa", pressure_gpa, *_P_RANGE_GPA, unit="GPa")
    try:
        shape = np.broadcast_shapes(t_c.shape, p.shape)
    except ValueError as exc:
        raise ValueError(
            f"temperature_c (shape {t_c.shape}) and pressure_gpa (shape {p.shape}) do not broadcast"
        ) from exc
    rho, ks, g = _mineral_state(mineral_table((name,)), t_c + CELSIUS_TO_KELVIN, p)
    rho, ks, g = (a[..., 0].reshape(shape) for a in (rho, ks, g))
    vp = np.sqrt((ks + 4.0 / 3.0 * g) / rho)
    vs = np.sqrt(g / rho)
    return MineralProperties(density=rho, bulk_modulus=ks, shear_modulus=g, vp=vp, vs=vs)


def list_minerals() -> list[dict]:
    """Summarise the mineral table for display.

    Returns
    -------
    list of dict
        One dict per mineral, sorted by name, with keys ``name``, ``description``, ``rho``
        (g/cm^3), ``ks`` and ``g`` (GPa), ``source`` and ``tag`` (of the elastic values).

    Examples
    --------
    >>> [m["name"] for m in list_minerals()][:3]
    ['actinolite', 'albite', 'andesine']
    """
    return [
        {
            "name": m.name,
            "description": m.description,
            "rho": m.rho,
            "ks": m.ks,
            "g": m.g,
            "source": m.sources["elastic"],
            "tag": m.tags["elastic"],
        }
        for m in (MINERALS[n] for n in sorted(MINERALS))
    ]
