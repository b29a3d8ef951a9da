"""Planning speed: ten candidate data for one layer, 1000 simulated data each, on one core.

Problem: the ambiguous deep layer (Vp 7.2 +- 0.12 km/s, 4.6-6.6 km below the seafloor under
3.4 km of water; gabbro + harzburgite, default priors, five free parameters) with the ten default
candidates (:func:`bayescrust.plan.default_candidates`). Prints, from one run:

- wall time of :func:`bayescrust.plan_layer` (the exact path's 2^14-point design, weighed
  once, then importance reweighting for 10 x 1000 simulated data) - target < 10 s;
- the time of rerunning the exact path (:func:`bayescrust.exact_layer`, 2^14 points) for a few
  simulated data, extrapolated to 10 x 1000 (what planning without reweighting would cost);
- their ratio.

BLAS and OpenMP are limited to one thread before numpy is imported. The machine may be
shared: compare the ratio, not the absolute times, between runs.

Run: ``python tests/benchmarks/bench_plan.py [--reruns 5]``.
"""

from __future__ import annotations

import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_v] = "1"

import argparse  # noqa: E402
import dataclasses  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--simulations", type=int, default=1000)
    ap.add_argument("--reruns", type=int, default=5)
    args = ap.parse_args(argv)
    warnings.filterwarnings("ignore", category=FutureWarning)

    import numpy as np

    import bayescrust as bc
    from bayescrust.plan import default_candidates, plan_layer

    layer = bc.Layer("deep layer", top_km=4.6, bottom_km=6.6, water_depth_km=3.4,
                     vp=(7.2, 0.12))
    cands = default_candidates(layer)
    plan_layer(layer, candidates=cands[:1], seed=0, n_simulations=50)  # warm-up (imports)
    t0 = time.perf_counter()
    plan = plan_layer(layer, candidates=cands, seed=args.seed,
                      n_simulations=args.simulations, n_points=2**14)
    t_plan = time.perf_counter() - t0
    print(f"plan_layer: {len(cands)} candidates x {args.simulations} simulated data: "
          f"{t_plan:.2f} s (target < 10 s); degenerate updates "
          f"{int(plan.table['degenerate'].sum())}, exact reruns "
          f"{int(plan.table['reruns'].sum())}")

    rng = np.random.default_rng(args.seed)
    t0 = time.perf_counter()
    for _ in range(args.reruns):
        vs = float(rng.normal(4.0, 0.2))
        bc.exact_layer(dataclasses.replace(layer, vs=(vs, 0.1)), seed=int(rng.integers(1e9)),
                       n_points=2**14)
    per = (time.perf_counter() - t0) / args.reruns
    total = per * len(cands) * args.simulations
    print(f"rerunning exact_layer per simulated datum: {per:.2f} s each -> "
          f"{total:.0f} s for {len(cands)} x {args.simulations} (extrapolated)")
    print(f"speed-up of reweighting: {total / t_plan:.0f}x")
    return 0 if t_plan < 10.0 else 1


if __name__ == "__main__":
    raise SystemExit(main())
