"""The map against per-node MCMC (emcee) on a random subset of nodes.

The reference is an independent sampler (bayescrust.invert_layer, checked against brute-force
quadrature in tests/inference/test_mcmc_vs_exact.py); agreement is judged against the combined
Monte Carlo standard error of both estimates.
"""

import numpy as np
import pytest

from bayescrust.grid import GridMapping, Zone, grid_from_dataset, map_grid, validate_nodes

ZONES = [Zone("lower", 1.5, 20.0, rocks=("gabbro", "harzburgite"))]


def _check(section, n_nodes, min_ess):
    g = grid_from_dataset(section, GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.1},
                                               depth="z", seafloor=3.0))
    m = map_grid(g, ZONES, seed=4, n_points=2**15, level_km=0.5, min_ess=1000)
    df = validate_nodes(g, ZONES, m, n_nodes=n_nodes, seed=9, min_ess=min_ess)
    assert df["node"].nunique() == n_nodes
    # within 4 combined standard errors (+0.01 for the MCMC error estimate's own error)
    bad = df[np.abs(df["difference"]) > 4 * np.hypot(df["mcse_map"], df["mcse_node"]) + 0.01]
    assert bad.empty, bad
    return df


def test_map_agrees_with_per_node_mcmc_on_one_node(section):
    _check(section.isel(x=[0], z=slice(40, 46)), 1, 300)


@pytest.mark.slow
def test_map_agrees_with_per_node_mcmc_on_twenty_nodes(section):
    df = _check(section, 20, 2000)
    assert float(np.abs(df["difference"]).max()) < 0.05
