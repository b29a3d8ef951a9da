"""Section maps of a probability map (one figure per interpretation; PNG and PDF).

Each map shows the probability on a perceptually uniform colour map (viridis, 0-1, with a colour
bar in probability), masked nodes in grey, the seafloor, and a contour of the observed Vp. 3-D
grids are mapped on the section along their distance dim (the grid's ``distance`` setting,
default the first horizontal dim) through the middle of the other; single columns as a
profile of probability against depth; node lists (CSV) as coloured nodes.
"""

from __future__ import annotations

import numpy as np

__all__ = ["section_map", "write_section_maps"]


def _section(ds, var, distance=None):
    """``(da, depth_dim, dist_dim)`` of a 2-D section of ``var`` along ``distance`` (default
    the map's ``distance`` attribute, else its first horizontal dim), through the middle of
    the other horizontal dims."""
    da = ds[var]
    if da.dims == ("node",):
        return da, None, None
    sf_dims = ds["seafloor_depth"].dims if "seafloor_depth" in ds else da.dims[:-1]
    depth_dim = next(d for d in da.dims if d not in sf_dims)
    others = [d for d in da.dims if d != depth_dim]
    if not others:  # a single column: a profile
        return da, depth_dim, None
    dist = distance or ds.attrs.get("distance") or others[0]
    if dist not in others:  # as grid.output.column_summary
        raise ValueError(f"distance {dist!r} is not a horizontal dim of the map {others}")
    da = da.isel({d: da.sizes[d] // 2 for d in others if d != dist})
    return da, depth_dim, dist


def section_map(ds, var, *, contour_vp=7.5, title=None, distance=None):
    """One section map of ``ds[var]`` along ``distance`` (see :func:`_section`); returns the
    matplotlib figure."""
    import matplotlib.pyplot as plt

    da, depth_dim, dist_dim = _section(ds, var, distance)
    fig, ax = plt.subplots(figsize=(7.0, 3.6), constrained_layout=True)
    cmap = plt.get_cmap("viridis").with_extremes(bad="0.8")
    if depth_dim is None:  # node list
        x = ds["x"].values if "x" in ds else np.arange(da.size)
        z = ds["z"].values if "z" in ds else ds["depth_below_seafloor"].values
        ax.scatter(x, z, c="0.8", s=12)
        im = ax.scatter(x, z, c=np.ma.masked_invalid(da.values), cmap=cmap, vmin=0, vmax=1,
                        s=16)
        ax.set_xlabel("distance")
    elif dist_dim is None:  # a single column: probability against depth
        z, pv = da[depth_dim].values, da.values
        ok = np.isfinite(pv)  # masked nodes are left out
        ax.plot(pv[ok], z[ok], color="0.3", lw=1.0)
        im = ax.scatter(pv[ok], z[ok], c=pv[ok], cmap=cmap, vmin=0, vmax=1, s=16)
        ax.set_xlim(-0.02, 1.02)
        ax.set_xlabel("probability")
        ax.set_ylabel(f"{depth_dim} (km)")
        ax.invert_yaxis()
    else:
        a = da.transpose(depth_dim, dist_dim)
        x, z = a[dist_dim].values, a[depth_dim].values
        im = ax.pcolormesh(x, z, np.ma.masked_invalid(a.values), cmap=cmap, vmin=0, vmax=1,
                           shading="nearest", rasterized=True)
        obs = [v for v in ds.data_vars if v.endswith("_observed")]
        if obs and contour_vp is not None and obs[0] == "vp_observed":
            vp = _section(ds, obs[0], dist_dim)[0].transpose(depth_dim, dist_dim).values
            if np.nanmin(vp) < contour_vp < np.nanmax(vp):
                cs = ax.contour(x, z, vp, levels=[contour_vp], colors="white", linewidths=1.0)
                ax.clabel(cs, fmt="Vp %.1f km/s", fontsize=7)
        if "seafloor_depth" in ds:
            sf = ds["seafloor_depth"]  # no depth dim: the middle of its other horizontal dims
            sf = sf.isel({d: sf.sizes[d] // 2 for d in sf.dims if d != dist_dim})
            if ds.attrs.get("depth_reference") == "sea_level":
                scale = 1000.0 if ds.attrs.get("depth_unit") == "m" else 1.0
                ax.plot(sf[dist_dim].values, sf.values * scale, color="black", lw=1.5,
                        label="seafloor")
                ax.legend(loc="lower right", fontsize=7)
        ax.set_xlabel(f"{dist_dim}")
        ax.set_ylabel(f"{depth_dim} (km)")
        ax.invert_yaxis()
    fig.colorbar(im, ax=ax, label="probability")
    ax.set_title(title or ds[var].attrs.get("long_name", var), fontsize=9)
    return fig


def write_section_maps(ds, folder, *, contour_vp=7.5, variables=None, dpi=150, distance=None):
    """Write a map (PNG and PDF) of every ``p_*`` variable (or of ``variables``) into
    ``folder``, along ``distance`` (see :func:`_section`); returns the stems."""
    import matplotlib.pyplot as plt

    stems = []
    for v in ds.data_vars:
        if (v in variables) if variables is not None else (
                v.startswith("p_") and not v.endswith("_mcse")):
            fig = section_map(ds, v, contour_vp=contour_vp, distance=distance)
            for ext in ("png", "pdf"):
                fig.savefig(f"{folder}/map_{v}.{ext}", dpi=dpi)
            plt.close(fig)
            stems.append(f"map_{v}")
    return stems
