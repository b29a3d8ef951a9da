"""Per-node data fit of a map: can the model, fitted to a node, produce its data?

The single-layer path's posterior-predictive check (:func:`bayescrust.inference.trust.
predictive_check`) per node, from what the weighing already holds: the weighted posterior mean
``E[m]`` and sd of each observable's prediction (``<observable>:mean``, ``:sd``), the node's
sigma and the model error the likelihood uses. For a replicate ``y_rep = m + e`` with
``e ~ L(0, s)``, ``s^2 = sigma^2 + (model_error m)^2`` (:meth:`~bayescrust.inference.likelihood.
ObservationErrors.total_sigma`), per observable

- ``z = (y - E[m]) / sqrt(var(m) + E[s^2])`` (``E[s^2] nu / (nu - 2)`` for the Student-t), the
  standardised residual of the layer check, with ``E[s^2] = sigma^2 + model_error^2 (E[m]^2 +
  var(m))``;
- ``p``, the two-sided tail probability ``2 min(P(y_rep <= y), P(y_rep >= y))`` of the
  predictive law with the posterior of ``m`` taken as normal with that mean and variance: for
  the Gaussian likelihood ``P(y_rep <= y) = Phi((y - E[m]) / sqrt(var(m) + E[s^2]))`` (normal
  convolved with normal); for the Student-t the normal posterior convolved with the t noise
  of scale ``sqrt(E[s^2])``, by an 8-node Gauss-Hermite rule over the posterior (converged:
  16 and 24 nodes give the same to 4 digits). Against the layer check's ``p_value`` (the
  posterior mean of the likelihood's CDF at the observed value) on one gabbro node: 1.3e-4
  against 1.2e-4 (Gaussian, Vp 7.9), 8.4e-3 against 8.0e-3 and 1.79e-4 against 1.83e-4
  (Student-t, nu 4, Vp 7.9 and 9.5); docs/grid.md.

With Vp and Vs observed (and no Vp/Vs datum) the pair is checked too, as the layer check does
(``_pair_ratio_check``): the observed Vp/Vs against the predicted ratio, with the fractional
errors propagated to first order at the posterior means and Gaussian replicates. With an
ensemble of models ``P(y_rep <= y)`` is the mean over the members (the data are one of the
realisations, as in the mixture likelihood), ``z`` uses the members' mean.

A node is ``misfit`` when its smallest ``p`` over the checks is below
:data:`bayescrust.inference.trust.PPC_ALPHA` (0.01, the layer check's threshold; ~2.6 predictive
sds for a Gaussian) or is not finite. ``fit_p`` is that smallest ``p``, ``fit_z`` the ``z`` of
the same check.
"""

from __future__ import annotations

import numpy as np

from ..inference.trust import _LABEL, PPC_ALPHA, MisfitWarning

__all__ = ["FIT_KEYS", "PPC_ALPHA", "MisfitWarning", "node_fit", "is_misfit", "misfit_summary"]

#: per-node results of the fit check (columns of the map's results)
FIT_KEYS = ("fit_p", "fit_z")
_DT = np.float32  # the results' precision (grid.weigh.WORK_DTYPE)


#: Gauss-Hermite nodes over the posterior of the prediction (Student-t likelihood)
N_HERMITE = 8


def _tail(y, mean, var_m, e_s2, nu=None):
    """Two-sided predictive tail probability of ``y`` (m,) or (m, K) members: a normal
    posterior (``mean``, ``var_m``) convolved with normal noise of variance ``e_s2``, or with
    Student-t noise (``nu``) of that squared scale (module doc)."""
    from scipy import special

    ens = y.ndim == 2
    if ens:
        mean, var_m, e_s2 = mean[:, None], var_m[:, None], e_s2[:, None]
    d = y - mean
    if not ens:
        d = -np.abs(d)  # the lower tail of -|d|: no cancellation in 1 - F for far tails
    def cdf(d):
        if nu is None:
            return special.ndtr(d / np.sqrt(var_m + e_s2))
        x, h = special.roots_hermite(N_HERMITE)
        a, s = np.sqrt(2.0 * var_m), np.sqrt(e_s2)
        return sum(_DT(hk / np.sqrt(np.pi)) * special.stdtr(nu, ((d - a * xk) / s).astype(_DT))
                   for xk, hk in zip(x, h, strict=True))

    if not ens:
        return 2.0 * cdf(d)
    # members: each tail from its own CDF (the upper one by symmetry, cdf(-d)), as 1 - F
    # rounds a far upper tail to 0
    lo, hi = cdf(d).mean(axis=1), cdf(-d).mean(axis=1)
    return np.minimum(1.0, 2.0 * np.minimum(lo, hi))


