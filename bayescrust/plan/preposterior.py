"""Preposterior simulation: the expected value of one candidate datum, by importance reweighting.

For each candidate, ``m`` states are drawn from today's posterior (the weighted ensemble), a
datum is simulated from each with its error (:mod:`.likelihood`), and today's weights are
multiplied by the datum's likelihood at every state (Bayes' rule; importance reweighting of the
posterior, e.g. Gelfand & Smith 1990, J. Am. Stat. Assoc. 85, 398, sec. 3.2). Per simulated datum
this gives the updated class probabilities, entropy, decision and temperature interval; their
averages over the simulated data are preposterior expectations (Raiffa & Schlaifer 1961, Applied
Statistical Decision Theory, ch. 3), with Monte Carlo standard errors ``sd / sqrt(m)``.

Degeneracy: an update whose Kish effective sample size (Kish 1965, Survey Sampling, sec. 11.7)
falls below ``min_ess`` is marked degenerate. If the ensemble carries its layer model, a random
subsample of at most ``max_reruns`` degenerate data is recomputed by rerunning the exact path
for that datum (an adaptive second-stage design centred on the reweighted states; see
:func:`bayescrust.inference.evidence.adaptive_design`), and the degenerate stratum's mean is
estimated from that subsample (a stratified estimator whose error includes the subsampling).
An ensemble may bring its own rerun (``Ensemble.rerun``; profiles: :mod:`.rerun`, new thermal
points for the stored layer designs). Without either, degenerate updates are kept and a
:class:`DegeneracyWarning` is issued.

The truth states are drawn from the same ensemble that is reweighted (the state that produced a
datum is among those weighed); the resulting bias is of order ``1 / ESS`` of the update and is
why degenerate updates are flagged.
"""

from __future__ import annotations

import math
import warnings

import numpy as np

from ..inference.results import agresti_coull_se
from .likelihood import datum_location_scale, datum_log_likelihood, simulate_datum

__all__ = ["DegeneracyWarning", "Settings", "update", "evaluate", "current_state"]


class DegeneracyWarning(UserWarning):
    """Importance reweighting left too few effective states for some simulated data."""


class Settings:
    """Decision and simulation settings (values only).

    ``decisive_probability`` (top class probability that counts as decisive, default 0.9) and
    ``decisive_bayes_factor`` (Bayes factor of the leading against the second class, from the
    prior, default 10: "strong" on the scale of Jeffreys 1961, Theory of Probability, App. B)
    are the issue's definitions of a decisive answer; ``interval`` is the mass of the central
    credible interval of ``quantity`` (0.94, as the package's HDIs).
    """

    def __init__(self, *, n_simulations=1000, decisive_probability=0.9,
                 decisive_bayes_factor=10.0, interval=0.94, quantity="temperature_c",
                 min_ess=50.0, max_reruns=100, rerun_points=4096, block=32):
        checks = (("n_simulations", n_simulations, 2, 10**7), ("min_ess", min_ess, 1, 10**7),
                  ("max_reruns", max_reruns, 0, 10**6), ("rerun_points", rerun_points, 16, 2**22),
                  ("block", block, 1, 10**6))
        for name, v, lo, hi in checks:
            if isinstance(v, bool) or not isinstance(v, (int, float, np.integer)) \
                    or not lo <= v <= hi:
                raise ValueError(f"{name} must be a number in [{lo}, {hi}]; got {v!r}")
        if not 0.5 <= decisive_probability < 1.0:
            raise ValueError(f"decisive_probability must be in [0.5, 1); got "
                             f"{decisive_probability!r}")
        if not decisive_bayes_factor > 1.0:
            raise ValueError(f"decisive_bayes_factor must be > 1; got {decisive_bayes_factor!r}")
        if not 0.0 < interval < 1.0:
            raise ValueError(f"interval must be in (0, 1); got {interval!r}")
        self.n_simulations = int(n_simulations)
        self.decisive_probability = float(decisive_probability)
        self.decisive_bayes_factor = float(decisive_bayes_factor)
        self.interval = float(interval)
        self.quantity = str(quantity)
        self.min_ess = float(min_ess)
        self.max_reruns = int(max_reruns)
        self.rerun_points = int(rerun_points)
        self.block = int(block)

    def as_dict(self) -> dict:
        return dict(vars(self))


