"""Joint MCMC over all layers and the thermal parameters of a profile.

Coordinates: the free thermal parameters, then each layer's :class:`LayerModel` coordinates in
which the temperature is replaced by its standardised offset from the geotherm,
``z_i = (T_i - T_geo(z_mid,i; phi)) / scatter`` (a non-centred parameterisation; the density
carries the truncation's normaliser, so the target is exactly the profile posterior). For the
uncoupled state the temperatures themselves are sampled. Pressures use the *sampled* densities
of the layers above (:meth:`Profile.pressures_gpa`); the layers are evaluated top-down so each
layer's overburden is known before its forward call. Sampling uses the package's emcee driver
(:func:`~bayescrust.inference.sampler.run_ensemble`).
"""

from __future__ import annotations

import math
import time

import numpy as np

from ..inference.api import resolve_rng
from ..inference.hypotheses import indicators
from ..inference.sampler import run_ensemble
from ..physics.thermal import THERMAL_DATA as _TH
from .exact import _hypotheses
from .results import _KEEP, boundary_from_mantle, build_result
from .spec import Profile

__all__ = ["JointModel", "invert_profile"]

_G = 1e-3 * float(_TH["lithostatic"]["gravity_m_s2"])  # GPa per (g/cm^3 km)


class JointModel:
    """The profile posterior as one vectorised log-probability (module docstring)."""

    def __init__(self, profile: Profile, *, forward=None):
        self.profile = profile
        self.models = profile.layer_models(forward=forward)
        th = profile.thermal
        self.k = th.ndim if th.coupled else 0
        self.offsets, off = [], self.k
        for m in self.models:
            self.offsets.append(off)
            off += m.ndim
        self.ndim = off
        self.blocks = [np.arange(self.k)] + [np.arange(o, o + m.ndim)
                                             for o, m in zip(self.offsets, self.models,
                                                             strict=True)]
        self.t_index = [m.n_fraction_dims + m.free.index("temperature_c") for m in self.models]
        lo, hi = profile.temperature_range_c
        self.log_q = -math.log(hi - lo)
        self.h = profile.bottoms_km - profile.tops_km
        self.base_p = (profile.pressures_gpa(np.zeros(profile.n_layers))
                       if profile.pressure == "overburden" else profile.pressures_gpa())
        hf = profile.heat_flow
        self.hf = hf if (hf is not None and hf.mode != "off") else None
        self.hyps = _hypotheses(profile, self.models)
        names = list(th.free) if th.coupled else []
        for m in self.models:
            names += [f"{m.layer.name}:{p}" for p in m.parameter_names]
        self.names = names

    def _layer(self, i, x, geo_i, rho_above):
        """Layer coordinates -> (log prior incl. thermal coupling, log-likelihood, quantities)."""
        p = self.profile
        m = self.models[i]
        theta = x[:, self.offsets[i]:self.offsets[i] + m.ndim].copy()
        j = self.t_index[i]
        if p.thermal.coupled:
            s = p.thermal.scatter_c
            t = geo_i + s * theta[:, j]
            theta[:, j] = t
            lc = p.log_temperature_density(t, geo_i) + math.log(s)
        else:
            t = theta[:, j]
            lc = p.log_temperature_density(t, None)
        lp = m.log_prior(theta) - self.log_q + lc
        q = m.quantities(theta, predict=False)
        pres = self.base_p[i] + (_G * rho_above if p.pressure == "overburden" else 0.0)
        ok = np.isfinite(lp)
        vp = np.full(len(t), np.nan)
        vs, rho = vp.copy(), vp.copy()
        if np.any(ok):
            f = np.clip(m.fractions(theta[ok]), 0.0, 1.0)
            pres_ok = np.broadcast_to(pres, ok.shape)[ok]
            # hydrostatic pore pressure, as LayerModel.predict: cracks close with the effective
            # pressure (Walsh 1965); without it every crack stayed open (pore = confining)
            pore = ({} if m.pore_pressure_gpa is None
                    else {"pore_pressure_gpa": np.minimum(pres_ok, m.pore_pressure_gpa)})
            with np.errstate(all="ignore"):
                a, b, c = m.forward(
                    f, q["temperature_c"][ok], pres_ok,
                    porosity=q["porosity"][ok], aspect_ratio=q["aspect_ratio"][ok],
                    melt_fraction=q["melt_fraction_effective"][ok],
                    melt_aspect_ratio=q["melt_aspect_ratio"][ok],
                    serpentinization=q["serpentinization_effective"][ok], **pore)
            vp[ok], vs[ok], rho[ok] = a, b, c
        q.update(vp=vp, vs=vs, density=rho, vp_vs=vp / vs)
        with np.errstate(all="ignore"):
            ll = sum(m.log_likelihood_terms(q).values())
        ll = np.where(np.isfinite(ll), ll, -np.inf)
        return lp, ll, q

    def evaluate(self, x):
        """Log posterior (n,) and per-layer quantities of points (n, ndim)."""
        x = np.atleast_2d(np.asarray(x, float))
        p, th = self.profile, self.profile.thermal
        phi = x[:, :self.k]
        lp = th.log_prior(phi) if th.coupled else np.zeros(x.shape[0])
        ok = np.isfinite(lp)
        out = np.full(x.shape[0], -np.inf)
        qs = [None] * p.n_layers
        if not np.any(ok):
            return out, qs
        xo, lpo = x[ok], lp[ok]
        geo = th.geotherm_c(p.mid_depths_km, phi[ok]) if th.coupled else np.zeros(
            (xo.shape[0], p.n_layers))
        rho_above = np.zeros(xo.shape[0])
        for i in range(p.n_layers):
            lpi, lli, q = self._layer(i, xo, geo[:, i], rho_above)
            lpo = lpo + lpi + lli
            rho_above = rho_above + np.nan_to_num(q["density"], nan=3.0) * self.h[i]
            qs[i] = q
        if self.hf is not None:
            if th.coupled:
                lpo = lpo + self.hf.log_likelihood(th.heat_flow_mw_m2(phi[ok]))
            else:
                t1 = qs[0]["temperature_c"]
                lpo = lpo + self.hf.log_likelihood(
                    th.conductivity_w_mk * (t1 - th.surface_temperature_c)
                    / p.mid_depths_km[0])
        out[ok] = np.where(np.isnan(lpo), -np.inf, lpo)
        full = []
        for q in qs:
            d = {}
            for k, v in q.items():
                a = np.full(x.shape[0], np.nan)
                a[ok] = v
                d[k] = a
            full.append(d)
        return out, full

    def log_prob(self, x):
        return self.evaluate(x)[0]

    def sample_prior(self, rng, n):
        """Prior draws of the joint coordinates (n, ndim)."""
        th = self.profile.thermal
        parts = [th.from_unit(rng.random((n, self.k)))] if self.k else []
        for i, m in enumerate(self.models):
            theta = m.sample_prior(rng, n)
            if th.coupled:
                theta[:, self.t_index[i]] = rng.standard_normal(n)
            parts.append(theta)
        return np.concatenate(parts, axis=1) if parts else np.zeros((n, 0))


