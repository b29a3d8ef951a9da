"""Whole profiles: layers tied by one thermal state, overburden pressure, heat flow.

- :class:`Profile`, :class:`HeatFlow` - the settings (:mod:`.spec`);
- thermal states :class:`HalfSpaceState`, :class:`PlateState`, :class:`AxialHotState`,
  :class:`Uncoupled` (:mod:`.thermal`);
- :func:`exact_profile` - the structured exact path; :func:`invert_profile` - MCMC (collapsed
  onto the thermal parameters by default, :mod:`.collapsed`; or every layer jointly);
- :func:`compare_thermal_states` - the evidence of each thermal state for the whole profile.
"""

from .compare import compare_thermal_states
from .exact import exact_profile
from .joint import JointModel, invert_profile
from .results import NO_BOUNDARY, ProfileResult
from .spec import MANTLE_RULE, HeatFlow, Profile, default_rocks
from .thermal import THERMAL_STATES, AxialHotState, HalfSpaceState, PlateState, Uncoupled

__all__ = ["Profile", "HeatFlow", "ProfileResult", "exact_profile", "invert_profile",
           "JointModel", "compare_thermal_states", "HalfSpaceState", "PlateState",
           "AxialHotState", "Uncoupled", "THERMAL_STATES", "MANTLE_RULE", "NO_BOUNDARY",
           "default_rocks"]