# --------------------------------------------------------------------------------- per datum
def _entropy_bits(p):
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(p > 0, -p * np.log2(np.where(p > 0, p, 1.0)), 0.0)
    return t.sum(axis=-1)


def _decisive(p, prior, s: Settings):
    """Top class >= decisive_probability, or Bayes factor (leading vs second) >= threshold."""
    order = np.argsort(-p, axis=-1)
    p1 = np.take_along_axis(p, order[..., :1], -1)[..., 0]
    p2 = np.take_along_axis(p, order[..., 1:2], -1)[..., 0] if p.shape[-1] > 1 else 0 * p1
    pi1, pi2 = prior[order[..., 0]], (prior[order[..., 1]] if p.shape[-1] > 1 else 1 + 0 * p1)
    with np.errstate(divide="ignore", invalid="ignore"):
        bf = np.where(p2 > 0, (p1 / p2) / (pi1 / pi2), np.inf)
    return (p1 >= s.decisive_probability) | (bf >= s.decisive_bayes_factor)


def _interval_width(w, t_sorted, starts, mass):
    """Width of the central ``mass`` interval of the weighted quantity, per row of ``w``.

    The states are sorted by the quantity and pooled into contiguous groups (``starts``); the
    interval ends are interpolated linearly inside the group where the cumulative weight crosses
    each tail probability, so they are resolved to within one group's range.
    """
    g = np.add.reduceat(w, starts, axis=1)
    cdf = np.cumsum(g, axis=1)
    total = cdf[:, -1:]
    lo_t = np.append(t_sorted[starts], t_sorted[-1])  # group edges
    a = 0.5 * (1.0 - mass)
    ends = []
    for tail in (a, 1.0 - a):
        target = tail * total
        k = np.minimum((cdf < target).sum(axis=1), g.shape[1] - 1)
        rows = np.arange(g.shape[0])
        before = np.where(k > 0, cdf[rows, np.maximum(k - 1, 0)], 0.0)
        frac = np.clip((target[:, 0] - before) / np.where(g[rows, k] > 0, g[rows, k], 1.0),
                       0.0, 1.0)
        ends.append(lo_t[k] + frac * (lo_t[k + 1] - lo_t[k]))
    return ends[1] - ends[0]


_LOG_TINY = math.log(1e-150)