def _initial(jm, rng, nwalkers, factor=64):
    """Walkers by likelihood-weighted resampling (without replacement) of prior draws."""
    x = jm.sample_prior(rng, factor * nwalkers)
    lp = jm.log_prob(x)
    g = lp + rng.gumbel(size=lp.shape)
    g[~np.isfinite(lp)] = -np.inf
    return x[np.argsort(g)[::-1][:nwalkers]]


def _burn_in(jm, init, rng, steps, moves):
    """Pre-run (discarded) that also moves stragglers: after ``steps`` steps, walkers whose
    log-probability is more than 20 below the median restart at other walkers' positions with a
    small jitter (allowed in burn-in only; the driver's own burn-in follows)."""
    import emcee

    s = emcee.EnsembleSampler(init.shape[0], init.shape[1], jm.log_prob, moves=moves,
                              vectorize=True)
    s.random_state = np.random.RandomState(int(rng.integers(2**32))).get_state()
    state = s.run_mcmc(init, steps, progress=False)
    x, lp = state.coords.copy(), state.log_prob.copy()
    bad = lp < np.median(lp) - 20.0
    good = np.flatnonzero(~bad)
    for _ in range(10):  # a few attempts: jittered copies must stay inside the support
        if not np.any(bad):
            break
        src = rng.choice(good, size=int(bad.sum()))
        scale = 1e-3 * np.std(x[good], axis=0)
        trial = x[src] + scale * rng.standard_normal((src.size, x.shape[1]))
        tl = jm.log_prob(trial)
        ok = np.isfinite(tl)
        idx = np.flatnonzero(bad)[ok]
        x[idx], lp[idx] = trial[ok], tl[ok]
        bad[idx] = False
    return x


def _ess(ind_chains):
    from ..inference._arviz import numpy_diagnostics

    with np.errstate(all="ignore"), numpy_diagnostics() as az:
        e = float(az.ess(np.asarray(ind_chains, float)))
    return e


