"""Structured exact path for a profile.

Given the thermal parameters ``phi`` the layers are independent, so

``p(d | phi) = prod_i L_i(phi)``,  ``L_i(phi) = int p(d_i | theta_i) p(theta_i | phi) dtheta_i``.

Each ``L_i`` comes from one prior design of the layer (:func:`~bayescrust.inference.evidence.
prior_design`, scrambled Sobol, temperature drawn from the proposal ``Uniform(T_lo, T_hi)``),
weighed once by its likelihood (:func:`~bayescrust.inference.evidence.weigh_design`) and then,
for every point of a scrambled-Sobol design over the thermal parameters, re-weighted by the
conditional temperature density over the proposal density (importance sampling; the forward
model runs once per layer point, not once per thermal point). The evidence is the mean of
``prod_i L_i`` over the thermal design; posteriors follow from the same weights.

Overburden pressure couples layers through density. The exact path fixes each layer's pressure
at the overburden of the posterior-mean densities of the layers above (a first pass at the
reference column finds them) and bounds the error: the pressure spread is at most
``g sum_{j<i} sd(rho_j) h_j`` (perfectly correlated densities), and the change of each layer's
posterior-mean log-likelihood when its pressure moves by twice that spread is reported
(``ProfileResult.pressure_bound``); the joint MCMC uses the sampled densities themselves.

Monte Carlo error: ``n_replicates`` independent scrambles of every design; estimates are the
replicate means and their errors the replicate standard deviation over ``sqrt(R)``.
"""

from __future__ import annotations

import math
import time

import numpy as np
from scipy import special

from ..inference.api import resolve_rng
from ..inference.evidence import log_mean_exp, prior_design, weigh_design
from ..inference.hypotheses import default_hypotheses, indicators
from ..physics.thermal import THERMAL_DATA as _TH
from .spec import MANTLE_RULE, Profile

__all__ = ["exact_profile", "design_thermal", "exact_design", "conditional_weights"]

_G = 1e-3 * float(_TH["lithostatic"]["gravity_m_s2"])  # GPa per (g/cm^3 km)


def design_thermal(thermal, rng, n_points, *, unit=False):
    """Scrambled-Sobol design over the free thermal parameters, shape (J, ndim); with ``unit``
    also its unit-cube points ``(phi, u)``."""
    from scipy.stats import qmc

    if not thermal.coupled or thermal.ndim == 0:
        return (np.zeros((1, 0)), np.zeros((1, 0))) if unit else np.zeros((1, 0))
    m = max(1, int(math.ceil(math.log2(max(n_points, 2)))))
    u = np.clip(qmc.Sobol(thermal.ndim, scramble=True, rng=rng).random_base2(m), 1e-12,
                1 - 1e-12)
    return (thermal.from_unit(u), u) if unit else thermal.from_unit(u)


def _hypotheses(profile, models):
    out = []
    for i, m in enumerate(models):
        h = profile.hypotheses[i]
        h = dict(default_hypotheses(m.rock_names) if h is None else h)
        h["mantle rock"] = MANTLE_RULE
        out.append(h)
    return out


def _log_weights(profile, ll, t, geo_i, log_q, out=None):
    """Log importance weights (J, N): likelihood x conditional / proposal temperature density.

    Coupled states expand the Gaussian in ``T`` so the (J, N) array is one outer product
    (identical to :meth:`Profile.log_temperature_density`, checked in the tests); all design
    temperatures lie inside the proposal support, so no truncation mask is needed.
    """
    th = profile.thermal
    if not th.coupled:
        return (ll + profile.log_temperature_density(t, None) - log_q)[None, :]
    lo, hi = profile.temperature_range_c
    s = th.scatter_c
    norm = np.log(np.maximum(special.ndtr((hi - geo_i) / s) - special.ndtr((lo - geo_i) / s),
                             1e-300))
    row = -0.5 * (geo_i / s) ** 2 - math.log(s) - 0.5 * math.log(2 * math.pi) - norm - log_q
    # in place below: the (J, N) array is the cost (``out``: a buffer to reuse)
    out = np.multiply.outer(geo_i / s**2, t, out=out)
    out += (ll - 0.5 * (t / s) ** 2)[None, :]
    out += row[:, None]
    return out


