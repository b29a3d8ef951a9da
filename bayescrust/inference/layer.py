"""Observations of one layer: depth range, water depth, observed quantities with 1-sigma errors."""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["Layer", "OBSERVABLES", "DEPTH_RANGE_KM", "WATER_DEPTH_RANGE_KM", "PRESSURE_RANGE_GPA"]

#: Allowed depth below the seafloor of a layer's top and bottom, km (input sanity limits).
DEPTH_RANGE_KM = (0.0, 100.0)
#: Allowed water depth, km (the deepest ocean trench is ~11 km).
WATER_DEPTH_RANGE_KM = (0.0, 11.0)
#: Allowed ``pressure_gpa`` of a layer, GPa (the deepest layer a study may hold).
PRESSURE_RANGE_GPA = (0.0, 5.0)

#: Observable quantities: name -> (allowed value range, unit).
OBSERVABLES = {
    "vp": ((0.5, 12.0), "km/s"),
    "vs": ((0.1, 8.0), "km/s"),
    "vp_vs": ((1.2, 4.0), ""),
    "density": ((1.0, 4.5), "g/cm^3"),
}


def _pair(layer: str, name: str, value) -> tuple[float, float] | None:
    if value is None:
        return None
    try:
        mu, sigma = (float(v) for v in value)
    except (TypeError, ValueError) as exc:
        raise ValueError(
            f"{name} must be a (value, sigma) pair of numbers; got {value!r} (layer {layer!r})"
        ) from exc
    (lo, hi), unit = OBSERVABLES[name]
    u = f" {unit}" if unit else ""
    if not math.isfinite(mu) or not lo <= mu <= hi:
        raise ValueError(f"{name} must be in [{lo:g}, {hi:g}]{u}; got {mu!r} (layer {layer!r})")
    if not math.isfinite(sigma) or not sigma > 0:
        raise ValueError(
            f"{name} sigma must be finite and > 0{u}; got {sigma!r} (layer {layer!r})"
        )
    return (mu, sigma)


@dataclass(frozen=True)
class Layer:
    """One layer of a velocity model and what was observed in it.

    Parameters
    ----------
    name : str
        Label used in messages and outputs.
    top_km, bottom_km : float
        Depth of the layer's top and bottom below the seafloor (km), ``0 <= top < bottom <= 100``.
    water_depth_km : float
        Water depth (km), ``0 <= water_depth_km <= 11``; used for the lithostatic pressure.
    vp, vs, vp_vs, density : (float, float), optional
        Observed value and its 1-sigma error: Vp and Vs in km/s, Vp/Vs dimensionless, density in
        g/cm^3. At least one must be given.
    pressure_gpa : float, optional
        Overrides the pressure computed from depth (GPa, ``0 <= p <= 5``).

    Notes
    -----
    The layer is represented by its mid-depth: pressure (unless given) is the lithostatic pressure
    at ``(top_km + bottom_km) / 2`` below the seafloor under ``water_depth_km`` of water, from
    :func:`bayescrust.physics.thermal.lithostatic_pressure_gpa`; depth-dependent thermal priors
    are evaluated at that mid-depth.

    Examples
    --------
    >>> layer = Layer("lower crust", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(7.1, 0.1))
    >>> layer.mid_depth_km
    5.0
    >>> layer.observed
    {'vp': (7.1, 0.1)}
    """

    name: str
    top_km: float
    bottom_km: float
    water_depth_km: float = 0.0
    vp: tuple | None = None
    vs: tuple | None = None
    vp_vs: tuple | None = None
    density: tuple | None = None
    pressure_gpa: float | None = None

    def __post_init__(self):
        n = str(self.name)
        object.__setattr__(self, "name", n)
        for key, (lo, hi) in (("top_km", DEPTH_RANGE_KM), ("bottom_km", DEPTH_RANGE_KM),
                              ("water_depth_km", WATER_DEPTH_RANGE_KM)):
            v = getattr(self, key)
            try:
                v = float(v)
            except (TypeError, ValueError) as exc:
                raise ValueError(f"{key} must be a number; got {v!r} (layer {n!r})") from exc
            if not math.isfinite(v) or not lo <= v <= hi:
                raise ValueError(f"{key} must be in [{lo:g}, {hi:g}] km; got {v!r} (layer {n!r})")
            object.__setattr__(self, key, v)
        if not self.top_km < self.bottom_km:
            raise ValueError(
                f"top_km must be < bottom_km; got top_km={self.top_km:g}, "
                f"bottom_km={self.bottom_km:g} (layer {n!r})"
            )
        for key in OBSERVABLES:
            object.__setattr__(self, key, _pair(n, key, getattr(self, key)))
        if not self.observed:
            raise ValueError(
                f"layer {n!r} observes nothing: give at least one of vp, vs, vp_vs, density"
            )
        if self.pressure_gpa is not None:
            p = float(self.pressure_gpa)
            lo, hi = PRESSURE_RANGE_GPA
            if not math.isfinite(p) or not lo <= p <= hi:
                raise ValueError(f"pressure_gpa must be in [{lo:g}, {hi:g}] GPa; got "
                                 f"{self.pressure_gpa!r} (layer {n!r})")
            object.__setattr__(self, "pressure_gpa", p)

    @property
    def mid_depth_km(self) -> float:
        """Mid-depth of the layer below the seafloor (km)."""
        return 0.5 * (self.top_km + self.bottom_km)

    @property
    def observed(self) -> dict[str, tuple[float, float]]:
        """Observed quantities as ``{name: (value, sigma)}`` in the order vp, vs, vp_vs, density."""
        return {k: getattr(self, k) for k in OBSERVABLES if getattr(self, k) is not None}

    def resolved_pressure_gpa(self) -> float:
        """Pressure at mid-layer (GPa): the override, or lithostatic from depth."""
        if self.pressure_gpa is not None:
            return self.pressure_gpa
        from ..physics.thermal import lithostatic_pressure_gpa

        return float(
            lithostatic_pressure_gpa(self.mid_depth_km, water_depth_km=self.water_depth_km)
        )

    def to_dict(self) -> dict:
        """Plain-dict echo (for settings and run.toml)."""
        d = {"name": self.name, "top_km": self.top_km, "bottom_km": self.bottom_km,
             "water_depth_km": self.water_depth_km}
        for k, v in self.observed.items():
            d[k] = list(v)
        if self.pressure_gpa is not None:
            d["pressure_gpa"] = self.pressure_gpa
        return d
