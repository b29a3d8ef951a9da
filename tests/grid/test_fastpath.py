"""The per-level fast path against direct references.

References: direct importance weighing of the same prior design (the first stage of the exact
path, itself checked against brute-force quadrature in tests/inference); the single-layer exact
inversion :func:`bayescrust.exact_layer`; and a synthetic grid made by the forward model with a
known hot zone (its recovery is the check, the invented numbers are only the input).
"""

import numpy as np
import pytest
import xarray as xr

from bayescrust import Layer, exact_layer
from bayescrust.grid import GridMapping, Zone, grid_from_dataset, map_grid, variable_name

ZONES = [Zone("upper", 0.0, 1.5, rocks=("basalt", "diabase")),
         Zone("lower", 1.5, 20.0, rocks=("gabbro", "harzburgite"))]


def _grid(ds, **kw):
    return grid_from_dataset(ds, GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.1},
                                             depth="z", seafloor=3.0, **kw))


def _p_vars(ds):
    return [v for v in ds.data_vars if v.startswith("p_") and not v.endswith("_mcse")]


def test_tabulated_equals_direct_weighing(section):
    """Tabulated vs direct weighing of the same designs: |dP| < 0.001 (issue 12's bound)."""
    ds = section.interp(x=np.linspace(0, 10, 60))  # 60 nodes per level, shared sigma
    g = _grid(ds)
    kw = dict(seed=3, n_points=2**12, level_km=0.5, n_table=33, min_ess=0)
    tab = map_grid(g, ZONES, path="tabulated", **kw)
    direct = map_grid(g, ZONES, path="batched", **kw)
    assert tab.attrs["n_levels_tabulated"] == tab.attrs["n_levels"] > 0
    assert direct.attrs["n_levels_tabulated"] == 0
    for v in _p_vars(tab):
        d = np.nanmax(np.abs(tab[v].values - direct[v].values))
        assert d < 1e-3, (v, d)
    assert float(tab.table_error.max()) <= 1e-3
    # the interpolated continuous summaries stay close too (0.5 % of the prior range, the
    # histogram resolution of 1/32 being coarser)
    t = np.abs(tab.temperature_c_mean - direct.temperature_c_mean).max()
    assert float(t) < 7.0


def test_chunking_does_not_change_results(section):
    """Same designs and node streams whatever the chunks: equal up to BLAS rounding (the
    matrix products' blocking depends on the number of rows), refinement included. The weights
    are float32 (weigh.WORK_DTYPE): a sum of 2^11 float32 terms rounds at ~1e-6 relative, and
    a posterior sd from E[v^2] - E[v]^2 loses up to ~2 more digits, hence rtol 2e-4; the sd
    of a near-zero quantity (melt fraction ~1e-4) loses all relative digits, hence atol 1e-6
    (1e-5 of the melt prior's range)."""
    g = _grid(section)
    kw = dict(seed=5, n_points=2**11, level_km=1.0, min_ess=60, n_refine=2**11)
    a = map_grid(g, ZONES, chunk_size=17, **kw)
    b = map_grid(g, ZONES, chunk_size=100_000, **kw)
    assert a.attrs["n_chunks"] > 1 and b.attrs["n_chunks"] == 1
    assert a.attrs["n_refined"] + a.attrs["n_poor"] > 0  # the node streams are exercised
    for v in a.data_vars:
        # fit_z, fit_p: (observed - predicted mean) / predictive sd (~0.1-0.2 km/s); the mean's
        # float32 rounding (~1e-6 of ~7 km/s) is ~5e-5 of z, and of p (|dp/dz| <= 0.8)
        atol = 1e-4 if v.startswith("fit_") else 1e-6
        np.testing.assert_allclose(a[v].values, b[v].values, rtol=2e-4, atol=atol, err_msg=v)
    np.testing.assert_array_equal(a.quality.values, b.quality.values)


def test_one_node_grid_equals_the_layer_exact_inversion():
    """A grid of one node and exact_layer of the same layer agree within Monte Carlo error."""
    ds = xr.Dataset({"vp": (("x", "z"), [[7.4]]), "vs": (("x", "z"), [[4.1]])},
                    coords={"x": [0.0], "z": [3.0 + 6.05]})
    g = grid_from_dataset(ds, GridMapping(variables={"vp": "vp", "vs": "vs"},
                                          sigmas={"vp": 0.1, "vs": 0.08}, depth="z",
                                          seafloor=3.0))
    zone = Zone("lower", 1.5, 20.0, rocks=("gabbro", "harzburgite"))
    m = map_grid(g, [zone], seed=11, n_points=2**15, level_km=0.1, min_ess=2000)
    layer = Layer("node", top_km=6.0, bottom_km=6.1, water_depth_km=3.0, vp=(7.4, 0.1),
                  vs=(4.1, 0.08))
    ref = exact_layer(layer, rocks=zone.rocks, seed=12, n_points=2**15)
    n_checked = 0
    for h, row in ref.hypotheses.iterrows():
        v = variable_name(h)
        p, se = float(m[v].values.ravel()[0]), float(m[f"{v}_mcse"].values.ravel()[0])
        tol = 4.0 * np.hypot(se, row["posterior_mcse"]) + 1e-3
        assert abs(p - row["posterior_probability"]) < tol, (h, p, row["posterior_probability"])
        n_checked += 1
    assert n_checked >= 4
    t_ref = float(ref.summary.loc["temperature_c", "mean"])
    assert abs(float(m.temperature_c_mean.values.ravel()[0]) - t_ref) < 25.0


