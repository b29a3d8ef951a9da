"""Results open in arviz 0.2x and 1.x: the NetCDF layout is the DataTree one of arviz 1.x
(groups posterior, prior, observed_data, constant_data, log_likelihood, sample_stats; provenance
at the root), read here with xarray alone; every variable carries a unit."""

import tomllib
from pathlib import Path

import numpy as np
import xarray as xr

import bayescrust as bc

GROUPS = {"posterior", "prior", "observed_data", "constant_data", "log_likelihood",
          "sample_stats"}


def test_posterior_nc_is_a_datatree_with_units(tmp_path):
    res = bc.exact_layer(bc.Layer("x", vp=(7.0, 0.1), top_km=4, bottom_km=6,
                                  water_depth_km=3), seed=1, n_points=2048)
    path = tmp_path / "posterior.nc"
    res.idata.to_netcdf(str(path), engine="h5netcdf")
    tree = xr.open_datatree(path, engine="h5netcdf")
    assert GROUPS <= set(tree.children)
    assert tree.attrs["method"] == "exact" and int(tree.attrs["seed"]) == 1
    for g in GROUPS:
        for v in tree[g].data_vars:
            assert tree[g][v].attrs.get("units"), (g, v)
    assert tree["posterior"]["vp"].attrs["units"] == "km/s"
    assert tree["posterior"]["temperature_c"].attrs["units"] == "deg C"
    np.testing.assert_allclose(tree["posterior"]["vp"].values, res.idata.posterior["vp"].values)


def test_pyproject_allows_arviz_1():
    meta = tomllib.loads((Path(__file__).parents[2] / "pyproject.toml").read_text())
    spec = next(d for d in meta["project"]["dependencies"] if d.startswith("arviz"))
    assert "<1" not in spec.replace(" ", "") and ">=0.20" in spec
