"""The map as an xarray Dataset on the input's grid (CF-style units), NetCDF output, column summary.

Variables (each on the grid's dims; NaN at masked nodes):

- ``p_<interpretation>`` and ``p_<interpretation>_mcse``: posterior probability and its Monte
  Carlo standard error; ``p_mantle`` (ultramafic fraction >= 0.5) is always present;
- ``<quantity>_mean``, ``_sd``, ``_hdi_low``, ``_hdi_high`` for temperature, porosity, effective
  melt and serpentinisation, rock-family fractions and predicted Vp, Vs, Vp/Vs and density;
- ``crustal_age`` (Myr) when the grid has ages (:mod:`bayescrust.grid.ages`);
- ``importance_ess``, ``table_error``, ``quality`` (flags good / refined / poor / masked /
  misfit), the data fit ``fit_p`` and ``fit_z`` (:mod:`bayescrust.grid.fit`), ``zone``,
  ``depth_below_seafloor``, ``vp_observed`` and the per-column ``seafloor_depth``.
"""

from __future__ import annotations

import re

import numpy as np

__all__ = ["build_dataset", "write_netcdf", "column_summary", "variable_name"]

_UNITS = {"temperature_c": "degC", "porosity": "1", "melt_fraction_effective": "1",
          "serpentinization_effective": "1", "ultramafic_fraction": "1",
          "gabbroic_fraction": "1", "basaltic_fraction": "1", "vp": "km s-1", "vs": "km s-1",
          "vp_vs": "1", "density": "g cm-3"}
_STAT_LONG = {"mean": "posterior mean", "sd": "posterior standard deviation",
              "hdi_low": "lower end of the 94% highest-density interval",
              "hdi_high": "upper end of the 94% highest-density interval"}


def variable_name(hypothesis: str) -> str:
    """``p_<slug>`` of an interpretation's name."""
    return "p_" + re.sub(r"[^0-9a-z]+", "_", hypothesis.lower()).strip("_")


