"""Benchmark of the grid fast path (not a timed test; report ratios measured in one run).

    OPENBLAS_NUM_THREADS=1 python tests/benchmarks/bench_grid.py [--quick]

1. 10^6 nodes, Vp only, one sigma per depth level (tabulated path): time after the forward
   evaluations (the designs, timed inside the same run: ``grid.chunk.TIMES``), and the designs'
   time separately; peak memory: the process's peak RSS (imported libraries, ~145 MiB, and the
   input grid included) and tracemalloc's peak of the mapping alone (a second run).
2. 10^4 nodes, Vp and Vs, per-node sigma (batched importance weighing).
3. The map against per-node MCMC on a few nodes: time per node and |dP|.
4. dask: a heavy grid on 2 local workers against 1.
Grids are invented (a layered section), for timing only.
"""

from __future__ import annotations

import os
import resource
import sys
import time

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402
import xarray as xr  # noqa: E402

from bayescrust.grid import GridMapping, Zone, grid_from_dataset, map_grid  # noqa: E402
from bayescrust.grid import chunk as grid_chunk  # noqa: E402
from bayescrust.grid import run as grid_run  # noqa: E402

ZONES = [Zone("crust", 1.5, 6.0, rocks=("gabbro", "harzburgite")),
         Zone("mantle", 6.0, 20.0, rocks=("gabbro", "harzburgite"))]


def section(n_x, n_z, *, vs=False, per_node_sigma=False, seed=0):
    rng = np.random.default_rng(seed)
    x = np.arange(n_x, dtype=float)
    z = 3.0 + np.linspace(1.55, 11.95, n_z)
    base = np.where(z < 9.0, 6.6 + 0.08 * (z - 4.5), 7.9)
    vp = base[None, :] + 0.1 * rng.standard_normal((n_x, n_z))
    data = {"vp": (("x", "z"), vp)}
    sig = {"vp": 0.1}
    if vs:
        data["vs"] = (("x", "z"), vp / 1.8 + 0.05 * rng.standard_normal((n_x, n_z)))
        sig["vs"] = 0.08
    if per_node_sigma:
        for k in list(sig):
            data[f"{k}_sigma"] = (("x", "z"), sig[k] * (1 + 0.5 * rng.random((n_x, n_z))))
            sig[k] = f"{k}_sigma"
    ds = xr.Dataset(data, coords={"x": x, "z": z})
    return grid_from_dataset(ds, GridMapping(variables={k: k for k in sig}, sigmas=sig,
                                             depth="z", seafloor=3.0))


