"""Thermal states shared by every layer of a profile.

Each state has a few parameters with priors (``params``), a vectorised geotherm
``geotherm_c(depth_km (L,), phi (n, k)) -> (n, L)`` and a predicted surface heat flow
``heat_flow_mw_m2(phi) -> (n,)``. A layer's temperature is the geotherm at its mid-depth plus a
Gaussian scatter ``scatter_c`` (processes the conductive model leaves out), truncated to the
profile's temperature range. :class:`Uncoupled` ties nothing: each layer has its own uniform
temperature (the per-layer inversion, for comparison).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..inference.priors import Normal, Uniform, as_prior
from ..physics import thermal as _th
from ..physics._data import load_table

__all__ = ["ThermalState", "HalfSpaceState", "PlateState", "AxialHotState", "Uncoupled",
           "CONDUCTIVITY", "THERMAL_STATES"]

#: Parsed ``physics/data/conductivity.toml``.
CONDUCTIVITY = load_table("conductivity")
_HS = _th.THERMAL_DATA["half_space"]
_PL = _th.THERMAL_DATA["plate"]
_SEC_PER_MYR = float(_th.THERMAL_DATA["time"]["seconds_per_myr"])
_K_LITH = float(CONDUCTIVITY["conductivity"]["lithosphere_gdh1"]["value"])
_K_CRUST = float(CONDUCTIVITY["conductivity"]["gabbro"]["value"])
_LENS = CONDUCTIVITY["axial"]["lens_depth_km_range"]
_PLATE_SWITCH_TAU = float(_PL["image_series_below"])  # below it the plate = half-space (tested)


class ThermalState:
    """Base: parameters with priors, unit-cube transform, log prior."""

    params: dict
    scatter_c: float

    @property
    def coupled(self) -> bool:
        return True

    @property
    def free(self) -> tuple[str, ...]:
        """Names of the sampled thermal parameters (the fixed ones are left out)."""
        return tuple(k for k, p in self.params.items() if not p.fixed)

    @property
    def ndim(self) -> int:
        return len(self.free)

    def values(self, phi) -> dict[str, np.ndarray]:
        """Every parameter (free and fixed) as arrays (n,) from sampled points (n, ndim)."""
        phi = np.atleast_2d(np.asarray(phi, float))
        n = phi.shape[0]
        out = {}
        for k, p in self.params.items():
            out[k] = (np.full(n, p.value) if p.fixed else phi[:, self.free.index(k)])
        return out

    def from_unit(self, u) -> np.ndarray:
        u = np.atleast_2d(np.asarray(u, float))
        return np.stack([self.params[k].ppf(u[:, j]) for j, k in enumerate(self.free)],
                        axis=1) if self.ndim else np.zeros((u.shape[0], 0))

    def log_prior(self, phi) -> np.ndarray:
        phi = np.atleast_2d(np.asarray(phi, float))
        lp = np.zeros(phi.shape[0])
        for j, k in enumerate(self.free):
            lp = lp + self.params[k].logpdf(phi[:, j])
        return np.where(np.isnan(lp), -np.inf, lp)

    def describe(self) -> str:
        ps = ", ".join(f"{k}={p.describe()}" for k, p in self.params.items())
        return f"{type(self).__name__}({ps}, scatter_c={self.scatter_c:g})"

    #: Readable name of the state, for titles and captions.
    title = "thermal state"

    def label(self) -> str:
        """Readable one-line summary for figure titles: the state's name, its free parameters
        with their prior ranges and units, and the scatter (fixed parameters are left out),
        e.g. ``half-space cooling: age 0.5-30 Myr, mantle temperature 1350 +- 50 deg C;
        scatter 50 deg C``. :meth:`describe` is the complete, machine-like form."""
        parts = [f"{_readable_name(k)} {_readable_prior(self.params[k])}{_unit(k)}"
                 for k in self.free]
        return f"{self.title}: {', '.join(parts) or 'all parameters fixed'}; " \
               f"scatter {self.scatter_c:g} deg C"

    def _init(self, names):
        for k in names:
            object.__setattr__(self, k, as_prior(k, getattr(self, k)))
        if not (isinstance(self.scatter_c, (int, float)) and math.isfinite(self.scatter_c)
                and self.scatter_c > 0):
            raise ValueError(f"{type(self).__name__}: scatter_c must be > 0 deg C; "
                             f"got {self.scatter_c!r}")
        object.__setattr__(self, "params", {k: getattr(self, k) for k in names})


_UNITS = {"_myr": " Myr", "_c": " deg C", "_km": " km", "_w_mk": " W/m/K"}


def _unit(name):
    return next((u for suf, u in _UNITS.items() if name.endswith(suf)), "")


def _readable_name(name):
    for suf in sorted(_UNITS, key=len, reverse=True):
        if name.endswith(suf):
            name = name[: -len(suf)]
            break
    return name.replace("_", " ")


def _readable_prior(prior):
    """``lo-hi`` for uniform priors, ``mu +- sigma`` for normal ones, else ``describe()``."""
    from ..inference.priors import LogUniform, Normal, TruncatedNormal, Uniform

    if isinstance(prior, (Uniform, LogUniform)):
        sep = " to " if prior.lo < 0 else "-"
        return f"{prior.lo:g}{sep}{prior.hi:g}" + (" (log-uniform)" if isinstance(
            prior, LogUniform) else "")
    if isinstance(prior, (Normal, TruncatedNormal)):
        return f"{prior.mu:g} +- {prior.sigma:g}"
    return prior.describe()


def _lower_bound(name, prior, lo):
    if not prior.bounds[0] > lo:
        raise ValueError(f"{name} prior must lie above {lo:g}; got {prior.describe()}")


@dataclass(frozen=True, eq=False)
class HalfSpaceState(ThermalState):
    """Cooling half-space from crustal age (Turcotte & Schubert 2002, eq. 4-113).

    Heat flow :math:`q = k (T_m - T_s) / \\sqrt{\\pi \\kappa t}` (Turcotte & Schubert 2002,
    eq. 4-124; the form behind Parsons & Sclater 1977's :math:`q \\propto t^{-1/2}`).
    ``conductivity_w_mk`` is the lithosphere's, default GDH1's 3.138 W/m/K (Stein & Stein 1992).
    """

    title = "half-space cooling"

    age_myr: object = field(default_factory=lambda: Uniform(0.5, 30.0))
    mantle_temperature_c: object = field(
        default_factory=lambda: Normal(float(_HS["mantle_temperature_c"]), 50.0))
    scatter_c: float = 50.0
    conductivity_w_mk: object = _K_LITH
    diffusivity_m2_s: float = float(_HS["diffusivity_m2_s"])
    surface_temperature_c: float = float(_HS["surface_temperature_c"])
    params: dict = field(default=None, repr=False)

    def __post_init__(self):
        self._init(("age_myr", "mantle_temperature_c", "conductivity_w_mk"))
        _lower_bound("age_myr", self.age_myr, 0.0)

    def geotherm_c(self, depth_km, phi):
        v = self.values(phi)
        return _th.half_space_temperature_c(
            np.asarray(depth_km, float)[None, :], v["age_myr"][:, None],
            mantle_temperature_c=v["mantle_temperature_c"][:, None],
            surface_temperature_c=self.surface_temperature_c,
            diffusivity_m2_s=self.diffusivity_m2_s)

    def heat_flow_mw_m2(self, phi):
        v = self.values(phi)
        t = v["age_myr"] * _SEC_PER_MYR
        dt = v["mantle_temperature_c"] - self.surface_temperature_c
        return 1e3 * v["conductivity_w_mk"] * dt / np.sqrt(math.pi * self.diffusivity_m2_s * t)


@dataclass(frozen=True, eq=False)
class PlateState(ThermalState):
    """Cooling plate (Parsons & Sclater 1977; GDH1 thickness and basal temperature by default).

    Heat flow :math:`q = \\frac{k (T_m - T_s)}{a}[1 + 2\\sum_n e^{-n^2 \\pi^2 \\kappa t / a^2}]`
    (Parsons & Sclater 1977; Turcotte & Schubert 2002, eq. 4-135). Below
    :math:`\\kappa t / a^2 = 0.05` the series equals the half-space value to < 1e-8 relative
    (theta-function identity), which is used there.
    """

    title = "cooling plate"

    age_myr: object = field(default_factory=lambda: Uniform(0.5, 30.0))
    mantle_temperature_c: object = field(
        default_factory=lambda: Normal(float(_PL["mantle_temperature_c"]), 50.0))
    plate_thickness_km: object = float(_PL["plate_thickness_km"])
    scatter_c: float = 50.0
    conductivity_w_mk: object = _K_LITH
    diffusivity_m2_s: float = float(_HS["diffusivity_m2_s"])
    surface_temperature_c: float = float(_HS["surface_temperature_c"])
    params: dict = field(default=None, repr=False)

    def __post_init__(self):
        self._init(("age_myr", "mantle_temperature_c", "plate_thickness_km",
                    "conductivity_w_mk"))
        _lower_bound("age_myr", self.age_myr, 0.0)

    def geotherm_c(self, depth_km, phi):
        v = self.values(phi)
        return _th.plate_temperature_c(
            np.asarray(depth_km, float)[None, :], v["age_myr"][:, None],
            plate_thickness_km=v["plate_thickness_km"][:, None],
            mantle_temperature_c=v["mantle_temperature_c"][:, None],
            surface_temperature_c=self.surface_temperature_c,
            diffusivity_m2_s=self.diffusivity_m2_s)

    def heat_flow_mw_m2(self, phi):
        v = self.values(phi)
        a = v["plate_thickness_km"] * 1e3
        t = v["age_myr"] * _SEC_PER_MYR
        tau = self.diffusivity_m2_s * t / (a * a)
        n = np.arange(1, int(_PL["n_fourier_terms"]) + 1, dtype=float)
        series = 1.0 + 2.0 * np.exp(-np.multiply.outer(np.maximum(tau, _PLATE_SWITCH_TAU),
                                                       n * n * math.pi**2)).sum(axis=-1)
        dt = v["mantle_temperature_c"] - self.surface_temperature_c
        plate = v["conductivity_w_mk"] * dt / a * series
        half = v["conductivity_w_mk"] * dt / np.sqrt(math.pi * self.diffusivity_m2_s * t)
        return 1e3 * np.where(tau < _PLATE_SWITCH_TAU, half, plate)


@dataclass(frozen=True, eq=False)
class AxialHotState(ThermalState):
    """Near-axis hot state: a conductive lid above a melt lens, mush at the solidus below.

    ``T(z) = T_s + (T_sol(z_l) + dT - T_s) z / z_l`` above the lens depth ``z_l`` and
    ``T_sol(z) + dT`` below, where ``T_sol`` is the anhydrous peridotite solidus (Hirschmann
    2000) at the lithostatic pressure and ``dT`` (``mush_offset_c`` <= 0) the mush's offset from
    it. Heat flow through the lid: ``q = k_crust (T(z_l) - T_s) / z_l`` (conductive lid,
    `common practice`); ``k_crust`` defaults to gabbro's (Clauser & Huenges 1995). Lens depths
    1-4 km below the seafloor (Detrick et al. 1987; Purdy et al. 1992).
    """

    title = "near-axis hot zone"

    lens_depth_km: object = field(default_factory=lambda: Uniform(*_LENS))
    mush_offset_c: object = field(default_factory=lambda: Uniform(-200.0, 0.0))
    water_depth_km: float = 2.5
    scatter_c: float = 50.0
    conductivity_w_mk: object = _K_CRUST
    surface_temperature_c: float = float(_HS["surface_temperature_c"])
    params: dict = field(default=None, repr=False)

    def __post_init__(self):
        self._init(("lens_depth_km", "mush_offset_c", "conductivity_w_mk"))
        _lower_bound("lens_depth_km", self.lens_depth_km, 0.0)

    def _solidus(self, depth_km):
        p = _th.lithostatic_pressure_gpa(depth_km, water_depth_km=self.water_depth_km)
        return _th.peridotite_solidus_c(p)

    def geotherm_c(self, depth_km, phi):
        v = self.values(phi)
        z = np.asarray(depth_km, float)[None, :]
        zl = v["lens_depth_km"][:, None]
        t_lens = self._solidus(zl) + v["mush_offset_c"][:, None]
        lid = self.surface_temperature_c + (t_lens - self.surface_temperature_c) * z / zl
        mush = self._solidus(z) + v["mush_offset_c"][:, None]
        return np.where(z < zl, lid, mush)

    def heat_flow_mw_m2(self, phi):
        v = self.values(phi)
        zl = v["lens_depth_km"]
        t_lens = self._solidus(zl) + v["mush_offset_c"]
        return v["conductivity_w_mk"] * (t_lens - self.surface_temperature_c) / zl  # W/m/K K/km


@dataclass(frozen=True, eq=False)
class Uncoupled(ThermalState):
    """No shared thermal state: each layer's temperature uniform on ``[lo, hi]`` deg C.

    Heat flow, if observed, is predicted from the top layer alone as the linear conductive
    gradient ``k_crust (T_1 - T_s) / z_1`` (mid-depth ``z_1``), `common practice`.
    """

    lo: float = 0.0
    hi: float = 1400.0
    conductivity_w_mk: float = _K_CRUST
    surface_temperature_c: float = float(_HS["surface_temperature_c"])
    scatter_c: float = 1.0
    params: dict = field(default_factory=dict, repr=False)

    def __post_init__(self):
        Uniform(self.lo, self.hi)

    @property
    def coupled(self) -> bool:
        return False

    def describe(self) -> str:
        return f"Uncoupled(T uniform {self.lo:g}-{self.hi:g} deg C per layer)"

    def label(self) -> str:
        return f"uncoupled: each layer's temperature uniform {self.lo:g}-{self.hi:g} deg C"


#: Names accepted in study files.
THERMAL_STATES = {"half_space": HalfSpaceState, "plate": PlateState, "axial": AxialHotState,
                  "uncoupled": Uncoupled}
