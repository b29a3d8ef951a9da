"""One chunk of a map: the results of its consecutive nodes (:func:`run_chunk`).

A chunk's nodes are weighed level by level (tabulated or batched), nodes below ``min_ess`` are
refined from their own streams, and the data fit and quality flag are set. The level designs
and tables are kept in per-process caches (a few levels each), so the chunks of one level that
run in one process, or on one long-lived worker, share them; ``TIMES`` adds up the time spent
on designs and tables in this process (for the benchmark).
"""

from __future__ import annotations

import time
from collections import OrderedDict

import numpy as np

from .fit import is_misfit, node_fit
from .levels import MANTLE_KEY, level_design, node_rng
from .results import QUALITY_FLAGS
from .weigh import (
    DesignTables,
    interpolate_table,
    level_table,
    node_loglik,
    refine_node,
    weigh_batched,
)

__all__ = ["run_chunk", "TIMES"]

_CACHE: OrderedDict = OrderedDict()
_CACHE_SIZE = 3
#: seconds spent in this process on level designs (forward evaluations), for the benchmark
TIMES = {"design_s": 0.0, "tables_s": 0.0, "redo_nodes": 0}


def _design_key(spec, zone, observables, run):
    """Everything a level's design depends on: its stream (seed, zone and level index), its
    depth and water depth (the pressure), its age range, the zone's priors and the model."""
    return (spec["zone"], spec["key"], float(spec["depth_km"]), float(spec["water_depth_km"]),
            spec.get("age_range"), run.seed, run.n_points, repr(zone), repr(run.options),
            tuple(observables))


def _design(spec, zone, observables, run):
    key = _design_key(spec, zone, observables, run)
    if key in _CACHE:
        _CACHE.move_to_end(key)
        return _CACHE[key]
    from .levels import Level

    level = Level(zone=spec["zone"], key=spec["key"], depth_km=spec["depth_km"],
                  water_depth_km=spec["water_depth_km"], nodes=np.empty(0, int),
                  age_range=spec.get("age_range"))
    t0 = time.perf_counter()
    model, hyps, _, q, u = level_design(level, zone, observables, run.seed, run.n_points,
                                        run.options)
    TIMES["design_s"] += time.perf_counter() - t0
    hyps = {**hyps, MANTLE_KEY: {"ultramafic_fraction": (0.5, 1.0)}}
    ratio = None
    ar = spec.get("age_range")
    if ar is not None and ar[1] > ar[0]:  # ages differ within the level: per-node prior ratio
        from .ages import AgeRatio
        from .levels import level_layer

        ratio = AgeRatio(zone, level_layer(level, observables),
                         model.scalar_priors["temperature_c"])
    entry = (model, DesignTables(q, hyps), q, u, ratio)
    _CACHE[key] = entry
    while len(_CACHE) > _CACHE_SIZE:
        _CACHE.popitem(last=False)
    return entry


_TABLES: OrderedDict = OrderedDict()


def _table_cache(spec, zone, observables, run, sigma):
    """A per-level dict in which the level's table is kept (for the chunks of one process),
    keyed by the level's design, the sigma and the table's observed values (the data range)."""
    key = (_design_key(spec, zone, observables, run), float(sigma),
           tuple(np.asarray(spec["table"], float).tolist()))
    if key not in _TABLES:
        _TABLES[key] = {}
        while len(_TABLES) > _CACHE_SIZE:
            _TABLES.popitem(last=False)
    _TABLES.move_to_end(key)
    return _TABLES[key]


