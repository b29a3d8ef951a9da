"""Inference for one layer: priors, likelihood, vectorised log-probability, emcee driver,
hypotheses and Bayes factors, evidence, and the exact reference.

emcee, arviz and pandas are imported inside the functions that use them.
"""

from . import priors, thermal_priors
from .api import exact_layer, invert_layer
from .compare import PriorComparison, compare_priors, probability_chart
from .hypotheses import default_hypotheses
from .layer import Layer
from .model import LayerModel
from .results import LayerResult
from .sampler import ConvergenceWarning, run_ensemble
from .thermal_priors import HalfSpaceCooling, HotAxial, UniformTemperature
from .trust import MisfitWarning

__all__ = [
    "ConvergenceWarning",
    "HalfSpaceCooling",
    "HotAxial",
    "Layer",
    "LayerModel",
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
    "run_ensemble",
    "thermal_priors",
]
