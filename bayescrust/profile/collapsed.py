"""Collapsed MCMC of a profile: emcee over the thermal parameters, layers drawn conditionally.

Given the thermal parameters ``phi`` the layers are independent, so the joint posterior
factorises as ``p(phi | d) prod_i p(theta_i | phi, d_i)`` with
``p(phi | d) ~ p(phi) q_hf(phi) prod_i L_i(phi)`` (the exact path's structure,
:mod:`bayescrust.profile.exact`). This sampler

1. weighs one prior design per layer once (``n_designs`` independent scrambled-Sobol blocks of
   ``n_layer / n_designs`` points, the temperature drawn from the proposal
   ``Uniform(temperature_range_c)``, as in the exact path);
2. runs the package's emcee driver (:func:`~bayescrust.inference.sampler.run_ensemble`) over the
   few thermal parameters only, with the target ``p(phi) q_hf(phi) prod_i L_hat_i(phi)``, where
   ``L_hat_i`` is the design's importance estimate of the layer's marginal likelihood;
3. draws each layer's parameters for every kept ``phi`` by importance resampling of its design
   (weights ``p(d_i | theta_k) p(T_k | phi) / q(T_k)``), and estimates every answer by
   Rao-Blackwellisation (the conditional probabilities given ``phi``, averaged over the chain).

**What it samples exactly.** The chain is an exact MCMC for the joint posterior in which each
layer's conditional prior ``p(theta_i | phi)`` is replaced by its design measure (the ``N``
design points with weights ``p(T_k | phi) / q(T_k)``); that posterior converges to the true one
as ``N`` grows. The error of ``log L_hat_i(phi)`` is about ``1 / sqrt(ESS_i(phi))`` (importance
ESS of the layer's design at ``phi``); the result reports the median and largest
``sqrt(sum_i 1 / ESS_i)`` over the kept draws (``diagnostics["log_likelihood_design_sd"]``),
and the spread of the answers over the ``n_designs`` independent blocks (each answer
re-weighted from the chain to one block's target) enters every reported Monte Carlo error,
combined with the chain's ensemble MCSE (:func:`~bayescrust.inference.sampler.ensemble_mcse`;
``diagnostics["error_parts"]`` gives both parts). The block spread is itself an estimate: on the
6-layer benchmark with 2^13 points in 4 blocks (a mantle layer's conditional ESS ~30) the
answers sat up to ~5 reported errors from the exact path's; with the default 2^15 points in 8
blocks (ESS >= ~130) they agree (tests/benchmarks/bench_profile.py). Keep
``diagnostics["layer_ess_min"]`` above ~100 (raise ``n_layer`` otherwise).

**Speed.** ``L_hat_i`` depends on ``phi`` only through the geotherm at the layer's mid-depth,
``g_i = T_geo(z_i; phi)``, a scalar; ``log L_hat_i(g)`` and the conditional hypothesis
probabilities are tabulated on a grid of ``g`` with spacing ``scatter_c / 16`` and read by cubic
interpolation (values outside the grid are computed directly). The interpolation error at the
kept draws is measured against direct evaluation and reported
(``diagnostics["interpolation_error_max"]``, in log-likelihood units).

**Overburden.** As in the exact path: pressures fixed at the overburden of the posterior-mean
densities of a first, smaller pass, with the same reported bound (``pressure_bound``). The
full joint sampler (``invert_profile(..., scheme="joint")``) samples the densities in the
overburden instead and is the independent check of that approximation.

For the uncoupled thermal state (no thermal parameters) the layers are independent and the
joint sampler is used.
"""

from __future__ import annotations

import math
import time

import numpy as np
from scipy.interpolate import CubicSpline

from ..inference.evidence import prior_design, weigh_design
from ..inference.hypotheses import indicators
from ..inference.sampler import ensemble_mcse, run_ensemble
from .exact import _G, _hypotheses, _log_weights, design_thermal
from .results import _KEEP, _boundary_table, _thermal_table, boundary_from_mantle, build_result
from .spec import Profile

__all__ = ["collapsed_profile", "LayerTable"]

_FLOOR = -700.0  # log-likelihood floor below the table's maximum (exp underflows there anyway)


