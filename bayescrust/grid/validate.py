"""Validation of a map against per-node MCMC on a random subset of nodes.

Each chosen node is inverted on its own with :func:`bayescrust.invert_layer` (the emcee path)
under exactly the model the map used for it (the zone's rocks, priors and interpretations, its
thermal-state prior at the node's crustal age, its level's depth and water depth, its own
observations and sigmas), and the map's probabilities are compared within the combined Monte
Carlo error (:func:`validation_summary`).
"""

from __future__ import annotations

import numpy as np

__all__ = ["validate_nodes", "validation_summary"]


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
        difference over the combined standard error), plus ``time_s`` per node inversion and
        the node's map ``quality`` (flag name) and data fit ``fit_p``: a misfit node's
        probabilities agree or not under a model that does not fit its data.
    """
    import time

    import pandas as pd

    from ..inference.api import exact_layer, invert_layer
    from ..inference.layer import Layer
    from .ages import node_priors
    from .levels import plan_levels, zone_hypotheses
    from .output import variable_name
    from .results import QUALITY_FLAGS

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
    flag_name = {v: k for k, v in QUALITY_FLAGS.items()}
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
        hyps = zone_hypotheses(zone)  # the map's interpretations at every level of the zone
        t0 = time.perf_counter()
        res = fn(layer, rocks=zone.rocks, priors=priors, hypotheses=hyps,
                 seed=int(np.random.SeedSequence(seed, spawn_key=(int(i),)).generate_state(1)[0]),
                 evidence=False, **opts) if method == "mcmc" else fn(
            layer, rocks=zone.rocks, priors=priors, hypotheses=hyps,
            seed=int(i), **opts)
        dt = time.perf_counter() - t0
        flat = {d: int(k) for d, k in zip(ds["quality"].dims,
                                          np.unravel_index(int(i), grid.shape), strict=True)}
        qname = flag_name.get(int(ds["quality"].isel(flat)), "?")
        fit_p = float(ds["fit_p"].isel(flat)) if "fit_p" in ds else np.nan
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
                         "z": (pm - pn) / se if se > 0 else 0.0, "time_s": dt,
                         "quality": qname, "fit_p": fit_p})
    return pd.DataFrame(rows)


def validation_summary(df, *, bound=0.005, n_sigma=4.0):
    """The statistical verdict of a :func:`validate_nodes` table.

    A raw bound on ``|dP|`` is only testable where both Monte Carlo errors are well below it:
    per-node MCMC with an ESS of ~2000 has a standard error of ~0.011 at P = 0.5, so
    ``|dP| < 0.005`` there would fail by chance alone. The verdict is therefore

    - per entry (node, interpretation) ``z = dP / sqrt(mcse_map^2 + mcse_node^2)``: largest
      ``|z|`` (expected below ``n_sigma``);
    - ``chi2 = sum z^2`` over entries with a positive combined error, against the chi-square
      distribution with one degree of freedom per entry (its upper-tail probability
      ``chi2_p``). Entries of one node are correlated (their probabilities share the weights),
      which widens the spread of ``chi2`` but not its mean, and the map's MCSE is the plain
      Monte Carlo formula, conservative for its scrambled-Sobol design;
    - ``|dP| < bound`` on the *testable* entries, those whose combined error is below
      ``bound / n_sigma``: ``n_testable`` and ``max_abs_dp_testable``.

    Returns a dict.
    """
    from scipy import stats

    se = np.hypot(df["mcse_map"].to_numpy(float), df["mcse_node"].to_numpy(float))
    d = df["difference"].to_numpy(float)
    pos = se > 0
    z = np.where(pos, d / np.where(pos, se, 1.0), 0.0)
    chi2 = float(np.sum(z[pos] ** 2))
    k = int(pos.sum())
    testable = se < bound / n_sigma
    return {"n_nodes": int(df["node"].nunique()), "n_entries": int(len(df)),
            "max_abs_dp": float(np.max(np.abs(d))) if d.size else 0.0,
            "max_abs_z": float(np.max(np.abs(z))) if z.size else 0.0,
            "chi2": chi2, "chi2_df": k,
            "chi2_p": float(stats.chi2.sf(chi2, k)) if k else 1.0,
            "n_testable": int(testable.sum()),
            "max_abs_dp_testable": float(np.max(np.abs(d[testable]))) if testable.any()
            else float("nan"),
            "bound": bound, "n_sigma": n_sigma}