class _Kernel:
    """Fixed arrays of one ensemble for the batched updates, sorted by the interval quantity.

    States whose current weight is below ``1e-12`` of the largest are left out of the updates
    (together they hold less than ``n * 1e-12`` of today's mass).
    """

    n_groups = 512

    def __init__(self, ens, s: Settings):
        lw = np.asarray(ens.log_weights, float)
        keep = np.flatnonzero(lw >= np.max(lw) + math.log(1e-12))
        q = {k: np.broadcast_to(np.asarray(v), (ens.n,))[keep]
             for k, v in ens.quantities.items() if k == s.quantity and np.ndim(v) <= 1}
        hyp = {h: np.asarray(v)[keep] for h, v in ens.hypotheses.items()}
        self.setup(ens.classes[keep], hyp, q, len(ens.class_names), s)
        self.keep = keep[self.order]
        self.lw0 = lw[self.keep]
        self.classes = ens.classes[self.keep]

    def setup(self, classes, hypotheses, q, k, s):
        n = np.asarray(classes).shape[0]
        t = np.broadcast_to(np.asarray(q.get(s.quantity, np.zeros(n)), float), (n,))
        order = np.argsort(t, kind="stable")
        self.order = order
        self.t_sorted = t[order]
        cls = np.asarray(classes)[order]
        self.onehot = (cls[:, None] == np.arange(k)[None, :]).astype(float)
        self.hyp = np.stack([np.asarray(v, float)[order] for v in hypotheses.values()], axis=1)
        self.starts = np.unique(np.linspace(0, n, self.n_groups + 1).astype(int)[:-1])
        return self

    def summarise(self, lw, s: Settings):
        """Class and hypothesis probabilities, ESS and interval width per row of ``lw``
        (``lw`` is overwritten by the weights)."""
        m = np.max(lw, axis=1, keepdims=True)
        lw -= np.where(np.isfinite(m), m, 0.0)
        # weights below 1e-150 of the largest are set to zero: they change no sum, and their
        # squares and products would be subnormal numbers (slow arithmetic on most CPUs)
        np.putmask(lw, lw < _LOG_TINY, -np.inf)
        w = np.exp(lw, out=lw)
        sw = w.sum(axis=1)
        k = self.onehot.shape[1]
        ph = self._class_and_hyp_sums(w) / sw[:, None]
        ess = sw**2 / np.einsum("ij,ij->i", w, w)
        width = _interval_width(w, self.t_sorted, self.starts, s.interval)
        return ph[:, :k], ph[:, k:], ess, width

    def _class_and_hyp_sums(self, w):
        """``w @ [onehot, hyp]`` (b, K + H). When every hypothesis indicator is constant within
        each class (true by construction: the classes are the hypotheses' membership patterns),
        the class sums come from one gather and ``np.add.reduceat`` and the hypothesis sums
        from them; this avoids a threaded matrix product whose speed collapses on a loaded
        machine. Otherwise the matrix product."""
        if getattr(self, "_by_class", None) is None:
            cls = np.argmax(self.onehot, axis=1) if self.onehot.size else np.zeros(0, int)
            perm = np.argsort(cls, kind="stable")
            cs = cls[perm]
            starts = np.flatnonzero(np.r_[True, cs[1:] != cs[:-1]]) if cs.size else cs
            a = np.zeros((self.onehot.shape[1], self.hyp.shape[1]))
            a[cs[starts]] = self.hyp[perm][starts]
            ok = cs.size > 0 and bool(np.all(self.hyp[perm] == a[cs]))
            self._by_class = (perm, starts, cs[starts], a) if ok else False
        if self._by_class is False:
            return w @ self.class_and_hyp
        perm, starts, present, a = self._by_class
        sums = np.add.reduceat(np.take(w, perm, axis=1), starts, axis=1)
        out = np.zeros((w.shape[0], a.shape[0]))
        out[:, present] = sums
        return np.concatenate([out, out @ a], axis=1)

    @property
    def class_and_hyp(self):
        if getattr(self, "_ch", None) is None:
            self._ch = np.ascontiguousarray(np.concatenate([self.onehot, self.hyp], axis=1))
        return self._ch

    def block_log_weights(self, y, loc, scale, law):
        """Today's log-weights plus the new datum's log-likelihood, (len(y), n), in place."""
        if law["likelihood"] != "gaussian" or np.any(np.isinf(scale)):
            # the states share few distinct (loc, scale) pairs when the datum depends on part of
            # the state only (heat flow: on the thermal point): evaluate each pair once
            if getattr(self, "_pairs_for", None) is not loc:
                pairs, self._inv_pairs = np.unique(np.stack([loc, scale]), axis=1,
                                                   return_inverse=True)
                self._pairs, self._pairs_for = pairs, loc
            pl, ps = self._pairs
            ll = datum_log_likelihood(y[:, None], pl[None, :], ps[None, :], **law)
            return self.lw0 + ll[:, self._inv_pairs.ravel()]
        if getattr(self, "_base_for", None) is not scale:
            with np.errstate(divide="ignore"):
                self._base = self.lw0 - np.log(scale) - 0.5 * math.log(2 * math.pi)
            self._inv = 1.0 / scale
            self._base_for = scale
        z = np.subtract(y[:, None], loc[None, :])
        z *= self._inv
        np.square(z, out=z)
        z *= -0.5
        z += self._base
        return z


def _law(ens, cand, q):
    """The candidate's likelihood law (keywords of :func:`.likelihood.datum_log_likelihood`):
    the layer's own law for layer observables, the profile's heat-flow law for heat flow."""
    if cand.observable != "heat_flow":
        return {"likelihood": ens.likelihood, "nu": ens.nu}
    if cand.mode != "lower_bound":
        return {"likelihood": "gaussian"}
    d = cand.max_deficit
    if d is None:
        d = float(np.max(np.asarray(q["heat_flow"], float)))
    return {"likelihood": "lower_bound", "deficit": max(d, 1e-9)}


