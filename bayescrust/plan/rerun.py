"""Exact rerun of the profile planner for one degenerate simulated datum.

The profile planner (:mod:`.profile`) updates joint states drawn from the structured exact
path's design by importance reweighting (:mod:`.preposterior`). When a simulated datum leaves
too few effective states (Kish effective size below ``min_ess``), :func:`.preposterior.evaluate`
asks the ensemble's ``rerun`` for that datum; for a profile it is :class:`ProfileRerun`:

Given the thermal parameters ``phi`` the layers are independent (:mod:`bayescrust.profile.
exact`), so every layer's marginal likelihood ``L_i(phi)`` and the conditional weights of its
design points at *new* thermal points follow from the stored layer designs
(:func:`bayescrust.profile.exact.conditional_weights`: no forward-model call). The rerun

1. adds the datum's log-likelihood to the design points of the layer it is measured in (the
   planner's law, :mod:`.likelihood`, with the layer's shared and correlated forward-model
   errors), or, for a heat flow, multiplies by its law at each thermal point (Gaussian or the
   one-sided lower bound, as the planner simulates it; the top layer's conductive gradient for
   the uncoupled state);
2. draws new thermal points (per replicate half as many as today's, at least ``3 min_ess`` in
   all) from a defensive mixture in the thermal parameters' unit cube (where the prior is
   uniform: :meth:`~bayescrust.profile.thermal.ThermalState.from_unit`) centred on points that
   follow the updated thermal posterior approximately (:meth:`ProfileRerun._centres`;
   :func:`bayescrust.inference.evidence.unit_mixture`, the layer path's adaptive stage), and
   weighs them ``W'(phi) = prod_i L_i(phi) L_hf(phi) L_new(phi) / q(phi)`` (self-normalised
   importance sampling, Geweke 1989, Econometrica 57, 1317; ``L_hf`` today's heat flow, if
   any);
3. answers the question from these weights exactly (no stratified draw of layer states): a
   layer's class and hypothesis probabilities and temperature interval from the marginal weights
   ``sum_phi W'(phi) w_i(phi, n)`` of its design points ``n``; the crust-mantle boundary and
   the thermal intervals from the pairs (thermal point, first mantle layer) weighted
   ``W'(phi) P(first mantle layer = k | phi)``, as :func:`bayescrust.profile.exact._answers`.

The replicates of the design are pooled, each with weight ``1 / R``. The rerun's effective size
is the smaller of the Kish sizes of the new thermal weights and of the marginal weights of the
layer the datum is measured in (or, uncoupled, the top layer for a heat flow): a rerun that
stays below ``min_ess`` is counted as ``degenerate_after_rerun``. When the measured layer's
marginal weights are degenerate (a datum sharper than the stored layer design resolves), that
layer gets a fresh adaptive design of ``rerun_points`` points centred on its favoured points
(:func:`~bayescrust.inference.evidence.adaptive_design`; forward-model runs) and the thermal
points are drawn and weighed again.

Without free thermal parameters (the uncoupled state, or every thermal parameter fixed) there is
no thermal design to renew: the rerun reweighs every point of the stored layer designs (``N``
per layer and replicate, against ``states_per_thermal`` in the joint states), with the fresh
layer design above when needed; what stays degenerate is counted (more ``n_layer`` reduce it).
"""

from __future__ import annotations

import functools
import math

import numpy as np

from .likelihood import datum_log_likelihood
from .preposterior import _Kernel, _law, _loc_scale

__all__ = ["ProfileRerun"]


def _kish(w):
    w = np.asarray(w, float)
    s2 = np.sum(w * w)
    return float(np.sum(w) ** 2 / s2) if s2 > 0 else 0.0


def _summarise(classes, hyps, values, weights, k, s):
    """Class / hypothesis probabilities and interval width of one weighted sample (the layer
    planner's :class:`~.preposterior._Kernel`)."""
    kern = _Kernel.__new__(_Kernel).setup(classes, hyps, {s.quantity: values}, k, s)
    return _weighted(kern, weights, s)


def _weighted(kern, weights, s):
    with np.errstate(divide="ignore"):
        lw = np.log(np.asarray(weights, float)[kern.order])[None, :]
    p, h, _, width = kern.summarise(lw, s)
    return p, h, width


