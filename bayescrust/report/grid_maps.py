"""Section maps of a probability map (one figure per interpretation; PNG and PDF).

Each map shows the probability on a perceptually uniform colour map (viridis, 0-1, with a colour
bar in probability), masked nodes in grey, nodes whose data the model cannot fit (quality
``misfit``) in a darker grey, hatched (their probabilities are not shown in colour: they are
conditional on a model that does not fit), the seafloor, and a contour of the observed Vp. 3-D
grids are mapped on the section along their distance dim (the grid's ``distance`` setting,
default the first horizontal dim) through the middle of the other; single columns as a
profile of probability against depth; node lists (CSV) as coloured nodes.
"""

from __future__ import annotations

import numpy as np

__all__ = ["section_map", "write_section_maps"]

#: how misfit nodes are drawn (face colour, hatch, edge colour of the hatch)
MISFIT_STYLE = {"facecolor": "0.55", "hatch": "xxxx", "edgecolor": "0.2"}
MISFIT_LABEL = "data misfit (model cannot fit)"


def _misfit(ds, var, distance=None):
    """Boolean section of the misfit nodes, aligned with ``_section(ds, var)``'s (None if the
    map has no quality flag or no misfit node)."""
    if "quality" not in ds:
        return None
    from ..grid.results import QUALITY_FLAGS

    q = _section(ds, "quality", distance)[0]
    m = q == QUALITY_FLAGS["misfit"]
    return m if bool(m.any()) else None


def _edges(c):
    """Cell edges of nodes at centres ``c`` (as shading="nearest" draws them)."""
    c = np.asarray(c, float)
    if c.size == 1:
        return np.array([c[0] - 0.5, c[0] + 0.5])
    mid = 0.5 * (c[1:] + c[:-1])
    return np.concatenate([[2 * c[0] - mid[0]], mid, [2 * c[-1] - mid[-1]]])


def _misfit_handle():
    from matplotlib.patches import Patch

    return Patch(label=MISFIT_LABEL, **MISFIT_STYLE)


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
    mis = _misfit(ds, var, distance)
    if mis is not None:  # no colour for a probability conditional on a model that misfits
        da = da.where(~mis.values)
    handles = []
    fig, ax = plt.subplots(figsize=(7.0, 3.6), constrained_layout=True)
    cmap = plt.get_cmap("viridis").with_extremes(bad="0.8")
    if depth_dim is None:  # node list
        x = ds["x"].values if "x" in ds else np.arange(da.size)
        z = ds["z"].values if "z" in ds else ds["depth_below_seafloor"].values
        ax.scatter(x, z, c="0.8", s=12)
        ok = np.isfinite(da.values)  # masked nodes stay grey
        im = ax.scatter(x[ok], z[ok], c=da.values[ok], cmap=cmap, vmin=0, vmax=1, s=16)
        if mis is not None:
            m = mis.values
            handles.append(ax.scatter(x[m], z[m], s=30, marker="X", c=MISFIT_STYLE["facecolor"],
                                      edgecolors=MISFIT_STYLE["edgecolor"], linewidths=0.6,
                                      label=MISFIT_LABEL))
        ax.set_xlabel("distance")
        ref = ("sea level" if ds.attrs.get("depth_reference") == "sea_level"
               else "the seafloor")
        ax.set_ylabel(f"depth below {ref} (km)")  # node depths are stored in km
        ax.invert_yaxis()
    elif dist_dim is None:  # a single column: probability against depth
        z, pv = da[depth_dim].values, da.values
        ok = np.isfinite(pv)  # masked (and misfit) nodes are left out of the profile
        ax.plot(pv[ok], z[ok], color="0.3", lw=1.0)
        im = ax.scatter(pv[ok], z[ok], c=pv[ok], cmap=cmap, vmin=0, vmax=1, s=16)
        if mis is not None:  # their depths, marked at the left edge
            m = mis.values
            handles.append(ax.scatter(np.full(int(m.sum()), -0.01), z[m], s=30, marker="X",
                                      c=MISFIT_STYLE["facecolor"],
                                      edgecolors=MISFIT_STYLE["edgecolor"], linewidths=0.6,
                                      label=MISFIT_LABEL, clip_on=False))
        ax.set_xlim(-0.02, 1.02)
        ax.set_xlabel("probability")
        ax.set_ylabel(f"{depth_dim} ({ds.attrs.get('depth_unit', 'km')})")
        ax.invert_yaxis()
    else:
        a = da.transpose(depth_dim, dist_dim)
        x, z = a[dist_dim].values, a[depth_dim].values
        im = ax.pcolormesh(x, z, np.ma.masked_invalid(a.values), cmap=cmap, vmin=0, vmax=1,
                           shading="nearest", rasterized=True)
        if mis is not None:  # the misfit cells, grey and hatched, over the map
            mm = mis.transpose(depth_dim, dist_dim).values
            from matplotlib.colors import ListedColormap

            ax.pcolor(_edges(x), _edges(z), np.ma.masked_where(~mm, np.ones(mm.shape)),
                      cmap=ListedColormap([MISFIT_STYLE["facecolor"]]),
                      hatch=MISFIT_STYLE["hatch"], edgecolor=MISFIT_STYLE["edgecolor"],
                      linewidth=0.0)
            handles.append(_misfit_handle())
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
                handles += ax.plot(sf[dist_dim].values, sf.values * scale, color="black",
                                   lw=1.5, label="seafloor")
        ax.set_xlabel(f"{dist_dim}")
        ax.set_ylabel(f"{depth_dim} ({ds.attrs.get('depth_unit', 'km')})")
        ax.invert_yaxis()
    if handles:
        ax.legend(handles=handles, loc="lower right", fontsize=7)
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
