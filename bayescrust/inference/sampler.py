"""A thin, stateful emcee driver for vectorised log-probabilities.

:func:`run_ensemble` works with any function ``log_prob(theta: (n, ndim)) -> (n,)`` (the layer
model's, or a toy problem's in the tests). It runs emcee in blocks with a differential-evolution
move mix, measures the integrated autocorrelation time sparingly, and stops when the chain is
long enough; burn-in and thinning come from the measured autocorrelation time.
"""

from __future__ import annotations

import math
import time
import warnings
from dataclasses import dataclass

import numpy as np

__all__ = ["ConvergenceWarning", "EnsembleRun", "run_ensemble", "default_moves", "ensemble_mcse",
           "series_ess"]


class ConvergenceWarning(UserWarning):
    """The sampler stopped at ``max_steps`` before its convergence criteria were met."""


@dataclass(frozen=True)
class EnsembleRun:
    """Output of :func:`run_ensemble`.

    Attributes
    ----------
    samples : ndarray, shape (n_draws, n_walkers, ndim)
        Kept states after burn-in and thinning (walkers are treated as chains).
    log_prob : ndarray, shape (n_draws, n_walkers)
        Log-probability of the kept states.
    tau : ndarray, shape (ndim,)
        Integrated autocorrelation time per coordinate (steps), from the whole chain.
    n_steps, burn, thin : int
        Total steps run, steps discarded, thinning interval.
    converged : bool
        All criteria met (else a :class:`ConvergenceWarning` was issued).
    acceptance : ndarray, shape (n_walkers,)
        Acceptance fraction per walker.
    ess : ndarray, shape (ndim,)
        ``n_walkers * (n_steps - burn) / tau``, the effective sample size the stopping rule used.
    n_checks : int
        Number of autocorrelation estimates made.
    wall_time_s : float
        Sampling wall time (seconds).
    series_tau, series_ess : ndarray, shape (ndim + 1 + k,)
        Integrated autocorrelation time (steps) and effective sample size (independent-draw
        units) of the ensemble averages of every coordinate, the log-probability and the ``k``
        watched functions (see :func:`ensemble_mcse`).
    n_reseeded : int
        Stuck walkers re-seeded during burn-in.
    """

    samples: np.ndarray
    log_prob: np.ndarray
    tau: np.ndarray
    n_steps: int
    burn: int
    thin: int
    converged: bool
    acceptance: np.ndarray
    ess: np.ndarray
    n_checks: int
    wall_time_s: float
    series_tau: np.ndarray
    series_ess: np.ndarray
    n_reseeded: int


def default_moves():
    """The move mix: KDE independence (50 %), DE (30 %), DE with gamma = 1 (10 %), DE-snooker
    (10 %).

    The KDE independence move (:func:`bayescrust.inference.moves.kde_move`) proposes from a
    kernel density of the other walkers and jumps between the separated modes of rock-type
    posteriors (cold gabbro versus hot or serpentinised mantle) in one step; differential
    evolution proposals follow the ensemble's shape (good for correlated and curved
    posteriors); ``gamma = 1`` proposes jumps by a whole inter-walker difference (ter Braak
    2006); the snooker update (ter Braak & Vrugt 2008, vectorised in
    :func:`bayescrust.inference.moves.snooker_move`) helps along curved ridges. On the 7.1 km/s
    benchmark layer this mix cut the autocorrelation time from ~30-40 to ~10 steps.
    """
    from .moves import de_move, kde_move, snooker_move

    return [
        (kde_move(), 0.5),
        (de_move(), 0.3),
        (de_move(gamma0=1.0), 0.1),
        (snooker_move(), 0.1),
    ]


#: Longest block between two convergence checks, as a multiple of the chain so far. The block
#: otherwise runs to 10 % beyond the predicted need, and a need predicted from an early, noisy
#: tau can be several times too long (a run of the benchmark layer went from its first check at
#: 300 steps straight to 2360, where ~900 sufficed).
BLOCK_GROWTH = 1.5

