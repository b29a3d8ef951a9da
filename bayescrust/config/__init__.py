"""Study files: read a TOML study description into frozen settings objects.

This package only *builds* settings from TOML (stdlib :mod:`tomllib`) and reports bad input as
``file: key: got X, expected Y``. It never samples or computes physics; the objects of the Python
API (layers, priors, thermal priors) are built on request by the ``build_*`` functions, which import
:mod:`bayescrust.inference` lazily.

The file format is documented key by key in ``docs/study-file.md``. Modules:

- :mod:`.errors` (``StudyError``, suggestions), :mod:`.limits` (shared names and ranges),
  :mod:`.specs` (the settings dataclasses), :mod:`.reader` (type and range primitives);
- one reader per study-file section: :mod:`.study` (top level, ``[run]``), :mod:`.layers`,
  :mod:`.priors`, :mod:`.thermal`, :mod:`.hypotheses`, :mod:`.sampler`, :mod:`.forward`;
- :mod:`.echo` (``study_to_dict``), :mod:`.writer` (``dumps_toml``), :mod:`.build` (``build_*``).
"""

from __future__ import annotations

from .build import build_layer, build_prior, build_thermal_prior, layer_arguments
from .echo import prior_dict as prior_dict
from .echo import study_to_dict
from .errors import StudyError
from .forward import FORWARD_KEYS as FORWARD_KEYS
from .layers import LAYER_KEYS as LAYER_KEYS
from .limits import DEFAULT_ROCKS as DEFAULT_ROCKS
from .limits import DERIVED as DERIVED
from .limits import OBSERVABLES as OBSERVABLES
from .limits import PARAMETER_RANGES as PARAMETER_RANGES
from .limits import known_rocks
from .limits import layer_slug as layer_slug
from .priors import PRIOR_KINDS as PRIOR_KINDS
from .sampler import SAMPLER_KEYS as SAMPLER_KEYS
from .specs import LayerSpec, Observation, PriorSpec, SamplerSpec, StudySpec, ThermalSpec
from .study import LIKELIHOOD_KINDS as LIKELIHOOD_KINDS
from .study import TOP_KEYS as TOP_KEYS
from .study import load_study, parse_study
from .thermal import THERMAL_KINDS as THERMAL_KINDS
from .writer import dumps_toml

# the former flat module's private name (the name ``as`` form marks the others as re-exports)
_prior_dict = prior_dict

__all__ = [
    "StudyError",
    "Observation",
    "PriorSpec",
    "ThermalSpec",
    "LayerSpec",
    "SamplerSpec",
    "StudySpec",
    "load_study",
    "parse_study",
    "study_to_dict",
    "dumps_toml",
    "build_layer",
    "build_prior",
    "build_thermal_prior",
    "layer_arguments",
    "known_rocks",
]
