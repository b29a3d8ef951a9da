"""Reading grids: name mapping, masks, seafloor, errors naming the variable."""

import numpy as np
import pytest

from bayescrust.grid import (
    GridDataWarning,
    GridInputError,
    GridMapping,
    grid_from_dataset,
    read_grid,
)


def test_netcdf_round_trip_and_water_column_mask(section, tmp_path):
    ds = section.copy()
    ds["vp"][:, :3] = np.nan                     # missing data
    ds["floor"] = ("x", np.full(6, 3.3))        # seafloor at 3.3 km: nodes above are water
    p = tmp_path / "g.nc"
    ds.to_netcdf(p, engine="h5netcdf")
    g = read_grid(p, GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.1}, depth="z",
                                 seafloor="floor"))
    assert g.shape == (6, 70) and g.dims == ("x", "z")
    valid = g.valid.reshape(g.shape)
    # depth below sea level 3.05..3.25 is above the 3.3 km seafloor: masked
    assert not valid[:, :3].any() and valid[:, 3:].all()
    assert np.allclose(g.depth_km.reshape(g.shape)[0, 3], 3.35 - 3.3)


def test_depth_in_metres_below_seafloor(section):
    ds = section.assign_coords(z=(section.z - 3.0) * 1000.0)
    g = grid_from_dataset(ds, GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.1}, depth="z",
                                          depth_unit="m", depth_reference="seafloor"))
    assert np.allclose(g.depth_km.reshape(g.shape)[0, :2], [0.05, 0.15])
    assert g.valid.all()


@pytest.mark.parametrize("mapping, name", [
    (dict(variables={"vp": "velocity"}, sigmas={"vp": 0.1}, depth="z"), "velocity"),
    (dict(variables={"vp": "vp"}, sigmas={"vp": "vp_err"}, depth="z"), "vp_err"),
    (dict(variables={"vp": "vp"}, sigmas={"vp": 0.1}, depth="depth"), "depth"),
    (dict(variables={"vp": "vp"}, sigmas={"vp": 0.1}, depth="z", seafloor="bathy"), "bathy"),
])
def test_missing_names_are_named_in_the_error(section, mapping, name):
    with pytest.raises(GridInputError, match=name):
        grid_from_dataset(section, GridMapping(**mapping), source="model.nc")


def test_values_outside_the_modelled_range_are_masked_with_a_warning(section):
    ds = section.copy()
    ds["vp"][0, -1] = 13.0                      # beyond the observable range of Vp
    with pytest.warns(GridDataWarning, match="vp"):
        g = grid_from_dataset(ds, GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.1},
                                              depth="z", seafloor=3.0))
    assert g.valid.sum() == g.n_nodes - 1


def test_csv_nodes(tmp_path):
    p = tmp_path / "nodes.csv"
    p.write_text("dist,dep,vp,err\n0,3.5,5.5,0.1\n0,6.0,7.0,0.1\n1,2.0,1.5,0.1\n")
    g = read_grid(p, GridMapping(variables={"vp": "vp"}, sigmas={"vp": "err"}, depth="dep",
                                 distance="dist", seafloor=3.0))
    assert g.shape == (3,) and g.valid.tolist() == [True, True, False]
    with pytest.raises(GridInputError, match="nodes.csv: sigma_vp: column not found"):
        read_grid(p, GridMapping(variables={"vp": "vp"}, sigmas={"vp": "sigma_vp"}, depth="dep",
                                 distance="dist"))


def test_mapping_needs_a_sigma_per_variable():
    with pytest.raises(ValueError, match="no sigma for"):
        GridMapping(variables={"vp": "vp", "vs": "vs"}, sigmas={"vp": 0.1})