def run_chunk(task):
    """Results of one chunk: ``{key: float32 array}`` over the chunk's nodes (sorted order).

    The results are one node-major (m, n_keys) float32 array (``out``'s values are its
    columns), written in place: tabulated levels are interpolated straight into its rows in
    blocks, so no per-node draws or float64 copies of the chunk's results are held.
    """
    run, zones, keys = task["run"], task["zones"], task["keys"]
    m = task["n"]
    col = {k: i for i, k in enumerate(keys)}
    # every row is written by its part: tabulated rows in full (NaN for the zone's absent
    # interpretations), batched rows after a NaN fill of their own rows
    out2 = np.empty((m, len(keys)), np.float32)
    out = {k: out2[:, i] for i, k in enumerate(keys)}
    for part in task["parts"]:
        spec = part["level"]
        a, b = part["start"], part["stop"]
        values, sigmas = part["values"], part["sigmas"]
        model, tables, q, u, ratio = _design(spec, zones[spec["zone"]], list(values), run)
        ages = part.get("ages") if ratio is not None else None
        if spec["path"] == "tabulated":
            name = next(iter(values))
            cache = _table_cache(spec, zones[spec["zone"]], list(values), run,
                                 sigmas[name][0])
            if "tab" not in cache:
                t0 = time.perf_counter()
                y_fine, tkeys, mat, err = level_table(model, q, tables, name,
                                                      sigmas[name][0], spec["table"])
                full = np.full((mat.shape[0], len(keys)), np.nan)  # columns in key order
                full[:, [col[k] for k in tkeys]] = mat
                cache["tab"] = (y_fine, full, err)
                TIMES["tables_s"] += time.perf_counter() - t0
            y_fine, full, err = cache["tab"]
            j = interpolate_table(y_fine, full, values[name], out2, start=a)
            terr = err[j // 2]
            redo = np.flatnonzero(terr > run.table_tol)
            if redo.size:  # interpolation not good enough here: weigh these nodes directly
                TIMES["redo_nodes"] += int(redo.size)
                direct = weigh_batched(model, q, tables, {name: values[name][redo]},
                                       {name: sigmas[name][redo]})
                for k, v in direct.items():
                    out[k][a + redo] = v
                terr[redo] = 0.0
            stats = None
            ess = out["importance_ess"][a:b]
        else:
            stats = weigh_batched(model, q, tables, values, sigmas, ages=ages, ratio=ratio)
            out2[a:b] = np.nan
            terr = np.zeros(b - a)
            ess = stats["importance_ess"]
        quality = np.zeros(terr.shape[0])
        low = np.flatnonzero(~(ess >= run.min_ess))
        refined = {}
        for i in low:  # refinement: only the few nodes whose design is too coarse
            quality[i] = QUALITY_FLAGS["poor"]
            if not run.refine or u.shape[1] == 0:
                continue
            vi = {k: np.asarray(v)[i:i + 1] for k, v in values.items()}
            si = {k: np.asarray(v)[i:i + 1] for k, v in sigmas.items()}
            ll = node_loglik(model, q, vi, si)[0]
            age = None
            if ratio is not None:
                age = float(ages[i])
                ll = ll + ratio(ages[i:i + 1], q["temperature_c"])[0]
            w = np.exp(_safe(ll))
            rng = node_rng(run.seed, int(part["nodes"][i]))
            ref = refine_node(model, tables, u, w, vi, si, rng, run.n_refine, age=age,
                              ratio=ratio)
            if ref is None:
                continue
            refined[i] = ref
            if ref["importance_ess"][0] >= run.min_ess:
                quality[i] = QUALITY_FLAGS["refined"]
        if stats is not None:
            for k, v in stats.items():
                out[k][a:b] = v
        for i, ref in refined.items():
            for k, v in ref.items():
                out[k][a + i] = v[0]
        out["table_error"][a:b] = terr
        # the data fit, from the final (interpolated, direct or refined) summaries
        fit_p, fit_z = node_fit(model, {k: out[k][a:b] for k in out if k.endswith(
            (":mean", ":sd"))}, values, sigmas)
        out["fit_p"][a:b] = fit_p
        out["fit_z"][a:b] = fit_z
        quality[is_misfit(fit_p)] = QUALITY_FLAGS["misfit"]
        out["quality"][a:b] = quality
    return task["index"], out2


def _safe(ll):
    m = np.max(ll)
    return ll - (m if np.isfinite(m) else 0.0)