def conditional_weights(profile, ll, t, geo_i, log_q, *, normalise=True, out=None):
    """One layer's marginal likelihood given each thermal point and its design points'
    conditional weights: ``(log_l (J,), w (J, N))``, ``w`` rows normalised (importance sampling
    with :func:`_log_weights`; module docstring). ``log_l`` is ``-inf`` where no point weighs.
    Without ``normalise``, ``(log_l, w, 1 / row sums)`` (the caller scales what it reduces);
    ``out`` (J, N) is a buffer for ``w`` (coupled states)."""
    lw = _log_weights(profile, ll, t, geo_i, log_q, out=out)
    mx = np.max(lw, axis=1, keepdims=True)
    mx = np.where(np.isfinite(mx), mx, 0.0)
    w = np.exp(np.subtract(lw, mx, out=lw), out=lw)
    sw = w.sum(axis=1)
    with np.errstate(divide="ignore"):
        log_l = np.log(sw / w.shape[1]) + mx[:, 0]
    inv = 1.0 / np.maximum(sw, 1e-300)
    if not normalise:
        return log_l, w, inv
    w *= inv[:, None]
    return log_l, w


def _one_replicate(profile: Profile, models, hyps, rng, n_layer, n_thermal, keep_theta=False):
    th = profile.thermal
    lo, hi = profile.temperature_range_c
    log_q = -math.log(hi - lo)
    phi, phi_u = design_thermal(th, rng, n_thermal, unit=True)
    n_phi = phi.shape[0]
    mids = profile.mid_depths_km
    geo = th.geotherm_c(mids, phi) if th.coupled else None
    hf = profile.active_heat_flow
    log_l = np.zeros((n_phi, profile.n_layers))
    cond_h, cond_m, layer_w, layer_q, layer_ll, layer_u, thetas = [], [], [], [], [], [], []
    for i, model in enumerate(models):
        theta, q, u = prior_design(model, rng, n_layer)
        ll, _ = weigh_design(model, q)
        t = q["temperature_c"]
        if not th.coupled and hf is not None and i == 0:
            ll = ll + hf.log_likelihood(
                th.conductivity_w_mk * (t - th.surface_temperature_c) / mids[0])
        log_l[:, i], w = conditional_weights(profile, ll, t, None if geo is None else geo[:, i],
                                             log_q)
        ind = indicators(hyps[i], q)
        mat = np.stack([v.astype(float) for v in ind.values()], axis=1)
        cond = w @ mat  # (J, H)
        cond_h.append({k: cond[:, c] for c, k in enumerate(ind)})
        cond_m.append(cond_h[-1]["mantle rock"])
        layer_w.append(w)
        layer_q.append(q)
        layer_ll.append(ll)
        layer_u.append(u)
        thetas.append(theta if keep_theta else None)
    total = log_l.sum(axis=1)
    if th.coupled and hf is not None:
        total = total + hf.log_likelihood(th.heat_flow_mw_m2(phi))
    log_z = float(log_mean_exp(total))
    big = np.exp(total - np.max(total))
    big_w = big / big.sum()
    return {"phi": phi, "phi_u": phi_u, "W": big_w, "log_z": log_z, "log_l": log_l,
            "cond_h": cond_h, "cond_m": np.stack(cond_m, axis=1), "layer_w": layer_w,
            "layer_q": layer_q, "layer_ll": layer_ll, "layer_u": layer_u, "theta": thetas,
            "thermal_ess": float(1.0 / np.sum(big_w**2))}


def _answers(profile, rep, hyps):
    """Posterior answers of one replicate."""
    big_w = rep["W"]
    m = rep["cond_m"]  # (J, L): P(layer i mantle | phi_j, d_i)
    survive = np.cumprod(np.concatenate([np.ones((m.shape[0], 1)), 1.0 - m[:, :-1]], axis=1),
                         axis=1)
    first = m * survive  # P(first mantle layer is i | phi)
    boundary = np.concatenate([big_w @ first, [big_w @ np.prod(1.0 - m, axis=1)]])
    hyp = {(profile.names[i], h): float(big_w @ v)
           for i in range(profile.n_layers) for h, v in rep["cond_h"][i].items()}
    omega = [big_w @ w for w in rep["layer_w"]]  # posterior weight of each layer design point
    return {"boundary": boundary, "hypotheses": hyp, "omega": omega}


