"""Ownership and completeness of the zarr checkpoint store."""

import numpy as np
import pytest

from bayescrust.grid import GridMapping, Zone, grid_from_dataset, map_grid

ZONES = [Zone("crust", 0.0, 20.0, rocks=("gabbro", "harzburgite"))]
KW = dict(seed=5, n_points=512, level_km=2.0, min_ess=0, chunk_size=40)


@pytest.fixture
def grid(section):
    return grid_from_dataset(section, GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.1},
                                                  depth="z", seafloor=3.0))


def test_a_store_whose_creation_was_interrupted_is_recreated(grid, tmp_path, monkeypatch):
    import zarr

    store = tmp_path / "map.zarr"
    real, calls = zarr.Group.create_array, []

    def killed_midway(self, *args, **kw):  # the process dies after a few arrays
        calls.append(1)
        if len(calls) > 3:
            raise KeyboardInterrupt
        return real(self, *args, **kw)

    monkeypatch.setattr(zarr.Group, "create_array", killed_midway)
    with pytest.raises(KeyboardInterrupt):
        map_grid(grid, ZONES, store=store, **KW)
    monkeypatch.setattr(zarr.Group, "create_array", real)
    assert store.exists() and "fingerprint" not in zarr.open_group(str(store), mode="r").attrs
    resumed = map_grid(grid, ZONES, store=store, **KW)
    whole = map_grid(grid, ZONES, **KW)
    assert resumed.attrs["n_chunks_computed"] == resumed.attrs["n_chunks"]
    for v in ("p_mantle", "vp_mean", "quality"):
        np.testing.assert_array_equal(resumed[v].values, whole[v].values, err_msg=v)


def test_a_zarr_group_of_someone_else_is_neither_used_nor_overwritten(grid, tmp_path):
    import zarr

    store = tmp_path / "data.zarr"
    g = zarr.open_group(str(store), mode="w")
    g.create_array("velocity", shape=(3,), dtype="float32")[:] = [1.0, 2.0, 3.0]
    with pytest.raises(ValueError, match="not a checkpoint store"):
        map_grid(grid, ZONES, store=store, **KW)
    np.testing.assert_array_equal(zarr.open_group(str(store), mode="r")["velocity"][:],
                                  [1.0, 2.0, 3.0])


def test_a_store_of_another_package_version_is_not_resumed(grid, tmp_path, monkeypatch):
    import bayescrust

    store = tmp_path / "map.zarr"
    monkeypatch.setattr(bayescrust, "__version__", "0.1.0")
    map_grid(grid, ZONES, store=store, **KW)
    monkeypatch.setattr(bayescrust, "__version__", "0.2.0")  # an upgrade between two runs
    with pytest.raises(ValueError, match="0.1.0"):
        map_grid(grid, ZONES, store=store, **KW)