#: Human-readable record of :func:`default_moves` (stored in each run's settings).
MOVES_DESCRIPTION = "KDE independence 0.5, DE 0.3, DE(gamma=1) 0.1, DE-snooker 0.1"


def _sampler(nwalkers, ndim, log_prob, moves):
    """emcee's ``EnsembleSampler`` (``vectorize=True``) with two per-step costs of its Python
    machinery removed and the chain unchanged to the bit.

    - ``compute_log_prob`` converts the vectorised log-probability's array at once (emcee
      converts walker by walker, ~1 us each) with emcee's checks: no infinite or NaN
      coordinate, no NaN log-probability, one value per walker; blobs are not supported.
    - The random state is not copied at every step: emcee stores ``RandomState.get_state()``
      (~60 us) on each step's ``State`` only to restore it when a run is continued, and
      :func:`run_ensemble` continues from the sampler's own generator, which holds that same
      state. ``random_state`` reads as None; setting it seeds the generator as in emcee.
    """
    import emcee

    class Sampler(emcee.EnsembleSampler):
        @property
        def random_state(self):
            return None

        @random_state.setter
        def random_state(self, state):
            if state is not None:
                self._random.set_state(state)

        def compute_log_prob(self, coords):
            if not (np.all(np.isfinite(coords))):
                return super().compute_log_prob(coords)  # emcee's own error messages
            lp = np.asarray(self.log_prob_fn(coords), dtype=float)
            if lp.shape != (coords.shape[0],):
                raise ValueError(f"log_prob must return one value per walker, shape "
                                 f"({coords.shape[0]},); got shape {lp.shape}")
            if np.any(np.isnan(lp)):
                raise ValueError("Probability function returned NaN")
            return lp, None

    return Sampler(nwalkers, ndim, log_prob, moves=moves, vectorize=True)


