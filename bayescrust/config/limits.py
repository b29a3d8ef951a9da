"""Names and ranges shared by several study-file sections.

The ranges are input sanity limits taken from the inference package, not literature values.
Tables used by a single section live in that section's module (e.g. ``PRIOR_KINDS`` in
:mod:`.priors`).
"""

from __future__ import annotations

import re

from ..inference.layer import OBSERVABLES as _LAYER_OBSERVABLES
from ..inference.model import DERIVED_QUANTITIES
from ..inference.model import PARAMETER_RANGES as _MODEL_RANGES
from ..physics.rocks import ROCKS

__all__ = ["PARAMETER_RANGES", "OBSERVABLES", "DERIVED", "DEFAULT_ROCKS", "known_rocks",
           "layer_slug"]

#: Units of the free parameters of a layer other than the rock fractions.
_PARAMETER_UNITS = {
    "temperature_c": "deg C",
    "porosity": "volume fraction",
    "aspect_ratio": "",
    "melt_fraction": "volume fraction",
    "melt_aspect_ratio": "",
    "serpentinization": "fraction of the ultramafic volume",
}

#: Free parameters: (lo, hi, unit); the ranges are the inference package's own.
PARAMETER_RANGES: dict[str, tuple[float, float, str]] = {
    k: (float(lo), float(hi), _PARAMETER_UNITS.get(k, ""))
    for k, (lo, hi) in _MODEL_RANGES.items()
}

#: Observable quantities of a layer: (lo, hi, unit) for the value; sigma must be > 0.
OBSERVABLES: dict[str, tuple[float, float, str]] = {
    k: (float(lo), float(hi), unit) for k, ((lo, hi), unit) in _LAYER_OBSERVABLES.items()
}

#: Derived quantities a hypothesis may constrain besides parameters and rock fractions.
DERIVED = tuple(DERIVED_QUANTITIES)

#: Rocks a study may refer to when it names none: the union of the depth-zone rock sets (each
#: layer then uses the set of its own depth zone, see ``inference.hypotheses.DEPTH_ZONES``).
DEFAULT_ROCKS = ("basalt", "diabase", "gabbro", "olivine_gabbro", "harzburgite")


def layer_slug(name: str) -> str:
    """Folder-safe form of a layer name (letters and digits; other runs become ``_``)."""
    s = re.sub(r"[^A-Za-z0-9]+", "_", name).strip("_").lower()
    return s or "layer"


def known_rocks() -> tuple[str, ...]:
    """Names of the end-member rocks of the forward model."""
    return tuple(ROCKS)