def invert_profile(profile: Profile, *, seed=None, rng=None, nwalkers=None, min_ess=1000.0,
                   max_steps=20000, forward=None, progress=False, burn_steps=300, min_steps=1000,
                   scheme="collapsed", n_layer=2**15, n_designs=8):
    """MCMC of a profile; returns a :class:`ProfileResult` (``method="mcmc"``).

    ``scheme="collapsed"`` (default for coupled thermal states with free parameters): emcee over
    the thermal parameters with the per-layer marginal likelihoods of one weighed design per
    layer (``n_layer`` points in ``n_designs`` independent blocks), the layers drawn
    conditionally (:mod:`bayescrust.profile.collapsed`). ``scheme="joint"``: emcee over every
    layer and the thermal parameters at once with the sampled densities in the overburden
    (module docstring; slow on deep profiles, the independent check of the collapsed scheme);
    used for the uncoupled state whatever ``scheme`` says.

    ``min_steps`` (joint scheme) is the driver's first convergence check; it is long (1000)
    because a walker that has not moved in one layer's block since the start makes emcee's
    autocorrelation estimate NaN (a per-walker division by zero), which the driver does not
    survive.
    """
    import pandas as pd

    if not isinstance(profile, Profile):
        raise ValueError("invert_profile: profile must be a bayescrust.profile.Profile")
    if scheme not in ("collapsed", "joint"):
        raise ValueError(f"invert_profile: scheme must be 'collapsed' or 'joint'; got {scheme!r}")
    gen, seed_value = resolve_rng(seed, rng)
    if scheme == "collapsed" and profile.thermal.coupled and profile.thermal.ndim > 0:
        from .collapsed import collapsed_profile

        return collapsed_profile(profile, gen=gen, seed_value=seed_value, nwalkers=nwalkers,
                                 min_ess=min_ess, max_steps=max_steps, forward=forward,
                                 progress=progress, n_layer=n_layer, n_designs=n_designs)
    t0 = time.perf_counter()
    jm = JointModel(profile, forward=forward)
    nw = int(nwalkers) if nwalkers is not None else max(64, 2 * jm.ndim + 2)
    init = _initial(jm, gen, nw)
    from .moves import profile_moves

    init = _burn_in(jm, init, gen, burn_steps, profile_moves(jm.blocks))
    run = run_ensemble(jm.log_prob, init, rng=gen, min_ess=min_ess, max_steps=max_steps,
                       moves=profile_moves(jm.blocks), progress=progress,
                       min_steps=min_steps)
    nd, nwk, _ = run.samples.shape
    x = run.samples.reshape(nd * nwk, -1)
    _, qs = jm.evaluate(x)
    th = profile.thermal
    vals = th.values(x[:, :jm.k]) if th.coupled else {}
    thermal_draws = {k: vals[k] for k in th.params} if th.coupled else {}
    layers = {k: np.stack([q[k] for q in qs], axis=1) for k in _KEEP}
    mantle = layers["ultramafic_fraction"] >= 0.5
    bkm = boundary_from_mantle(profile, mantle)

    def chains(v):  # (draw*walker,) -> (walker, draw)
        return np.asarray(v).reshape(nd, nwk).T

    def mcse_p(v):
        p = float(np.mean(v))
        if p in (0.0, 1.0):
            return p, 0.0
        return p, math.sqrt(p * (1 - p) / max(_ess(chains(v)), 1.0))

    rows = []
    for i, name in enumerate(profile.names):
        for h, ind in indicators(jm.hyps[i], qs[i]).items():
            p, se = mcse_p(ind)
            rows.append({"layer": name, "hypothesis": h, "probability": p, "mcse": se})
    hyp = pd.DataFrame(rows)
    tops = list(profile.tops_km)
    bp, be = [], []
    for t in tops + [math.nan]:
        ind = np.isnan(bkm) if math.isnan(t) else (bkm == t)
        p, se = mcse_p(ind)
        bp.append(p)
        be.append(se)
    from .results import _boundary_table, _thermal_table

    boundary = _boundary_table(profile, bp, be)
    mcse = {k: float(np.std(v) / math.sqrt(max(_ess(chains(v)), 1.0)))
            for k, v in thermal_draws.items()}
    thermal = _thermal_table(list(thermal_draws), thermal_draws, mcse=mcse)
    draws = {"thermal": thermal_draws, "layers": layers, "boundary_km": bkm}
    from .collapsed import _verdict

    diag = {"scheme": "joint", "tau": run.tau.tolist(), "ess": run.ess.tolist(),
            **_verdict(run, list(jm.names)),
            "n_steps": run.n_steps, "nwalkers": nw, "acceptance": float(run.acceptance.mean()),
            "coordinates": jm.names, "sampling_time_s": run.wall_time_s}
    return build_result(profile, method="mcmc", hyps=jm.hyps, models=jm.models,
                        pressures=np.nanmean(_pressures(jm, layers), axis=0), seed=seed_value,
                        wall_time_s=time.perf_counter() - t0,
                        mcmc=(draws, hyp, boundary, thermal, diag))


def _pressures(jm, layers):
    rho = layers["density"]
    if jm.profile.pressure != "overburden":
        return np.broadcast_to(jm.base_p, rho.shape)
    above = np.cumsum(rho * jm.h, axis=1) - rho * jm.h
    return jm.base_p + _G * above
