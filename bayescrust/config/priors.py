"""Section reader: ``[priors]`` (study-wide and per layer) and prior tables ``{dist = ...}``."""

from __future__ import annotations

from typing import Any

from .limits import PARAMETER_RANGES
from .reader import Reader
from .specs import PriorSpec

__all__ = ["PRIOR_KINDS", "read_prior", "read_dist", "read_priors", "check_bounds"]

PRIOR_KINDS: dict[str, tuple[str, ...]] = {
    "uniform": ("lo", "hi"),
    "loguniform": ("lo", "hi"),
    "normal": ("mean", "sd"),
    "truncated_normal": ("mean", "sd", "lo", "hi"),
    "beta": ("a", "b"),
    "dirichlet": ("alpha",),
    "fixed": ("value",),
}


def read_prior(r: Reader, key, value, pname, rocks) -> PriorSpec:
    """A prior: a number (fixed value) or a table with ``dist`` and its parameters."""
    rng = PARAMETER_RANGES.get(pname)
    if pname == "fractions":
        if isinstance(value, dict):
            spec = read_dist(r, key, value, ("dirichlet",))
            alpha = spec.params["alpha"]
            if isinstance(alpha, list) and len(alpha) != len(rocks):
                r.got(f"{key}.alpha", alpha, f"one value per rock ({len(rocks)})")
            return spec
        r.got(key, value, "a table {dist = \"dirichlet\", alpha = ...}")
    if isinstance(value, dict):
        kinds = tuple(k for k in PRIOR_KINDS if k not in ("dirichlet",))
        spec = read_dist(r, key, value, kinds)
        lo, hi = (rng[0], rng[1]) if rng else (0.0, 1.0)
        unit = rng[2] if rng else "volume fraction"
        for b in ("lo", "hi"):
            if b in spec.params:
                r.number(f"{key}.{b}", spec.params[b], lo, hi, unit=unit)
        prm = spec.params
        if "lo" in prm and "hi" in prm and prm["lo"] >= prm["hi"]:
            r.got(f"{key}.hi", spec.params["hi"], f"a number > lo ({spec.params['lo']:g})")
        if spec.kind == "loguniform" and spec.params["lo"] <= 0:
            r.got(f"{key}.lo", spec.params["lo"], "a number > 0 for a log-uniform prior")
        return spec
    lo, hi = (rng[0], rng[1]) if rng else (0.0, 1.0)
    unit = rng[2] if rng else "volume fraction"
    x = r.number(key, value, lo, hi, unit=unit)
    return PriorSpec("fixed", {"value": x})


def read_dist(r: Reader, key, table, kinds) -> PriorSpec:
    if "dist" not in table:
        r.fail(f"{key}.dist", "missing; expected one of " + ", ".join(kinds))
    kind = r.string(f"{key}.dist", table["dist"], kinds)
    needed = PRIOR_KINDS[kind]
    r.keys(key, table, ("dist",) + needed)
    params: dict[str, Any] = {}
    for p in needed:
        if p not in table:
            r.fail(f"{key}.{p}", f"missing; a {kind} prior needs " + ", ".join(needed))
        v = table[p]
        if p == "alpha":
            if isinstance(v, list):
                params[p] = [r.number(f"{key}.alpha[{i}]", a, 0, None, lo_open=True)
                             for i, a in enumerate(v)]
            else:
                params[p] = r.number(f"{key}.alpha", v, 0, None, lo_open=True)
        elif p in ("sd", "a", "b"):
            params[p] = r.number(f"{key}.{p}", v, 0, None, lo_open=True)
        else:
            params[p] = r.number(f"{key}.{p}", v)
    return PriorSpec(kind, params)


def read_priors(r: Reader, key, value, rocks) -> dict[str, PriorSpec]:
    table = r.table(key, value)
    allowed = tuple(PARAMETER_RANGES) + ("fractions",) + tuple(rocks)
    r.keys(key, table, allowed)
    out = {}
    for k, v in table.items():
        if k in rocks and isinstance(v, dict):
            r.got(f"{key}.{k}", v, "a number (a rock fraction can only be fixed; use "
                                      "priors.fractions = {dist = \"dirichlet\", ...})")
        out[k] = read_prior(r, f"{key}.{k}", v, k, rocks)
    fixed = [k for k in out if k in rocks]
    if fixed and "fractions" in out:
        r.fail(f"{key}.fractions",
                  "give either fractions or fixed per-rock values, not both")
    if fixed and set(fixed) != set(rocks):
        missing = [r for r in rocks if r not in fixed]
        r.fail(f"{key}.{missing[0]}", f"missing; fixing rock fractions needs a value for "
                                       f"every rock ({', '.join(rocks)})")
    if fixed and abs(sum(out[k].params["value"] for k in fixed) - 1.0) > 1e-6:
        r.got(key, {k: out[k].params["value"] for k in fixed},
                 "fixed fractions summing to 1")
    return out


def check_bounds(r: Reader, key, spec: PriorSpec, lo, hi, unit) -> None:
    for b in ("lo", "hi"):
        if b in spec.params:
            r.number(f"{key}.{b}", spec.params[b], lo, hi, unit=unit)
    if "lo" in spec.params and "hi" in spec.params and spec.params["lo"] >= spec.params["hi"]:
        r.got(f"{key}.hi", spec.params["hi"], f"a number > lo ({spec.params['lo']:g})")
    if spec.kind == "loguniform" and spec.params["lo"] <= 0:
        r.got(f"{key}.lo", spec.params["lo"], "a number > 0 for a log-uniform prior")
