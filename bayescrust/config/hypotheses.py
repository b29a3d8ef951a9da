"""Section reader: ``[hypotheses]`` (named interpretations as boxes over quantities)."""

from __future__ import annotations

import re

from .limits import DERIVED, PARAMETER_RANGES
from .reader import Reader

__all__ = ["read_hypotheses"]

Boxes = dict[str, dict[str, tuple[float, float]]]


def read_hypotheses(r: Reader, key, value, rocks_allowed) -> Boxes:
    table = r.table(key, value)
    if not table:
        r.got(key, value, "at least one named interpretation")
    allowed = tuple(PARAMETER_RANGES) + tuple(rocks_allowed) + DERIVED
    out = {}
    for hname, conds in table.items():
        bare = re.fullmatch(r"[A-Za-z0-9_-]+", hname)
        hkey = f"{key}.{hname}" if bare else f"{key}.{hname!r}"
        conds = r.table(hkey, conds)
        if not conds:
            r.got(hkey, conds, "at least one condition such as temperature_c = [900, 1400]")
        r.keys(hkey, conds, allowed)
        rng = {}
        for p, bounds in conds.items():
            ck = f"{hkey}.{p}"
            if not isinstance(bounds, list) or len(bounds) != 2:
                r.got(ck, bounds, "[lower, upper]")
            lo = r.bound(f"{ck}[0]", bounds[0])
            hi = r.bound(f"{ck}[1]", bounds[1])
            if lo >= hi:
                r.got(ck, bounds, "[lower, upper] with lower < upper")
            rng[p] = (lo, hi)
        out[hname] = rng
    return out