def peak_mib():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def main(quick=False):
    print(f"bench_grid (machine shared; OPENBLAS_NUM_THREADS={os.environ['OPENBLAS_NUM_THREADS']})")
    n_points = 2**13
    # 1. 10^6 nodes, Vp only, shared sigma per level (default chunk size)
    nx, nz = (1000, 100) if quick else (10_000, 100)
    g = section(nx, nz)
    grid_chunk._CACHE.clear()
    for k in grid_chunk.TIMES:
        grid_chunk.TIMES[k] = type(grid_chunk.TIMES[k])(0)
    t0 = time.perf_counter()
    # n_table 33: nodes interpolate on its 33 values and 32 midpoints (65 values, the
    # resolution this benchmark's n_table = 65 gave before the fine tables); the bound checked
    # per node (table_tol) is the 33-value table's measured error
    m = map_grid(g, ZONES, n_points=n_points, level_km=0.2, n_table=33, min_ess=0)
    t_all = time.perf_counter() - t0
    t_design = grid_chunk.TIMES["design_s"]
    rss = peak_mib()
    print(f"1. {g.n_nodes:.0e} nodes Vp-only, shared sigma: total {t_all:.2f} s, designs "
          f"{t_design:.2f} s ({m.attrs['n_levels']} levels x {n_points} points), after the "
          f"designs {t_all - t_design:.2f} s (level tables {grid_chunk.TIMES['tables_s']:.2f} s; "
          f"ratio after/designs {(t_all - t_design) / t_design:.2f}); "
          f"{m.attrs['path_choice']}; {grid_chunk.TIMES['redo_nodes']} nodes weighed directly "
          f"for a table error > table_tol, max table error {float(m.table_error.max()):.2g}; "
          f"peak RSS {rss:.0f} MiB")
    del m
    import tracemalloc

    grid_chunk._CACHE.clear()
    grid_chunk._TABLES.clear()
    tracemalloc.start()
    m = map_grid(g, ZONES, n_points=n_points, level_km=0.2, n_table=33, min_ess=0)
    peak_tm = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    print(f"   tracemalloc peak of the mapping alone {peak_tm:.0f} MiB "
          f"(results {g.n_nodes * len(m.data_vars) * 4 / 2**20:.0f} MiB of float32 variables)")
    del m, g
    # 2. 10^4 nodes, Vp + Vs, per-node sigma
    g = section(100, 100, vs=True, per_node_sigma=True)
    grid_chunk._CACHE.clear()
    t0 = time.perf_counter()
    m = map_grid(g, ZONES, n_points=n_points, level_km=0.2, min_ess=0)
    t2 = time.perf_counter() - t0
    print(f"2. {g.n_nodes:.0e} nodes Vp+Vs, per-node sigma: {t2:.2f} s "
          f"({m.attrs['path_choice']}); median importance ESS "
          f"{float(np.nanmedian(m.importance_ess)):.0f}")
    # 3. map vs per-node MCMC
    from bayescrust.grid import validate_nodes, validation_summary

    g3 = section(20, 100)
    t0 = time.perf_counter()
    m3 = map_grid(g3, ZONES, n_points=2**15, level_km=0.2, min_ess=1000)
    t_map_node = (time.perf_counter() - t0) / g3.n_nodes
    df = validate_nodes(g3, ZONES, m3, n_nodes=3 if quick else 20, seed=1, min_ess=2000)
    t_mcmc = df.groupby("node")["time_s"].first().mean()
    v = validation_summary(df)
    print(f"3. map {t_map_node * 1e3:.2f} ms a node, MCMC {t_mcmc:.1f} s a node: "
          f"{t_mcmc / t_map_node:.0f}x; max |dP| {v['max_abs_dp']:.4f}, max |z| "
          f"{v['max_abs_z']:.2f}, chi2 {v['chi2']:.1f} / {v['chi2_df']} (p {v['chi2_p']:.3g}); "
          f"|dP| < 0.005 testable on {v['n_testable']} entries (max there "
          f"{v['max_abs_dp_testable']:.4f}) on {v['n_nodes']} nodes")
    dfe = validate_nodes(g3, ZONES, m3, n_nodes=3 if quick else 20, seed=1, method="exact",
                         n_points=2**16)
    ve = validation_summary(dfe)
    print(f"   against the exact reference: max |dP| {ve['max_abs_dp']:.4f}, max |z| "
          f"{ve['max_abs_z']:.2f}, chi2 {ve['chi2']:.1f} / {ve['chi2_df']}")
    # 4. dask 2 workers vs 1 on a heavy grid (batched path)
    g4 = section(100 if quick else 200, 100, vs=True, per_node_sigma=True)
    times = {}
    for w in (1, 2):
        grid_chunk._CACHE.clear()
        old = grid_run._IN_PROCESS_WORK
        grid_run._IN_PROCESS_WORK = 0
        t0 = time.perf_counter()
        m4 = map_grid(g4, ZONES, n_points=n_points, level_km=0.2, min_ess=0, n_workers=w,
                      chunk_size=2000)
        times[w] = time.perf_counter() - t0
        grid_run._IN_PROCESS_WORK = old
    print(f"4. dask {g4.n_nodes:.0e} nodes: 1 worker {times[1]:.1f} s, 2 workers "
          f"{times[2]:.1f} s: {times[1] / times[2]:.2f}x ({m4.attrs['execution']})")


if __name__ == "__main__":
    main(quick="--quick" in sys.argv)