def _loc_scale(ens, cand, q):
    obs = cand.observable
    if obs not in q:
        raise ValueError(f"candidate {cand.label!r}: the ensemble has no prediction of {obs!r}")
    if cand.mode == "off":  # a heat flow kept for the record: no information
        return np.asarray(q[obs], float), np.full(np.shape(q[obs]), np.inf)
    if obs == "heat_flow":  # the profile's heat-flow law has no forward-model error
        me = cand.model_error or 0.0
        return datum_location_scale(q[obs], sigma=cand.sigma, model_error=me)
    me = cand.model_error if cand.model_error is not None else ens.model_error.get(obs, 0.0)
    existing = ens.existing.get(obs)
    if existing is not None:  # the forward-model error is shared with the existing datum
        me = ens.model_error.get(obs, me)
    partner = None
    other = {"vp": "vs", "vs": "vp"}.get(obs)
    if (existing is None and other in ens.existing and other in q
            and "vp_vs" not in ens.existing and ens.likelihood == "gaussian"):
        # Vp and Vs model errors are correlated, as in the layer's own likelihood
        from ..inference.likelihood import MODEL_ERROR_CORRELATION

        rho = MODEL_ERROR_CORRELATION if ens.error_correlation is None else ens.error_correlation
        y_o, s_o = ens.existing[other]
        partner = (q[other], y_o, s_o, ens.model_error.get(other, 0.0), rho)
    return datum_location_scale(q[obs], sigma=cand.sigma, model_error=me, existing=existing,
                                partner=partner)


def update(ensemble, candidate, values, *, means=()):
    """Today's ensemble updated by the candidate datum at each of ``values``.

    ``means`` names quantities of the ensemble whose updated means are wanted as well.

    Returns
    -------
    dict
        ``class_probabilities`` (m, K), ``hypothesis_probabilities`` (m, H) with their
        delta-method standard errors ``hypothesis_mcse`` (self-normalised importance sampling),
        ``importance_ess`` (m,); with ``means``: ``means`` and ``means_mcse`` ``{name: (m,)}``.
    """
    ens = ensemble
    y = np.atleast_1d(np.asarray(values, float))
    loc, scale = _loc_scale(ens, candidate, ens.quantities)
    lw = ens.log_weights[None, :] + datum_log_likelihood(
        y[:, None], loc[None, :], scale[None, :], **_law(ens, candidate, ens.quantities))
    m = np.max(lw, axis=1, keepdims=True)
    w = np.exp(lw - m)
    sw = w.sum(axis=1)
    k = len(ens.class_names)
    p = (w @ (ens.classes[:, None] == np.arange(k)[None, :])) / sw[:, None]
    hyp = np.stack([np.asarray(v, float) for v in ens.hypotheses.values()], axis=1)
    h = (w @ hyp) / sw[:, None]
    w2 = w * w
    se = np.sqrt(np.einsum("mn,mnh->mh", w2, (hyp[None] - h[:, None, :]) ** 2)) / sw[:, None]
    out = {"class_probabilities": p, "hypothesis_probabilities": h, "hypothesis_mcse": se,
           "importance_ess": sw**2 / w2.sum(axis=1)}
    if means:
        out["means"], out["means_mcse"] = {}, {}
        for name in means:
            x = np.broadcast_to(np.asarray(ens.quantities[name], float), (ens.n,))
            mu = (w @ x) / sw
            out["means"][name] = mu
            out["means_mcse"][name] = np.sqrt(np.einsum("mn,mn->m", w2, (x[None] - mu[:, None])
                                                        ** 2)) / sw
    return out


