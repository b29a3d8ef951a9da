"""A profile: ordered layers below one water column, tied by one thermal state.

:class:`Profile` only holds and validates settings; :meth:`Profile.layer_models` builds the
per-layer :class:`~bayescrust.inference.model.LayerModel` objects the two computations share.
In those models the layer temperature has the *proposal* prior ``Uniform(*temperature_range_c)``;
the thermal state's conditional density replaces it (exact path: importance weights; joint MCMC:
the log-probability), so both computations use the same per-layer priors and likelihoods.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np
from scipy import special

from ..inference.layer import Layer
from ..inference.model import LayerModel
from ..inference.priors import Uniform
from ..physics import thermal as _th
from .thermal import ThermalState

__all__ = ["Profile", "HeatFlow", "default_rocks", "MANTLE_RULE", "PRESSURE_MODES"]

_LITHO = _th.THERMAL_DATA["lithostatic"]
_G = float(_LITHO["gravity_m_s2"])
_RHO_W = float(_LITHO["water_density"])
_RHO_C = float(_LITHO["crust_density"])
_RHO_M = float(_LITHO["mantle_density"])
_H_C = float(_LITHO["crust_thickness_km"])

#: The rule that makes a layer "mantle" for the crust-mantle boundary: ultramafic rock
#: (peridotite or serpentinite) is at least half of it.
MANTLE_RULE = {"ultramafic_fraction": (0.5, 1.0)}
PRESSURE_MODES = ("overburden", "reference")
HEAT_FLOW_MODES = ("gaussian", "lower_bound", "off")
_DEPTH_LAYER2_KM = 1.5  # mid-depth above which a layer defaults to extrusive/dike rocks
_CONTIGUITY_KM = 1e-6


def default_rocks(layer: Layer) -> tuple[str, ...]:
    """Depth-appropriate default rock set (`common practice`, e.g. White et al. 1992).

    Layer 2 (mid-depth < 1.5 km below the seafloor): ``basalt, gabbro``; deeper:
    ``gabbro, harzburgite`` (lower crust or uppermost mantle, the question of the boundary).
    """
    if layer.mid_depth_km < _DEPTH_LAYER2_KM:
        return ("basalt", "gabbro")
    return ("gabbro", "harzburgite")


@dataclass(frozen=True)
class HeatFlow:
    """Surface heat flow datum, mW/m^2 with its 1-sigma error.

    ``mode``: ``"gaussian"`` (a measurement of the conductive heat flow), ``"lower_bound"``
    (the conductive heat flow is at least the measured value: hydrothermal circulation of young
    crust carries heat the probe does not see, Stein & Stein 1994; likelihood
    ``Phi((q_pred - q_obs) / sigma)``), or ``"off"`` (kept for the record, not used).
    """

    value: float
    sigma: float
    mode: str = "gaussian"

    def __post_init__(self):
        for k, lo, hi in (("value", 0.0, 2000.0), ("sigma", 1e-6, 2000.0)):
            v = getattr(self, k)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and lo <= v <= hi):
                raise ValueError(f"heat_flow {k} must be in [{lo:g}, {hi:g}] mW/m^2; got {v!r}")
        if self.mode not in HEAT_FLOW_MODES:
            raise ValueError(f"heat_flow mode must be one of {list(HEAT_FLOW_MODES)}; "
                             f"got {self.mode!r}")

    def log_likelihood(self, predicted):
        """Log-likelihood of predicted heat flows (array, mW/m^2)."""
        q = np.asarray(predicted, float)
        z = (q - self.value) / self.sigma
        if self.mode == "gaussian":
            return -0.5 * z * z - math.log(self.sigma) - 0.5 * math.log(2 * math.pi)
        if self.mode == "lower_bound":
            return special.log_ndtr(z)
        return np.zeros_like(q)


@dataclass(frozen=True, eq=False)
class Profile:
    """Ordered layers of one refraction profile (see module docstring).

    Parameters
    ----------
    layers : sequence of Layer
        Top to bottom, contiguous (each top equals the bottom above), depths below the seafloor.
    thermal : ThermalState
        Shared thermal state (:mod:`bayescrust.profile.thermal`).
    water_depth_km : float
        Water depth, km; every layer is re-stated under it.
    rocks : sequence, optional
        Per layer, a tuple of rock names or ``None`` for :func:`default_rocks`.
    priors : sequence of dict, optional
        Per-layer priors as in :func:`bayescrust.invert_layer`, except ``temperature_c`` (set
        by the thermal state).
    hypotheses : sequence of dict, optional
        Per-layer interpretations (default: the layer's default hypotheses).
    heat_flow : HeatFlow, optional
    pressure : {"overburden", "reference"}
        ``overburden``: mid-layer pressure from water plus the densities of the layers above
        (sampled densities in the joint MCMC; posterior-mean densities in the exact path, whose
        error is bounded in its result); ``reference``: the fixed lithostatic column of
        :func:`bayescrust.physics.thermal.lithostatic_pressure_gpa`.
    temperature_range_c : (float, float)
        Support of every layer temperature, deg C.
    basement_km : float, optional
        Top of the igneous crust below the seafloor (default: the first layer's top); the
        igneous crustal thickness is the boundary depth minus this.
    """

    layers: tuple
    thermal: ThermalState
    water_depth_km: float = 3.0
    rocks: tuple | None = None
    priors: tuple | None = None
    hypotheses: tuple | None = None
    heat_flow: HeatFlow | None = None
    model_error: object = None
    pressure: str = "overburden"
    temperature_range_c: tuple = (0.0, 1600.0)
    basement_km: float | None = None
    name: str = "profile"
    settings: dict = field(default_factory=dict, repr=False)

    def __post_init__(self):
        layers = tuple(self.layers)
        if not layers or not all(isinstance(x, Layer) for x in layers):
            raise ValueError("profile: layers must be a non-empty sequence of bayescrust.Layer")
        if not isinstance(self.thermal, ThermalState):
            raise ValueError(f"profile: thermal must be a thermal state "
                             f"(bayescrust.profile.thermal); got {self.thermal!r}")
        hw = float(self.water_depth_km)
        layers = tuple(dataclasses.replace(x, water_depth_km=hw) for x in layers)
        for a, b in zip(layers[:-1], layers[1:], strict=True):
            if abs(b.top_km - a.bottom_km) > _CONTIGUITY_KM:
                raise ValueError(f"profile: layer {b.name!r} top_km={b.top_km:g} must equal the "
                                 f"bottom_km={a.bottom_km:g} of {a.name!r} (contiguous layers)")
        n = len(layers)
        rocks = tuple(None for _ in layers) if self.rocks is None else tuple(self.rocks)
        priors = tuple({} for _ in layers) if self.priors is None else tuple(self.priors)
        hyps = tuple(None for _ in layers) if self.hypotheses is None else tuple(self.hypotheses)
        for key, v in (("rocks", rocks), ("priors", priors), ("hypotheses", hyps)):
            if len(v) != n:
                raise ValueError(f"profile: {key} needs one entry per layer ({n}); got {len(v)}")
        rocks = tuple(default_rocks(x) if r is None else tuple(r)
                      for x, r in zip(layers, rocks, strict=True))
        for x, p in zip(layers, priors, strict=True):
            if "temperature_c" in (p or {}):
                raise ValueError(f"profile: priors of layer {x.name!r} set temperature_c; in a "
                                 "profile the temperature comes from the thermal state")
        lo, hi = (float(v) for v in self.temperature_range_c)
        Uniform(lo, hi)
        th = self.thermal
        if not th.coupled and not (lo <= th.lo and th.hi <= hi):
            raise ValueError(f"profile: the uncoupled state's temperatures {th.lo:g}-{th.hi:g} "
                             f"deg C must lie within temperature_range_c [{lo:g}, {hi:g}] deg C "
                             "(the layers' proposal; outside it the evidence is truncated)")
        if self.pressure not in PRESSURE_MODES:
            raise ValueError(f"profile: pressure must be one of {list(PRESSURE_MODES)}; "
                             f"got {self.pressure!r}")
        if self.heat_flow is not None and not isinstance(self.heat_flow, HeatFlow):
            raise ValueError("profile: heat_flow must be a bayescrust.profile.HeatFlow")
        base = layers[0].top_km if self.basement_km is None else float(self.basement_km)
        if not 0.0 <= base <= layers[0].top_km + _CONTIGUITY_KM:
            raise ValueError(f"profile: basement_km must be in [0, {layers[0].top_km:g}] km "
                             f"(the first layer's top); got {self.basement_km!r}")
        for k, v in (("layers", layers), ("water_depth_km", hw), ("rocks", rocks),
                     ("priors", tuple(dict(p or {}) for p in priors)), ("hypotheses", hyps),
                     ("temperature_range_c", (lo, hi)), ("basement_km", base)):
            object.__setattr__(self, k, v)

    @property
    def active_heat_flow(self):
        """The heat-flow observation that enters the likelihood: ``heat_flow`` unless it is
        absent or switched off (mode ``"off"``), else ``None``."""
        hf = self.heat_flow
        return hf if (hf and hf.mode != "off") else None

    # ------------------------------------------------------------------ geometry
    @property
    def n_layers(self) -> int:
        return len(self.layers)

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(x.name for x in self.layers)

    @property
    def tops_km(self) -> np.ndarray:
        return np.array([x.top_km for x in self.layers])

    @property
    def bottoms_km(self) -> np.ndarray:
        return np.array([x.bottom_km for x in self.layers])

    @property
    def mid_depths_km(self) -> np.ndarray:
        return 0.5 * (self.tops_km + self.bottoms_km)

    def reference_densities(self) -> np.ndarray:
        """Reference density per layer (g/cm^3): crust above 6 km, mantle below."""
        return np.where(self.mid_depths_km < _H_C, _RHO_C, _RHO_M)

    # ------------------------------------------------------------------ pressure
    def pressures_gpa(self, densities=None) -> np.ndarray:
        """Mid-layer pressures (GPa), shape ``batch + (L,)``.

        ``densities`` (``batch + (L,)``, g/cm^3) are the layers' densities; the pressure at the
        middle of layer ``i`` is
        ``g (rho_w h_w + rho_ref,0 z_top,0 + sum_{j<i} rho_j h_j + rho_ref,i h_i / 2)``
        (hydrostatic column, Turcotte & Schubert 2002 sec. 2.2): the layers above enter with the
        given densities, the upper half of the layer itself with its reference density (an
        error of at most ``g |rho_i - rho_ref,i| h_i / 2``, ~2.5 MPa for 1 km and 0.5 g/cm^3).
        ``None`` or ``pressure="reference"`` gives the fixed reference column.
        """
        ref = self.reference_densities()
        if self.pressure == "reference" or densities is None:
            return np.array([x.resolved_pressure_gpa() for x in self.layers])
        rho = np.asarray(densities, float)
        h = self.bottoms_km - self.tops_km
        above = np.cumsum(rho * h, axis=-1) - rho * h
        column = (_RHO_W * self.water_depth_km + ref[0] * self.tops_km[0] + above
                  + ref * 0.5 * h)
        return 1e-3 * _G * column

    # ------------------------------------------------------------------ models
    def layer_models(self, pressures_gpa=None, *, forward=None) -> list[LayerModel]:
        """One :class:`LayerModel` per layer, at the given fixed pressures (GPa)."""
        p = self.pressures_gpa() if pressures_gpa is None else np.asarray(pressures_gpa, float)
        return [self.layer_model(i, p[i], forward=forward) for i in range(self.n_layers)]

    def layer_model(self, i, pressure_gpa=None, *, forward=None) -> LayerModel:
        """The :class:`LayerModel` of layer ``i`` at a fixed pressure (GPa; default its
        reference pressure); ``ValueError`` if the layer's settings are refused."""
        p = self.pressures_gpa()[i] if pressure_gpa is None else float(pressure_gpa)
        lo, hi = self.temperature_range_c
        layer = dataclasses.replace(self.layers[i], pressure_gpa=float(np.clip(p, 0.0, 5.0)))
        pri = {**self.priors[i], "temperature_c": Uniform(lo, hi)}
        return LayerModel.build(layer, rocks=self.rocks[i], priors=pri,
                                model_error=self.model_error, forward=forward)

    # ------------------------------------------------------------------ thermal coupling
    def log_temperature_density(self, temperature_c, geotherm_c):
        """Log density of layer temperatures given the geotherm (both broadcasting).

        Coupled: normal around the geotherm with the state's scatter, truncated to
        ``temperature_range_c`` and renormalised; uncoupled: uniform on the state's range.
        """
        lo, hi = self.temperature_range_c
        t = np.asarray(temperature_c, float)
        th = self.thermal
        if not th.coupled:
            inside = (t >= th.lo) & (t <= th.hi)
            return np.where(inside, -math.log(th.hi - th.lo), -np.inf)
        s = th.scatter_c
        g = np.asarray(geotherm_c, float)
        z = (t - g) / s
        log_norm = np.log(np.maximum(special.ndtr((hi - g) / s) - special.ndtr((lo - g) / s),
                                     1e-300))
        dens = -0.5 * z * z - math.log(s) - 0.5 * math.log(2 * math.pi) - log_norm
        return np.where((t >= lo) & (t <= hi), dens, -np.inf)

    def describe(self) -> dict:
        """Plain-dict echo of the settings."""
        return {"name": self.name, "water_depth_km": self.water_depth_km,
                "thermal": self.thermal.describe(), "pressure": self.pressure,
                "temperature_range_c": list(self.temperature_range_c),
                "basement_km": self.basement_km,
                "heat_flow": (None if self.heat_flow is None else
                              dataclasses.asdict(self.heat_flow)),
                "layers": [x.to_dict() for x in self.layers],
                "rocks": [list(r) for r in self.rocks]}
