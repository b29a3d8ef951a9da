"""Crustal age per node, and the per-node thermal-state prior it implies.

A grid's crustal age (Myr) is given in :class:`~bayescrust.grid.source.GridMapping` ``age`` as

- a number: one age for every node;
- a variable name: a per-column variable (over the non-depth dims; a CSV column);
- a table ``{"axis": x0, "half_rate_mm_yr": v}`` (or ``full_rate_mm_yr``, twice the half
  rate): age from the distance to the spreading axis, ``age = |x - x0| / v``. With distance in
  km and the rate in mm/yr, km / (mm/yr) = 10^6 mm / (mm/yr) = 1 Myr, so the quotient is the age
  in Myr (``distance_unit = "m"`` divides the distance by 1000 first).

Ages are floored at :data:`AGE_FLOOR_MYR` (the axis itself has age 0, where the half-space
geotherm is the mantle temperature at every depth; :class:`HalfSpaceCooling` floors ages
the same way).

Per-node prior, exact by importance weighing
--------------------------------------------
In a zone whose thermal-state prior is a :class:`HalfSpaceCooling`, a node of age ``A`` has the
temperature prior ``p_A(T)`` = that prior with its age fixed at ``A`` (the mantle temperature and
scatter priors unchanged), at the level's depth below the seafloor. A level's nodes span ages
``[a_lo, a_hi]``, so the level's one design is drawn from a *proposal*: the same prior with age
``LogUniform(a_lo, a_hi)`` (fixed when the level has one age). Every node then weighs the shared
design points by its own prior density ratio ``p_A(T_j) / p_prop(T_j)`` times the likelihood
(self-normalised importance sampling; Owen 2013, Monte Carlo theory, ch. 9). Only the
temperature prior differs between proposal and node, so the ratio is exact: no age bins, no
interpolation in age. The cost is a loss of importance ESS (the node's temperature prior is
narrower than the level's mixture), which the per-node ESS quality flag and the refinement
stage report and repair.
"""

from __future__ import annotations

import math
from collections import OrderedDict
from dataclasses import replace

import numpy as np

__all__ = ["AGE_FLOOR_MYR", "AGE_MAX_MYR", "check_age_spec", "node_ages", "age_aware",
           "zone_for_ages", "node_priors", "AgeRatio"]

#: smallest age used (Myr); the same floor as HalfSpaceCooling.for_layer
AGE_FLOOR_MYR = 1e-3
#: largest accepted age (Myr), the thermal-prior reader's bound (oldest ocean floor ~ 180 Myr)
AGE_MAX_MYR = 200.0
_RATE_KEYS = ("half_rate_mm_yr", "full_rate_mm_yr")


def check_age_spec(age):
    """Validate a mapping's ``age``; returns it normalised (raises ValueError naming the key)."""
    if age is None or isinstance(age, str):
        return age
    if isinstance(age, (int, float, np.integer, np.floating)) and not isinstance(age, bool):
        a = float(age)
        if not (math.isfinite(a) and 0.0 <= a <= AGE_MAX_MYR):
            raise ValueError(f"grid age: a constant age must be in [0, {AGE_MAX_MYR:g}] Myr; "
                             f"got {age!r}")
        return a
    if isinstance(age, dict):
        allowed = ("axis", "distance_unit") + _RATE_KEYS
        bad = sorted(set(age) - set(allowed))
        if bad:
            raise ValueError(f"grid age: unknown key(s) {bad}; allowed {list(allowed)}")
        rates = [k for k in _RATE_KEYS if k in age]
        if len(rates) != 1:
            raise ValueError("grid age: give exactly one of half_rate_mm_yr, full_rate_mm_yr")
        rate = age[rates[0]]
        if isinstance(rate, bool) or not isinstance(rate, (int, float)) or \
                not (math.isfinite(rate) and 0.0 < rate <= 300.0):
            raise ValueError(f"grid age.{rates[0]}: must be in (0, 300] mm/yr; got {rate!r}")
        axis = age.get("axis", 0.0)
        if isinstance(axis, bool) or not isinstance(axis, (int, float)) or \
                not math.isfinite(axis):
            raise ValueError(f"grid age.axis: must be a finite distance; got {axis!r}")
        unit = age.get("distance_unit", "km")
        if unit not in ("km", "m"):
            raise ValueError(f"grid age.distance_unit: must be 'km' or 'm'; got {unit!r}")
        half = float(rate) if rates[0] == "half_rate_mm_yr" else 0.5 * float(rate)
        return {"axis": float(axis), "half_rate_mm_yr": half, "distance_unit": unit}
    raise ValueError("grid age: must be a number (Myr), a variable name, or a table "
                     f"{{axis, half_rate_mm_yr}}; got {age!r}")