# --------------------------------------------------------------------------------- fallback
def _rerun(ens, cand, y, rng, s: Settings, cache):
    """Rerun the exact path for one datum: an adaptive second-stage design centred on the
    states that the datum favours (stage 1 is today's design, or one prior design shared by
    every rerun when the ensemble holds posterior draws)."""
    from ..inference.evidence import (
        adaptive_design,
        prior_design,
        resample_centres,
        weigh_design,
    )
    from ..inference.hypotheses import indicators
    from .ensemble import assign_classes

    model = ens.model
    if "design" not in cache:
        if ens.u is not None:
            cache["design"] = (ens.u, ens.quantities, ens.current_loglik)
        else:
            _, q, u = prior_design(model, rng, 4 * s.rerun_points)
            cache["design"] = (u, q, weigh_design(model, q)[0])
    u, q, ll = cache["design"]
    loc, scale = _loc_scale(ens, cand, q)
    law = _law(ens, cand, ens.quantities)
    lw1 = ll + datum_log_likelihood(y, loc, scale, **law)
    w1 = np.exp(lw1 - np.max(lw1))
    centres = resample_centres(rng, u, w1)
    _, q2, log_q, inside = adaptive_design(model, rng, centres, s.rerun_points)
    ll2, _ = weigh_design(model, q2)
    loc2, scale2 = _loc_scale(ens, cand, q2)
    lw2 = ll2 + datum_log_likelihood(y, loc2, scale2, **law) - log_q[inside]
    ind = indicators(ens.boxes, q2)
    classes = assign_classes(ind, ens.class_names)
    lw2 = np.where(classes >= 0, lw2, -np.inf)
    k2 = _Kernel.__new__(_Kernel).setup(classes, ind, q2, len(ens.class_names), s)
    return k2.summarise(lw2[k2.order][None, :], s)


# --------------------------------------------------------------------------------- estimates
def _stratified(x, deg, rr_idx, x_rr):
    """Mean and standard error of per-datum values ``x`` (m, ...) when the degenerate ones
    (``deg``) are represented by the reruns ``x_rr`` of the subsample ``rr_idx``."""
    m = x.shape[0]
    if x_rr is None or len(rr_idx) == 0:
        return x.mean(axis=0), x.std(axis=0, ddof=1) / math.sqrt(m)
    ok = ~deg
    n_deg, k = int(deg.sum()), len(rr_idx)
    mu_rr = x_rr.mean(axis=0)
    var_rr = x_rr.var(axis=0, ddof=1) if k > 1 else np.zeros_like(mu_rr)
    mean = (x[ok].sum(axis=0) + n_deg * mu_rr) / m
    ss = ((x[ok] - mean) ** 2).sum(axis=0) + n_deg * (var_rr + (mu_rr - mean) ** 2)
    var = ss / (m * (m - 1)) + (n_deg / m) ** 2 * var_rr * (1.0 / k - 1.0 / n_deg)
    return mean, np.sqrt(var)


def current_state(ensemble, settings: Settings | None = None) -> dict:
    """Today's class probabilities, entropy (bits), decision and interval width."""
    s = settings or Settings()
    kern = _Kernel(ensemble, s)
    p, h, ess, width = kern.summarise(kern.lw0[None, :].copy(), s)
    prior = np.asarray(ensemble.prior_probabilities, float)
    return {"class_probabilities": p[0], "hypothesis_probabilities": h[0],
            "expected_p_true": float(np.sum(p[0] ** 2)), "entropy_bits": float(_entropy_bits(p)[0]),
            "decisive": bool(_decisive(p, prior, s)[0]), "interval_width": float(width[0]),
            "importance_ess": float(ess[0])}