class ProfileRerun:
    """Reruns for every question of one profile plan (module docstring).

    Arrays shared by the questions (mantle indicators, each layer question's classes) are
    prepared once; :meth:`for_question` gives the ``Ensemble.rerun`` callable of a question.
    """

    #: Uniform pilot points for the centres of a heat flow's proposal (:meth:`_centres`).
    PILOT = 4096
    #: New thermal points per replicate: this fraction of today's, and at least
    #: ``POINTS_PER_ESS * min_ess`` over all replicates (the rerun's thermal weights reached an
    #: effective size of 0.3-0.6 times the number of points in the tests and the demo); at
    #: most ``rerun_points`` (:class:`~.preposterior.Settings`).
    POINTS_FRACTION = 0.5
    POINTS_PER_ESS = 3.0

    def __init__(self, profile, design, questions):
        from ..inference.hypotheses import indicators
        from ..profile.spec import MANTLE_RULE

        self.profile = profile
        self.design = design
        self.questions = questions
        self.mantle = [[indicators({"m": MANTLE_RULE}, q)["m"].astype(float)
                        for q in rep["layer_q"]] for rep in design["replicates"]]
        self._layer_kernels = {}
        self._buffers = {}

    def for_question(self, question):
        """``rerun(ensemble, candidate, y, rng, settings, cache)`` for ``question``."""
        if question not in self.questions:
            raise ValueError(f"unknown question {question!r}; allowed {list(self.questions)}")
        return functools.partial(self.rerun, question)

    # ----------------------------------------------------------------------------- pieces
    def _layer_kernel(self, question, i, s, qs=None):
        """Kernel over the pooled design points ``qs`` of layer ``i`` (default: the stored ones,
        whose kernel is cached: only their weights change between reruns), and the mask of
        points whose membership pattern has no class."""
        from ..inference.hypotheses import indicators
        from .ensemble import assign_classes

        key = (question, s.quantity)
        if qs is None and key in self._layer_kernels:
            return self._layer_kernels[key]
        hyps = {h: b for h, b in self.design["hypotheses"][i].items() if h != "mantle rock"}
        names = self.questions[question][2]
        stored = qs is None
        if stored:
            qs = [rep["layer_q"][i] for rep in self.design["replicates"]]
        ind = [indicators(hyps, q) for q in qs]
        cls = np.concatenate([assign_classes(d, names) for d in ind])
        pooled = {h: np.concatenate([d[h] for d in ind]) for h in hyps}
        t = np.concatenate([np.asarray(q["temperature_c"], float) for q in qs])
        kern = _Kernel.__new__(_Kernel).setup(np.maximum(cls, 0), pooled, {s.quantity: t},
                                              len(names), s)
        if stored:
            self._layer_kernels[key] = (kern, cls >= 0)
        return kern, cls >= 0

    def _datum_at_layer(self, ens, cand, y, law, q):
        """The new datum's log-likelihood at design points ``q`` of the layer it informs."""
        th = self.profile.thermal
        if cand.observable == "heat_flow":  # uncoupled: the top layer's conductive gradient
            q = {"heat_flow": th.conductivity_w_mk * (np.asarray(q["temperature_c"], float)
                                                      - th.surface_temperature_c)
                 / self.profile.mid_depths_km[0]}
        loc, scale = _loc_scale(ens, cand, q)
        return datum_log_likelihood(y, loc, scale, **law)

    def _heat_flow_datum(self, ens, cand, y, law, phi):
        loc, scale = _loc_scale(ens, cand, {"heat_flow": self.profile.thermal.heat_flow_mw_m2(
            phi)})
        return datum_log_likelihood(y, loc, scale, **law)

    def _centres(self, ens, cand, y, law, affected, extra, rng):
        """Centres of the new thermal points' proposal, in the unit cube: draws that follow
        today's thermal posterior updated with the datum, approximately.

        A heat flow's law is cheap at any thermal point: a pilot of :data:`PILOT` uniform
        points of the unit cube (the prior) is weighed by the datum's law times today's
        posterior weight of the nearest of today's thermal points (a piecewise-constant
        surrogate of today's posterior) and resampled: many distinct centres even when the
        datum is much sharper than today's design spacing or lies at the prior's edge. A layer
        datum's ratio ``L_i'(phi) / L_i(phi) = sum_n w_i(phi, n) p(y | n)`` is known at today's
        thermal points: they are resampled by their weights times that ratio."""
        from ..inference.evidence import resample_centres

        th = self.profile.thermal
        reps = self.design["replicates"]
        u = np.concatenate([rep["phi_u"] for rep in reps])
        with np.errstate(divide="ignore"):
            lw = np.concatenate([np.log(rep["W"]) for rep in reps]) - math.log(len(reps))
        if affected is None:
            from scipy.spatial import cKDTree

            pilot = np.clip(rng.random((self.PILOT, u.shape[1])), 1e-12, 1 - 1e-12)
            _, near = cKDTree(u).query(pilot)
            lw = lw[near] + self._heat_flow_datum(ens, cand, y, law, th.from_unit(pilot))
            u = pilot
        else:
            ratio = []
            for r, rep in enumerate(reps):
                mx = np.max(extra[r])
                with np.errstate(divide="ignore"):
                    ratio.append(np.log(rep["layer_w"][affected] @ np.exp(extra[r] - mx)) + mx)
            lw = lw + np.concatenate(ratio)
        return resample_centres(rng, u, np.exp(lw - np.max(lw)))

    def _buffer(self, i, rows, cols):
        """A reused (rows, cols) array for layer ``i``'s weights (``-1``: one shared by the
        layers whose weights are reduced at once, so that it stays in cache): fresh arrays of a
        few MB cost page faults on every rerun."""
        buf = self._buffers.get((i, cols))
        if buf is None or buf.shape[0] < rows:
            buf = self._buffers[(i, cols)] = np.empty((rows, cols))
        return buf[:rows]

    def _fresh_layer(self, ens, cand, y, law, i, rep, omega, rng, n_points):
        """A fresh design of layer ``i`` for one replicate: the layer path's adaptive stage
        (:func:`~bayescrust.inference.evidence.adaptive_design`) centred on the stored points
        resampled by their marginal weights after the datum. Returns its view ``(ll, t, mantle
        indicator, quantities)`` with ``ll`` the log-likelihood with the datum, over the
        proposal density in the layer's unit cube (where the stored design is uniform)."""
        from ..inference.evidence import adaptive_design, resample_centres, weigh_design
        from ..inference.hypotheses import indicators
        from ..profile.spec import MANTLE_RULE

        prof, th = self.profile, self.profile.thermal
        model = self.design["models"][i]
        centres = resample_centres(rng, rep["layer_u"][i], omega)
        _, q, log_q, inside = adaptive_design(model, rng, centres, n_points)
        ll, _ = weigh_design(model, q)
        t = np.asarray(q["temperature_c"], float)
        hf = prof.active_heat_flow
        if not th.coupled and hf is not None and i == 0:  # as the exact path
            ll = ll + hf.log_likelihood(th.conductivity_w_mk * (t - th.surface_temperature_c)
                                        / prof.mid_depths_km[0])
        ll = ll + self._datum_at_layer(ens, cand, y, law, q) - log_q[inside]
        mantle = indicators({"m": MANTLE_RULE}, q)["m"].astype(float)
        return ll, t, mantle, q

    def _replicate(self, rep, views, ens, cand, y, law, centres, keep, rng, boundary, n_new):
        """New thermal points of one replicate (its layer ``views``: per layer ``(ll, t,
        mantle indicator, quantities)``): ``(phi, W (J',), mantle (J', L), {layer: marginal
        weights of its design points})``."""
        from ..inference.evidence import unit_mixture
        from ..profile.exact import conditional_weights

        prof, th = self.profile, self.profile.thermal
        if centres is not None:
            u, log_q, inside = unit_mixture(rng, centres, n_new)
            phi = th.from_unit(np.clip(u[inside], 1e-12, 1 - 1e-12))
            total = -log_q[inside]  # the prior is uniform in the unit cube
        else:
            phi, total = rep["phi"], np.zeros(rep["phi"].shape[0])
        geo = th.geotherm_c(prof.mid_depths_km, phi) if th.coupled else None
        hf = prof.active_heat_flow
        if th.coupled and hf is not None:
            total = total + hf.log_likelihood(th.heat_flow_mw_m2(phi))
        if th.coupled and cand.observable == "heat_flow":
            total = total + self._heat_flow_datum(ens, cand, y, law, phi)
        lo, hi = prof.temperature_range_c
        mantle = np.empty((phi.shape[0], prof.n_layers))
        ws = {}
        for i, (ll, t, m_ind, _) in enumerate(views):
            log_l, w, inv = conditional_weights(prof, ll, t, None if geo is None else geo[:, i],
                                                -math.log(hi - lo), normalise=False,
                                                out=self._buffer(i if i in keep else -1,
                                                                 phi.shape[0], t.shape[0])
                                                if th.coupled else None)
            total = total + log_l
            if boundary:
                mantle[:, i] = (w @ m_ind) * inv
            if i in keep:
                ws[i] = (w, inv)
        mx = np.max(total)
        big = np.exp(total - mx) if np.isfinite(mx) else np.zeros_like(total)
        big /= max(big.sum(), 1e-300)
        return phi, big, mantle, {i: (big * inv) @ w for i, (w, inv) in ws.items()}

    # ----------------------------------------------------------------------------- rerun
    def rerun(self, question, ens, cand, y, rng, s, cache):
        """Class and hypothesis probabilities, effective size and interval width of
        ``question`` after datum ``y`` of ``cand``, each with a leading axis of 1."""
        prof, th = self.profile, self.profile.thermal
        reps = self.design["replicates"]
        n_rep = len(reps)
        kind = self.questions[question][0]
        law = _law(ens, cand, ens.quantities)
        affected = None
        if cand.observable != "heat_flow":
            affected = prof.names.index(cand.layer) if cand.layer else 0
        elif not th.coupled:
            affected = 0
        extra = [None if affected is None else
                 self._datum_at_layer(ens, cand, y, law, rep["layer_q"][affected])
                 for rep in reps]
        views = [[(rep["layer_ll"][i] + (extra[r] if i == affected else 0.0),
                   rep["layer_q"][i]["temperature_c"], self.mantle[r][i], rep["layer_q"][i])
                  for i in range(prof.n_layers)] for r, rep in enumerate(reps)]
        free = th.coupled and th.ndim > 0
        centres = self._centres(ens, cand, y, law, affected, extra, rng) if free else None
        qi = prof.names.index(question) if kind == "interpretation" else None
        keep = {i for i in (qi, affected) if i is not None}
        n_new = min(max(int(self.POINTS_FRACTION * reps[0]["phi"].shape[0]),
                        math.ceil(self.POINTS_PER_ESS * s.min_ess / n_rep)), s.rerun_points)

        def run():
            return [self._replicate(rep, views[r], ens, cand, y, law, centres, keep, rng,
                                    kind != "interpretation", n_new)
                    for r, rep in enumerate(reps)]

        out = run()
        fresh = False
        if affected is not None and _kish(np.concatenate([o[3][affected] for o in out])) \
                < s.min_ess:
            # the datum is sharper than the stored layer design resolves: a fresh design of
            # that layer (forward-model runs), then the thermal points again
            fresh = True
            for r, rep in enumerate(reps):
                views[r][affected] = self._fresh_layer(
                    ens, cand, y, law, affected, rep, out[r][3][affected], rng,
                    max(s.rerun_points // n_rep, 16))
            out = run()
        ess = []
        if free:
            ess.append(_kish(np.concatenate([o[1] for o in out])))
        if affected is not None:
            ess.append(_kish(np.concatenate([o[3][affected] for o in out])))
        ess = np.array([min(ess) if ess else math.inf])
        if kind == "interpretation":
            kern, ok = self._layer_kernel(question, qi, s, [v[qi][3] for v in views]
                                          if fresh and qi == affected else None)
            omega = np.concatenate([o[3][qi] for o in out]) / n_rep
            p, h, width = _weighted(kern, np.where(ok, omega, 0.0), s)
            return p, h, ess, width
        # boundary and thermal questions: pairs (thermal point, first mantle layer)
        n_out = prof.n_layers + 1
        depth = np.append(prof.tops_km, prof.bottoms_km[-1])
        w_all, k_all, v_all = [], [], []
        for phi, big, m, _ in out:
            survive = np.cumprod(np.concatenate([np.ones((m.shape[0], 1)), 1.0 - m], axis=1),
                                 axis=1)
            first = np.concatenate([m, np.ones((m.shape[0], 1))], axis=1) * survive
            w_all.append((big[:, None] * first / n_rep).ravel())
            k_all.append(np.tile(np.arange(n_out), phi.shape[0]))
            if kind == "thermal":
                col = th.free.index(question.split(": ", 1)[1])
                v_all.append(np.repeat(phi[:, col], n_out))
            else:
                v_all.append(np.tile(depth, phi.shape[0]))
        k_all = np.concatenate(k_all)
        names = self.questions[question][2]
        hyps = {o: k_all == j for j, o in enumerate(names)}
        p, h, width = _summarise(k_all, hyps, np.concatenate(v_all), np.concatenate(w_all),
                                 n_out, s)
        return p, h, ess, width
