"""Planning the next observation: the value of a candidate datum before it is measured.

For each candidate (an observable with an error), preposterior simulation from today's
posterior and importance reweighting give the expected probability of the true interpretation,
the expected entropy and information gain, the chance of a decisive answer and the expected
narrowing of the temperature interval, each with its Monte Carlo error. :func:`plan_profile` does
the same for a whole profile (a datum in one layer, or a surface heat flow; per-layer,
crust-mantle boundary and thermal-state questions). See ``docs/plan.md``.
"""

from .api import RANK_KEYS, PlanResult, plan_layer, preposterior, sentence
from .candidates import (
    LAYER_OBSERVABLES,
    PROFILE_OBSERVABLES,
    Candidate,
    as_candidates,
    default_candidates,
    default_profile_candidates,
)
from .ensemble import NONE_CLASS, Ensemble, ensemble_from_design, ensemble_from_result
from .preposterior import DegeneracyWarning, Settings, current_state, evaluate, update
from .profile import ProfilePlanResult, plan_profile

__all__ = [
    "LAYER_OBSERVABLES",
    "NONE_CLASS",
    "PROFILE_OBSERVABLES",
    "RANK_KEYS",
    "Candidate",
    "DegeneracyWarning",
    "Ensemble",
    "PlanResult",
    "ProfilePlanResult",
    "Settings",
    "as_candidates",
    "current_state",
    "default_candidates",
    "default_profile_candidates",
    "ensemble_from_design",
    "ensemble_from_result",
    "evaluate",
    "plan_layer",
    "plan_profile",
    "preposterior",
    "sentence",
    "update",
]