def _pressure_pass(profile, rng, n_layer, n_thermal, forward):
    """Layer models at the profile's pressures: with ``overburden`` a first, smaller pass at the
    reference column finds the posterior-mean densities (module docstring). Returns
    ``(models, hypotheses, pressures, pressure_sd_bound)``."""
    models = profile.layer_models(forward=forward)
    hyps = _hypotheses(profile, models)
    if profile.pressure != "overburden":
        return models, hyps, profile.pressures_gpa(), np.zeros(profile.n_layers)
    first = _one_replicate(profile, models, hyps, rng, max(n_layer // 4, 512),
                           max(n_thermal // 4, 32))
    ans = _answers(profile, first, hyps)
    rho_mean = np.array([o @ q["density"] for o, q in zip(ans["omega"], first["layer_q"],
                                                          strict=True)])
    rho_sd = np.sqrt(np.maximum([o @ (q["density"] - r) ** 2 for o, q, r in
                                 zip(ans["omega"], first["layer_q"], rho_mean,
                                     strict=True)], 0.0))
    pressures = profile.pressures_gpa(rho_mean)
    h = profile.bottoms_km - profile.tops_km
    p_sd = _G * (np.cumsum(rho_sd * h) - rho_sd * h)
    return profile.layer_models(pressures, forward=forward), hyps, pressures, p_sd


def exact_design(profile: Profile, *, n_layer=2**12, n_thermal=256, n_replicates=2, seed=None,
                 rng=None, forward=None) -> dict:
    """The exact path's weighted designs, for callers that reweigh them (e.g. the planner).

    Same pressure pass and designs as :func:`exact_profile`. Returns a dict: ``models`` (one
    :class:`~bayescrust.inference.model.LayerModel` per layer), ``hypotheses`` (per layer, with
    "mantle rock"), ``pressures`` (GPa) and ``replicates``: per independent replicate, ``phi``
    (J, ndim) thermal points (``phi_u`` their unit-cube points), ``W`` (J,) their posterior
    weights, and per layer ``layer_w`` (J, N) the posterior weights of its design points given
    each thermal point, ``layer_q`` the design points' quantities, ``layer_ll`` their
    log-likelihood (with the heat flow for the top layer of an uncoupled state) and ``layer_u``
    their unit-cube points: what a reweighting with new thermal points needs
    (:func:`conditional_weights`).
    """
    if not isinstance(profile, Profile):
        raise ValueError("exact_design: profile must be a bayescrust.profile.Profile")
    if int(n_replicates) < 1:
        raise ValueError(f"n_replicates must be >= 1; got {n_replicates!r}")
    gen, _ = resolve_rng(seed, rng)
    streams = gen.spawn(int(n_replicates) + 1)
    models, hyps, pressures, _ = _pressure_pass(profile, streams[0], n_layer, n_thermal, forward)
    reps = [_one_replicate(profile, models, hyps, streams[1 + r], n_layer, n_thermal)
            for r in range(int(n_replicates))]
    return {"models": models, "hypotheses": hyps, "pressures": pressures, "replicates": reps}


def exact_profile(profile: Profile, *, n_layer=2**13, n_thermal=256, n_replicates=4, seed=None,
                  rng=None, forward=None, n_draws=4000):
    """Posterior of a profile by the structured exact path (module docstring).

    Parameters
    ----------
    profile : Profile
    n_layer, n_thermal : int
        Points per layer design and per thermal design (rounded up to powers of two).
    n_replicates : int
        Independent replicates (>= 2) for the Monte Carlo errors.
    seed, rng : int or numpy.random.Generator, optional
    forward : dict or ForwardModel, optional
        Forward-model settings passed to every layer.
    n_draws : int
        Equal-weight posterior draws resampled for tables, figures and the NetCDF file.

    Returns
    -------
    ProfileResult
    """
    from .results import build_result

    if not isinstance(profile, Profile):
        raise ValueError("exact_profile: profile must be a bayescrust.profile.Profile")
    if int(n_replicates) < 2:
        raise ValueError(f"n_replicates must be >= 2 (for the error); got {n_replicates!r}")
    gen, seed_value = resolve_rng(seed, rng)
    streams = gen.spawn(int(n_replicates) + 2)
    t0 = time.perf_counter()
    models, hyps, pressures, p_sd = _pressure_pass(profile, streams[0], n_layer, n_thermal,
                                                   forward)
    bound = None
    reps, answers = [], []
    for r in range(int(n_replicates)):
        rep = _one_replicate(profile, models, hyps, streams[1 + r], n_layer, n_thermal,
                             keep_theta=(r == 0))
        reps.append(rep)
        answers.append(_answers(profile, rep, hyps))
    if profile.pressure == "overburden":
        shifted = profile.layer_models(pressures + 2.0 * p_sd, forward=forward)
        delta = []
        for i, (m0, m1) in enumerate(zip(models, shifted, strict=True)):
            theta = reps[0]["theta"][i]
            if not np.any(p_sd[i] > 0):
                delta.append(0.0)
                continue
            ll0, _ = weigh_design(m0, reps[0]["layer_q"][i])
            ll1, _ = weigh_design(m1, m1.quantities(theta))
            o = answers[0]["omega"][i]
            ok = np.isfinite(ll0) & np.isfinite(ll1) & (o > 0)
            delta.append(float(abs(o[ok] @ (ll1[ok] - ll0[ok]))))
        bound = {"pressure_gpa": pressures, "pressure_sd_bound_gpa": p_sd,
                 "delta_log_likelihood": np.array(delta)}
    wall = time.perf_counter() - t0
    return build_result(profile, method="exact", reps=reps, answers=answers, hyps=hyps,
                        models=models, pressures=pressures, pressure_bound=bound,
                        seed=seed_value, rng=streams[-1], n_draws=n_draws, wall_time_s=wall)
