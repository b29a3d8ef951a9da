"""Section reader: ``[sampler]`` (method and sampler settings)."""

from __future__ import annotations

from typing import Any

from .reader import Reader
from .specs import SamplerSpec

__all__ = ["SAMPLER_KEYS", "read_sampler"]

SAMPLER_KEYS = ("method", "walkers", "min_ess", "max_steps", "tau_factor", "exact_points")


def read_sampler(r: Reader, key, value) -> SamplerSpec:
    table = r.table(key, value)
    r.keys(key, table, SAMPLER_KEYS)
    kw: dict[str, Any] = {}
    if "method" in table:
        kw["method"] = r.string(f"{key}.method", table["method"], ("mcmc", "exact"))
    if "walkers" in table:
        kw["walkers"] = r.integer(f"{key}.walkers", table["walkers"], 8, 10000)
    if "max_steps" in table:
        kw["max_steps"] = r.integer(f"{key}.max_steps", table["max_steps"], 100, 10_000_000)
    if "min_ess" in table:
        kw["min_ess"] = r.number(f"{key}.min_ess", table["min_ess"], 10.0, 1e7)
    if "tau_factor" in table:
        kw["tau_factor"] = r.number(f"{key}.tau_factor", table["tau_factor"], 1.0, 1000.0)
    if "exact_points" in table:
        kw["exact_points"] = r.integer(f"{key}.exact_points", table["exact_points"],
                                          256, 2**24)
    return SamplerSpec(**kw)
