"""Sampler speed: the package's driver versus a hand-written emcee script, and the exact path.

Problem: the 7.1 +- 0.1 km/s lower-crust layer (4-6 km below the seafloor, 3 km of water) with
rocks gabbro + harzburgite and four free parameters (harzburgite fraction, temperature, melt
fraction, serpentinisation; porosity fixed 0). Prints, from one run:

- wall time of ``bc.invert_layer`` to an effective sample size >= 2000 for every parameter
  (vectorised log-probability, DE + snooker move mix, sparse autocorrelation checks);
- the same target reached by emcee's default stretch move with a one-walker-at-a-time
  log-probability (what a hand-written script does), checking the ESS every 500 steps;
- their ratio; and the exact reference's time;
- the driver's time with the numpy reference kernels against the compiled (numba) kernels, when
  numba is installed, in the same run (``--no-baseline`` skips the slow hand-written baseline);
- emcee's own per-step cost for the driver's move mix (trivial log-probability), with emcee's
  ``EnsembleSampler`` and with the driver's subclass.

``bench_layer_cost.py`` splits one such run into sections and measures its memory.

Run: ``python tests/benchmarks/bench_inversion.py [--forward dem|kuster_toksoz]``.
"""

from __future__ import annotations

import argparse
import time
import warnings

