"""Read the package's sourced data tables (``physics/data/*.toml``)."""

from __future__ import annotations

import tomllib
from importlib import resources
from types import MappingProxyType


def load_table(name: str) -> MappingProxyType:
    """Parsed ``physics/data/<name>.toml`` as a read-only mapping (top level)."""
    text = resources.files("bayescrust.physics").joinpath(f"data/{name}.toml").read_text("utf-8")
    return MappingProxyType(tomllib.loads(text))
