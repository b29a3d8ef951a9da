"""An invented 2-D velocity section across the fictional Tallowmere Ridge (demo data only).

The section is made up to exercise the software: a seafloor deepening away from the axis, a
Layer 2 velocity gradient, a Layer 3 with an axial low-velocity zone beneath the spreading axis,
and mantle velocities below an invented crustal thickness. It is not a check value and is no
real survey.
"""

from __future__ import annotations

import numpy as np

__all__ = ["tallowmere_section"]


def tallowmere_section(n_x=41, dz_km=0.2):
    """The invented section as an ``xarray.Dataset`` (dims ``distance_km``, ``depth_km``).

    Depth is below sea level; ``seafloor_km`` is a variable per column; Vp in km/s.
    """
    import xarray as xr

    x = np.linspace(-12.0, 12.0, n_x)
    z = np.arange(2.5 + 0.5 * dz_km, 11.0, dz_km)
    seafloor = 2.6 + 0.25 * np.sqrt(np.abs(x))                     # invented
    d = z[None, :] - seafloor[:, None]                              # below the seafloor
    crust = 6.0                                                     # invented thickness
    vp = np.where(d < 1.5, 4.3 + 1.6 * d / 1.5,
                  np.where(d < crust, 6.6 + 0.08 * (d - 1.5), 7.95))
    lvz = np.exp(-(x[:, None] / 2.5) ** 2) * ((d > 1.5) & (d < 4.5))
    vp = vp - 0.7 * lvz                                             # axial low-velocity zone
    vp = np.where(d < 0, np.nan, vp)                                # water column
    return xr.Dataset(
        {"vp": (("distance_km", "depth_km"), vp, {"units": "km s-1",
                                                  "long_name": "P-wave velocity (invented)"}),
         "seafloor_km": ("distance_km", seafloor, {"units": "km"})},
        coords={"distance_km": ("distance_km", x, {"units": "km"}),
                "depth_km": ("depth_km", z, {"units": "km", "positive": "down"})},
        attrs={"title": "Tallowmere Ridge, segment TM-3: invented section (demo only)"})
