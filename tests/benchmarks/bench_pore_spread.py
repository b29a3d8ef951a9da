"""Cost of the pore-shape spread: a Layer-2B inversion with the aspect ratio fixed and sampled.

Problem: an upper-crust layer 0.5-1.5 km below the seafloor under 3 km of water with Vp
5.0 +- 0.15 and Vs 2.6 +- 0.1 km/s (Vp/Vs 1.92, the high ratio of Layer 2 that thin
water-filled cracks can explain), rocks basalt + diabase. Prints, measured in one run, the
wall time and steps of ``bc.invert_layer`` to ESS >= 2000 with ``aspect_ratio`` fixed at 0.1
and with ``aspect_ratio = LogUniform(0.01, 1)`` (the spread, the default of layers shallower
than 1.5 km; sampled as the logit of ln alpha, porosity through its pore compliance:
``inference/coordinates.py``), over ``--seeds`` seeds, with the numpy reference kernels and,
when numba is installed, the compiled kernels, and the ratios of the totals.

With ``--tau-steps N`` it prints instead, per case, the integrated autocorrelation times of one
N-step chain (the first N/6 steps dropped) with the default walkers and moves: per walker and
coordinate (emcee's estimator) and of each coordinate's ensemble average. These are the times the
stopping rule estimates from short chains, so their ratio is the expected ratio of run lengths.

Run: ``python tests/benchmarks/bench_pore_spread.py [--seeds 1-10] [--no-numpy]
[--tau-steps 12000]``.
"""

from __future__ import annotations

import argparse
import time
import warnings


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", default="1-10", help="seed range, e.g. 1-10")
    ap.add_argument("--no-numpy", action="store_true", help="skip the numpy kernels (slow)")
    ap.add_argument("--tau-steps", type=int, default=0,
                    help="print long-chain autocorrelation times instead (e.g. 12000)")
    args = ap.parse_args(argv)
    first, _, last = args.seeds.partition("-")
    seeds = range(int(first), int(last or first) + 1)
    warnings.filterwarnings("ignore", category=FutureWarning)

    import bayescrust as bc
    from bayescrust.inference.priors import LogUniform
    from bayescrust.physics import _jit

    layer = bc.Layer("layer 2B", top_km=0.5, bottom_km=1.5, water_depth_km=3.0,
                     vp=(5.0, 0.15), vs=(2.6, 0.1))
    cases = {"fixed 0.1": {"aspect_ratio": 0.1},
             "spread": {"aspect_ratio": LogUniform(0.01, 1.0)}}
    if args.tau_steps:
        return _long_tau(layer, cases, args.tau_steps, seeds[0])
    kernels = [True] if _jit.AVAILABLE else []
    if not args.no_numpy or not kernels:
        kernels.append(False)
    with warnings.catch_warnings():  # warm-up (imports, compilation, tables)
        warnings.simplefilter("ignore")
        bc.invert_layer(layer, rocks=("basalt", "diabase"), seed=0, min_ess=200)
    for on in kernels:
        total = {name: [0.0, 0] for name in cases}
        for seed in seeds:
            for name, priors in cases.items():  # interleaved: load changes hit both alike
                with _jit.use_accel(on), warnings.catch_warnings():
                    warnings.simplefilter("ignore", bc.ConvergenceWarning)
                    t0 = time.perf_counter()
                    res = bc.invert_layer(layer, rocks=("basalt", "diabase"), priors=priors,
                                          seed=seed, min_ess=2000)
                    dt = time.perf_counter() - t0
                d = res.diagnostics
                total[name][0] += dt
                total[name][1] += d["n_steps"]
                print(f"{'compiled' if on else 'numpy':8s} seed {seed:2d} {name:10s} "
                      f"{dt:6.2f} s {d['n_steps']:5d} steps converged={d['converged']}")
        (tf, sf), (ts, ss) = total["fixed 0.1"], total["spread"]
        print(f"{'compiled' if on else 'numpy':8s} totals: fixed {tf:.1f} s {sf} steps, spread "
              f"{ts:.1f} s {ss} steps; spread / fixed: time {ts / tf:.2f}x, steps "
              f"{ss / sf:.2f}x (budget 1.5x)")
    return 0


def _long_tau(layer, cases, n_steps, seed):
    import numpy as np

    from bayescrust.inference.api import _initial_walkers, _setup
    from bayescrust.inference.sampler import (
        _integrated_time,
        _sampler,
        default_moves,
        series_ess,
    )

    worst = {}
    for name, priors in cases.items():
        model, _ = _setup(layer, ("basalt", "diabase"), priors, None, None, "gaussian", 4.0, None)
        w = max(64, 16 * model.ndim)  # invert_layer's default
        rng = np.random.default_rng(seed)
        s = _sampler(w, model.ndim, model.log_prob, default_moves())
        s.random_state = np.random.RandomState(seed).get_state()
        t0 = time.perf_counter()
        s.run_mcmc(_initial_walkers(model, rng, w), n_steps, progress=False)
        per_step = (time.perf_counter() - t0) / n_steps
        chain = s.get_chain(discard=n_steps // 6)
        walker = _integrated_time(chain, c=5)
        g = chain.mean(axis=1)
        series = np.array([g.shape[0] / series_ess(g[:, j]) for j in range(g.shape[1])])
        worst[name] = (max(walker.max(), series.max()), per_step)
        print(f"{name:10s} {w} walkers, {model.ndim} coordinates; tau per walker "
              f"{np.round(walker, 1)}, of ensemble averages {np.round(series, 1)}; "
              f"{1e3 * per_step:.2f} ms/step")
    (tf, sf), (ts, ss) = worst["fixed 0.1"], worst["spread"]
    print(f"largest tau: spread / fixed {ts / tf:.2f}x; time per step {ss / sf:.2f}x; expected "
          f"run time {ts * ss / (tf * sf):.2f}x (budget 1.5x)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
