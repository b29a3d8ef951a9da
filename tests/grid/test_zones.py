"""Zones whose default interpretations depend on depth: one set of names per zone.

The default porosity prior is ``Uniform(0, 0.3)`` above 1.5 km below the seafloor and
``Uniform(0, 0.03)`` below (inference.model.default_priors), and the default interpretations
split basalt / diabase into "porous" (porosity >= 0.05) and "low-porosity" only where the prior
reaches 0.05 (inference.hypotheses.default_hypotheses). A basaltic zone reaching below 1.5 km
used to fail with ``KeyError: 'p:basalt / diabase'``: the output columns were named without the
porosity bound and the deep levels' designs with it. References: the single-layer path's own
names (``resolved_settings``), the definition of the classes (a partition; no draw of a prior
bounded at 0.03 has porosity >= 0.05), and the exact single-layer inversion of a deep node.
"""

import numpy as np

from bayescrust import Layer
from bayescrust.grid import GridMapping, Zone, grid_from_dataset, map_grid, validate_nodes
from bayescrust.grid.levels import zone_hypotheses
from bayescrust.inference.api import resolved_settings

BASALT = ("basalt", "diabase")


def _grid(section):
    # 2 columns, 0.05..2.45 km below the seafloor (3 km), Vp 5.0..6.2 km/s
    ds = section.isel(x=[0, 1]).sel(z=slice(3.0, 5.5))
    return grid_from_dataset(ds, GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.1},
                                             depth="z", seafloor=3.0))


def _names(top_km):
    """The single-layer path's default interpretations of a basaltic layer at ``top_km``."""
    layer = Layer("l", top_km=top_km, bottom_km=top_km + 0.002, water_depth_km=3.0,
                  vp=(6.0, 0.1))
    return set(resolved_settings(layer, rocks=BASALT)["hypotheses"])


def test_a_basaltic_zone_reaching_below_1_5_km_keeps_the_split_at_every_level(section):
    zone = Zone("extrusives and dikes", 0.0, 2.5, rocks=BASALT)
    # the names of the zone are those of the single-layer path at the zone's top
    assert set(zone_hypotheses(zone)) == _names(0.0)
    assert {"porous basalt / diabase", "low-porosity basalt / diabase"} == _names(0.0)
    m = map_grid(_grid(section), [zone], seed=1, n_points=2**10, level_km=0.5, min_ess=0)
    porous, low = m["p_porous_basalt_diabase"].values, m["p_low_porosity_basalt_diabase"].values
    d = m["depth_below_seafloor"].values
    deep = d >= 1.5                      # levels centred at 1.75 and 2.25 km
    shallow = np.isfinite(d) & (d < 1.5)
    assert deep.sum() >= 8 and shallow.sum() >= 8
    # below 1.5 km no design point is porous: P(porous) is exactly 0 with no Monte Carlo
    # error, and the low-porosity class is the whole zone (float32 sums: 1e-6)
    assert np.all(porous[deep] == 0.0)
    assert np.all(m["p_porous_basalt_diabase_mcse"].values[deep] == 0.0)
    np.testing.assert_allclose(low[deep], 1.0, atol=1e-6)
    # above it the two classes partition the posterior, and both have weight
    np.testing.assert_allclose(porous[shallow] + low[shallow], 1.0, atol=1e-5)
    assert porous[shallow].min() > 0.01 and low[shallow].min() > 0.01


def test_a_basaltic_zone_below_1_5_km_has_the_unsplit_class_of_the_layer_path(section):
    zone = Zone("dikes", 1.5, 2.5, rocks=BASALT)
    assert set(zone_hypotheses(zone)) == _names(2.0) == {"basalt / diabase"}
    m = map_grid(_grid(section), [zone], seed=1, n_points=2**10, level_km=0.5, min_ess=0)
    p = m["p_basalt_diabase"].values
    ok = np.isfinite(p)
    assert ok.sum() >= 8
    np.testing.assert_allclose(p[ok], 1.0, atol=1e-6)   # the one class of a one-family zone
    assert "p_porous_basalt_diabase" not in m


def test_validation_of_a_deep_node_compares_the_zones_names(section):
    """The per-node reference uses the zone's interpretations too (before, a deep node's
    inversion named its class 'basalt / diabase', absent from the map, and was skipped)."""
    zone = Zone("extrusives and dikes", 0.0, 2.5, rocks=BASALT)
    g = _grid(section)
    m = map_grid(g, [zone], seed=1, n_points=2**10, level_km=0.5, min_ess=0)
    df = validate_nodes(g, [zone], m, n_nodes=6, seed=2, method="exact",
                        n_points=2**13)
    deep = df[g.depth_km[df["node"].to_numpy()] >= 1.5]
    assert len(deep) > 0
    assert set(deep["hypothesis"]) >= {"porous basalt / diabase",
                                       "low-porosity basalt / diabase"}
    # P(porous) = 0 exactly on both sides at a deep node (no design point reaches 0.05)
    por = deep[deep["hypothesis"] == "porous basalt / diabase"]
    assert np.all(por["p_map"] == 0.0) and np.all(por["p_node"] == 0.0)
