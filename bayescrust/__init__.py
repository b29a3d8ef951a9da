"""bayescrust: Bayesian interpretation of seismic velocities of oceanic crust and uppermost mantle.

The forward model (``bayescrust.physics``) maps rock fractions, temperature, pressure, pores,
melt and serpentinisation to Vp, Vs and density from mineral physics; the inference layer
samples the posterior of those parameters for observed layer velocities and reports the
probabilities of named interpretations.
"""

from importlib.metadata import PackageNotFoundError
from importlib.metadata import version as _version

try:
    __version__ = _version("bayescrust")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.0.0+unknown"

from .physics.minerals import list_minerals, mineral_properties
from .physics.rocks import ROCKS, ForwardModel, RockProperties, list_rocks, rock_properties
from .report.citations import bibtex
from .report.citations import references as citations

__all__ = [
    "ROCKS",
    "ForwardModel",
    "RockProperties",
    "__version__",
    "bibtex",
    "citations",
    "list_minerals",
    "list_rocks",
    "mineral_properties",
    "rock_properties",
]

# --- inference exports ---
from .inference import (  # noqa: E402
    ConvergenceWarning,
    HalfSpaceCooling,
    HotAxial,
    Layer,
    LayerResult,
    MisfitWarning,
    PriorComparison,
    UniformTemperature,
    compare_priors,
    default_hypotheses,
    exact_layer,
    invert_layer,
    priors,
    probability_chart,
    thermal_priors,
)

__all__ += [
    "ConvergenceWarning",
    "HalfSpaceCooling",
    "HotAxial",
    "Layer",
    "LayerResult",
    "MisfitWarning",
    "PriorComparison",
    "UniformTemperature",
    "compare_priors",
    "default_hypotheses",
    "exact_layer",
    "invert_layer",
    "priors",
    "probability_chart",
    "thermal_priors",
]
# --- end inference exports ---

# --- plan exports ---
from .plan import Candidate, PlanResult, plan_layer, plan_profile  # noqa: E402

__all__ += ["Candidate", "PlanResult", "plan_layer", "plan_profile"]
# --- end plan exports ---
