"""Validation of a map against per-node MCMC on a random subset of nodes.

Each chosen node is inverted on its own with :func:`bayescrust.invert_layer` (the emcee path)
under exactly the model the map used for it (the zone's rocks, priors and interpretations, its
thermal-state prior at the node's crustal age, at its level's depth and water depth, with its own observations and sigmas), and the map's
probabilities are compared within the combined Monte Carlo error.
"""

from __future__ import annotations

import numpy as np

__all__ = ["validate_nodes"]


def validate_nodes(grid, zones, ds, *, n_nodes=20, seed=0, method="mcmc", **sampler):
    """Map against per-node inversions on ``n_nodes`` random valid nodes.

    Parameters
    ----------
    grid, zones : the map's input.
    ds : xarray.Dataset
        The map (its ``level_km`` attr places the nodes on their levels).
    n_nodes : int
    seed : int
        Chooses the nodes and seeds each node's inversion (``SeedSequence(seed, node)``).
    method : {"mcmc", "exact"}
    **sampler
        Passed to :func:`bayescrust.invert_layer` (``min_ess``, ``max_steps``, ...).

    Returns
    -------
    pandas.DataFrame
        ``node, hypothesis, p_map, mcse_map, p_node, mcse_node, difference, z`` (z: the
        difference over the combined standard error), plus ``time_s`` per node inversion.
    """
    import time

    import pandas as pd

    from ..inference.api import exact_layer, invert_layer
    from ..inference.layer import Layer
    from .ages import node_priors
    from .levels import plan_levels
    from .output import variable_name

    if grid.n_ensemble > 1:
        raise ValueError("validation by per-node inversion needs a grid without an ensemble")
    levels, zone_of = plan_levels(grid, zones, float(ds.attrs["level_km"]))
    level_of = {int(i): lev for lev in levels for i in lev.nodes}
    cand = np.array(sorted(level_of))
    if cand.size == 0:
        raise ValueError("no valid node to validate")
    rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(2**41,)))
    pick = np.sort(rng.choice(cand, size=min(int(n_nodes), cand.size), replace=False))
    fn = invert_layer if method == "mcmc" else exact_layer
    opts = dict(sampler)
    rows = []
    for i in pick:
        lev = level_of[int(i)]
        zone = zones[lev.zone]
        ages = getattr(grid, "age_myr", None)
        priors = node_priors(zone, None if ages is None else float(ages[i]))
        obs = {k: (float(grid.values[k][i]), float(grid.sigmas[k][i])) for k in grid.values}
        top = max(0.0, lev.depth_km - 1e-3)
        layer = Layer(f"node {i}", top_km=top, bottom_km=top + 2e-3,
                      water_depth_km=min(lev.water_depth_km, 11.0), **obs)
        t0 = time.perf_counter()
        res = fn(layer, rocks=zone.rocks, priors=priors, hypotheses=zone.hypotheses,
                 seed=int(np.random.SeedSequence(seed, spawn_key=(int(i),)).generate_state(1)[0]),
                 evidence=False, **opts) if method == "mcmc" else fn(
            layer, rocks=zone.rocks, priors=priors, hypotheses=zone.hypotheses,
            seed=int(i), **opts)
        dt = time.perf_counter() - t0
        flat = {d: int(k) for d, k in zip(ds["quality"].dims,
                                          np.unravel_index(int(i), grid.shape), strict=True)}
        for h, row in res.hypotheses.iterrows():
            name = variable_name(str(h))
            if name not in ds:
                continue
            pm = float(ds[name].isel(flat))
            sm = float(ds[f"{name}_mcse"].isel(flat))
            pn, sn = float(row["posterior_probability"]), float(row["posterior_mcse"])
            se = float(np.hypot(sm, sn))
            rows.append({"node": int(i), "hypothesis": str(h), "p_map": pm, "mcse_map": sm,
                         "p_node": pn, "mcse_node": sn, "difference": pm - pn,
                         "z": (pm - pn) / se if se > 0 else 0.0, "time_s": dt})
    return pd.DataFrame(rows)
