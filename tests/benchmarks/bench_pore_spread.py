"""Cost of the pore-shape spread: a Layer-2B inversion with the aspect ratio fixed and sampled.

Problem: an upper-crust layer 0.5-1.5 km below the seafloor under 3 km of water with Vp
5.0 +- 0.15 and Vs 2.6 +- 0.1 km/s (Vp/Vs 1.92, the high ratio of Layer 2 that needs thin
water-filled cracks), rocks basalt + diabase. Prints, measured in one run, the wall time and
steps of ``bc.invert_layer`` to ESS >= 2000 with ``aspect_ratio`` fixed at 0.1 (the default)
and with ``aspect_ratio = LogUniform(0.01, 1)`` (the spread, sampled as ln alpha), with the
numpy reference kernels and, when numba is installed, the compiled kernels, and their ratios.
The issue budget for making the spread the default: at most 1.5x the time of the fixed case.

Run: ``python tests/benchmarks/bench_pore_spread.py [--seed N] [--no-numpy]``.
"""

from __future__ import annotations

import argparse
import time
import warnings


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--no-numpy", action="store_true", help="skip the numpy kernels (slow)")
    args = ap.parse_args(argv)
    warnings.filterwarnings("ignore", category=FutureWarning)

    import bayescrust as bc
    from bayescrust.inference.priors import LogUniform
    from bayescrust.physics import _jit

    layer = bc.Layer("layer 2B", top_km=0.5, bottom_km=1.5, water_depth_km=3.0,
                     vp=(5.0, 0.15), vs=(2.6, 0.1))
    cases = {"fixed 0.1": {}, "spread": {"aspect_ratio": LogUniform(0.01, 1.0)}}
    kernels = [True] if _jit.AVAILABLE else []
    if not args.no_numpy or not kernels:
        kernels.append(False)
    with warnings.catch_warnings():  # warm-up (imports, compilation, tables)
        warnings.simplefilter("ignore")
        bc.invert_layer(layer, rocks=("basalt", "diabase"), seed=0, min_ess=200)
    times = {}
    for on in kernels:
        for name, priors in cases.items():
            with _jit.use_accel(on), warnings.catch_warnings():
                warnings.simplefilter("ignore", bc.ConvergenceWarning)
                t0 = time.perf_counter()
                res = bc.invert_layer(layer, rocks=("basalt", "diabase"), priors=priors,
                                      seed=args.seed, min_ess=2000)
                dt = time.perf_counter() - t0
            times[on, name] = dt
            d = res.diagnostics
            print(f"{'compiled' if on else 'numpy':8s} {name:10s} {dt:7.2f} s  "
                  f"{d['n_steps']} steps  converged={d['converged']}")
        print(f"{'compiled' if on else 'numpy':8s} spread / fixed: "
              f"{times[on, 'spread'] / times[on, 'fixed 0.1']:.2f}x (budget 1.5x)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