def build_dataset(grid, zones, run, flat, order, zone_of, hyp_names, info):
    """Assemble the per-node results (sorted order) into a Dataset on the grid."""
    import xarray as xr

    from .. import __version__
    from .fit import PPC_ALPHA
    from .results import QUALITY_FLAGS

    shape, dims = grid.shape, grid.dims
    n = grid.n_nodes


    placed = info.get("placed", False)  # results already on the grid (masked nodes NaN)

    def full(key, fill=np.nan, dtype=np.float32):
        if placed:
            return flat.pop(key).reshape(shape)
        a = np.full(n, fill, dtype=dtype)
        a[order] = flat.pop(key)  # release each flat result once placed on the grid
        return a.reshape(shape)

    data = {}
    for h in hyp_names:
        name = variable_name(h)
        data[name] = (dims, full(f"p:{h}"),
                      {"long_name": f"posterior probability of '{h}'", "units": "1",
                       "interpretation": h})
        data[f"{name}_mcse"] = (dims, full(f"mcse:{h}"),
                                {"long_name": f"Monte Carlo standard error of {name}",
                                 "units": "1"})
    for q, unit in _UNITS.items():
        for s, long in _STAT_LONG.items():
            data[f"{q}_{s}"] = (dims, full(f"{q}:{s}"),
                                {"long_name": f"{long} of {q}", "units": unit})
    ess = full("importance_ess")
    data["importance_ess"] = (dims, ess,
                              {"long_name": "importance effective sample size (Kish)",
                               "units": "1"})
    data["table_error"] = (dims, full("table_error"),
                           {"long_name": "largest probability error of the tabulated path",
                            "units": "1"})
    q = np.full(n, QUALITY_FLAGS["masked"], np.int8)
    qf = flat.pop("quality")
    q[order] = (qf[order] if placed else qf).astype(np.int8)
    data["quality"] = (dims, q.reshape(shape),
                       {"long_name": "quality flag of the fast path",
                        "flag_values": np.array(list(QUALITY_FLAGS.values()), np.int8),
                        "flag_meanings": " ".join(QUALITY_FLAGS),
                        "min_importance_ess": run.min_ess,
                        "misfit_threshold": PPC_ALPHA,
                        "comment": _QUALITY_COMMENT.format(ess=run.min_ess, alpha=PPC_ALPHA)})
    data["fit_p"] = (dims, full("fit_p"),
                     {"long_name": "posterior-predictive tail probability of the data "
                                   "(two-sided; the smallest over the observables)",
                      "units": "1", "misfit_threshold": PPC_ALPHA,
                      "comment": f"quality is misfit where fit_p < {PPC_ALPHA:g} (the "
                                 "single-layer predictive check's threshold); see docs/grid.md"})
    data["fit_z"] = (dims, full("fit_z"),
                     {"long_name": "standardised residual (observed - predicted) / predictive "
                                   "sd of the observable with the smallest fit_p",
                      "units": "1"})
    data["zone"] = (dims, zone_of.reshape(shape).astype(np.int8),
                    {"long_name": "depth zone index (-1: none)",
                     "zone_names": ", ".join(z.name for z in zones)})
    d = grid.depth_km.astype(np.float32)
    d[~grid.valid] = np.nan
    data["depth_below_seafloor"] = (dims, d.reshape(shape),
                                    {"long_name": "depth below the seafloor", "units": "km"})
    if getattr(grid, "age_myr", None) is not None:
        data["crustal_age"] = (dims, np.where(grid.valid, grid.age_myr, np.nan).reshape(shape)
                               .astype(np.float32),
                               {"long_name": "crustal age used by the thermal-state priors",
                                "units": "Myr"})
    obs0 = next(iter(grid.values))
    v = grid.values[obs0]
    v = v.mean(axis=1) if v.ndim == 2 else v
    data[f"{obs0}_observed"] = (dims, v.reshape(shape).astype(np.float32),
                                {"long_name": f"observed {obs0}", "units": _UNITS[obs0]})
    coords = {}
    for k, c in grid.coords.items():
        if k in dims:
            coords[k] = (k, np.asarray(c))
        elif np.shape(c) == shape:
            coords[k] = (dims, np.asarray(c))
    depth_unit = grid.depth_unit
    if dims == ("node",) and "z" in coords:  # a node list's depths were read into km
        depth_unit = "km"
        ref = "sea level" if grid.depth_reference == "sea_level" else "the seafloor"
        coords["z"] = (*coords["z"], {"units": "km", "long_name": f"depth below {ref}"})
    other = tuple(x for x in dims if x != grid.depth_dim)
    if dims != ("node",) and other:
        data["seafloor_depth"] = (other, grid.seafloor_km.reshape(
            tuple(grid.shape[dims.index(x)] for x in other)).astype(np.float32),
            {"long_name": "seafloor depth below sea level", "units": "km"})
    levels = info["levels"]
    n_tab = sum(1 for s in levels if s["path"] == "tabulated")
    attrs = {"title": "bayescrust probability map", "Conventions": "CF-1.8",
             "bayescrust_version": __version__, "source": grid.source, "seed": run.seed,
             "method": "per-level prior design (scrambled Sobol), importance weighing",
             "n_points": run.n_points, "level_km": run.level_km, "min_ess": run.min_ess,
             "hdi_prob": 0.94, "n_levels": len(levels), "n_levels_tabulated": n_tab,
             "n_levels_batched": len(levels) - n_tab,
             "path_choice": f"{n_tab} levels tabulated, {len(levels) - n_tab} weighed directly",
             "execution": info["mode"], "n_chunks": info["n_chunks"],
             "n_chunks_computed": info["n_chunks_computed"], "fingerprint": info["fingerprint"],
             "zones": "; ".join(f"{z.name}: {z.top_km:g}-{z.bottom_km:g} km below seafloor, "
                                f"rocks {', '.join(z.rocks)}" for z in zones),
             "n_nodes": n, "n_masked": int(n - order.size), "depth_unit": depth_unit,
             "depth_reference": grid.depth_reference,
             "observables": ", ".join(grid.values),
             "n_refined": int(np.sum(q == QUALITY_FLAGS["refined"])),
             # below min_ess, whatever the flag (a misfit node's flag is misfit)
             "n_poor": int(np.sum(~(ess.ravel() >= run.min_ess) & (q != QUALITY_FLAGS["masked"]))),
             "n_misfit": int(np.sum(q == QUALITY_FLAGS["misfit"])),
             "misfit_threshold": PPC_ALPHA}
    if dims == ("node",) or grid.distance_name in other:  # none on a single column
        attrs["distance"] = "x" if dims == ("node",) else grid.distance_name
    return xr.Dataset(data, coords=coords, attrs=attrs)


def write_netcdf(ds, path):
    """Write ``ds`` to NetCDF atomically (a temporary file renamed into place)."""
    import os
    from pathlib import Path

    p = Path(path)
    tmp = p.with_name(p.name + ".part")
    ds.to_netcdf(tmp)
    os.replace(tmp, p)
    return p


_SUMMARY_COLUMNS = ("distance", "n_nodes", "mantle_depth_km", "depth_p25_km", "depth_p75_km",
                    "n_poor", "n_misfit")
_QUALITY_COMMENT = (
    "good: importance ESS >= {ess:g}; refined: below it, brought above by the adaptive second "
    "stage; poor: still below; masked: no data or outside every zone; misfit: the data are "
    "outside what the model can produce (fit_p < {alpha:g}), whatever the ESS")


