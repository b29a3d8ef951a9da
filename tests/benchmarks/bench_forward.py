"""Forward-model throughput: rock evaluations per second for batches of 1 to 10^6.

Run ``python tests/benchmarks/bench_forward.py``. Prints, measured in one run, the rate for a
gabbro/harzburgite mixture with seawater pores of sampled aspect ratio (10^-3 to 1), melt and
attenuation (the work the log-probability does), the batch-1 latency, the DEM kernel alone, its
error against the converged reference integration, and the ratio of batched to one-at-a-time
evaluation. Figures are reported, not asserted: absolute times depend on the machine.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from bayescrust import ForwardModel


def _inputs(n: int, rng: np.random.Generator, case: str = "pores+melt"):
    fr = rng.dirichlet(np.ones(2), size=n)
    t = rng.uniform(0, 1300, n)
    kw = dict(
        fractions=fr,
        temperature_c=t,
        pressure_gpa=rng.uniform(0.05, 0.5, n),
        serpentinization=rng.uniform(0, 1, n),
    )
    if case in ("melt", "pores+melt"):
        kw.update(melt_fraction=np.where(t > 1100, rng.uniform(0, 0.03, n), 0.0),
                  melt_aspect_ratio=0.05)
    if case == "pores+melt":
        kw.update(porosity=rng.uniform(0, 0.1, n), aspect_ratio=10 ** rng.uniform(-3, 0, n))
    return kw


def _rate(fm, kw, n: int, min_seconds: float) -> float:
    fm(**kw)  # warm-up
    reps, t0 = 0, time.perf_counter()
    while True:
        fm(**kw)
        reps += 1
        dt = time.perf_counter() - t0
        if dt >= min_seconds:
            return reps * n / dt


def _dem_kernel(rng, seconds):
    """The DEM kernel alone on the forward model's inclusion mix, and its error."""
    from bayescrust.physics import inclusions

    n = 4096
    km = rng.uniform(60, 110, n)
    gm = km * rng.uniform(0.4, 0.7, n)
    ki = np.stack([rng.uniform(2.0, 2.6, n), rng.uniform(15, 25, n)], -1)
    gi = np.zeros_like(ki)
    ai = np.stack([10 ** rng.uniform(-3, 0, n), np.full(n, 0.05)], -1)
    fi = np.stack([rng.uniform(0, 0.1, n), rng.uniform(0, 0.03, n) * (rng.uniform(size=n) < 0.2)],
                  -1)
    args = (km, gm, ki, gi, ai, fi)
    for b in (1, n):
        sub = [a[:b] if b > 1 else a[0] for a in args]
        inclusions._dem(*sub)
        reps, t0 = 0, time.perf_counter()
        while time.perf_counter() - t0 < seconds:
            inclusions._dem(*sub)
            reps += 1
        dt = (time.perf_counter() - t0) / reps
        print(f"DEM kernel alone, batch {b:>5}: {b / dt:.3g} evals/s, {dt * 1e6:.0f} us/call")
    fast = inclusions._dem(*args)
    ref = inclusions._dem_reference(*args)
    err = max(float(np.max(np.abs(f / r - 1.0))) for f, r in zip(fast, ref, strict=True))
    print(f"DEM max relative error against the converged reference: {err:.2g}")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--max-batch", type=int, default=10**6)
    ap.add_argument("--seconds", type=float, default=1.0, help="minimum time per measurement")
    ap.add_argument("--attenuation-law", default="jackson2002",
                    help="attenuation law of the forward model (physics.anelastic)")
    args = ap.parse_args(argv)
    rng = np.random.default_rng(0)
    fm = ForwardModel(rocks=("gabbro", "harzburgite"), attenuation_law=args.attenuation_law)
    print(f"gabbro/harzburgite mixture, Voigt-Reuss-Hill, anelastic ({args.attenuation_law})")
    print("cases: solid only; + melt above 1100 C (DEM); + seawater pores aspect 1e-3..1 (DEM)")
    print(f"{'batch':>9} {'case':>11} {'evals/s':>12} {'us/eval':>9}")
    rates = {}
    for n in (1, 32, 10**4, 10**5, 10**6):
        if n > args.max_batch:
            break
        for case in ("solid", "melt", "pores+melt"):
            rates[n, case] = _rate(fm, _inputs(n, rng, case), n, args.seconds)
            print(f"{n:>9} {case:>11} {rates[n, case]:>12.3g} {1e6 / rates[n, case]:>9.3g}")
    _dem_kernel(rng, args.seconds)
    # one-at-a-time: what a hand-written loop over samples costs, same run
    n_loop = 1000
    kw = _inputs(n_loop, rng)
    t0 = time.perf_counter()
    for i in range(n_loop):
        fm(**{k: (v[i] if np.ndim(v) else v) for k, v in kw.items()})
    loop_rate = n_loop / (time.perf_counter() - t0)
    print(f"one-at-a-time loop (pores+melt): {loop_rate:.3g} evals/s")
    for (n, case), r in rates.items():
        if n >= 10**4 and case == "pores+melt":
            print(f"batched ({n}) / looped speed ratio: {r / loop_rate:.0f}x")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
