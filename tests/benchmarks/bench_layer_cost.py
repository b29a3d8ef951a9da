"""Where the time and memory of one single-layer inversion go (the bench_inversion layer).

Prints, from one run:

- the resident memory (VmHWM) of importing each dependency alone, each in a fresh process;
- the peak memory and wall time of one fresh-process ``invert_layer`` (imports included), and of
  the same call once the process is warm; the resident memory split into mapped library files
  and anonymous pages, and a warm call's own peak allocation (``tracemalloc``);
- a warm call split into sections (model set-up, start, sampling: log-probability / emcee and
  moves / convergence checks; summaries, idata, predictive check), by wrapping the functions;
- emcee's own per-step cost on a trivial log-probability with the driver's moves.

Run: ``python tests/benchmarks/bench_layer_cost.py [--seed 1]``. On a shared machine compare
ratios from one run.
"""

from __future__ import annotations

import argparse
import functools
import subprocess
import sys
import time
import warnings

import numpy as np

IMPORTS = ("numpy", "scipy.stats", "pandas", "emcee", "xarray", "matplotlib.pyplot", "numba",
           "arviz", "bayescrust", "bayescrust.physics._accel")

_HWM = """
def _status(key):
    with open('/proc/self/status') as fh:
        return next(int(x.split()[1]) / 1024 for x in fh if x.startswith(key + ':'))
def _hwm():
    return _status('VmHWM')
"""

_RUN = _HWM + """
import sys, time, warnings
warnings.filterwarnings("ignore", category=FutureWarning)
t0 = time.perf_counter()
import bayescrust as bc
layer = bc.Layer("lower crust", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(7.1, 0.1))
kw = dict(rocks=("gabbro", "harzburgite"), priors={"porosity": 0.0})
r = bc.invert_layer(layer, seed=SEED, min_ess=2000, **kw)
t1 = time.perf_counter()
r = bc.invert_layer(layer, seed=SEED, min_ess=2000, **kw)
t2 = time.perf_counter()
code, data = _status('RssFile'), _status('RssAnon')
import tracemalloc  # a third, traced run (tracing slows it): its own peak allocation
tracemalloc.start()
bc.invert_layer(layer, seed=SEED, min_ess=2000, **kw)
run_peak = tracemalloc.get_traced_memory()[1] / 2**20
print(t1 - t0, t2 - t1, r.diagnostics["n_steps"], _hwm(), code, data, run_peak)
"""


def _layer():
    import bayescrust as bc

    layer = bc.Layer("lower crust", top_km=4.0, bottom_km=6.0, water_depth_km=3.0,
                     vp=(7.1, 0.1))
    return layer, dict(rocks=("gabbro", "harzburgite"), priors={"porosity": 0.0})


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args(argv)
    warnings.filterwarnings("ignore", category=FutureWarning)

    print("memory of each import alone (fresh process, VmHWM):")
    for mod in IMPORTS:
        code = _HWM + f"import warnings; warnings.simplefilter('ignore')\nimport {mod}\n" \
            "print(_hwm())"
        out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
        print(f"  {mod:28s} {float(out.stdout.split()[-1]):6.0f} MiB" if out.returncode == 0
              else f"  {mod:28s} not importable")
    out = subprocess.run([sys.executable, "-c", _RUN.replace("SEED", str(args.seed))],
                         capture_output=True, text=True, check=True)
    cold, warm, steps, hwm, code, data, run_peak = (float(x) for x in out.stdout.split())
    print(f"fresh process: first invert_layer {cold:.2f} s (imports included), second "
          f"{warm:.2f} s ({steps:.0f} steps); peak RSS {hwm:.0f} MiB")
    # where the resident memory is: mapped library files, the process's own pages, and what
    # one warm run itself allocated at its peak (tracemalloc sees numpy's arrays)
    print(f"  after two runs: RSS of mapped files {code:.0f} MiB, anonymous {data:.0f} MiB;"
          f" a warm run's own allocations peak at {run_peak:.0f} MiB")

    import bayescrust as bc
    from bayescrust.inference import api, sampler

    layer, kw = _layer()
    bc.invert_layer(layer, seed=0, min_ess=200, **kw)  # warm: imports, kernels, tables
    acc: dict[str, list] = {}

    def wrap(owner, name, label):
        f = getattr(owner, name)

        @functools.wraps(f)
        def timed(*a, **k):
            t0 = time.perf_counter()
            try:
                return f(*a, **k)
            finally:
                e = acc.setdefault(label, [0.0, 0])
                e[0] += time.perf_counter() - t0
                e[1] += 1

        setattr(owner, name, timed)
        return owner, name, f

    from bayescrust.inference.model import LayerModel

    saved = [wrap(api, "_setup", "model set-up"), wrap(api, "_initial_walkers", "start (SIR)"),
             wrap(api, "run_ensemble", "sampling (all)"),
             wrap(LayerModel, "log_prob", "  log-probability"),
             wrap(sampler, "_walker_tau", "  checks: walker tau (emcee)"),
             wrap(sampler, "series_ess", "  checks: ensemble-average ESS (arviz)"),
             wrap(sampler, "_carry_forward", "  checks: hypothesis indicators"),
             wrap(api, "summarize", "summary (arviz HDI, ESS, R-hat)"),
             wrap(api, "build_idata", "InferenceData"),
             wrap(api, "evidence_from_posterior", "evidence"),
             wrap(api, "_trust", "predictive check, mixing")]
    t0 = time.perf_counter()
    res = bc.invert_layer(layer, seed=args.seed, min_ess=2000, **kw)
    total = time.perf_counter() - t0
    for owner, name, f in saved:
        setattr(owner, name, f)
    d = res.diagnostics
    print(f"warm invert_layer: {total:.3f} s, {d['n_steps']} steps x {d['n_walkers']} walkers, "
          f"{d['n_checks']} checks")
    for label, (t, n) in acc.items():
        print(f"  {label:42s} {t:6.3f} s ({n} calls)")
    samp = acc["sampling (all)"][0]
    checks = sum(v[0] for k, v in acc.items() if "checks" in k)
    emcee_part = samp - acc["  log-probability"][0] - checks
    print(f"  {'  emcee + moves (sampling - log-prob - checks)':42s} {emcee_part:6.3f} s "
          f"({emcee_part / d['n_steps'] * 1e3:.2f} ms/step)")
    print(f"  {'other (quantities, probabilities, prior draws)':42s} "
          f"{total - sum(v[0] for k, v in acc.items() if not k.startswith('  ')):6.3f} s")

    import emcee

    def trivial(x):
        return -0.5 * np.sum(x * x, axis=1)

    x0 = np.random.default_rng(0).standard_normal((d["n_walkers"], 4))
    for label, make in (("emcee EnsembleSampler", lambda m: emcee.EnsembleSampler(
            d["n_walkers"], 4, trivial, moves=m, vectorize=True)),
            ("driver's sampler", lambda m: sampler._sampler(d["n_walkers"], 4, trivial, m))):
        s = make(sampler.default_moves())
        t0 = time.perf_counter()
        s.run_mcmc(x0, 1000, progress=False)
        print(f"{label}, driver's moves, trivial log-prob: "
              f"{(time.perf_counter() - t0):.3f} ms/step (1000 steps)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
