"""Depth zones and depth levels: which prior applies to a node, and the shared prior designs.

A :class:`Zone` is a depth range below the seafloor with its own rocks, priors (including a
thermal-state prior, evaluated at each level's depth below the seafloor) and interpretations.
Nodes of a zone are grouped into depth levels of ``level_km`` thickness; every node of a level
shares one prior design (scrambled Sobol through the prior quantiles, evaluated once by the
forward model; :func:`bayescrust.inference.evidence.prior_design`). The level's pressure is the
lithostatic pressure at the level's depth under the level's median water depth.

Random streams: the design of a level comes from ``SeedSequence(seed, spawn_key=(LEVEL_KEY,
zone, level))`` and the refinement of node ``i`` from ``SeedSequence(seed, spawn_key=(i,))``;
neither depends on how nodes are chunked or on which worker runs them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

__all__ = ["Zone", "Level", "plan_levels", "level_design", "node_rng", "zone_hypotheses",
           "MANTLE_KEY"]

#: spawn-key prefix of level designs (node streams use the node index, < 2**40)
LEVEL_KEY = 2**40
#: name of the always-computed interpretation used by the per-column summary
MANTLE_KEY = "mantle"


@dataclass(frozen=True)
class Zone:
    """A depth range below the seafloor with its rocks, priors and interpretations.

    Parameters
    ----------
    name : str
    top_km, bottom_km : float
        Depth range below the seafloor, km (``top <= depth < bottom``).
    rocks : tuple of str
    priors : dict, optional
        As for :func:`bayescrust.exact_layer` (a thermal-state prior under ``temperature_c``
        is evaluated at each level's depth below the seafloor).
    hypotheses : dict, optional
        Default: :func:`zone_hypotheses` (the same interpretations at every level).
    """

    name: str
    top_km: float
    bottom_km: float
    rocks: tuple = ("gabbro", "harzburgite")
    priors: dict | None = None
    hypotheses: dict | None = None

    def __post_init__(self):
        if not (math.isfinite(self.top_km) and math.isfinite(self.bottom_km)
                and 0.0 <= self.top_km < self.bottom_km <= 100.0):
            raise ValueError(f"zone {self.name!r}: need 0 <= top_km < bottom_km <= 100 km; got "
                             f"{self.top_km!r}, {self.bottom_km!r}")
        object.__setattr__(self, "rocks", tuple(self.rocks))


@dataclass(frozen=True, eq=False)
class Level:
    """One depth level of one zone: its nodes and the shared design's settings."""

    zone: int
    key: int
    depth_km: float
    water_depth_km: float
    nodes: np.ndarray = field(repr=False)
    #: age range (Myr) of the level's nodes when its zone's thermal prior depends on age
    age_range: tuple | None = None


def plan_levels(grid, zones, level_km=0.1):
    """Assign each valid node to a zone and a depth level.

    Returns ``(levels, zone_of_node)``: a list of :class:`Level` sorted by (zone, depth), and an
    (n,) int array (-1 where a node is masked or outside every zone).
    """
    if not level_km > 0:
        raise ValueError(f"level_km must be > 0; got {level_km!r}")
    zones = list(zones)
    if not zones:
        raise ValueError("at least one depth zone is needed")
    zs = sorted(zones, key=lambda z: z.top_km)
    for a, b in zip(zs, zs[1:], strict=False):
        if b.top_km < a.bottom_km:
            raise ValueError(f"zones {a.name!r} and {b.name!r} overlap")
    from .ages import age_aware, node_ages

    d = grid.depth_km
    ages = node_ages(grid)
    zone_of = np.full(grid.n_nodes, -1, np.int32)  # int32: 4 bytes a node
    for i, z in enumerate(zones):
        sel = grid.valid & (d >= z.top_km) & (d < z.bottom_km)
        zone_of[sel] = i
    levels = []
    for i, z in enumerate(zones):
        idx = np.flatnonzero(zone_of == i)
        if idx.size == 0:
            continue
        keys = np.floor(d[idx] / level_km).astype(np.int64)
        order = np.argsort(keys, kind="stable")
        idx, keys = idx[order], keys[order]
        ukeys, starts = np.unique(keys, return_index=True)
        ends = np.r_[starts[1:], idx.size]
        for k, s, e in zip(ukeys, starts, ends, strict=True):
            nodes = idx[s:e]
            depth = float(np.clip((k + 0.5) * level_km, z.top_km + 1e-6, z.bottom_km - 1e-6))
            ar = None
            if ages is not None and age_aware(z):
                ar = (float(ages[nodes].min()), float(ages[nodes].max()))
            levels.append(Level(zone=i, key=int(k), depth_km=depth,
                                water_depth_km=float(np.median(grid.water_depth_km[nodes])),
                                nodes=nodes, age_range=ar))
    return levels, zone_of


def node_rng(seed: int, node: int) -> np.random.Generator:
    """The random stream of one node: ``SeedSequence(seed, spawn_key=(node,))``."""
    return np.random.Generator(np.random.PCG64(np.random.SeedSequence(seed, spawn_key=(node,))))


def level_layer(level, observables, depth_halfwidth=1e-3):
    """A :class:`bayescrust.Layer` at the level's depth observing ``observables``.

    The observed values are placeholders (the grid supplies its own per node); only the
    depth, water depth and the set of observables matter to the model.
    """
    from ..inference.layer import OBSERVABLES, Layer

    obs = {k: (0.5 * sum(OBSERVABLES[k][0]), 1.0) for k in observables}
    top = max(0.0, level.depth_km - depth_halfwidth)
    return Layer(f"level {level.depth_km:.3f} km", top_km=top, bottom_km=top + 2 * depth_halfwidth,
                 water_depth_km=min(level.water_depth_km, 11.0), **obs)


def zone_porosity_max(zone) -> float:
    """Upper bound of the zone's porosity prior at its shallowest level: its widest.

    Resolved as :meth:`bayescrust.inference.model.LayerModel.build` resolves it (the zone's
    ``porosity`` prior, else the depth-dependent default of
    :func:`bayescrust.inference.model.default_priors`). A given prior is the same at every
    depth and the default only narrows with depth (``Uniform(0, 0.3)`` above 1.5 km below the
    seafloor, ``Uniform(0, 0.03)`` below), so no level of the zone reaches higher.
    """
    from ..inference.model import default_priors
    from ..inference.priors import as_prior

    given = (zone.priors or {}).get("porosity")
    if given is None:
        # the shallowest level's depth: plan_levels clips level depths to >= top_km + 1e-6
        top = Level(zone=0, key=0, depth_km=zone.top_km + 1e-6, water_depth_km=0.0,
                    nodes=np.empty(0, int))
        given = default_priors(level_layer(top, ("vp",)), zone.rocks,
                               np.zeros(len(zone.rocks), bool))["porosity"]
    return float(as_prior("porosity", given).bounds[1])


def zone_hypotheses(zone) -> dict:
    """The interpretations of a zone, the same at every one of its levels.

    The zone's own ``hypotheses``, else :func:`bayescrust.default_hypotheses` of its rocks with
    the porosity bound of :func:`zone_porosity_max`. A basaltic zone reaching from above to
    below 1.5 km keeps the split into "porous" and "low-porosity" basalt / diabase at every
    level: where the default porosity prior stops at 0.03 every design point is low-porosity,
    so "porous" has probability 0 there and "low-porosity" the whole basaltic class (the same
    boxes, one set of output columns; docs/grid.md).
    """
    from ..inference.hypotheses import default_hypotheses

    if zone.hypotheses is not None:
        return dict(zone.hypotheses)
    return default_hypotheses(zone.rocks, porosity_max=zone_porosity_max(zone))


def level_zone(level, zone):
    """The zone whose priors the level's design is drawn from (the age proposal, if any)."""
    from .ages import zone_for_ages

    if level.age_range is None:
        return zone
    return zone_for_ages(zone, *level.age_range)


def level_model(level, zone, observables, options):
    """``(model, hypotheses)`` of a level: the layer model of the zone at the level's depth,
    with the zone's interpretations (:func:`zone_hypotheses`, not the level's own defaults).

    With a crustal age per node the model's temperature prior is the level's proposal
    (:func:`bayescrust.grid.ages.zone_for_ages`).
    """
    from ..inference.api import _setup

    zone = level_zone(level, zone)
    layer = level_layer(level, observables)
    return _setup(layer, zone.rocks, zone.priors, zone_hypotheses(zone),
                  options.get("model_error"), options.get("likelihood", "gaussian"),
                  options.get("nu", 4.0), options.get("forward"))


def level_design(level, zone, observables, seed, n_points, options):
    """``(model, hypotheses, theta, quantities, u)`` of a level, from its own stream."""
    from ..inference.evidence import prior_design

    model, hyps = level_model(level, zone, observables, options)
    ss = np.random.SeedSequence(seed, spawn_key=(LEVEL_KEY, level.zone, level.key))
    rng = np.random.Generator(np.random.PCG64(ss))
    theta, q, u = prior_design(model, rng, n_points)
    return model, hyps, theta, q, u
