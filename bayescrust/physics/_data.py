"""Read the package's sourced data tables (``physics/data/*.toml``); shared unit constants."""

from __future__ import annotations

import tomllib
from importlib import resources
from types import MappingProxyType

#: Kelvin at 0 deg C: T[K] = T[deg C] + 273.15, exact by the definition of the Celsius scale
#: (BIPM, The International System of Units, 9th ed., 2019).
CELSIUS_TO_KELVIN = 273.15


def load_table(name: str) -> MappingProxyType:
    """Parsed ``physics/data/<name>.toml`` as a read-only mapping (top level)."""
    text = resources.files("bayescrust.physics").joinpath(f"data/{name}.toml").read_text("utf-8")
    return MappingProxyType(tomllib.loads(text))