import numpy as np


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--forward", default="dem", choices=["dem", "kuster_toksoz",
                                                         "self_consistent"])
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--no-baseline", action="store_true",
                    help="skip the one-walker-per-call emcee baseline (minutes)")
    args = ap.parse_args(argv)
    warnings.filterwarnings("ignore", category=FutureWarning)

    import emcee

    import bayescrust as bc
    from bayescrust.inference.model import LayerModel
    from bayescrust.physics import _jit

    layer = bc.Layer("lower crust", top_km=4.0, bottom_km=6.0, water_depth_km=3.0,
                     vp=(7.1, 0.1))
    kw = dict(rocks=("gabbro", "harzburgite"), priors={"porosity": 0.0},
              forward={"inclusion_scheme": args.forward})
    with warnings.catch_warnings():  # warm the imports; the tiny design warns, as it should
        warnings.simplefilter("ignore", bc.ConvergenceWarning)
        bc.exact_layer(layer, seed=0, n_points=256, min_importance_ess=0, **kw)

    t0 = time.perf_counter()
    ex = bc.exact_layer(layer, seed=args.seed, **kw)
    t_exact = time.perf_counter() - t0

    t0 = time.perf_counter()
    res = bc.invert_layer(layer, seed=args.seed, min_ess=2000, **kw)
    t_driver = time.perf_counter() - t0
    d = res.diagnostics
    ess_arviz = res.summary.loc[["harzburgite", "temperature_c", "melt_fraction",
                                 "serpentinization"], "ess_bulk"]

    kernels = {}  # driver time by kernel setting, interleaved (the machine is shared)
    for on in (False, True) if _jit.AVAILABLE else ():
        for _ in range(2):
            with _jit.use_accel(on):
                t0 = time.perf_counter()
                r = bc.invert_layer(layer, seed=args.seed, min_ess=2000, **kw)
                dt = time.perf_counter() - t0
            kernels[on] = min(kernels.get(on, (np.inf,)), (dt, r.diagnostics["n_steps"]))
    for on, (dt, steps) in kernels.items():
        print(f"driver, {'compiled' if on else 'numpy'} kernels: {dt:6.2f} s "
              f"({steps} steps; best of 2)")
    if len(kernels) == 2:
        print(f"compiled / numpy kernels speed-up of the driver: "
              f"{kernels[False][0] / kernels[True][0]:.2f}x")
    # emcee's stretch move on the same vectorised log-probability, to the same ESS target
    # (the comparison), and the floor set by emcee's own per-step cost: the driver's
    # move mix on a trivial log-probability for the driver's number of steps
    model = LayerModel.build(layer, **kw)
    t_vec, steps_vec = _stretch_vectorised(emcee, model, d["n_walkers"], args.seed)
    from bayescrust.inference.sampler import _sampler, default_moves

    def trivial(x):
        return -0.5 * np.sum(x * x, axis=1)

    t_floor = []
    for floor in (emcee.EnsembleSampler(d["n_walkers"], model.ndim, trivial,
                                        moves=default_moves(), vectorize=True),
                  _sampler(d["n_walkers"], model.ndim, trivial, default_moves())):
        t0 = time.perf_counter()
        floor.run_mcmc(np.random.default_rng(0).standard_normal((d["n_walkers"], model.ndim)),
                       d["n_steps"], progress=False)
        t_floor.append(time.perf_counter() - t0)
    best = min(v[0] for v in kernels.values()) if kernels else t_driver
    print(f"emcee stretch, same vectorised log-prob: {t_vec:6.2f} s ({steps_vec} steps x "
          f"{d['n_walkers']} walkers); driver (best) is {t_vec / best:.1f}x faster")
    print(f"emcee's own cost of the driver's {d['n_steps']} steps (move mix, trivial "
          f"log-prob): {t_floor[0]:5.2f} s with emcee's EnsembleSampler, {t_floor[1]:5.2f} s "
          "with the driver's (sampler._sampler)")
    if args.no_baseline:
        print(f"driver  : {t_driver:6.2f} s total, {d['n_steps']} steps, min ESS (tau) "
              f"{min(d['ess_stopping'].values()):.0f}, min ESS (arviz bulk) "
              f"{ess_arviz.min():.0f}; exact {t_exact:.3f} s")
        return 0

    # Hand-written baseline: stretch move, scalar log-probability, ESS checked every 500 steps.
    rng = np.random.default_rng(args.seed)
    nwalkers, ndim = 32, model.ndim
    cand = model.sample_prior(rng, 4 * nwalkers)
    init = cand[np.isfinite(model.log_prob(cand))][:nwalkers]

    def scalar_log_prob(x):
        return float(model.log_prob(x[None, :])[0])

    sampler = emcee.EnsembleSampler(nwalkers, ndim, scalar_log_prob)
    sampler.random_state = np.random.RandomState(args.seed).get_state()
    t0 = time.perf_counter()
    state, ess_base = init, np.zeros(ndim)
    while sampler.iteration < 100000:
        state = sampler.run_mcmc(state, 500, progress=False,
                                 skip_initial_state_check=sampler.iteration > 0)
        tau = emcee.autocorr.integrated_time(sampler.get_chain(), tol=0, quiet=True)
        n = sampler.iteration
        ess_base = nwalkers * (n - 2 * tau.max()) / tau
        if n >= 50 * tau.max() and np.all(ess_base >= 2000):
            break
    t_base = time.perf_counter() - t0

    print(f"problem: Vp 7.1 +- 0.1 km/s, 4 free parameters, inclusion scheme {args.forward}")
    print(f"driver  : {t_driver:6.2f} s total ({d['sampling_time_s']:.2f} s sampling), "
          f"{d['n_steps']} steps x {d['n_walkers']} walkers, tau max "
          f"{max(d['tau'].values()):.1f}, min ESS (tau) {min(d['ess_stopping'].values()):.0f}, "
          f"min ESS (arviz bulk) {ess_arviz.min():.0f}, {d['n_checks']} tau checks")
    print(f"baseline: {t_base:6.2f} s, {sampler.iteration} steps x {nwalkers} walkers "
          f"(stretch move, one walker per call), min ESS {ess_base.min():.0f}")
    print(f"speed-up: {t_base / d['sampling_time_s']:.1f}x (sampling), "
          f"{t_base / t_driver:.1f}x (total)")
    print(f"exact   : {t_exact:6.3f} s, {ex.diagnostics['n_points']} points, importance ESS "
          f"{ex.diagnostics['importance_ess']:.0f}, log Z {ex.log_evidence:.3f} +- "
          f"{ex.log_evidence_error:.3f} (MCMC {res.log_evidence:.3f} +- "
          f"{res.log_evidence_error:.3f})")
    return 0


def _stretch_vectorised(emcee, model, nwalkers, seed):
    """emcee's default (stretch) move on ``model.log_prob`` with ``vectorize=True``, run in
    blocks of 500 steps until n >= 50 tau and every ESS >= 2000; (seconds, steps)."""
    rng = np.random.default_rng(seed)
    cand = model.sample_prior(rng, 8 * nwalkers)
    init = cand[np.isfinite(model.log_prob(cand))][:nwalkers]
    sampler = emcee.EnsembleSampler(nwalkers, model.ndim, model.log_prob, vectorize=True)
    sampler.random_state = np.random.RandomState(seed).get_state()
    t0 = time.perf_counter()
    state = init
    while sampler.iteration < 100000:
        state = sampler.run_mcmc(state, 500, progress=False,
                                 skip_initial_state_check=sampler.iteration > 0)
        tau = emcee.autocorr.integrated_time(sampler.get_chain(), tol=0, quiet=True)
        n = sampler.iteration
        if n >= 50 * tau.max() and np.all(nwalkers * (n - 2 * tau.max()) / tau >= 2000):
            break
    return time.perf_counter() - t0, sampler.iteration


if __name__ == "__main__":
    raise SystemExit(main())