def _forward_section(hot_c, cold_c):
    """Vp, Vs of harzburgite from the forward model; a hot block inside a cold section."""
    from bayescrust import ForwardModel
    from bayescrust.physics.thermal import lithostatic_pressure_gpa

    x = np.arange(0.0, 9.0, 1.0)
    zb = np.arange(6.05, 9.0, 0.5)                   # below the seafloor
    hot = (np.abs(x[:, None] - 4.0) <= 1.5) & (zb[None, :] > 7.0)
    t = np.where(hot, hot_c, cold_c)
    p = lithostatic_pressure_gpa(zb, water_depth_km=3.0)[None, :] * np.ones_like(t)
    fm = ForwardModel(rocks=("harzburgite",))
    vp, vs, _ = fm(np.ones(t.shape + (1,)), t, p)
    ds = xr.Dataset({"vp": (("x", "z"), vp), "vs": (("x", "z"), vs)},
                    coords={"x": x, "z": zb + 3.0})
    return ds, hot


def test_synthetic_hot_zone_is_recovered():
    """P(hot mantle) > 0.5 inside the hot block and < 0.5 outside (margin: none needed).

    The model is the one that made the data (harzburgite, no pores, no serpentinisation; free
    temperature and melt): with free gabbro and serpentine fractions a hot block is
    indistinguishable from a partly serpentinised or gabbroic one at these Vp/Vs, which is
    physics, not a defect of the map.
    """
    ds, hot = _forward_section(1100.0, 350.0)
    g = grid_from_dataset(ds, GridMapping(variables={"vp": "vp", "vs": "vs"},
                                          sigmas={"vp": 0.05, "vs": 0.04}, depth="z",
                                          seafloor=3.0))
    zone = Zone("mantle", 5.0, 20.0, rocks=("harzburgite",),
                priors={"serpentinization": 0.0, "porosity": 0.0})
    m = map_grid(g, [zone], seed=2, n_points=2**11, level_km=0.5, min_ess=50)
    p = m[variable_name("hot mantle")].values
    assert np.all(p[hot] > 0.5), p[hot]
    assert np.all(p[~hot] < 0.5), p[~hot]
    assert np.all(m.quality.values <= 1)


def test_bad_settings_are_rejected(section):
    g = _grid(section)
    with pytest.raises(ValueError, match="path must be"):
        map_grid(g, ZONES, path="fast")
    with pytest.raises(ValueError, match="overlap"):
        map_grid(g, [Zone("a", 0, 2), Zone("b", 1, 3)])


def test_node_likelihood_is_the_layer_likelihood():
    # identity: the grid's batched likelihood must equal the layer model's own (correlated Vp
    # and Vs model errors included), or maps and layer inversions would disagree
    from bayescrust.grid.weigh import node_loglik
    from bayescrust.inference.model import LayerModel

    layer = Layer("node", top_km=6.0, bottom_km=6.1, water_depth_km=3.0, vp=(7.4, 0.1),
                  vs=(4.1, 0.08))
    model = LayerModel.build(layer, rocks=("gabbro", "harzburgite"))
    q = {"vp": np.array([7.0, 7.5, 8.1]), "vs": np.array([3.8, 4.2, 4.6])}
    vals = {"vp": np.array([7.4, 7.9]), "vs": np.array([4.1, 4.5])}
    got = node_loglik(model, q, vals, {"vp": np.array([0.1, 0.1]), "vs": np.array([0.08, 0.08])})
    for i in range(2):
        ref = sum(model.log_likelihood_terms(q, {k: v[i] for k, v in vals.items()}).values())
        np.testing.assert_allclose(got[i], ref, rtol=1e-12)


def test_hdi_of_a_heavy_tailed_quantity_brackets_its_posterior():
    # A Layer-2 prior design holds nearly disintegrated rocks (Vp/Vs up to ~500, 1 % above 90):
    # 32 equal-width bins over that range put the whole posterior near Vp/Vs 1.8 in the first
    # bin, and the map printed a 94 % HDI of [1.86, 17] for a mean of 1.78 and sd 0.07 (and
    # flipped between processes). Quantile bins: the HDI holds the mean and is a few sd wide
    # (a normal's 94 % HDI is 3.8 sd wide; common practice).
    import bayescrust.grid.levels as L
    from bayescrust.grid import Zone
    from bayescrust.grid import weigh as W

    zone = Zone("upper", 0.0, 1.5, rocks=("basalt", "diabase"))
    lev = L.Level(zone=0, key=0, depth_km=0.05, water_depth_km=3.0, nodes=np.empty(0, int),
                  age_range=None)
    model, hyps, _, q, _ = L.level_design(lev, zone, ["vp"], 7, 2**10, {})
    assert np.quantile(q["vp_vs"], 0.99) > 50  # the heavy tail this is about
    r = W.weigh_batched(model, q, W.DesignTables(q, hyps), {"vp": np.array([5.0])},
                        {"vp": np.array([0.1])})
    lo, hi = r["vp_vs:hdi_low"][0], r["vp_vs:hdi_high"][0]
    mean, sd = r["vp_vs:mean"][0], r["vp_vs:sd"][0]
    assert lo <= mean <= hi
    assert hi - lo < 6 * sd, (lo, hi, mean, sd)
