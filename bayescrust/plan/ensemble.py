"""What is known today about a layer, as a weighted set of states, ready to be updated.

An :class:`Ensemble` holds ``n`` states (every parameter and prediction by name), their current
posterior log-weights, the named interpretations as indicators, and the *classes* used for
entropies and decisions: the hypotheses themselves when they never overlap (plus "none of the
named" if some states fall in none), otherwise the finest partition they generate (each class a
distinct membership pattern, labelled by joining the names with " + ").

Two builders: :func:`ensemble_from_design` (the exact path's scrambled-Sobol prior design,
weighted by today's likelihood; it keeps the design's unit-cube points so that a degenerate
update can rerun the exact path) and :func:`ensemble_from_result` (equal-weight posterior draws
of a :class:`bayescrust.LayerResult`, e.g. from MCMC).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["Ensemble", "NONE_CLASS", "make_classes", "assign_classes", "class_label",
           "ensemble_from_design",
           "ensemble_from_result"]

NONE_CLASS = "none of the named"


@dataclass(frozen=True, eq=False)
class Ensemble:
    """Weighted states of one layer (see module docstring); the constructor only stores.

    Attributes
    ----------
    quantities : dict of ndarray (n,)
    log_weights : ndarray (n,)
        Current (unnormalised) posterior log-weights.
    hypotheses : dict of bool ndarray (n,)
    boxes : dict
        The hypotheses' definitions ``{name: {quantity: (lo, hi)}}`` (to classify new states).
    classes : int ndarray (n,) and class_names : tuple of str
    prior_probabilities : ndarray (K,)
        Prior probability of each class (for Bayes factors).
    existing : dict
        Observables the layer already has, ``{name: (value, sigma)}``.
    model_error : dict
        Forward-model error fraction of every observable.
    error_correlation : float, optional
        Correlation of the Vp and Vs model errors (the layer model's); ``None``: the calibrated
        :data:`bayescrust.inference.likelihood.MODEL_ERROR_CORRELATION`.
    likelihood, nu : the layer's likelihood kind and Student-t degrees of freedom.
    source : str
        ``"exact design"`` or ``"posterior draws"``.
    model, u, current_loglik : optional
        The :class:`~bayescrust.inference.model.LayerModel` and, for a design, its unit-cube
        points and today's log-likelihood: what a rerun of the exact path needs.
    rerun : callable, optional
        ``rerun(ensemble, candidate, y, rng, settings, cache) -> (p (1, K), h (1, H), ess (1,),
        width (1,))``: the exact answer for one degenerate datum ``y`` (class and hypothesis
        probabilities, effective size, interval width of the settings' quantity). Default: with
        a ``model``, :func:`bayescrust.plan.preposterior._rerun` (the layer's exact path);
        profiles set :class:`bayescrust.plan.rerun.ProfileRerun`.
    """

    quantities: dict
    log_weights: np.ndarray
    hypotheses: dict
    boxes: dict
    classes: np.ndarray
    class_names: tuple
    prior_probabilities: np.ndarray
    existing: dict = field(default_factory=dict)
    model_error: dict = field(default_factory=dict)
    error_correlation: float | None = None
    likelihood: str = "gaussian"
    nu: float = 4.0
    source: str = "given"
    model: object = None
    u: np.ndarray | None = None
    current_loglik: np.ndarray | None = None
    rerun: object = None

    @property
    def n(self) -> int:
        return int(self.log_weights.shape[0])

    def weights(self) -> np.ndarray:
        """Normalised current weights (n,)."""
        lw = self.log_weights
        w = np.exp(lw - np.max(lw))
        return w / w.sum()

    def importance_ess(self) -> float:
        w = self.weights()
        return float(1.0 / np.sum(w * w))


def class_label(names, row) -> str:
    """Class label of a membership pattern: the names joined by " + ", or "none of the named"."""
    return " + ".join(h for h, b in zip(names, row, strict=True) if b) or NONE_CLASS


def make_classes(indicators: dict, *reference):
    """Class names from hypothesis indicators (see the module docstring).

    Parameters
    ----------
    indicators : dict of bool ndarray (n,)
    *reference : dict of bool ndarray
        Further indicator sets (e.g. of prior draws) whose patterns must also get a class.

    Returns
    -------
    (classes, names)
        ``classes`` (n,) ints and the class names; :func:`assign_classes` maps other states.
    """
    names = list(indicators)
    mats = [np.stack([np.asarray(s[h], bool) for h in names], axis=1)
            for s in (indicators, *reference)]
    allm = np.concatenate(mats, axis=0)
    if not np.any(allm.sum(axis=1) > 1):
        cls = tuple(names) + ((NONE_CLASS,) if np.any(~allm.any(axis=1)) else ())
    else:
        patterns = np.unique(allm, axis=0)[::-1]
        cls = tuple(class_label(names, p) for p in patterns)
    return assign_classes(indicators, cls), cls


def assign_classes(indicators: dict, class_names) -> np.ndarray:
    """Class index of each state (n,); ``-1`` for a membership pattern without a class (a
    pattern the design never met, of negligible prior mass: such states get zero weight)."""
    names = list(indicators)
    m = np.stack([np.asarray(indicators[h], bool) for h in names], axis=1)
    code = m.astype(np.int64) @ (2 ** np.arange(len(names), dtype=np.int64))
    uniq, inv = np.unique(code, return_inverse=True)
    lookup = {c: i for i, c in enumerate(class_names)}
    idx = np.array([lookup.get(class_label(names, [(int(c) >> j) & 1 for j in
                                                    range(len(names))]), -1) for c in uniq],
                   dtype=int)
    return idx[inv.ravel()] if uniq.size else np.zeros(0, int)


def _class_probs(classes, k, weights=None):
    w = np.ones(classes.shape[0]) if weights is None else weights
    return np.bincount(classes, weights=w, minlength=k) / np.sum(w)


def ensemble_from_design(model, hypotheses, rng, n_points=2**14, *, model_error=None):
    """The exact path's prior design, weighted by today's likelihood.

    Parameters
    ----------
    model : LayerModel
    hypotheses : dict
        Validated ``{name: {quantity: (lo, hi)}}``.
    rng : numpy.random.Generator
    n_points : int
        Design size (a power of two; rounded up).
    model_error : float or dict, optional
        The user's forward-model error setting (resolves the error of observables the layer has
        not observed); default the package's.
    """
    from ..inference.evidence import prior_design, weigh_design
    from ..inference.hypotheses import indicators

    _, q, u = prior_design(model, rng, n_points)
    loglik, _ = weigh_design(model, q)
    if not np.any(np.isfinite(loglik)):
        raise ValueError("the likelihood is zero at every design point; check the observations")
    ind = indicators(hypotheses, q)
    classes, names = make_classes(ind)
    return Ensemble(
        quantities=q, log_weights=loglik, hypotheses=ind, boxes=dict(hypotheses), classes=classes,
        class_names=names,
        prior_probabilities=_class_probs(classes, len(names)), existing=dict(model.observed),
        model_error=_model_errors(model, model_error), error_correlation=model.error_correlation,
        likelihood=model.likelihood, nu=model.nu, source="exact design", model=model, u=u,
        current_loglik=loglik)


def _model_errors(model, user):
    from ..inference.layer import OBSERVABLES
    from ..inference.likelihood import _resolve_model_error

    out = dict(_resolve_model_error(user, dict.fromkeys(OBSERVABLES)))
    out.update(model.model_error)
    return out


def ensemble_from_result(result, hypotheses=None, *, model=None, model_error=None):
    """Equal-weight posterior draws of a :class:`~bayescrust.LayerResult` (MCMC or exact).

    Class prior probabilities come from the result's hypothesis table when the classes are the
    hypotheses themselves, otherwise from the result's stored prior draws. ``model`` (the same
    :class:`LayerModel`) enables the exact-path fallback for degenerate updates.
    """
    from ..inference.hypotheses import indicators

    post = result.idata.posterior
    q = {k: np.asarray(post[k].values, float).ravel() for k in post.data_vars}
    prior = {k: np.asarray(result.idata.prior[k].values, float).ravel()
             for k in result.idata.prior.data_vars}
    if hypotheses is None:
        hypotheses = result.settings.get("hypotheses")
    hyps = {h: {k: tuple(v) for k, v in r.items()} for h, r in hypotheses.items()}
    ind = indicators(hyps, q)
    ind_p = indicators(hyps, prior)
    classes, names = make_classes(ind, ind_p)
    pc = _class_probs(assign_classes(ind_p, names), len(names))
    tab = result.hypotheses
    if all(n in tab.index for n in names if n != NONE_CLASS):
        pp = np.array([float(tab.loc[n, "prior_probability"]) if n != NONE_CLASS else np.nan
                       for n in names])
        if NONE_CLASS in names:
            pp[names.index(NONE_CLASS)] = max(0.0, 1.0 - np.nansum(pp))
        pc = pp
    observed = {k: (float(v), float(s)) for k, (v, s) in
                ((k, result.layer.observed[k]) for k in result.layer.observed)}
    me = _model_errors(model, model_error) if model is not None else dict(
        result.settings.get("model_error", {}))
    if model is None:
        from ..inference.likelihood import DEFAULT_MODEL_ERROR

        me = {**DEFAULT_MODEL_ERROR, **me}
    return Ensemble(
        quantities=q, log_weights=np.zeros(q[next(iter(q))].shape[0]), hypotheses=ind,
        boxes=hyps, classes=classes, class_names=names, prior_probabilities=pc, existing=observed,
        model_error=me, error_correlation=(
            model.error_correlation if model is not None
            else result.settings.get("model_error_correlation")),
        likelihood=result.settings.get("likelihood", "gaussian"),
        nu=float(result.settings.get("nu") or 4.0), source="posterior draws", model=model)
