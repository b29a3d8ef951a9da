"""Reading a gridded velocity model (NetCDF via xarray, or a CSV of nodes) into flat node arrays.

A :class:`GridData` holds every node of the grid flattened in C order over the grid's dims
(the ensemble dim, if any, kept apart): depth below the seafloor, water depth, the observed
values and their 1-sigma errors, and a validity mask (nodes in the water column, with missing
data or with values outside the observable ranges are masked and skipped). Names of variables
and dims are mapped by a :class:`GridMapping`; a missing or inconsistent name raises
:class:`GridInputError` naming the file and the variable.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from ..inference.layer import OBSERVABLES

__all__ = ["GridMapping", "GridData", "GridInputError", "GridDataWarning", "read_grid",
           "grid_from_dataset", "grid_from_csv"]


class GridInputError(ValueError):
    """Bad grid input: names the file, the variable or dim, and what was expected."""

    def __init__(self, file, name, message):
        self.file, self.name = str(file), name
        super().__init__(f"{file}: {name}: {message}" if name else f"{file}: {message}")


class GridDataWarning(UserWarning):
    """Nodes were masked because their data lie outside what the model can represent."""


@dataclass(frozen=True)
class GridMapping:
    """Names of the grid's variables and dims, and how depth is referenced.

    Parameters
    ----------
    variables : dict
        ``{observable: variable name}`` for observables among vp, vs, vp_vs, density.
    sigmas : dict
        ``{observable: variable name or number}``: the per-node 1-sigma error (a variable on
        the node's dims, or on the depth dim only) or one number for all nodes.
    depth : str
        Name of the depth dim (a coordinate, positive down).
    depth_unit : {"km", "m"}
    depth_reference : {"sea_level", "seafloor"}
        Depth below sea level (water-column nodes above the seafloor are masked) or below the
        seafloor.
    seafloor : str or float
        Seafloor depth below sea level: a variable over the non-depth dims, or one number
        (same unit as depth).
    ensemble : str, optional
        Name of a dim of tomographic realisations, marginalised over.
    distance : str, optional
        Horizontal coordinate used for the per-column summary and maps (default: first
        non-depth dim).
    age : float, str or dict, optional
        Crustal age (Myr) for the half-space thermal-state priors: one number, a per-column
        variable (CSV column), or ``{"axis": x0, "half_rate_mm_yr": v}`` (age from the distance
        to the axis along the distance coordinate; see :mod:`bayescrust.grid.ages`).
    """

    variables: dict = field(default_factory=lambda: {"vp": "vp"})
    sigmas: dict = field(default_factory=lambda: {"vp": 0.1})
    depth: str = "depth"
    depth_unit: str = "km"
    depth_reference: str = "sea_level"
    seafloor: object = 0.0
    ensemble: str | None = None
    distance: str | None = None
    age: object = None

    def __post_init__(self):
        from .ages import check_age_spec

        object.__setattr__(self, "age", check_age_spec(self.age))
        bad = set(self.variables) - set(OBSERVABLES)
        if bad or not self.variables:
            raise ValueError(f"grid variables: unknown observable {sorted(bad)}; allowed "
                             f"{list(OBSERVABLES)} (at least one)")
        missing = set(self.variables) - set(self.sigmas)
        if missing:
            raise ValueError(f"grid sigmas: no sigma for {sorted(missing)} (a variable name or "
                             "a number per observable)")
        if self.depth_unit not in ("km", "m"):
            raise ValueError(f"grid depth_unit must be 'km' or 'm'; got {self.depth_unit!r}")
        if self.depth_reference not in ("sea_level", "seafloor"):
            raise ValueError("grid depth_reference must be 'sea_level' or 'seafloor'; got "
                             f"{self.depth_reference!r}")


@dataclass(frozen=True, eq=False)
class GridData:
    """Flat node arrays of a grid (see module docstring).

    Attributes
    ----------
    dims, shape, coords : the output grid (``coords``: ``{name: 1-D array}`` per dim, plus
        any 2-D coordinate arrays of a CSV grid).
    depth_km, water_depth_km : (n,) depth below the seafloor and seafloor depth, km.
    values : dict ``{observable: (n,) or (n, k)}`` (``k`` ensemble members).
    sigmas : dict ``{observable: (n,)}``.
    valid : (n,) bool.
    column : (n,) int, index of the node's column (the non-depth position).
    distance : (n_columns,) horizontal coordinate of each column.
    source : str, the input's name.
    """

    dims: tuple
    shape: tuple
    coords: dict
    depth_km: np.ndarray
    water_depth_km: np.ndarray
    values: dict
    sigmas: dict
    valid: np.ndarray
    column: np.ndarray
    distance: np.ndarray
    distance_name: str
    source: str
    seafloor_km: np.ndarray
    depth_dim: str
    depth_unit: str = "km"
    depth_reference: str = "sea_level"
    age_myr: np.ndarray | None = None

    @property
    def n_nodes(self) -> int:
        return int(self.depth_km.shape[0])

    @property
    def n_ensemble(self) -> int:
        v = next(iter(self.values.values()))
        return 1 if v.ndim == 1 else int(v.shape[1])

    def fingerprint(self) -> str:
        """A hash of every node array (used to match a checkpoint to its input)."""
        import hashlib

        h = hashlib.sha256()
        for a in (self.depth_km, self.water_depth_km, self.valid.astype(np.uint8)):
            h.update(np.ascontiguousarray(a).tobytes())
        for k in sorted(self.values):
            h.update(k.encode())
            h.update(np.ascontiguousarray(self.values[k]).tobytes())
            h.update(np.ascontiguousarray(self.sigmas[k]).tobytes())
        if self.age_myr is not None:
            h.update(b"age")
            h.update(np.ascontiguousarray(self.age_myr).tobytes())
        return h.hexdigest()[:16]


def _scale(unit):
    return 1.0 if unit == "km" else 1e-3


def _check_values(source, name, v, s, valid):
    """Mask nodes whose value or sigma is missing or outside the observable's range; warn."""
    (lo, hi), unit = OBSERVABLES[name]
    vv = v if v.ndim == 1 else v.reshape(v.shape[0], -1)
    with np.errstate(invalid="ignore"):
        finite = np.isfinite(vv) if vv.ndim == 1 else np.all(np.isfinite(vv), axis=1)
        inside = (np.all((vv >= lo) & (vv <= hi), axis=1) if vv.ndim == 2
                  else (vv >= lo) & (vv <= hi))
        sig_ok = np.isfinite(s) & (s > 0)
    out = valid & finite & sig_ok
    outside = out & ~inside
    if np.any(outside):
        warnings.warn(f"{source}: {name}: {int(outside.sum())} node(s) outside the modelled "
                      f"range [{lo:g}, {hi:g}] {unit} are masked", GridDataWarning, stacklevel=3)
    return out & inside


def grid_from_dataset(ds, mapping: GridMapping, *, source="<dataset>") -> GridData:
    """Flatten an ``xarray.Dataset`` into :class:`GridData` using ``mapping``."""
    m = mapping
    if m.depth not in ds.dims:
        raise GridInputError(source, m.depth, f"no such dim; dims are {list(ds.dims)}")
    for obs, var in m.variables.items():
        if var not in ds.variables:
            raise GridInputError(source, var, f"variable for {obs} not found; variables are "
                                 f"{sorted(map(str, ds.data_vars))}")
        if m.depth not in ds[var].dims:
            raise GridInputError(source, var, f"has dims {ds[var].dims}, expected the depth dim "
                                 f"{m.depth!r}")
    ref = ds[m.variables[next(iter(m.variables))]]
    ens = m.ensemble
    if ens is not None and ens not in ref.dims:
        raise GridInputError(source, ens, f"ensemble dim not among {ref.dims}")
    dims = tuple(d for d in ref.dims if d != ens)
    order = dims + ((ens,) if ens else ())
    shape = tuple(int(ds.sizes[d]) for d in dims)
    n = int(np.prod(shape))
    coords = {d: (np.asarray(ds[d].values) if d in ds.coords else np.arange(ds.sizes[d]))
              for d in dims}
    sc = _scale(m.depth_unit)
    depth = np.asarray(coords[m.depth], float) * sc
    if not np.all(np.isfinite(depth)):
        raise GridInputError(source, m.depth, "depth coordinate has missing values")
    other = [d for d in dims if d != m.depth]
    col_shape = tuple(int(ds.sizes[d]) for d in other)
    # seafloor per column
    if isinstance(m.seafloor, str):
        if m.seafloor not in ds.variables:
            raise GridInputError(source, m.seafloor, "seafloor variable not found")
        sf_da = ds[m.seafloor]
        if set(sf_da.dims) - set(other):
            raise GridInputError(source, m.seafloor, f"dims {sf_da.dims} must be among the "
                                 f"non-depth dims {tuple(other)}")
        sf = np.asarray(sf_da.broadcast_like(ref.isel({m.depth: 0}, drop=True)
                                             .isel({ens: 0} if ens else {}, drop=True))
                        .transpose(*other).values, float) * sc
    else:
        try:
            sf = np.full(col_shape, float(m.seafloor) * sc)
        except (TypeError, ValueError):
            raise GridInputError(source, "seafloor", f"must be a variable name or a number; got "
                                 f"{m.seafloor!r}") from None
    if np.any(~np.isfinite(sf)) or np.any(sf < 0) or np.any(sf > 11.0):
        raise GridInputError(source, str(m.seafloor), "seafloor depth must be finite and in "
                             "[0, 11] km")
    # broadcast depth and seafloor to nodes, in the order of dims
    zi = dims.index(m.depth)
    zshape = [1] * len(dims)
    zshape[zi] = len(depth)
    z_nodes = np.broadcast_to(depth.reshape(zshape), shape)
    sf_nodes = np.broadcast_to(np.expand_dims(sf, zi), shape)
    if m.depth_reference == "sea_level":
        dbsf = z_nodes - sf_nodes
    else:
        dbsf = np.array(z_nodes)
    column = np.broadcast_to(np.expand_dims(
        np.arange(int(np.prod(col_shape)), dtype=np.int32).reshape(col_shape), zi),
        shape).ravel()
    valid = (dbsf.ravel() > 0.0) & (dbsf.ravel() <= 100.0)
    values, sigmas = {}, {}
    for obs, var in m.variables.items():
        da = ds[var]
        extra = set(da.dims) - set(order)
        if extra:
            raise GridInputError(source, var, f"unexpected dims {sorted(extra)}")
        v = np.asarray(da.broadcast_like(ref).transpose(*order).values, float)
        v = v.reshape(n, -1) if ens else v.reshape(n)
        s_key = m.sigmas[obs]
        if isinstance(s_key, str):
            if s_key not in ds.variables:
                raise GridInputError(source, s_key, f"sigma variable for {obs} not found")
            sd = ds[s_key]
            if set(sd.dims) - set(dims):
                raise GridInputError(source, s_key, f"dims {sd.dims} must be among {dims}")
            s = np.asarray(sd.broadcast_like(ref.isel({ens: 0} if ens else {}, drop=True))
                           .transpose(*dims).values, float).reshape(n)
        else:
            try:
                # one sigma for every node: a read-only broadcast view (no n-array held)
                s = np.broadcast_to(np.float64(s_key), (n,))
            except (TypeError, ValueError):
                raise GridInputError(source, f"sigma of {obs}", f"must be a variable name or a "
                                     f"number; got {s_key!r}") from None
            if not s[0] > 0:
                raise GridInputError(source, f"sigma of {obs}", f"must be > 0; got {s_key!r}")
        valid = _check_values(source, obs, v, s, valid)
        values[obs], sigmas[obs] = v, s
    dname = m.distance or (other[0] if other else m.depth)
    if dname not in coords or (other and dname not in other):
        raise GridInputError(source, dname, f"distance coordinate not among the horizontal dims "
                             f"{tuple(other)}")
    if other:
        mesh = np.meshgrid(*[coords[d] for d in other], indexing="ij")
        dist = np.asarray(mesh[other.index(dname)], float).ravel()
    else:
        dist = np.zeros(1)
    ages = _ages_of_dataset(ds, m, source, other, ref, ens, sf.shape, dist, column)
    return GridData(dims=dims, shape=shape, coords=coords, depth_km=dbsf.ravel().astype(float),
                    water_depth_km=sf_nodes.ravel().astype(float), values=values,
                    sigmas=sigmas, valid=valid, column=column, distance=dist,
                    distance_name=dname, source=source, seafloor_km=sf.ravel(),
                    depth_dim=m.depth, depth_unit=m.depth_unit,
                    depth_reference=m.depth_reference, age_myr=ages)


def _ages_of_dataset(ds, m, source, other, ref, ens, col_shape, dist, column):
    """Per-node ages (Myr) from the mapping's ``age`` (None when not given)."""
    from .ages import ages_from_distance, check_ages

    if m.age is None:
        return None
    if isinstance(m.age, str):
        if m.age not in ds.variables:
            raise GridInputError(source, m.age, "crustal age variable not found")
        da = ds[m.age]
        if set(da.dims) - set(other):
            raise GridInputError(source, m.age, f"dims {da.dims} must be among the non-depth "
                                 f"dims {tuple(other)} (one age per column)")
        col = np.asarray(da.broadcast_like(ref.isel({m.depth: 0}, drop=True)
                                           .isel({ens: 0} if ens else {}, drop=True))
                         .transpose(*other).values, float).reshape(-1)
        name = m.age
    elif isinstance(m.age, dict):
        col = ages_from_distance(dist, m.age)
        name = "age (distance to the axis / half rate)"
    else:
        col = np.full(int(np.prod(col_shape)), float(m.age))
        name = "age"
    try:
        col = check_ages(source, name, col)
    except ValueError as exc:
        raise GridInputError(source, name, str(exc).split(": ", 2)[-1]) from None
    return col[column]


def grid_from_csv(path, mapping: GridMapping) -> GridData:
    """A CSV of nodes (one row a node: distance, depth, values, sigmas) as :class:`GridData`.

    The columns are named by ``mapping`` (``distance`` default ``x``; ``depth``; each
    variable; sigma columns or numbers; ``seafloor`` a column or a number). The output grid has
    one dim ``node``.
    """
    import pandas as pd
    import xarray as xr

    try:
        df = pd.read_csv(path)
    except FileNotFoundError:
        raise GridInputError(path, "", "file not found") from None
    except Exception as exc:  # pandas parser errors
        raise GridInputError(path, "", f"cannot read CSV ({exc})") from None
    dname = mapping.distance or "x"
    needed = [dname, mapping.depth, *mapping.variables.values()]
    needed += [s for s in mapping.sigmas.values() if isinstance(s, str)]
    if isinstance(mapping.seafloor, str):
        needed.append(mapping.seafloor)
    if isinstance(mapping.age, str):
        needed.append(mapping.age)
    for c in needed:
        if c not in df.columns:
            raise GridInputError(path, c, f"column not found; columns are {list(df.columns)}")
    ds = xr.Dataset({c: ("node", df[c].to_numpy(float)) for c in needed if c != mapping.depth},
                    coords={"node": np.arange(len(df))})
    # a CSV grid: every node is its own column for the seafloor, grouped by distance
    x = df[dname].to_numpy(float)
    z = df[mapping.depth].to_numpy(float) * _scale(mapping.depth_unit)
    if isinstance(mapping.seafloor, str):
        sf = df[mapping.seafloor].to_numpy(float) * _scale(mapping.depth_unit)
    else:
        sf = np.full(len(df), float(mapping.seafloor) * _scale(mapping.depth_unit))
    if np.any(~np.isfinite(sf)) or np.any(sf < 0) or np.any(sf > 11.0):
        raise GridInputError(path, str(mapping.seafloor), "seafloor depth must be finite and in "
                             "[0, 11] km")
    dbsf = z - sf if mapping.depth_reference == "sea_level" else z
    ux, column = np.unique(x, return_inverse=True)
    n = len(df)
    valid = np.isfinite(dbsf) & (dbsf > 0.0) & (dbsf <= 100.0)
    values, sigmas = {}, {}
    for obs, var in mapping.variables.items():
        v = ds[var].values.astype(float)
        s_key = mapping.sigmas[obs]
        s = ds[s_key].values.astype(float) if isinstance(s_key, str) else np.full(n, float(s_key))
        valid = _check_values(str(path), obs, v, s, valid)
        values[obs], sigmas[obs] = v, s
    sf_col = np.zeros(len(ux))
    sf_col[column] = sf
    ages = None
    if mapping.age is not None:
        from .ages import ages_from_distance, check_ages

        if isinstance(mapping.age, str):
            a, name = ds[mapping.age].values.astype(float), mapping.age
        elif isinstance(mapping.age, dict):
            a, name = ages_from_distance(x, mapping.age), f"age from {dname}"
        else:
            a, name = np.full(n, float(mapping.age)), "age"
        try:
            ages = check_ages(str(path), name, a)
        except ValueError as exc:
            raise GridInputError(path, name, str(exc).split(": ", 2)[-1]) from None
    return GridData(dims=("node",), shape=(n,), coords={"node": np.arange(n), "x": x, "z": z},
                    depth_km=np.where(np.isfinite(dbsf), dbsf, -1.0), water_depth_km=sf,
                    values=values, sigmas=sigmas, valid=valid, column=column.astype(int),
                    distance=ux.astype(float), distance_name=dname, source=str(path),
                    seafloor_km=sf_col, depth_dim=mapping.depth, depth_unit=mapping.depth_unit,
                    depth_reference=mapping.depth_reference, age_myr=ages)


def read_grid(path, mapping: GridMapping) -> GridData:
    """Read a NetCDF (``.nc``) or CSV (``.csv``) grid; see :class:`GridMapping`."""
    from pathlib import Path

    p = Path(path)
    if p.suffix.lower() == ".csv":
        return grid_from_csv(p, mapping)
    if not p.exists():
        raise GridInputError(p, "", "file not found")
    import xarray as xr

    try:
        ds = xr.open_dataset(p)
    except Exception as exc:
        raise GridInputError(p, "", f"cannot open as NetCDF ({exc})") from None
    with ds:
        return grid_from_dataset(ds.load(), mapping, source=str(p))
