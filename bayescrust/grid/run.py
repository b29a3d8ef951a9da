"""Mapping a whole grid: planning, chunks (in-process or on dask.distributed), zarr checkpoints.

Valid nodes are sorted by (zone, depth level) and cut into chunks of ``chunk_size`` consecutive
nodes. Every chunk's result depends only on its nodes, their levels' designs (own random
streams) and the nodes' own refinement streams, so results do not depend on the chunking or on
the worker count. With ``store=PATH`` each finished chunk is written to a zarr group (results
first, then the chunk's ``done`` flag); a run started again with the same input and settings
skips the finished chunks, so a job killed at any point resumes and gives the same output.

This module holds the settings (:class:`GridRun`), the planning of a run (levels, their paths,
chunks, the store's fingerprint) and :func:`map_grid`; one chunk's computation is
:func:`bayescrust.grid.chunk.run_chunk`, and :mod:`bayescrust.grid.cluster` runs the chunks on
dask.distributed.
"""

from __future__ import annotations

import hashlib
import math
import time
from dataclasses import dataclass

import numpy as np

from .chunk import run_chunk
from .cluster import _run_dask
from .levels import plan_levels
from .results import QUALITY_FLAGS, result_keys
from .store import Store
from .weigh import table_values

__all__ = ["map_grid", "GridRun", "QUALITY_FLAGS", "result_keys"]

#: sub-second grids stay in-process even when workers are asked for (nodes x design points)
_IN_PROCESS_WORK = 2e8


@dataclass(frozen=True)
class GridRun:
    """Settings of one map (see :func:`map_grid`)."""

    seed: int = 0
    n_points: int = 2**14
    level_km: float = 0.1
    min_ess: float = 100.0
    refine: bool = True
    n_refine: int = 2**14
    n_table: int = 65
    table_tol: float = 0.001
    chunk_size: int = 50_000
    path: str = "auto"
    model_options: tuple = ()

    def __post_init__(self):
        if self.path not in ("auto", "tabulated", "batched"):
            raise ValueError(f"path must be 'auto', 'tabulated' or 'batched'; got {self.path!r}")
        if isinstance(self.seed, bool) or not isinstance(self.seed, (int, np.integer)) \
                or self.seed < 0:
            raise ValueError(f"seed must be a non-negative integer; got {self.seed!r}")
        for k, lo in (("n_points", 2), ("n_refine", 2), ("n_table", 5), ("chunk_size", 1)):
            if int(getattr(self, k)) < lo:
                raise ValueError(f"{k} must be >= {lo}; got {getattr(self, k)!r}")
        if not self.min_ess >= 0 or not self.table_tol > 0:
            raise ValueError("min_ess must be >= 0 and table_tol > 0")

    @property
    def options(self) -> dict:
        return dict(self.model_options)


# ----------------------------------------------------------------------------- planning
def _plan(grid, zones, run):
    levels, zone_of = plan_levels(grid, zones, run.level_km)
    obs = list(grid.values)
    specs, order = [], []
    for lev in levels:
        nodes = lev.nodes
        shared = all(np.ptp(grid.sigmas[k][nodes]) == 0 for k in obs)
        one_age = lev.age_range is None or lev.age_range[1] == lev.age_range[0]
        can_tab = len(obs) == 1 and grid.n_ensemble == 1 and shared and one_age
        if run.path == "tabulated" and not can_tab:
            raise ValueError("path='tabulated' needs one observable, no ensemble and one sigma "
                             f"per depth level (level at {lev.depth_km:g} km has "
                             f"{'several observables' if len(obs) > 1 else 'per-node sigma'}"
                             f"{'' if one_age else ' or crustal ages that differ'})")
        n_table = run.n_table
        path = "batched"
        if can_tab and run.path != "batched" and (run.path == "tabulated" or
                                                  nodes.size > 2 * n_table):
            path = "tabulated"
        spec = {"zone": lev.zone, "key": lev.key, "depth_km": lev.depth_km,
                "water_depth_km": lev.water_depth_km, "path": path,
                "age_range": lev.age_range}
        if path == "tabulated":
            y = grid.values[obs[0]][nodes]
            spec["table"] = table_values(float(y.min()), float(y.max()), n_table)
        specs.append(spec)
        order.append(nodes)
    order = np.concatenate(order) if order else np.empty(0, int)
    if order.size and grid.n_nodes < 2**31:
        order = order.astype(np.int32)  # 4 bytes a node
    level_of = np.concatenate([np.full(len(lv.nodes), i, np.int32)
                               for i, lv in enumerate(levels)]) \
        if levels else np.empty(0, int)
    return specs, order, level_of, zone_of


