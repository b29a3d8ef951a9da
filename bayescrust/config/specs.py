"""Settings objects of a study (frozen dataclasses; they only hold values)."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from .errors import suggest

__all__ = ["Observation", "PriorSpec", "ThermalSpec", "LayerSpec", "SamplerSpec", "StudySpec"]


@dataclass(frozen=True)
class Observation:
    """An observed quantity with its 1-sigma error (same unit as the value)."""

    value: float
    sigma: float


@dataclass(frozen=True)
class PriorSpec:
    """A prior distribution by kind (see :data:`PRIOR_KINDS`) and its parameters."""

    kind: str
    params: dict[str, Any] = field(default_factory=dict)

    def describe(self) -> str:
        inner = ", ".join(f"{k}={v}" for k, v in self.params.items())
        return f"{self.kind}({inner})"


@dataclass(frozen=True)
class ThermalSpec:
    """A named thermal-state prior (kind in :data:`THERMAL_KINDS`)."""

    name: str
    kind: str
    params: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class LayerSpec:
    """One layer of the study: depths below the seafloor (km) and observations."""

    name: str
    top_km: float
    bottom_km: float
    observations: dict[str, Observation]
    pressure_gpa: float | None = None
    rocks: tuple[str, ...] | None = None
    priors: dict[str, PriorSpec] = field(default_factory=dict)
    hypotheses: dict[str, dict[str, tuple[float, float]]] | None = None
    thermal_prior: str | None = None
    model_error: float | dict[str, float] | None = None


@dataclass(frozen=True)
class SamplerSpec:
    """Sampler settings; ``None`` leaves the inference package's default."""

    method: str = "mcmc"
    walkers: int | None = None
    min_ess: float | None = None
    max_steps: int | None = None
    tau_factor: float | None = None
    exact_points: int | None = None

    def arguments(self, method: str | None = None) -> dict:
        """Keyword arguments of ``invert_layer`` (mcmc) or ``exact_layer`` (exact)."""
        m = method or self.method
        if m == "exact":
            return {} if self.exact_points is None else {"n_points": self.exact_points}
        names = {"walkers": "n_walkers", "min_ess": "min_ess", "max_steps": "max_steps",
                 "tau_factor": "tau_factor"}
        return {api: getattr(self, k) for k, api in names.items() if getattr(self, k) is not None}


@dataclass(frozen=True)
class StudySpec:
    """A whole study as read from one file."""

    source: str
    title: str
    description: str
    water_depth_km: float
    seed: int
    rocks: tuple[str, ...]
    model_error: float | dict[str, float] | None
    likelihood: str
    student_t_nu: float | None
    forward: dict[str, Any]
    priors: dict[str, PriorSpec]
    thermal: dict[str, ThermalSpec]
    thermal_prior: str | None
    hypotheses: dict[str, dict[str, tuple[float, float]]] | None
    layers: tuple[LayerSpec, ...]
    sampler: SamplerSpec
    plan: Any = None  # a config.plan.PlanSpec when the study has a [plan] section

    def layer(self, name: str) -> LayerSpec:
        """Return the layer called ``name`` (``KeyError`` with the nearest name otherwise)."""
        for lay in self.layers:
            if lay.name == name:
                return lay
        names = [lay.name for lay in self.layers]
        raise KeyError(f"no layer named {name!r}; {suggest(name, names)}")

    # resolved per-layer settings -----------------------------------------------------------
    def rocks_for(self, layer: LayerSpec) -> tuple[str, ...]:
        return layer.rocks if layer.rocks is not None else self.rocks

    def priors_for(self, layer: LayerSpec) -> dict[str, PriorSpec]:
        merged = dict(self.priors)
        merged.update(layer.priors)
        return merged

    def hypotheses_for(self, layer: LayerSpec):
        return layer.hypotheses if layer.hypotheses is not None else self.hypotheses

    def thermal_for(self, layer: LayerSpec) -> ThermalSpec | None:
        name = layer.thermal_prior or self.thermal_prior
        if name is None:
            return None
        return self.thermal[name]

    def model_error_for(self, layer: LayerSpec) -> float | dict[str, float] | None:
        return layer.model_error if layer.model_error is not None else self.model_error
