"""The per-process caches of level designs and tables: a second map in the same process (or on
a long-lived worker) gives what a fresh process gives, whatever changed between the two."""

import numpy as np
import pytest
import xarray as xr

import bayescrust.grid.chunk as grid_chunk
from bayescrust.grid import GridMapping, Zone, grid_from_dataset, map_grid

ZONES = [Zone("crust", 0.0, 20.0, rocks=("gabbro", "harzburgite"))]
# the invented section puts Vp ~4.1 km/s in gabbro / harzburgite at 0.25 km: those nodes are
# flagged misfit (and warned about) by design; these tests compare caches, fit_p included
pytestmark = pytest.mark.filterwarnings("ignore::bayescrust.inference.trust.MisfitWarning")
KW = dict(seed=3, n_points=512, level_km=3.0, min_ess=0)


def _grid(water_km=0.0, sigma=0.1, shift=0.0):
    """An invented seafloor-referenced section (depth below the seafloor 0.25-8.75 km)."""
    x, z = np.linspace(0.0, 10.0, 5), np.arange(0.25, 8.9, 0.25)
    vp = np.clip(4.0 + 0.5 * z[None, :] + shift, 2.0, 8.2) * np.ones((x.size, 1))
    ds = xr.Dataset({"vp": (("x", "z"), vp)}, coords={"x": x, "z": z})
    return grid_from_dataset(ds, GridMapping(variables={"vp": "vp"}, sigmas={"vp": sigma},
                                             depth="z", seafloor=water_km,
                                             depth_reference="seafloor"))


def _clear():
    grid_chunk._CACHE.clear()
    grid_chunk._TABLES.clear()


CASES = {  # (first map, second map): grid settings, run settings
    "water depth": ((dict(water_km=0.0), {}), (dict(water_km=6.0), {})),
    "level depth": ((dict(), {}), (dict(), dict(level_km=2.0))),
    "sigma": ((dict(sigma=0.05), {}), (dict(sigma=0.5), {})),
    "data range": ((dict(), {}), (dict(shift=0.4), {})),
}


# sigma and the data range enter only the tabulated path's table cache: the batched path has
# no table, so those two cases run on the tabulated path alone (a batched run could not fail)
PAIRS = [(c, p) for c in CASES for p in ("batched", "tabulated")
         if p == "tabulated" or c in ("water depth", "level depth")]


@pytest.mark.parametrize("case, path", PAIRS)
def test_a_second_map_in_one_process_equals_a_fresh_one(case, path):
    (ga, ka), (gb, kb) = CASES[case]
    _clear()
    fresh = map_grid(_grid(**gb), ZONES, path=path, **{**KW, **kb})
    _clear()
    map_grid(_grid(**ga), ZONES, path=path, **{**KW, **ka})
    second = map_grid(_grid(**gb), ZONES, path=path, **{**KW, **kb})
    _clear()
    for v in ("p_mantle", "vp_mean", "temperature_c_sd", "fit_p", "quality"):
        np.testing.assert_array_equal(second[v].values, fresh[v].values, err_msg=v)