def logsumexp(a, axis=None, keepdims=False):
    """``log(sum(exp(a)))`` along ``axis``, stable; ``-inf`` where every term is ``-inf``
    (scipy's, without its per-call dispatch overhead, which dominates in the sampler)."""
    a = np.asarray(a, float)
    m = np.max(a, axis=axis, keepdims=True)
    m = np.where(np.isfinite(m), m, 0.0)
    with np.errstate(divide="ignore"):
        out = np.log(np.sum(np.exp(a - m), axis=axis, keepdims=True)) + m
    return out if keepdims else np.squeeze(out, axis=axis)


class LayerTable:
    """One layer's design, its tabulated ``log L_hat(g)`` and conditional hypothesis
    probabilities for each of ``R`` design blocks (module docstring)."""

    def __init__(self, profile, ll, t, ind, n_blocks, grid):
        self.profile, self.ll, self.t = profile, ll, t
        self.ind = ind  # (N, H) float indicators
        self.r = n_blocks
        self.grid = grid
        lo, hi = profile.temperature_range_c
        self.log_q = -math.log(hi - lo)
        n = ll.size
        self.block = n // n_blocks
        log_l = np.empty((n_blocks, grid.size))
        cond = np.empty((n_blocks, grid.size, ind.shape[1]))
        s2 = profile.thermal.scatter_c ** 2
        with np.errstate(invalid="ignore"):
            self._c = np.where(np.isfinite(ll), ll - 0.5 * t**2 / s2, -np.inf)
        step = 16
        for c in range(0, grid.size, step):
            gc = grid[c:c + step]
            for r in range(n_blocks):
                keep = r * self.block + self._keep(gc[0], gc[-1], slice(r * self.block,
                                                                        (r + 1) * self.block))
                lw = _log_weights(profile, ll[keep], t[keep], gc, self.log_q)
                lr = logsumexp(lw, axis=1)
                log_l[r, c:c + step] = lr - math.log(self.block)
                with np.errstate(invalid="ignore"):
                    w = np.exp(lw - np.where(np.isfinite(lr), lr, 0.0)[:, None])
                cond[r, c:c + step] = w @ ind[keep]
        self.log_l_table = log_l
        top = np.max(log_l) if np.any(np.isfinite(log_l)) else 0.0
        floor = top + _FLOOR
        lb = np.maximum(np.nan_to_num(log_l, neginf=floor), floor)
        lc = logsumexp(lb, axis=0) - math.log(n_blocks)
        # combined conditional: the blocks weighted by their marginal likelihoods
        wb = np.exp(lb - lc[None, :]) / n_blocks
        cc = np.einsum("rg,rgh->gh", wb, np.nan_to_num(cond))
        self._spl_l = CubicSpline(grid, lc)
        self._spl_lb = CubicSpline(grid, lb, axis=1)
        self._spl_c = CubicSpline(grid, cc, axis=0)
        self._spl_cb = CubicSpline(grid, np.nan_to_num(cond), axis=1)
        self.floor = floor

    def _keep(self, a, b, sl=slice(None), margin=60.0):
        """Indices (within ``sl``) of the design points that can matter for any geotherm value
        in ``[a, b]``: the log-weight is ``c_k + g t_k / s^2 + row(g)``, so a point whose
        largest value over ``[a, b]`` is more than ``margin`` below the largest smallest value
        of the others carries less than ``e^-margin`` of the weight at every ``g`` there (the
        total left out is below ``N e^-60``, far below double precision)."""
        c, t = self._c[sl], self.t[sl]
        s2 = self.profile.thermal.scatter_c ** 2
        upper = c + np.maximum(a * t, b * t) / s2
        lower = c + np.minimum(a * t, b * t) / s2
        top = np.max(lower)
        if not np.isfinite(top):
            return np.arange(c.size)
        return np.flatnonzero(upper >= top - margin)

    def log_weights(self, g):
        """Log importance weights (len(g), N) of the design at geotherm values ``g``."""
        return _log_weights(self.profile, self.ll, self.t, np.asarray(g, float), self.log_q)

    def _inside(self, g):
        return (g >= self.grid[0]) & (g <= self.grid[-1])

    def log_l(self, g, direct=False):
        """``log L_hat(g)`` of the whole design (n,)."""
        g = np.asarray(g, float)
        out = np.empty(g.shape)
        ins = np.zeros(g.shape, bool) if direct else self._inside(g)
        out[ins] = self._spl_l(g[ins])
        if np.any(~ins):
            lw = self.log_weights(g[~ins])
            out[~ins] = np.maximum(logsumexp(lw, axis=1) - math.log(self.ll.size), self.floor)
        return out

    def log_l_blocks(self, g):
        """``log L_hat_r(g)`` of each design block (R, n); interpolated (outside: direct)."""
        g = np.asarray(g, float)
        out = np.empty((self.r, g.size))
        ins = self._inside(g)
        out[:, ins] = self._spl_lb(g[ins])
        if np.any(~ins):
            lw = self.log_weights(g[~ins])
            for r in range(self.r):
                sl = slice(r * self.block, (r + 1) * self.block)
                out[r, ~ins] = np.maximum(logsumexp(lw[:, sl], axis=1)
                                          - math.log(self.block), self.floor)
        return out

    def cond(self, g, blocks=False):
        """Conditional hypothesis probabilities (n, H), or per block (R, n, H)."""
        g = np.asarray(g, float)
        ins = self._inside(g)
        shape = (self.r, g.size, self.ind.shape[1]) if blocks else (g.size, self.ind.shape[1])
        out = np.empty(shape)
        if blocks:
            out[:, ins] = self._spl_cb(g[ins])
        else:
            out[ins] = self._spl_c(g[ins])
        if np.any(~ins):
            lw = self.log_weights(g[~ins])
            parts = ([slice(r * self.block, (r + 1) * self.block) for r in range(self.r)]
                     if blocks else [slice(None)])
            for r, sl in enumerate(parts):
                w = np.exp(lw[:, sl] - logsumexp(lw[:, sl], axis=1, keepdims=True))
                v = np.nan_to_num(w) @ self.ind[sl]
                if blocks:
                    out[r, ~ins] = v
                else:
                    out[~ins] = v
        return np.clip(out, 0.0, 1.0)

    def draw(self, g, rng, chunk=128, tries=32):
        """One design index per geotherm value, by importance resampling (n,).

        Exact rejection sampling in chunks of neighbouring ``g`` (range ``[a, b]``): the
        weight of point ``k`` at ``g`` is proportional to ``exp(c_k + g t_k / s^2)``, bounded
        over the chunk by the envelope ``exp(c_k + max(a t_k, b t_k) / s^2)``; a candidate from
        the envelope (one cumulative sum per chunk) is accepted with probability
        ``exp((g t_k - max(a t_k, b t_k)) / s^2)``, between ``e^-1`` and 1 because chunks are
        at most ``s^2 / max|t_k|`` wide.
        """
        g = np.asarray(g, float)
        out = np.empty(g.size, int)
        s2 = self.profile.thermal.scatter_c ** 2
        order = np.argsort(g)
        # chunks no wider than s^2 / max|t|, so every acceptance probability is >= e^-1
        width = s2 / max(float(np.max(np.abs(self.t))), 1e-9)
        cell = np.floor((g[order] - g[order[0]]) / width)
        starts = np.flatnonzero(np.diff(cell, prepend=-1.0) != 0)
        bounds = sorted(set(np.concatenate([starts, np.arange(0, g.size, chunk)]).tolist()))
        for c, e in zip(bounds, bounds[1:] + [g.size], strict=True):
            idx = order[c:e]
            a, b = g[idx[0]], g[idx[-1]]
            env = self._c + np.maximum(a * self.t, b * self.t) / s2
            cum = np.cumsum(np.exp(env - np.max(env)))
            todo = idx
            while todo.size:
                u = rng.random((todo.size, tries)) * cum[-1]
                k = np.minimum(np.searchsorted(cum, u, side="right"), cum.size - 1)
                t = self.t[k]
                log_acc = (g[todo][:, None] * t - np.maximum(a * t, b * t)) / s2
                acc = np.log(rng.random(k.shape)) < log_acc
                ok = acc.any(axis=1)
                out[todo[ok]] = k[ok, acc[ok].argmax(axis=1)]
                todo = todo[~ok]
        return out

    def ess(self, g):
        """Importance ESS of the whole design at geotherm values ``g`` (n,)."""
        lw = self.log_weights(np.asarray(g, float))
        w = np.exp(lw - np.max(lw, axis=1, keepdims=True))
        return w.sum(axis=1) ** 2 / np.maximum((w * w).sum(axis=1), 1e-300)