def _walker_tau(chain: np.ndarray) -> np.ndarray:
    """Integrated autocorrelation time per coordinate from the walkers that moved.

    emcee's estimator averages the autocorrelation function over walkers; a walker that never
    moved has an undefined (0/0) autocorrelation and would make the result NaN, so such walkers
    are left out (they are handled by :func:`run_ensemble`). NaN if no walker moved.
    """
    moved = np.any(np.ptp(chain, axis=0) > 0, axis=1)
    if moved.sum() < 2:
        return np.full(chain.shape[2], np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        return _integrated_time(chain[:, moved], c=5)


def _integrated_time(x: np.ndarray, c: float = 5.0) -> np.ndarray:
    """emcee's ``autocorr.integrated_time(x, c, tol=0)`` for ``x`` (steps, walkers, ndim), with
    the autocorrelation functions of all walkers in one FFT call per coordinate.

    The same estimator (Sokal's self-consistent window on the walker-averaged normalised
    autocorrelation function, Goodman & Weare 2010; emcee's ``function_1d`` and
    ``auto_window``), equal to rounding (tested); emcee computes it walker by walker and
    coordinate by coordinate (256 FFT calls at 64 walkers and 4 parameters: 40 ms a check at
    1000 steps, against 14 ms here with one call for all coordinates; one call per coordinate
    keeps the padded transform a quarter as large, for the same time).
    """
    from emcee.autocorr import auto_window, next_pow_two

    n_t, n_w, n_d = x.shape
    n = next_pow_two(n_t)
    avg = np.zeros((n_d, n_t))
    for d in range(n_d):  # coordinate by coordinate: the padded transform is the peak memory
        y = np.ascontiguousarray(x[:, :, d].T)  # (walkers, steps)
        y = y - y.mean(axis=-1, keepdims=True)
        # real-input FFT (the series are real): the same autocorrelation to rounding, half the
        # work
        f = np.fft.rfft(y, n=2 * n, axis=-1)
        acf = np.fft.irfft(f * np.conjugate(f), n=2 * n, axis=-1)[:, :n_t]
        acf /= acf[:, :1]
        for k in range(n_w):  # summed walker by walker, as emcee does
            avg[d] += acf[k]
    avg /= n_w
    taus = 2.0 * np.cumsum(avg, axis=-1) - 1.0
    return np.array([taus[d, auto_window(taus[d], c)] for d in range(n_d)], float)


def series_ess(series: np.ndarray) -> float:
    """Effective sample size of one time series (arviz ``ess(method="mean")``, split chain).

    Used on ensemble averages: ``series[t] = mean over walkers of f(x_t)``. Returns NaN for a
    constant or non-finite series. The estimator is Geyer's (1992) initial monotone sequence on
    the two halves of the series (Vehtari et al. 2021, Bayesian Analysis 16, 667), so drift
    between the halves lowers the ESS.
    """
    from ._arviz import numpy_diagnostics

    x = np.asarray(series, float)
    if x.size < 8 or not np.all(np.isfinite(x)) or np.ptp(x) == 0:
        return math.nan
    with warnings.catch_warnings(), numpy_diagnostics() as az:
        warnings.simplefilter("ignore")
        return float(az.ess(x[None, :], method="mean"))


def ensemble_mcse(values: np.ndarray) -> tuple[float, float, float]:
    """Monte Carlo standard error of an ensemble-sampler estimate of ``E[f]``.

    Parameters
    ----------
    values : ndarray, shape (n_walkers, n_draws)
        ``f`` at the kept states (walkers as chains, as stored in ``idata.posterior``).

    Returns
    -------
    (mean, mcse, tau)
        The estimate (mean over all walkers and draws), its standard error and the integrated
        autocorrelation time (in draws) of the ensemble-average series.

    Notes
    -----
    The walkers of an affine-invariant ensemble are not independent chains: every move uses the
    other walkers, and the population of a mode changes only as walkers hop between modes. The
    estimate is the time average of the ensemble average ``g_t = mean_k f(x_{t,k})``, so its
    error is that of a time average of one stationary series, ``sd(g) / sqrt(ESS(g))`` with the
    ESS of :func:`series_ess` (batch-free; Geyer 1992, Statistical Science 7, 473). Walker-to-
    walker correlation and slow mode hopping both show in the autocorrelation of ``g``, which
    the walker-as-independent-chain formula misses. A constant ``g`` returns ``mcse = 0`` and
    ``tau = NaN``.
    """
    v = np.asarray(values, float)
    g = v.mean(axis=0)
    n = g.size
    ess = series_ess(g)
    if not np.isfinite(ess):
        return float(v.mean()), 0.0, math.nan
    sd = float(np.std(g, ddof=1))
    return float(v.mean()), sd / math.sqrt(ess), n / ess


def _carry_forward(chain: np.ndarray, watch, prev_last=None, prev_pos=None):
    """``watch`` evaluated on every state of ``chain`` (n, W, d) -> (n, W, k).

    ``watch`` is computed only where a walker moved (typically 20-40 % of the states); a
    rejected proposal keeps the walker's previous value. ``prev_pos``/``prev_last`` are the
    position and watched value of each walker before the block.
    """
    n, w, _ = chain.shape
    if prev_pos is None:
        changed = np.ones((n, w), bool)
    else:
        before = np.concatenate([prev_pos[None], chain[:-1]], axis=0)
        changed = np.any(chain != before, axis=2)
    vals = np.asarray(watch(chain[changed]), float).reshape(int(changed.sum()), -1)
    k = vals.shape[1]
    out = np.zeros((n, w, k)) if prev_last is None else np.broadcast_to(
        prev_last, (n, w, k)).copy()
    # index of the last change at or before each step, per walker (-1: none in this block)
    idx = np.where(changed, np.arange(n)[:, None], -1)
    idx = np.maximum.accumulate(idx, axis=0)
    filled = np.zeros((n, w, k))
    filled[changed] = vals
    has = idx >= 0
    out[has] = filled[idx[has], np.nonzero(has)[1]]
    return out


def run_ensemble(
    log_prob,
    initial: np.ndarray,
    *,
    rng: np.random.Generator,
    watch=None,
    min_ess: float = 1000.0,
    tau_factor: float = 50.0,
    tau_rtol: float | None = 0.5,
    burn_factor: float = 5.0,
    min_steps: int = 300,
    max_steps: int = 20000,
    stuck_steps: int = 100,
    rare: float = 0.05,
    series_factor: float = 50.0,
    moves=None,
    progress: bool = False,
) -> EnsembleRun:
    """Run an emcee ensemble until converged.

    Parameters
    ----------
    log_prob : callable
        Vectorised ``log_prob(theta) -> lp`` with ``theta`` shape (n_walkers, ndim); evaluated
        once per step for the whole ensemble (``vectorize=True``).
    initial : ndarray, shape (n_walkers, ndim)
        Starting points (with finite log-probability).
    rng : numpy.random.Generator
        Source of emcee's random state and of re-seeding (the only randomness used).
    watch : callable, optional
        ``watch(theta (m, ndim)) -> (m, k)``: further functions whose ensemble averages must
        converge (hypothesis indicators); evaluated only at states a walker moved to.
    min_ess : float
        Required effective sample size of every monitored ensemble average, in units of
        independent draws: ``var(f) / mcse^2`` (see :func:`ensemble_mcse`).
    tau_factor : float
        The kept chain must be at least ``tau_factor * tau_max`` steps long (default 50).
    tau_rtol : float or None
        ``tau_max`` must not have grown by more than this fraction since the previous check
        (default 0.5; ``None``: no such check).
    burn_factor : float
        Burn-in is ``burn_factor * tau_max`` steps (default 5), see Notes.
    min_steps, max_steps : int
        First check after ``min_steps``; stop at ``max_steps`` with a
        :class:`ConvergenceWarning` if not converged.
    stuck_steps : int
        A walker that has never moved in its first ``stuck_steps`` steps while others did
        (a start in a spot the moves cannot leave) is re-seeded from the position of a random
        other walker; the burn-in then starts after the re-seeding.
    series_factor : float
        The kept chain must be at least ``series_factor`` times the tau of each monitored
        ensemble average (default 50; at 25 the two-mode case gave z rms 1.18 and spread/MCSE 1.23
        over 18 seeds against 1.04 and 1.13 at 50, at half the cost; the ESS
        target bounds the error itself).
    rare : float
        Watched functions whose mean is below ``rare`` or above ``1 - rare`` (rare regions)
        do not enter the stopping rule (their MCSE is still measured and reported).
    moves : list, optional
        emcee moves (default :func:`default_moves`).
    progress : bool
        Show a tqdm progress bar.

    Notes
    -----
    Monitored series are every coordinate, the log-probability and the ``watch`` functions.
    For each, the integrated autocorrelation time ``tau`` of its *ensemble average* (what an
    estimate is made of; :func:`ensemble_mcse`) is measured on the kept part of the chain,
    together with emcee's walker-by-walker ``tau`` of the coordinates; ``tau_max`` is the
    largest. The run stops when the kept chain is >= ``tau_factor * tau_max`` steps, ``tau_max``
    is stable and every series has ESS >= ``min_ess``. A non-finite ``tau`` (a walker or a
    series that has not moved) means "not converged": the run continues, never fails.

    Burn-in is ``burn_factor * tau_max`` (and at least the step of the last re-seeding plus
    that): the initial ensemble comes from the prior, and its bias decays like
    ``exp(-t / tau_exp)``; with ``tau_exp`` close to the integrated time of the slowest
    series (the population of a mode), 5 tau leaves ``e^-5 < 1 %`` of the initial offset. On
    the two-mode test case the walker-by-walker ``2 tau`` of earlier versions (~50 steps) left
    a visible deficit of the smaller mode. Thinning is ``max(1, floor(min walker tau / 2))``.
    Checks are sparse: the next block runs to 10 % beyond the predicted need.
    """
    import emcee

    initial = np.asarray(initial, float)
    nwalkers, ndim = initial.shape
    sampler = _sampler(nwalkers, ndim, log_prob, default_moves() if moves is None else moves)
    sampler.random_state = np.random.RandomState(int(rng.integers(2**32))).get_state()
    bar = None
    if progress:
        from tqdm.auto import tqdm
    t0 = time.perf_counter()
    state = emcee.State(initial)
    target = min(max(min_steps, 1), max_steps)
    if progress:
        # sized to the steps planned so far (re-sized at every check), not to max_steps
        bar = tqdm(total=target, desc="sampling (planned length grows as tau is measured)",
                   unit="step")
    tmax_old = None
    tau = np.full(ndim, np.nan)
    series_tau = np.full(ndim + 1, np.nan)
    ess_series = np.full(ndim + 1, np.nan)
    converged = False
    n_checks = 0
    reseed_step = 0
    n_reseeded = 0
    burn = 0
    watched = None
    try:
        while True:
            n_now = sampler.iteration
            state = sampler.run_mcmc(state, target - n_now, progress=False,
                                     skip_initial_state_check=n_now > 0)
            if bar is not None:
                bar.update(target - n_now)
            n = sampler.iteration
            chain = sampler.get_chain()
            if watch is not None:
                prev_pos = initial if n_now == 0 else chain[n_now - 1]
                prev_last = None if watched is None else watched[-1]
                new = _carry_forward(chain[n_now:], watch, prev_last,
                                     None if n_now == 0 else prev_pos)
                watched = new if watched is None else np.concatenate([watched, new])
            n_checks += 1
            # walkers that never moved (since the start or their re-seeding) while others did
            stuck = ~np.any(np.ptp(chain[reseed_step:], axis=0) > 0, axis=1)
            if (n - reseed_step >= stuck_steps and stuck.any() and not stuck.all()
                    and n < max_steps):
                ok = np.flatnonzero(~stuck)
                pos = state.coords.copy()
                lp = state.log_prob.copy()
                pick = ok[rng.integers(ok.size, size=int(stuck.sum()))]
                pos[stuck], lp[stuck] = pos[pick], lp[pick]
                state = emcee.State(pos, log_prob=lp, random_state=state.random_state)
                if watched is not None:
                    watched[-1, stuck] = watched[-1, pick]
                n_reseeded += int(stuck.sum())
                reseed_step = n
                tmax_old = None
                target = min(max_steps, n + max(min_steps, stuck_steps))
                if bar is not None:
                    bar.total = target
                    bar.refresh()
                continue
            # measure on the chain after the provisional burn-in
            start = min(max(burn, reseed_step), n - 1)
            kept = chain[start:]
            tau = _walker_tau(kept)
            series = [kept.mean(axis=1), sampler.get_log_prob()[start:].mean(axis=1)[:, None]]
            if watched is not None:
                series.append(watched[start:].mean(axis=1))
            g = np.concatenate(series, axis=1)
            ess_g = np.array([series_ess(g[:, j]) for j in range(g.shape[1])])
            const = np.ptp(g, axis=0) == 0
            series_tau = np.where(const, 1.0, g.shape[0] / ess_g)
            # ESS of each series in units of independent draws: var(f) / mcse^2 (variances of
            # the pooled draws piece by piece: no copy of the whole kept chain)
            pieces = [kept.reshape(-1, ndim), sampler.get_log_prob()[start:].reshape(-1, 1)]
            if watched is not None:
                pieces.append(watched[start:].reshape(-1, watched.shape[2]))
            var_f = np.concatenate([np.var(x, axis=0) for x in pieces])
            with np.errstate(invalid="ignore", divide="ignore"):
                ess_series = np.where(const, np.inf, var_f * ess_g / np.var(g, axis=0, ddof=1))
            # watched indicators of rare regions (mean < rare or > 1 - rare) are reported, not
            # waited for: their populations mix slowest and an ESS target on them would
            # multiply run times (x9 on the benchmark layer) for probabilities that matter less
            wmean = np.mean(pieces[2], axis=0) if watched is not None else np.zeros(0)
            skip = np.concatenate([np.zeros(ndim + 1, bool),
                                   (wmean < rare) | (wmean > 1.0 - rare)])
            series_tau = np.where(skip, np.nan, series_tau)
            ess_series = np.where(skip, np.inf, ess_series)
            # the kept chain must be tau_factor walker taus long; ensemble averages need
            # series_factor of their own tau (their ESS target is checked separately)
            all_tau = np.concatenate([tau, series_tau[~skip] * series_factor / tau_factor])
            finite = bool(np.all(np.isfinite(all_tau)) and not np.any(np.isnan(ess_series)))
            tmax = float(np.max(all_tau)) if finite else math.nan
            t_burn = float(np.max(np.concatenate([tau, series_tau[~skip]]))) if finite else 0.0
            burn_new = max(int(math.ceil(burn_factor * t_burn)) if finite else n // 2,
                           reseed_step)
            n_kept = n - burn_new
            # tau_max must not have grown much since the previous check (a falling estimate
            # is fine: the mode-population series gives noisy estimates, +-30 % at 50 tau)
            stable = tau_rtol is None or (finite and tmax_old is not None
                                          and tmax <= (1.0 + tau_rtol) * tmax_old)
            if (finite and stable and n_kept >= tau_factor * tmax
                    and np.all(ess_series >= min_ess)):
                burn = burn_new
                converged = True
                if bar is not None:  # done: the bar ends at 100 %
                    bar.total = n
                    bar.refresh()
                break
            burn = min(burn_new, n - 1)
            if n >= max_steps:
                break
            if finite:
                scale = max(1.0, float(np.max(min_ess / ess_series)))
                need = burn_new + max(tau_factor * tmax, n_kept * scale)
            else:
                need = 2 * n
            target = int(min(max_steps, max(1.1 * need, 1.25 * n, n + 50),
                             max(BLOCK_GROWTH * n, n + 50)))
            if bar is not None:
                bar.total = target
                bar.refresh()
            tmax_old = tmax if finite else None
    finally:
        if bar is not None:
            bar.close()
    wall = time.perf_counter() - t0
    n = sampler.iteration
    # an unconverged run keeps at least its second half: a burn-in from a tau estimate as long
    # as the chain kept one step (64 draws, an MCSE below even the independent-draw error)
    burn = min(burn, n - 1) if converged else min(burn, n // 2)
    thin = max(1, int(np.min(tau) // 2)) if np.all(np.isfinite(tau)) else 1
    thin = min(thin, n - burn)  # emcee keeps steps discard + thin - 1, ... : never none
    if not converged:
        warnings.warn(
            f"sampler stopped at max_steps={max_steps} before convergence: chain {n} steps, "
            f"max tau {np.nanmax(np.concatenate([tau, series_tau]), initial=0):.1f} (need "
            f">= {tau_factor:g} tau after a {burn_factor:g} tau burn-in, stable tau and "
            f"ESS >= {min_ess:g} for every monitored average); increase max_steps or inspect "
            "the trace",
            ConvergenceWarning,
            stacklevel=3,
        )
    ess = nwalkers * (n - burn) / tau
    return EnsembleRun(
        samples=sampler.get_chain(discard=burn, thin=thin),
        log_prob=sampler.get_log_prob(discard=burn, thin=thin),
        tau=tau, n_steps=n, burn=burn, thin=thin, converged=converged,
        acceptance=np.asarray(sampler.acceptance_fraction, float), ess=ess,
        n_checks=n_checks, wall_time_s=wall, series_tau=series_tau, series_ess=ess_series,
        n_reseeded=n_reseeded,
    )