def ages_from_distance(distance, spec):
    """Age (Myr) of columns at ``distance`` from a ``{axis, half_rate_mm_yr}`` spec.

    ``|x - axis|`` in km over the half rate in mm/yr is the age in Myr (km / (mm/yr) = Myr).
    """
    d = np.abs(np.asarray(distance, float) - spec["axis"])
    if spec["distance_unit"] == "m":
        d = d * 1e-3
    return d / spec["half_rate_mm_yr"]


def check_ages(source, name, ages):
    """Raise a ValueError naming ``name`` when an age is missing or out of range."""
    a = np.asarray(ages, float)
    if not np.all(np.isfinite(a)) or np.any(a < 0) or np.any(a > AGE_MAX_MYR):
        bad = a[~(np.isfinite(a) & (a >= 0) & (a <= AGE_MAX_MYR))]
        raise ValueError(f"{source}: {name}: crustal ages must be finite and in "
                         f"[0, {AGE_MAX_MYR:g}] Myr; got {bad[:3].tolist()}")
    return np.maximum(a, AGE_FLOOR_MYR)


def node_ages(grid):
    """Per-node ages (Myr), or None when the grid has none."""
    return getattr(grid, "age_myr", None)


def age_aware(zone) -> bool:
    """Does the zone's thermal-state prior depend on the crustal age (a HalfSpaceCooling)?"""
    from ..inference.thermal_priors import HalfSpaceCooling

    return isinstance((zone.priors or {}).get("temperature_c"), HalfSpaceCooling)


def _with_age(zone, age_prior):
    priors = dict(zone.priors)
    priors["temperature_c"] = replace(priors["temperature_c"], age_myr=age_prior)
    return replace(zone, priors=priors)


def zone_for_ages(zone, lo, hi):
    """The zone with its HalfSpaceCooling age replaced by the level's proposal.

    ``LogUniform(lo, hi)``, or the fixed age when ``lo == hi``.
    """
    from ..inference.priors import LogUniform

    lo, hi = max(float(lo), AGE_FLOOR_MYR), max(float(hi), AGE_FLOOR_MYR)
    return _with_age(zone, lo if hi <= lo else LogUniform(lo, hi))


def node_priors(zone, age):
    """The priors a node of crustal age ``age`` (Myr) has in ``zone`` (a dict, or None)."""
    if age is None or not age_aware(zone):
        return zone.priors
    return _with_age(zone, max(float(age), AGE_FLOOR_MYR)).priors


class AgeRatio:
    """Log prior ratio ``ln p_A(T) - ln p_prop(T)`` of nodes of ages A over a level's design.

    ``layer`` is the level's layer (its mid-depth places the geotherm); ``proposal`` the level
    model's temperature prior. The node priors are built by
    :meth:`HalfSpaceCooling.for_layer` itself (so a node equals a layer inversion at its age),
    one per distinct age, kept in a small cache.
    """

    def __init__(self, zone, layer, proposal, cache_size=4096):
        self.thermal = zone.priors["temperature_c"]
        self.layer = layer
        self.proposal = proposal
        self._cache: OrderedDict = OrderedDict()
        self._size = cache_size

    def prior(self, age):
        key = float(age)
        pr = self._cache.get(key)
        if pr is None:
            pr = replace(self.thermal, age_myr=max(key, AGE_FLOOR_MYR)).for_layer(self.layer)
            self._cache[key] = pr
            if len(self._cache) > self._size:
                self._cache.popitem(last=False)
        return pr

    def __call__(self, ages, t):
        """``(m, n)`` log ratios of ``m`` nodes (ages) at ``n`` temperatures ``t``."""
        t = np.asarray(t, float)
        base = self.proposal.logpdf(t)
        uniq, inv = np.unique(np.asarray(ages, float), return_inverse=True)
        rows = np.empty((uniq.size, t.size))
        for k, a in enumerate(uniq):  # one row per distinct age (columns), not per sample
            rows[k] = self.prior(a).logpdf(t) - base
        rows = np.where(np.isfinite(rows), rows, -np.inf)
        return rows[inv.ravel()]