def _tasks(grid, zones, run, specs, order, level_of, keys, todo):
    cs = run.chunk_size
    for c in todo:
        a, b = c * cs, min((c + 1) * cs, order.size)
        parts = []
        lv = level_of[a:b]
        cuts = np.flatnonzero(np.diff(lv)) + 1
        for s, e in zip(np.r_[0, cuts], np.r_[cuts, b - a], strict=True):
            nodes = order[a + s:a + e]
            spec = specs[int(lv[s])]
            ar = spec.get("age_range")
            parts.append({"level": spec, "start": int(s), "stop": int(e),
                          "nodes": nodes,
                          "ages": (grid.age_myr[nodes] if ar is not None and ar[1] > ar[0]
                                   else None),
                          "values": {k: v[nodes] for k, v in grid.values.items()},
                          "sigmas": {k: v[nodes] for k, v in grid.sigmas.items()}})
        yield {"index": int(c), "n": int(b - a), "parts": parts, "run": run, "zones": zones,
               "keys": keys}


def _fingerprint(grid, zones, run):
    """Hash of the input, the zones, the settings and the package version (a store is not
    resumed by another version: its results would be mixed with the new version's)."""
    from .. import __version__

    h = hashlib.sha256()
    h.update(f"bayescrust {__version__}".encode())
    h.update(grid.fingerprint().encode())
    h.update(repr([repr(z) for z in zones]).encode())
    h.update(repr(run).encode())
    h.update(repr(result_keys(zones)[0]).encode())  # the stored results themselves
    return h.hexdigest()[:16]