def node_fit(model, stats, values, sigmas):
    """``(fit_p, fit_z)`` of ``m`` nodes of one level ((m,) arrays, float32).

    ``stats`` maps ``"<observable>:mean"`` and ``":sd"`` to the nodes' weighted posterior
    summaries; ``values`` and ``sigmas`` are the nodes' data as weighed (``values[k]`` (m,) or
    (m, K) for an ensemble). Computed in float32, the precision the results are stored in
    (~80 ms a million nodes in float64 against ~45 in float32, Vp only, on the shared machine).
    """
    t_factor = 1.0
    if model.likelihood != "gaussian":
        nu = float(model.nu)
        t_factor = nu / (nu - 2.0) if nu > 2 else np.inf
    p = z = None
    checks = [k for k in values]
    if "vp" in values and "vs" in values and "vp_vs" not in values:
        checks.append(None)  # the pair, as the layer check
    with np.errstate(invalid="ignore", divide="ignore"):
        for k in checks:
            if k is None:
                pk, zk = _pair(model, stats, values, sigmas)
            else:
                y = np.asarray(values[k], _DT)
                mean = np.asarray(stats[f"{k}:mean"], _DT)
                var_m = np.square(np.asarray(stats[f"{k}:sd"], _DT))
                sig = np.asarray(sigmas[k], _DT)
                e_s2 = sig * sig + float(model.model_error[k]) ** 2 * (mean * mean + var_m)
                pk = _tail(y, mean, var_m, e_s2,
                           None if model.likelihood == "gaussian" else float(model.nu))
                y_mean = y.mean(axis=1) if y.ndim == 2 else y
                # nu <= 2: infinite predictive sd, z undefined (NaN, as the layer check), not 0
                zk = ((y_mean - mean) / np.sqrt(var_m + e_s2 * t_factor) if t_factor < np.inf
                      else np.full(np.shape(y_mean), np.nan, _DT))
            if p is None:
                p, z = pk, zk
            else:  # keep the smaller p (a non-finite one counts as smallest)
                take = ~(pk >= p) & ~np.isnan(p) | np.isnan(pk)
                p, z = np.where(take, pk, p), np.where(take, zk, z)
    return p, z


def _pair(model, stats, values, sigmas):
    """The observed Vp/Vs against the predicted ratio (the layer check's ``_pair_ratio_check``
    at the posterior means: fractional errors to first order, Gaussian replicates)."""
    yp, ys = np.asarray(values["vp"], _DT), np.asarray(values["vs"], _DT)
    y = yp / ys
    mp, ms = (np.asarray(stats[f"{k}:mean"], _DT) for k in ("vp", "vs"))
    r = np.asarray(stats["vp_vs:mean"], _DT)
    var_r = np.asarray(stats["vp_vs:sd"], _DT) ** 2
    sp, ss = (np.asarray(sigmas[k], _DT) for k in ("vp", "vs"))
    ep, es = float(model.model_error["vp"]), float(model.model_error["vs"])
    rho = float(model.error_correlation) if model.likelihood == "gaussian" else 0.0
    rel2 = (sp / mp) ** 2 + (ss / ms) ** 2 + ep * ep + es * es - 2.0 * rho * ep * es
    noise = (r * r + var_r) * np.maximum(rel2, 0.0)
    y_mean = y.mean(axis=1) if y.ndim == 2 else y
    return _tail(y, r, var_r, noise), (y_mean - r) / np.sqrt(var_r + noise)


def is_misfit(fit_p, alpha=PPC_ALPHA):
    """True where the tail probability is below ``alpha`` or not finite (as the layer check:
    ``not p >= alpha``)."""
    return ~(np.asarray(fit_p) >= alpha)


def misfit_summary(ds) -> str:
    """One-line warning text for a map with misfit nodes ('' when every node fits)."""
    from .results import QUALITY_FLAGS

    q = ds["quality"].values
    bad = q == QUALITY_FLAGS["misfit"]
    n_bad = int(bad.sum())
    if not n_bad:
        return ""
    n_valid = int(np.sum(q != QUALITY_FLAGS["masked"]))
    z = np.where(bad, np.abs(ds["fit_z"].values), -np.inf)
    i = np.unravel_index(int(np.nanargmax(z)), q.shape) if np.isfinite(z).any() else None
    where = ""
    if i is not None:
        obs = [v for v in ds.data_vars if v.endswith("_observed")]
        d = float(ds["depth_below_seafloor"].values[i])
        where = f"; worst: z = {float(ds['fit_z'].values[i]):+.1f}"
        if obs and ds.attrs.get("observables") == obs[0][: -len("_observed")]:
            k = ds.attrs["observables"]  # one observable: the check is of that observable
            where += (f" ({_LABEL.get(k, k)} observed {float(ds[obs[0]].values[i]):.3g}, "
                      f"predicted {float(ds[f'{k}_mean'].values[i]):.3g})")
        where += f" at {d:.2f} km below the seafloor"
    return (f"DATA MISFIT at {n_bad} of {n_valid} nodes (quality 'misfit', fit_p < "
            f"{ds['quality'].attrs.get('misfit_threshold', PPC_ALPHA):g}): the model cannot "
            f"reproduce the data there (posterior-predictive tail probability{where}). Their "
            "probabilities are conditional on a model that does not fit; treat them with "
            "caution.")