def evaluate(ensemble, candidate, rng, settings: Settings | None = None) -> dict:
    """Preposterior value of one candidate (see module docstring).

    Returns
    -------
    dict
        Expected probability of the true class, expected entropy (bits) and information gain,
        chance of a decisive answer, expected interval width and narrowing, each with its
        ``*_mcse``; the average updated probability of each hypothesis with its error
        (``calibration_mean``, ``calibration_mcse``: equal to today's by the law of total
        probability), and degeneracy counts.
    """
    s = settings or Settings()
    ens = ensemble
    kern = _Kernel(ens, s)
    now = current_state(ens, s)
    prior = np.asarray(ens.prior_probabilities, float)
    loc, scale = _loc_scale(ens, candidate, ens.quantities)
    law = _law(ens, candidate, ens.quantities)
    loc, scale = np.broadcast_to(loc, (ens.n,))[kern.keep], np.broadcast_to(scale,
                                                                          (ens.n,))[kern.keep]
    w0 = np.exp(kern.lw0 - np.max(kern.lw0))
    m = s.n_simulations
    truth = rng.choice(w0.shape[0], size=m, p=w0 / w0.sum())
    y = simulate_datum(rng, loc[truth], scale[truth], **law)
    true_cls = kern.classes[truth]
    p_all = np.empty((m, len(ens.class_names)))
    h_all = np.empty((m, kern.hyp.shape[1]))
    ess_all, width_all = np.empty(m), np.empty(m)
    for a in range(0, m, s.block):  # blocks of simulated data bound the memory (block x n)
        b = slice(a, min(a + s.block, m))
        lw = kern.block_log_weights(y[b], loc, scale, law)
        p_all[b], h_all[b], ess_all[b], width_all[b] = kern.summarise(lw, s)
    deg = ess_all < s.min_ess
    if not candidate.informative:
        deg[:] = False  # nothing is updated: today's ensemble, exactly
    n_deg = int(deg.sum())
    rr_idx = np.zeros(0, int)
    rr = None
    rerun = ens.rerun if ens.rerun is not None else (_rerun if ens.model is not None else None)
    if n_deg and rerun is not None and s.max_reruns > 0:
        cand_idx = np.flatnonzero(deg)
        rr_idx = rng.choice(cand_idx, size=min(s.max_reruns, n_deg), replace=False)
        cache: dict = {}
        rows = [rerun(ens, candidate, y[j], rng, s, cache) for j in rr_idx]  # per rerun datum
        rr = tuple(np.concatenate([r[i] for r in rows]) for i in range(4))
    elif n_deg:
        why = "max_reruns is 0" if rerun is not None else "no model to rerun the exact path"
        warnings.warn(f"candidate {candidate.label!r}: importance reweighting degenerate for "
                      f"{n_deg} of {m} simulated data (effective size < {s.min_ess:g}) and "
                      f"{why}; values of those data kept", DegeneracyWarning, stacklevel=2)

    def per_datum(p, h, width, cls):
        pt = p[np.arange(p.shape[0]), cls]
        ent = _entropy_bits(p)
        dec = _decisive(p, prior, s).astype(float)
        return np.column_stack([pt, ent, dec, width]), h

    x, hx = per_datum(p_all, h_all, width_all, true_cls)
    x_rr = hx_rr = None
    if rr is not None:
        x_rr, hx_rr = per_datum(rr[0], rr[1], rr[3], true_cls[rr_idx])
    mean, se = _stratified(x, deg, rr_idx, x_rr)
    # the chance of a decisive answer is a proportion: its error is floored by the Agresti &
    # Coull (1998, Am. Stat. 52, 119) adjusted proportion, so 0 of m (or m of m) is not +- 0
    se[2] = max(se[2], agresti_coull_se(mean[2], m)) if candidate.informative else 0.0
    cal_mean, cal_se = _stratified(hx, deg, rr_idx, hx_rr)
    still = int(np.sum(rr[2] < s.min_ess)) if rr is not None else n_deg
    return {
        "expected_p_true": mean[0], "expected_p_true_mcse": se[0],
        "expected_entropy_bits": mean[1], "expected_entropy_bits_mcse": se[1],
        "information_gain_bits": now["entropy_bits"] - mean[1],
        "information_gain_bits_mcse": se[1],
        "p_decisive": mean[2], "p_decisive_mcse": se[2],
        "expected_interval_width": mean[3], "expected_interval_width_mcse": se[3],
        "interval_narrowing": now["interval_width"] - mean[3], "interval_narrowing_mcse": se[3],
        "calibration_mean": cal_mean, "calibration_mcse": cal_se,
        "degenerate": n_deg, "reruns": int(len(rr_idx)), "degenerate_after_rerun": still,
        "median_importance_ess": float(np.median(ess_all)), "n_simulations": m,
    }