# ----------------------------------------------------------------------------- driver
def map_grid(grid, zones, *, seed=0, n_points=2**14, level_km=0.1, min_ess=100.0, refine=True,
             n_refine=None, n_table=65, table_tol=0.001, chunk_size=50_000, path="auto",
             store=None, scheduler=None, n_workers=None, progress=False, model_error=None,
             likelihood="gaussian", nu=4.0, forward=None):
    """Probability maps of a velocity grid by the per-level fast path.

    Parameters
    ----------
    grid : GridData
        From :func:`bayescrust.grid.read_grid` or :func:`bayescrust.grid.grid_from_dataset`.
        Its crustal ages (``GridMapping(age=...)``), if any, give every node of a zone with a
        ``HalfSpaceCooling`` thermal prior that prior at its own age
        (:mod:`bayescrust.grid.ages`).
    zones : sequence of Zone
        Depth zones below the seafloor with their rocks, priors and interpretations.
    seed : int
        Seeds every level design and node stream (see :mod:`bayescrust.grid.levels`).
    n_points : int
        Prior design per level (rounded up to a power of two).
    level_km : float
        Thickness of the depth levels sharing one design.
    min_ess : float
        Quality threshold on each node's importance effective sample size; nodes below it are
        refined (``refine=True``: a second, adaptive stage of ``n_refine`` points, default
        ``n_points``, from the node's own stream) and flagged ``poor`` if still below.
    n_table, table_tol : int, float
        Table size of the tabulated path; nodes whose table error exceeds ``table_tol`` are
        weighed directly.
    chunk_size : int
        Nodes per chunk (a unit of work and of checkpointing).
    path : {"auto", "tabulated", "batched"}
        ``auto`` tabulates levels with one observable and one sigma (and more nodes than twice
        the table), and weighs the others directly.
    store : path, optional
        zarr checkpoint store; finished chunks found there are not recomputed.
    scheduler : str or distributed.Client, optional
        Address of a running dask.distributed scheduler (or a client).
    n_workers : int, optional
        Start a ``LocalCluster`` with this many single-threaded worker processes (ignored for
        grids small enough to run in about a second in-process).
    progress : bool
        A tqdm bar counting nodes.
    model_error, likelihood, nu, forward
        As for :func:`bayescrust.exact_layer`.

    Returns
    -------
    xarray.Dataset
        On the input's grid (see :func:`bayescrust.grid.output.build_dataset`).

    Warns
    -----
    MisfitWarning
        When any node's data are outside what the model can produce (quality ``misfit``,
        ``fit_p`` below the layer check's ``PPC_ALPHA``; :mod:`bayescrust.grid.fit`).
    """
    from .output import build_dataset

    t0 = time.perf_counter()
    opts = tuple((k, v) for k, v in (("model_error", model_error), ("likelihood", likelihood),
                                     ("nu", nu), ("forward", forward)) if v is not None)
    run = GridRun(seed=int(seed) if isinstance(seed, (int, np.integer)) else seed,
                  n_points=int(n_points), level_km=float(level_km),
                  min_ess=float(min_ess), refine=bool(refine),
                  n_refine=int(n_points if n_refine is None else n_refine),
                  n_table=int(n_table), table_tol=float(table_tol), chunk_size=int(chunk_size),
                  path=path, model_options=opts)
    zones = tuple(zones)
    keys, hyp_names = result_keys(zones)
    specs, order, level_of, zone_of = _plan(grid, zones, run)
    n = order.size
    n_chunks = int(math.ceil(n / run.chunk_size)) if n else 0
    fp = _fingerprint(grid, zones, run)
    st = Store(store, keys, n, n_chunks, run.chunk_size, fp) if store is not None else None
    done = st.done()[:n_chunks] if st is not None else np.zeros(n_chunks, bool)
    todo = [c for c in range(n_chunks) if not done[c]]
    # results go straight into grid-ordered float32 arrays, which become the Dataset's
    # variables without a copy (no per-chunk list to concatenate, no sorted-order duplicate)
    flat2 = None
    if st is None:  # NaN only where no chunk writes (masked nodes)
        flat2 = np.empty((grid.n_nodes, len(keys)), np.float32)
        masked = np.ones(grid.n_nodes, bool)
        masked[order] = False
        flat2[masked] = np.nan
        del masked
    cs = run.chunk_size

    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=n, unit="node", desc="map", initial=int(n - _todo_nodes(todo, cs, n)))

    def finish(c, res):
        a, b = c * cs, min((c + 1) * cs, n)
        if st is not None:
            st.write(c, a, b, {k: res[:, i] for i, k in enumerate(keys)})
        else:
            flat2[order[a:b]] = res  # whole rows: one contiguous copy per node
        if bar is not None:
            bar.update(b - a)

    tasks = _tasks(grid, zones, run, specs, order, level_of, keys, todo)
    work = _todo_nodes(todo, cs, n) * run.n_points
    mode = "in-process"
    if (scheduler is not None or n_workers) and len(todo) > 1 and \
            (scheduler is not None or work > _IN_PROCESS_WORK):
        mode = _run_dask(tasks, finish, scheduler, n_workers)
    else:
        for task in tasks:
            finish(*run_chunk(task))
    if bar is not None:
        bar.close()
    placed = st is None
    if st is not None:
        flat = st.read(n)
    else:  # the Dataset's variables are columns of flat2 (strided views, no copies)
        flat = {k: flat2[:, i] for i, k in enumerate(keys)}
        del flat2
    info = {"placed": placed, "levels": specs, "mode": mode, "n_chunks": n_chunks,
            "n_chunks_computed": len(todo), "fingerprint": fp,
            "wall_time_s": time.perf_counter() - t0}
    ds = build_dataset(grid, zones, run, flat, order, zone_of, hyp_names, info)
    if ds.attrs["n_misfit"]:
        import warnings

        from .fit import MisfitWarning, misfit_summary

        warnings.warn(misfit_summary(ds), MisfitWarning, stacklevel=2)
    return ds


def _todo_nodes(todo, cs, n):
    return sum(min((c + 1) * cs, n) - c * cs for c in todo)
