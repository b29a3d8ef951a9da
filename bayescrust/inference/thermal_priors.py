"""Thermal-state priors: depth-aware priors on a layer's temperature.

A thermal-state prior is any object with a method ``for_layer(layer) -> prior`` returning a
one-dimensional prior on ``temperature_c`` (deg C) with ``logpdf``, ``sample``, ``ppf`` and
``bounds`` (see :mod:`bayescrust.inference.priors`). The inference calls ``for_layer`` once per
layer, at set-up, never inside the log-probability. To write your own, subclass nothing: provide
``for_layer`` and (for the run's settings echo) ``describe()``.

Shipped states
--------------
- :class:`UniformTemperature` - no thermal information (the "uncoupled" prior).
- :class:`HalfSpaceCooling` - conductive cooling of a half-space from crustal age; the marginal
  density of T at the layer's mid-depth given priors on age and mantle temperature, plus a
  Gaussian scatter for everything the model leaves out (hydrothermal cooling, local intrusions).
- :class:`HotAxial` - a near-axis state: truncated normal centred on the peridotite solidus at the
  layer's pressure.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..physics.thermal import THERMAL_DATA
from .priors import Normal, Prior, Tabulated, TruncatedNormal, Uniform, _finite

_HS = THERMAL_DATA["half_space"]  # conventional half-space constants, with their source

__all__ = ["ThermalPrior", "UniformTemperature", "HalfSpaceCooling", "HotAxial",
           "resolve_temperature_prior"]


class ThermalPrior:
    """Documentation base of the protocol: ``for_layer(layer) -> Prior``; ``describe() -> str``."""

    def for_layer(self, layer) -> Prior:  # pragma: no cover - interface
        raise NotImplementedError

    def describe(self) -> str:  # pragma: no cover - interface
        return type(self).__name__


@dataclass(frozen=True)
class UniformTemperature(ThermalPrior):
    """Temperature uniform on ``[lo, hi]`` deg C at every depth (default 0-1400 deg C)."""

    lo: float = 0.0
    hi: float = 1400.0

    def __post_init__(self):
        Uniform(self.lo, self.hi)  # validates
        if self.lo < -5.0 or self.hi > 2000.0:
            raise ValueError(
                f"UniformTemperature: bounds must be in [-5, 2000] deg C; "
                f"got ({self.lo}, {self.hi})"
            )

    def for_layer(self, layer) -> Prior:
        return Uniform(self.lo, self.hi)

    def describe(self) -> str:
        return f"UniformTemperature({self.lo:g}, {self.hi:g})"


@dataclass(frozen=True)
class HalfSpaceCooling(ThermalPrior):
    """Half-space cooling geotherm from crustal age, marginalised over age and mantle temperature.

    Parameters
    ----------
    age_myr : Prior or float
        Prior on the crustal age (Myr, > 0); a number fixes it. Default ``Uniform(2, 20)``.
    mantle_temperature_c : Prior or float
        Prior on the mantle (initial) temperature, deg C. Default ``Normal(1350, 50)``.
    scatter_c : float
        Standard deviation (deg C, > 0) of a Gaussian added to the geotherm for processes the
        conductive model ignores (hydrothermal cooling of the crust, recent intrusions).
        Default 50 deg C.
    surface_temperature_c : float
        Seafloor temperature (deg C). Default 0.
    diffusivity_m2_s : float
        Thermal diffusivity (m^2/s). Default 1e-6 (``common practice``).
    t_max_c : float
        Upper end of the tabulated support (deg C). Default 1600.
    n_age, n_mantle, n_grid : int
        Gauss-Legendre nodes over the age and mantle-temperature quantiles, and the number of
        points of the temperature table.

    Notes
    -----
    For a layer at mid-depth ``z`` the density is

    ``p(T) = int int N(T; T_hs(z, a, T_m), scatter) p(a) p(T_m) da dT_m``,

    with ``T_hs = T_s + (T_m - T_s) erf(z / (2 sqrt(kappa a)))`` (Turcotte & Schubert, Geodynamics,
    eq. 4.113). The double integral is done once per layer by Gauss-Legendre quadrature in the
    quantile (ppf) space of the two priors, on a grid of ``n_grid`` temperatures between 0 and
    ``t_max_c``; the table is truncated to that range and normalised.
    """

    age_myr: object = field(default_factory=lambda: Uniform(2.0, 20.0))
    mantle_temperature_c: object = field(
        default_factory=lambda: Normal(float(_HS["mantle_temperature_c"]), 50.0))
    scatter_c: float = 50.0
    surface_temperature_c: float = float(_HS["surface_temperature_c"])
    diffusivity_m2_s: float = float(_HS["diffusivity_m2_s"])
    t_max_c: float = 1600.0
    n_age: int = 64
    n_mantle: int = 16
    n_grid: int = 801

    def __post_init__(self):
        from .priors import as_prior

        age = as_prior("age_myr", self.age_myr)
        if not age.bounds[0] > 0:
            raise ValueError(
                f"HalfSpaceCooling: age_myr must be > 0 Myr (prior support); got {age.describe()}"
            )
        object.__setattr__(self, "age_myr", age)
        object.__setattr__(self, "mantle_temperature_c",
                           as_prior("mantle_temperature_c", self.mantle_temperature_c))
        if not _finite("HalfSpaceCooling: scatter_c", self.scatter_c) > 0:
            raise ValueError(
                f"HalfSpaceCooling: scatter_c must be > 0 deg C; got {self.scatter_c!r}")
        if not _finite("HalfSpaceCooling: diffusivity_m2_s", self.diffusivity_m2_s) > 0:
            raise ValueError("HalfSpaceCooling: diffusivity_m2_s must be > 0")
        if not 100.0 <= _finite("HalfSpaceCooling: t_max_c", self.t_max_c) <= 2500.0:
            raise ValueError(
                f"HalfSpaceCooling: t_max_c must be in [100, 2500]; got {self.t_max_c}")

    def _nodes(self, prior, n):
        if prior.fixed:
            return np.array([prior.value]), np.array([1.0])
        x, w = np.polynomial.legendre.leggauss(n)
        u = 0.5 * (x + 1.0)
        return prior.ppf(u), 0.5 * w

    def geotherm_c(self, depth_km, age_myr, mantle_temperature_c):
        """Half-space temperature (deg C) at ``depth_km`` below the seafloor; broadcasts."""
        from ..physics.thermal import half_space_temperature_c

        return half_space_temperature_c(
            depth_km, age_myr, mantle_temperature_c=mantle_temperature_c,
            surface_temperature_c=self.surface_temperature_c,
            diffusivity_m2_s=self.diffusivity_m2_s,
        )

    def for_layer(self, layer) -> Prior:
        ages, wa = self._nodes(self.age_myr, self.n_age)
        ages = np.maximum(ages, 1e-3)
        tms, wm = self._nodes(self.mantle_temperature_c, self.n_mantle)
        t_nodes = self.geotherm_c(layer.mid_depth_km, ages[:, None], tms[None, :])  # (na, nm)
        w = (wa[:, None] * wm[None, :]).ravel()
        t_nodes = np.asarray(t_nodes, float).ravel()
        grid = np.linspace(0.0, self.t_max_c, self.n_grid)
        z = (grid[:, None] - t_nodes[None, :]) / self.scatter_c
        dens = (np.exp(-0.5 * z * z) @ w) / (self.scatter_c * math.sqrt(2 * math.pi))
        dens = np.maximum(dens, 1e-300 * dens.max())
        return Tabulated(grid, dens, label=f"{self.describe()} at {layer.mid_depth_km:g} km")

    def describe(self) -> str:
        return (f"HalfSpaceCooling(age_myr={self.age_myr.describe()}, mantle_temperature_c="
                f"{self.mantle_temperature_c.describe()}, scatter_c={self.scatter_c:g})")


@dataclass(frozen=True)
class HotAxial(ThermalPrior):
    """Near-axis thermal state: temperature near the peridotite solidus at the layer's pressure.

    Parameters
    ----------
    offset_c : float
        Centre relative to the solidus (deg C). Default -25.
    sd_c : float
        Standard deviation (deg C, > 0). Default 100.
    below_c, above_c : float
        Truncation: the support is ``[solidus - below_c, solidus + above_c]``. Defaults 400, 150.

    Notes
    -----
    Beneath a spreading axis the shallow mantle is partially molten (axial low-velocity zones,
    melt lenses): its temperature sits at or slightly below the peridotite solidus, and rises
    little above it because melting absorbs heat and melt is extracted. A normal centred
    25 deg C below the solidus with a 100 deg C spread, truncated 400 deg C below and 150 deg C
    above it, encodes that state (``common practice`` judgement, not a published fit).
    """

    offset_c: float = -25.0
    sd_c: float = 100.0
    below_c: float = 400.0
    above_c: float = 150.0

    def __post_init__(self):
        _finite("HotAxial: offset_c", self.offset_c)
        for k in ("sd_c", "below_c", "above_c"):
            if not _finite(f"HotAxial: {k}", getattr(self, k)) > 0:
                raise ValueError(f"HotAxial: {k} must be > 0 deg C; got {getattr(self, k)!r}")

    def for_layer(self, layer) -> Prior:
        from ..physics.thermal import peridotite_solidus_c

        sol = float(peridotite_solidus_c(layer.resolved_pressure_gpa()))
        return TruncatedNormal(sol + self.offset_c, self.sd_c, sol - self.below_c,
                               sol + self.above_c)

    def describe(self) -> str:
        return (f"HotAxial(offset_c={self.offset_c:g}, sd_c={self.sd_c:g}, "
                f"below_c={self.below_c:g}, above_c={self.above_c:g})")


def resolve_temperature_prior(value, layer) -> Prior:
    """Resolve ``priors['temperature_c']``: a thermal-state prior, a 1-D prior or a number."""
    from .priors import as_prior

    if hasattr(value, "for_layer"):
        prior = value.for_layer(layer)
        if not (hasattr(prior, "logpdf") and hasattr(prior, "ppf") and hasattr(prior, "bounds")):
            raise ValueError(
                "priors['temperature_c']: for_layer(layer) must return a prior with logpdf, ppf "
                f"and bounds; got {prior!r}"
            )
        return prior
    return as_prior("temperature_c", value)
