"""Planning speed: ten candidate data for one layer, 1000 simulated data each, on one core.

Problem: the ambiguous deep layer (Vp 7.2 +- 0.12 km/s, 4.6-6.6 km below the seafloor under
3.4 km of water; gabbro + harzburgite, default priors, five free parameters) with the ten default
candidates (:func:`bayescrust.plan.default_candidates`). Prints, from one run:

- wall time of :func:`bayescrust.plan_layer` (the exact path's 2^14-point design, weighed
  once, then importance reweighting for 10 x 1000 simulated data) - target < 10 s;
- the time of rerunning the exact path (:func:`bayescrust.exact_layer`, 2^14 points) for a few
  simulated data, extrapolated to 10 x 1000 (what planning without reweighting would cost);
- their ratio;
- the profile case: :func:`bayescrust.plan_profile` on the demo profile (TL-12, five layers,
  half-space thermal state, lower-bound heat flow) with its nine default candidates (heat flow
  and data in the least certain layer), 1000 simulated data each, every question (five layers,
  the crust-mantle boundary, two thermal parameters); against rerunning the structured exact path
  (:func:`bayescrust.profile.exact_profile`) per simulated datum, extrapolated.

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
    ap.add_argument("--no-profile", action="store_true", help="skip the profile case")
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
    ok = t_plan < 10.0
    if not args.no_profile:
        profile_case(args)
    return 0 if ok else 1


def profile_case(args) -> None:
    from importlib.resources import files

    from bayescrust.config.profile import parse_profile_study
    from bayescrust.plan import DegeneracyWarning, plan_profile
    from bayescrust.profile import HeatFlow, exact_profile

    text = files("bayescrust").joinpath("demo", "tallowmere_profile.toml").read_text()
    prof = parse_profile_study(text, source="demo").profile
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DegeneracyWarning)
        t0 = time.perf_counter()
        pp = plan_profile(prof, seed=args.seed, n_simulations=args.simulations)
        t_plan = time.perf_counter() - t0
    n_c = len(pp.ranking)
    print(f"plan_profile (demo profile, {prof.n_layers} layers): {n_c} candidates x "
          f"{args.simulations} simulated data x {len(pp.questions)} questions: {t_plan:.1f} s "
          f"({pp.settings['n_states']} joint states; degenerate updates, largest per candidate "
          f"and question: {int(pp.table['degenerate'].max())})")
    t0 = time.perf_counter()
    for k in range(max(1, args.reruns // 2)):
        hf = HeatFlow(80.0 + 20.0 * k, 10.0)
        exact_profile(dataclasses.replace(prof, heat_flow=hf), seed=k, n_layer=2**12,
                      n_thermal=256, n_replicates=2)
    per = (time.perf_counter() - t0) / max(1, args.reruns // 2)
    total = per * n_c * args.simulations
    print(f"rerunning exact_profile per simulated datum (same design sizes): {per:.2f} s each "
          f"-> {total:.0f} s for {n_c} x {args.simulations} (extrapolated); speed-up "
          f"{total / t_plan:.0f}x")


if __name__ == "__main__":
    raise SystemExit(main())