def _grid(profile, phi_prior):
    th = profile.thermal
    lo, hi = profile.temperature_range_c
    s = th.scatter_c
    geo = th.geotherm_c(profile.mid_depths_km, phi_prior)
    a = min(lo - 8 * s, float(np.nanmin(geo)) - s)
    b = max(hi + 8 * s, float(np.nanmax(geo)) + s)
    n = int(min(max(math.ceil((b - a) / (s / 16.0)) + 1, 64), 8001))
    return np.linspace(a, b, n)


def _stage_one(profile, models, rng, n_points, n_thermal=64):
    """Prior designs per layer (reference pressures) and each point's posterior weight,
    marginal over a scrambled-Sobol thermal design: [(u, quantities, omega)] per layer."""
    th = profile.thermal
    lo, hi = profile.temperature_range_c
    phi = design_thermal(th, rng, n_thermal)
    geo = th.geotherm_c(profile.mid_depths_km, phi)
    log_l = np.zeros((phi.shape[0], len(models)))
    out, ws = [], []
    for i, m in enumerate(models):
        _, q, u = prior_design(m, rng, n_points)
        ll, _ = weigh_design(m, q)
        lw = _log_weights(profile, ll, q["temperature_c"], geo[:, i], -math.log(hi - lo))
        lse = logsumexp(lw, axis=1, keepdims=True)
        log_l[:, i] = lse[:, 0] - math.log(lw.shape[1])
        with np.errstate(invalid="ignore"):
            ws.append(np.nan_to_num(np.exp(lw - np.where(np.isfinite(lse), lse, 0.0))))
        out.append((u, q))
    total = log_l.sum(axis=1)
    hf = profile.heat_flow
    if hf is not None and hf.mode != "off":
        total = total + hf.log_likelihood(th.heat_flow_mw_m2(phi))
    big = np.exp(total - np.max(total))
    big /= big.sum()
    res = []
    for (u, q), w in zip(out, ws, strict=True):
        o = big @ w
        res.append((u, q, o / o.sum()))
    return res