def column_summary(ds, *, distance=None, depth_var="depth_below_seafloor"):
    """Per column: depth below the seafloor where P(mantle) first exceeds 0.5, with a range.

    The crossing is interpolated linearly between levels; ``depth_p25`` and ``depth_p75`` are
    the depths where P(mantle) first exceeds 0.25 and 0.75 (the transition's uncertainty).
    ``n_poor`` counts the column's nodes below the map's ``min_ess`` (misfit or not) and
    ``n_misfit`` those whose data the model cannot produce (quality ``misfit``): a crossing
    next to misfit nodes rests on probabilities conditional on a model that does not fit.
    ``distance`` is the column's distance coordinate (default the map's ``distance``
    attribute, the grid's ``distance`` setting; NaN on a single-column grid); the other
    horizontal coordinates of a 3-D grid follow, one column each, named by their dim, so every
    row names its column.

    Returns
    -------
    pandas.DataFrame
    """
    import pandas as pd

    from .results import QUALITY_FLAGS

    p = ds["p_mantle"]
    z = ds[depth_var]
    dims = p.dims
    flags = None  # per node: bit 1 poor (below min_ess), bit 2 misfit (masked nodes 0)
    if "quality" in ds and "importance_ess" in ds:  # a map (not a bare P(mantle) field)
        qual = ds["quality"]
        min_ess = float(ds.attrs.get("min_ess", qual.attrs.get("min_importance_ess", 0.0)))
        valid = qual != QUALITY_FLAGS["masked"]
        flags = ((~(ds["importance_ess"] >= min_ess) & valid).astype(np.int8)
                 + 2 * (qual == QUALITY_FLAGS["misfit"]).astype(np.int8))
    extra = {}
    if dims == ("node",):
        col = ds["x"].values if "x" in ds else np.zeros(p.size)
        groups = [(float(x), np.flatnonzero(col == x)) for x in np.unique(col)]
        pz = [(p.values[i], z.values[i]) for _, i in groups]
        fl = [None if flags is None else flags.values[i] for _, i in groups]
        names = [g[0] for g in groups]
    else:
        depth_dim = next(d for d in dims if d not in ds["seafloor_depth"].dims) \
            if "seafloor_depth" in ds else dims[-1]
        other = [d for d in dims if d != depth_dim]
        pt = p.transpose(*other, depth_dim).values.reshape(-1, p.sizes[depth_dim])
        zt = z.transpose(*other, depth_dim).values.reshape(-1, p.sizes[depth_dim])
        pz = list(zip(pt, zt, strict=True))
        fl = [None] * len(pz) if flags is None else list(
            flags.transpose(*other, depth_dim).values.reshape(-1, p.sizes[depth_dim]))
        if not other:  # a single column (depth dim only): no horizontal position
            names = [np.nan]
        else:
            dn = distance or ds.attrs.get("distance") or other[0]
            if dn not in other:
                raise ValueError(f"distance {dn!r} is not a horizontal dim of the map {other}")
            mesh = np.meshgrid(*[ds[d].values for d in other], indexing="ij")
            names = np.asarray(mesh[other.index(dn)]).ravel().tolist()
            # a dim named like a summary column (e.g. "distance" when it is not the distance
            # setting) gets a "_coordinate" suffix instead of overwriting that column
            extra = {(f"{d}_coordinate" if d in _SUMMARY_COLUMNS else d): np.asarray(m).ravel()
                     .tolist() for d, m in zip(other, mesh, strict=True) if d != dn}
    rows = []
    for i, (name, (pp, zz), ff) in enumerate(zip(names, pz, fl, strict=True)):
        ok = np.isfinite(pp) & np.isfinite(zz)
        pp, zz = pp[ok], zz[ok]
        o = np.argsort(zz)
        pp, zz = pp[o], zz[o]
        row = {"distance": name, **{d: v[i] for d, v in extra.items()},
               "n_nodes": int(ok.sum()),
               "mantle_depth_km": _crossing(zz, pp, 0.5),
               "depth_p25_km": _crossing(zz, pp, 0.25),
               "depth_p75_km": _crossing(zz, pp, 0.75)}
        if ff is not None:
            row.update(n_poor=int(np.sum(ff & 1 > 0)), n_misfit=int(np.sum(ff & 2 > 0)))
        rows.append(row)
    return pd.DataFrame(rows)


def _crossing(z, p, level):
    """Depth (km) where ``p`` first exceeds ``level``, interpolated linearly; rounded to
    0.1 m (the maps hold float32: further digits are rounding noise)."""
    above = np.flatnonzero(p > level)
    if above.size == 0:
        return np.nan
    i = above[0]
    if i == 0:
        return round(float(z[0]), 4)
    z0, z1, p0, p1 = (float(x) for x in (z[i - 1], z[i], p[i - 1], p[i]))
    return round(z0 + (level - p0) * (z1 - z0) / (p1 - p0), 4)
