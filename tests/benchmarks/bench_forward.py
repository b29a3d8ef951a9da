"""Forward-model throughput: rock evaluations per second for batches of 1 to 10^6.

Run ``python tests/benchmarks/bench_forward.py``. Prints, measured in one run, the rate for a
gabbro/harzburgite mixture with seawater pores of sampled aspect ratio (10^-3 to 1), melt and
attenuation (the work the log-probability does), the batch-1 latency, the DEM kernel alone, its
error against the converged reference integration, and the ratio of batched to one-at-a-time
evaluation. Each rate is measured with the numpy reference kernels and, when numba is installed,
with the compiled kernels (``bayescrust.physics._accel``), interleaved in the same run, with
their ratio. Figures are reported, not asserted: absolute times depend on the machine.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from bayescrust import ForwardModel
from bayescrust.physics import _jit


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


def _modes():
    """Kernel settings to compare: the numpy reference, and the compiled kernels if any."""
    return (False, True) if _jit.AVAILABLE else (False,)


def _rates(fn, seconds):
    """``fn()`` timed under each kernel setting, alternating twice (the machine is shared:
    the better of two interleaved measurements of each setting)."""
    best = {}
    for _ in range(2):
        for on in _modes():
            with _jit.use_accel(on):
                best[on] = max(best.get(on, 0.0), fn(seconds / 2))
    return best


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

        def run(sec, sub=sub, b=b):
            inclusions._dem(*sub)
            reps, t0 = 0, time.perf_counter()
            while time.perf_counter() - t0 < sec:
                inclusions._dem(*sub)
                reps += 1
            return b * reps / (time.perf_counter() - t0)

        r = _rates(run, seconds)
        line = "  ".join(f"{_NAME[on]} {r[on]:.3g} evals/s ({b / r[on] * 1e6:.0f} us/call)"
                         for on in r)
        ratio = f"  ratio {r[True] / r[False]:.1f}x" if True in r else ""
        print(f"DEM kernel alone (RK4 integration), batch {b:>5}: {line}{ratio}")
    for on in _modes():
        with _jit.use_accel(on):
            fast = inclusions._dem(*args)
        ref = inclusions._dem_reference(*args)
        err = max(float(np.max(np.abs(f / r - 1.0))) for f, r in zip(fast, ref, strict=True))
        print(f"DEM ({_NAME[on]}) max relative error against the converged reference: {err:.2g}")


_NAME = {False: "numpy", True: "compiled"}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--max-batch", type=int, default=10**5)
    ap.add_argument("--seconds", type=float, default=1.0, help="minimum time per measurement")
    ap.add_argument("--attenuation-law", default="jackson2002",
                    help="attenuation law of the forward model (physics.anelastic)")
    args = ap.parse_args(argv)
    rng = np.random.default_rng(0)
    fm = ForwardModel(rocks=("gabbro", "harzburgite"), attenuation_law=args.attenuation_law)
    print(f"gabbro/harzburgite mixture, Voigt-Reuss-Hill, anelastic ({args.attenuation_law})")
    print("cases: solid only; + melt above 1100 C (DEM integrated); + seawater pores aspect "
          "1e-3..1 (dry-pore DEM from the tables of physics/dem_flow.py)")
    modes = _modes()
    head = "".join(f" {_NAME[on] + ' evals/s':>17} {'us/eval':>8}" for on in modes)
    print(f"{'batch':>9} {'case':>11}{head}" + ("    ratio" if len(modes) > 1 else ""))
    rates = {}
    for n in (1, 32, 10**4, 10**5, 10**6):
        if n > args.max_batch:
            break
        for case in ("solid", "melt", "pores+melt"):
            kw = _inputs(n, rng, case)
            r = _rates(lambda sec, kw=kw, n=n: _rate(fm, kw, n, sec), args.seconds)
            rates[n, case] = r[modes[-1]]
            cols = "".join(f" {r[on]:>17.3g} {1e6 / r[on]:>8.3g}" for on in modes)
            ratio = f" {r[True] / r[False]:>7.1f}x" if len(modes) > 1 else ""
            print(f"{n:>9} {case:>11}{cols}{ratio}")
    _dem_kernel(rng, args.seconds)
    # one-at-a-time: what a hand-written loop over samples costs, same run
    n_loop = 1000
    kw = _inputs(n_loop, rng)
    t0 = time.perf_counter()
    for i in range(n_loop):
        fm(**{k: (v[i] if np.ndim(v) else v) for k, v in kw.items()})
    loop_rate = n_loop / (time.perf_counter() - t0)
    print(f"one-at-a-time loop (pores+melt, {_NAME[modes[-1]]}): {loop_rate:.3g} evals/s")
    for (n, case), r in rates.items():
        if n >= 10**4 and case == "pores+melt":
            print(f"batched ({n}) / looped speed ratio: {r / loop_rate:.0f}x")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