def _verdict(run, names) -> dict:
    """The one convergence rule for a profile's ensemble run (the layer path's: the sampler's
    stopping rule and every coordinate's R-hat below RHAT_MAX), as diagnostics entries; warns
    when the stopping rule was met but R-hat was not (the sampler warns of the other case)."""
    import warnings

    from ..inference.sampler import ConvergenceWarning
    from ..inference.trust import chain_verdict

    v = chain_verdict(run.samples, names, sampler_converged=run.converged)
    if run.converged and not v["converged"]:
        warnings.warn(f"profile MCMC not converged: R-hat of {v['worst']} is "
                      f"{v['max_r_hat']:.3f} (rule: {v['rule']}); run longer (raise min_ess)",
                      ConvergenceWarning, stacklevel=3)
    return {"converged": v["converged"], "sampler_converged": bool(run.converged),
            "max_r_hat": v["max_r_hat"], "convergence_rule": v["rule"], "r_hat": v["r_hat"]}


def collapsed_profile(profile: Profile, *, gen, seed_value, nwalkers=None, min_ess=1000.0,
                      max_steps=20000, forward=None, progress=False, n_layer=2**15,
                      n_designs=8, n_draws=4000, pressure_bound=True):
    """Collapsed MCMC of a coupled profile (module docstring); returns a ``ProfileResult``.

    Called by :func:`~bayescrust.profile.joint.invert_profile` (``scheme="collapsed"``).
    """
    import pandas as pd

    th = profile.thermal
    if not th.coupled or th.ndim == 0:
        raise ValueError("collapsed_profile needs a coupled thermal state with free parameters")
    if int(n_designs) < 2:
        raise ValueError(f"n_designs must be >= 2 (for the design error); got {n_designs!r}")
    t0 = time.perf_counter()
    streams = gen.spawn(4)
    models = profile.layer_models(forward=forward)
    hyps = _hypotheses(profile, models)
    L = profile.n_layers
    # 1. a first, smaller pass at the reference pressures finds the posterior-mean densities
    #    of the layers for the overburden (as the exact path)
    if profile.pressure == "overburden":
        stage1 = _stage_one(profile, models, streams[0], max(n_layer // 4, 512))
        rho_mean = np.array([o @ np.nan_to_num(q["density"]) for _, q, o in stage1])
        rho_sd = np.sqrt(np.maximum([o @ np.nan_to_num(q["density"] - r) ** 2 for (_, q, o), r
                                     in zip(stage1, rho_mean, strict=True)], 0.0))
        pressures = profile.pressures_gpa(rho_mean)
        h = profile.bottoms_km - profile.tops_km
        p_sd = _G * (np.cumsum(rho_sd * h) - rho_sd * h)
        models = profile.layer_models(pressures, forward=forward)
    else:
        pressures = profile.pressures_gpa()
        p_sd = np.zeros(L)
    # 2. one prior design per layer in n_designs independent scrambles, weighed once and
    #    tabulated over the geotherm value
    grid = _grid(profile, th.from_unit(streams[1].random((4096, th.ndim))))
    tables, designs = [], []
    for i, m in enumerate(models):
        theta, q, _ = prior_design(m, streams[1], n_layer, n_scrambles=n_designs)
        ll, _ = weigh_design(m, q)
        ind = indicators(hyps[i], q)
        mat = np.stack([v.astype(float) for v in ind.values()], axis=1)
        tables.append(LayerTable(profile, ll, q["temperature_c"], mat, n_designs, grid))
        designs.append((theta, q, ll, list(ind)))
    hf = profile.active_heat_flow
    mids = profile.mid_depths_km
    t_design = time.perf_counter() - t0

    def log_target(phi, direct=False):
        phi = np.atleast_2d(phi)
        lp = th.log_prior(phi)
        ok = np.isfinite(lp)
        if not np.any(ok):
            return lp
        geo = th.geotherm_c(mids, phi[ok])
        tot = lp[ok] + sum(tab.log_l(geo[:, i], direct) for i, tab in enumerate(tables))
        if hf is not None:
            tot = tot + hf.log_likelihood(th.heat_flow_mw_m2(phi[ok]))
        lp = lp.copy()
        lp[ok] = np.where(np.isnan(tot), -np.inf, tot)
        return lp

    mi = [list(d[3]).index("mantle rock") for d in designs]

    def boundary_given(geo, m=None):  # (n, L+1): P(first mantle layer | phi), and no boundary
        if m is None:
            m = np.stack([tab.cond(geo[:, i])[:, mi[i]] for i, tab in enumerate(tables)], 1)
        survive = np.cumprod(np.concatenate([np.ones((m.shape[0], 1)), 1.0 - m[:, :-1]], 1),
                             axis=1)
        return np.concatenate([m * survive, np.prod(1.0 - m, axis=1, keepdims=True)], axis=1)

    def watch(phi):
        return boundary_given(th.geotherm_c(mids, np.atleast_2d(phi)))

    # 2. emcee over the thermal parameters
    nw = int(nwalkers) if nwalkers is not None else max(32, 8 * th.ndim)
    cand = th.from_unit(streams[2].random((64 * nw, th.ndim)))
    lp = log_target(cand)
    gum = lp + streams[2].gumbel(size=lp.shape)
    gum[~np.isfinite(lp)] = -np.inf
    init = cand[np.argsort(gum)[::-1][:nw]]
    run = run_ensemble(log_target, init, rng=gen, min_ess=min_ess, max_steps=max_steps,
                       progress=progress, watch=watch)
    nd, nwk, k = run.samples.shape
    x = run.samples.reshape(nd * nwk, k)
    geo = th.geotherm_c(mids, x)

    def chains(v):  # (draw*walker,) -> (walker, draw)
        return np.asarray(v).reshape(nd, nwk).T

    # design blocks: each answer re-weighted from the chain to one block's target
    lb = np.stack([tab.log_l_blocks(geo[:, i]) for i, tab in enumerate(tables)])  # (L, R, S)
    lc = np.stack([tab.log_l(geo[:, i]) for i, tab in enumerate(tables)])  # (L, S)
    lw_r = (lb - lc[:, None, :]).sum(axis=0)  # (R, S)
    w_r = np.exp(lw_r - lw_r.max(axis=1, keepdims=True))
    w_r /= w_r.sum(axis=1, keepdims=True)

    parts = {}  # chain and design parts of the errors of the thermal means and boundary

    def estimate(v, v_blocks, name=None):
        """Chain mean of ``v`` (S,) and its error: the ensemble MCSE (+) the spread over the
        design blocks (``v_blocks`` (R, S): ``v`` under each block's design)."""
        mean, chain_se, _ = ensemble_mcse(chains(v))  # of the ensemble-average series
        per = np.einsum("rs,rs->r", w_r, v_blocks)
        design_se = float(np.std(per, ddof=1) / math.sqrt(per.size))
        if name is not None:
            parts[name] = (chain_se, design_se)
        return mean, math.hypot(chain_se, design_se)

    rows = []
    cond_blocks = []
    for i, (tab, name) in enumerate(zip(tables, profile.names, strict=True)):
        c = tab.cond(geo[:, i])
        cb = tab.cond(geo[:, i], blocks=True)
        cond_blocks.append(cb)
        for j, hname in enumerate(designs[i][3]):
            p, se = estimate(c[:, j], cb[:, :, j])
            rows.append({"layer": name, "hypothesis": hname, "probability": p, "mcse": se})
    hyp = pd.DataFrame(rows)
    bnd = boundary_given(geo)
    bnd_b = np.stack([boundary_given(geo, np.stack([cond_blocks[i][r, :, mi[i]]
                                                    for i in range(L)], 1))
                      for r in range(n_designs)])  # (R, S, L+1)
    bp, be = zip(*[estimate(bnd[:, j], bnd_b[:, :, j], f"boundary {j}") for j in range(L + 1)],
                 strict=True)
    boundary = _boundary_table(profile, list(bp), list(be))
    vals = th.values(x)
    thermal_all = {kk: vals[kk] for kk in th.params}
    mcse = {kk: estimate(v, np.broadcast_to(v, w_r.shape), kk)[1]
            for kk, v in thermal_all.items()}
    # 3. equal-weight joint draws: kept thermal points, each layer resampled from its design
    rng = streams[3]
    sel = rng.choice(x.shape[0], size=min(n_draws, x.shape[0]), replace=False)
    thermal_draws = {kk: v[sel] for kk, v in thermal_all.items()}
    layers = {kk: np.empty((sel.size, L)) for kk in _KEEP}
    picks = []
    for i, tab in enumerate(tables):
        kidx = tab.draw(geo[sel, i], rng)
        picks.append(kidx)
        for kk in _KEEP:
            layers[kk][:, i] = designs[i][1][kk][kidx]
    bkm = boundary_from_mantle(profile, layers["ultramafic_fraction"] >= 0.5)
    thermal = _thermal_table(list(thermal_all), thermal_all, mcse=mcse)
    # accuracy of the approximations at the kept draws
    sub = sel[:200]
    interp_err = float(np.max(np.abs(log_target(x[sub]) - log_target(x[sub], direct=True))))
    ess_l = np.stack([tab.ess(geo[sub, i]) for i, tab in enumerate(tables)], axis=1)
    design_sd = np.sqrt(np.sum(1.0 / ess_l, axis=1))
    bound = None
    if profile.pressure == "overburden" and pressure_bound:
        shifted = profile.layer_models(pressures + 2.0 * p_sd, forward=forward)
        delta = []
        for i, (m1, kidx) in enumerate(zip(shifted, picks, strict=True)):
            if not np.any(p_sd[i] > 0):
                delta.append(0.0)
                continue
            u, cnt = np.unique(kidx, return_counts=True)  # posterior weight of design points
            theta = designs[i][0][u]
            ll0, _ = weigh_design(models[i], models[i].quantities(theta))
            ll1, _ = weigh_design(m1, m1.quantities(theta))
            ok = np.isfinite(ll0) & np.isfinite(ll1)
            delta.append(float(abs(cnt[ok] @ (ll1[ok] - ll0[ok]) / cnt.sum())))
        bound = {"pressure_gpa": pressures, "pressure_sd_bound_gpa": p_sd,
                 "delta_log_likelihood": np.array(delta)}
    draws = {"thermal": thermal_draws, "layers": layers, "boundary_km": bkm}
    verdict = _verdict(run, list(th.free))
    diag = {"scheme": "collapsed", "tau": run.tau.tolist(), "ess": run.ess.tolist(),
            **verdict, "n_steps": run.n_steps, "nwalkers": nw,
            "acceptance": float(run.acceptance.mean()), "coordinates": list(th.free),
            "sampling_time_s": run.wall_time_s, "design_time_s": t_design,
            "n_layer": int(tables[0].ll.size), "n_designs": int(n_designs),
            "series_ess": run.series_ess.tolist(),
            "interpolation_error_max": interp_err,
            "log_likelihood_design_sd": {"median": float(np.median(design_sd)),
                                         "max": float(np.max(design_sd))},
            "layer_ess_min": np.min(ess_l, axis=0).tolist(),
            "error_parts": parts}
    return build_result(profile, method="mcmc", hyps=hyps, pressures=pressures,
                        models=models, pressure_bound=bound, seed=seed_value,
                        wall_time_s=time.perf_counter() - t0,
                        mcmc=(draws, hyp, boundary, thermal, diag))
