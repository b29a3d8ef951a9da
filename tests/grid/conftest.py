"""Small synthetic grids for the grid tests (invented; never used as check values)."""

import numpy as np
import pytest


@pytest.fixture
def section():
    """A 2-D (x, z) section: 6 columns, depth below sea level 3.05..9.95 km, seafloor 3 km."""
    import xarray as xr

    x = np.linspace(0.0, 10.0, 6)
    z = np.arange(3.05, 10.0, 0.1)
    vp = 5.0 + 3.0 * np.clip((z[None, :] - 3.0) / 6.0, 0, 1) + 0.02 * x[:, None]
    return xr.Dataset({"vp": (("x", "z"), vp)}, coords={"x": x, "z": z})
