"""The likelihood of one layer's observables: measurement and forward-model error.

The observed values carry their 1-sigma measurement errors; the forward model's own error is a
fraction of the predicted value, measured against published laboratory velocities
(:data:`DEFAULT_MODEL_ERROR`; docs/physics.md). The two add in quadrature
(:meth:`ObservationErrors.total_sigma`). The fractional Vp and Vs model errors are correlated
(:data:`MODEL_ERROR_CORRELATION`, from the calibrated Vp, Vs and Vp/Vs errors), so with Vp and
Vs both observed the Vs term is conditional on Vp. Errors are Gaussian, or Student-t
(independent) for robustness to outliers.

:class:`ObservationErrors` holds the likelihood methods of :class:`~.model.LayerModel`, which
provides the attributes they read: ``observed`` (``{name: (value, sigma)}``), ``model_error``
(``{name: fraction}``), ``likelihood`` (``"gaussian"`` or ``"student_t"``) and ``nu``.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from ..physics.labdata import MODEL_ERROR as _LAB_MODEL_ERROR
from .layer import OBSERVABLES

__all__ = ["DEFAULT_MODEL_ERROR", "MODEL_ERROR_CORRELATION", "ObservationErrors"]

#: Forward-model error as a fraction of the predicted value, per observable.
#: Measured, not chosen: the RMS misfit of the forward model against the published laboratory
#: table (``physics/data/lab_rocks.toml``; :data:`bayescrust.physics.labdata.MODEL_ERROR`,
#: docs/physics.md). It replaces the former 1 % (Vp, Vs, Vp/Vs) / 0.5 % (density) guess.
DEFAULT_MODEL_ERROR = dict(_LAB_MODEL_ERROR)


def _error_correlation(me: dict) -> float:
    """Correlation of the forward model's fractional Vp and Vs errors.

    The laboratory calibration measures the model's fractional error in Vp (a), Vs (b) and
    Vp/Vs (c) separately; since ln(Vp/Vs) = ln Vp - ln Vs, c^2 = a^2 + b^2 - 2 rho a b, so
    rho = (a^2 + b^2 - c^2) / (2 a b) [computed]. Treating the Vp and Vs errors as independent
    would give Vp/Vs an error of sqrt(a^2 + b^2), wider than measured, and let the model "fit" Vp/Vs
    pairs no rock produces.
    """
    a, b, c = me["vp"], me["vs"], me["vp_vs"]
    return float(np.clip((a * a + b * b - c * c) / (2 * a * b), 0.0, 0.95))


#: Correlation of the default (calibrated) Vp and Vs model errors.
MODEL_ERROR_CORRELATION = _error_correlation(DEFAULT_MODEL_ERROR)


def _error_correlation_for(model_error) -> float:
    """Correlation of the Vp and Vs model errors for a user's ``model_error``: from its own
    Vp, Vs and Vp/Vs errors (each missing one the calibrated default) when it gives a Vp/Vs
    error, else the calibrated :data:`MODEL_ERROR_CORRELATION`."""
    if isinstance(model_error, dict) and model_error.get("vp_vs") is not None:
        me = {k: float(model_error.get(k, DEFAULT_MODEL_ERROR[k])) for k in ("vp", "vs", "vp_vs")}
        if me["vp"] > 0 and me["vs"] > 0:
            return _error_correlation(me)
    return MODEL_ERROR_CORRELATION


def _resolve_model_error(model_error, observed) -> dict[str, float]:
    if model_error is None:
        return {k: DEFAULT_MODEL_ERROR[k] for k in observed}
    if isinstance(model_error, dict):
        unknown = set(model_error) - set(OBSERVABLES)
        if unknown:
            raise ValueError(
                f"model_error: unknown quantity {sorted(unknown)}; allowed {list(OBSERVABLES)}"
            )
        vals = {k: model_error.get(k, DEFAULT_MODEL_ERROR[k]) for k in observed}
    else:
        vals = {k: model_error for k in observed}
    out = {}
    for k, v in vals.items():
        try:
            v = float(v)
        except (TypeError, ValueError) as exc:
            raise ValueError(f"model_error[{k!r}] must be a number; got {v!r}") from exc
        if not math.isfinite(v) or not 0.0 <= v <= 0.5:
            raise ValueError(
                f"model_error[{k!r}] must be in [0, 0.5] (fraction of the predicted value); "
                f"got {v!r}"
            )
        out[k] = v
    return out


class ObservationErrors:
    """Likelihood methods of a layer model (see the module docstring for what they read)."""

    def total_sigma(self, name: str, predicted) -> np.ndarray:
        """Likelihood scale of observable ``name``: measurement and forward-model error in
        quadrature, ``sqrt(sigma_obs^2 + (model_error * predicted)^2)``.

        The model error is a fraction of the *predicted* value, so the likelihood is a proper
        density in the observation (evidences and charts over observed values compare).
        """
        s = self.observed[name][1]
        return np.sqrt(s * s + (self.model_error[name] * np.asarray(predicted)) ** 2)

    def log_likelihood_terms(self, pred: dict, observed: dict | None = None) -> dict:
        """Per-datum log-likelihood of predictions (arrays broadcasting together).

        ``observed`` (``{name: value}``) defaults to the layer's observed values; arrays of
        values broadcast against the predictions (used by the batched exact path).
        """
        obs = {k: v for k, (v, _) in self.observed.items()} if observed is None else observed
        out = {}
        for k, y in obs.items():
            sig = self.total_sigma(k, pred[k])
            mean = pred[k]
            if k == "vs" and self._correlated(obs):
                # Gaussian model errors of Vp and Vs correlated (error_correlation): the
                # joint density factorises as p(vp) p(vs | vp), so the Vs term is conditional
                c = (self.error_correlation * self.model_error["vp"] * self.model_error["vs"]
                     * np.asarray(pred["vp"]) * np.asarray(pred["vs"]))
                sig_p = self.total_sigma("vp", pred["vp"])
                mean = pred["vs"] + c / sig_p**2 * (np.asarray(obs["vp"]) - pred["vp"])
                sig = np.sqrt(np.maximum(sig * sig - (c / sig_p) ** 2, 1e-300))
            z = (np.asarray(y) - mean) / sig
            if self.likelihood == "gaussian":
                ll = -0.5 * z * z - np.log(sig) - 0.5 * math.log(2 * math.pi)
            else:
                nu = self.nu
                c = (special.gammaln(0.5 * (nu + 1)) - special.gammaln(0.5 * nu)
                     - 0.5 * math.log(nu * math.pi) - np.log(sig))
                ll = c - 0.5 * (nu + 1) * np.log1p(z * z / nu)
            out[k] = np.where(np.isfinite(ll), ll, -np.inf)
        return out

    def simulate_observations(self, pred: dict, rng: np.random.Generator) -> dict:
        """Observations drawn from the likelihood at predictions ``pred`` (one per element).

        The same law as :meth:`log_likelihood_terms`: measurement and model error in
        quadrature, the Vp and Vs model errors correlated (Vs drawn given the simulated Vp),
        Gaussian or Student-t noise. Used for simulation-based calibration.
        """
        obs = self.observed
        out = {}
        for k in sorted(obs, key=lambda name: name != "vp"):
            mean = np.asarray(pred[k], float)
            sig = self.total_sigma(k, mean)
            if k == "vs" and self._correlated(obs):
                c = (self.error_correlation * self.model_error["vp"] * self.model_error["vs"]
                     * np.asarray(pred["vp"]) * mean)
                sig_p = self.total_sigma("vp", pred["vp"])
                mean = mean + c / sig_p**2 * (out["vp"] - pred["vp"])
                sig = np.sqrt(np.maximum(sig * sig - (c / sig_p) ** 2, 1e-300))
            noise = (rng.standard_normal(mean.shape) if self.likelihood == "gaussian"
                     else rng.standard_t(self.nu, size=mean.shape))
            out[k] = mean + sig * noise
        return out

    def _correlated(self, obs) -> bool:
        """Whether the Vs term is conditional on Vp (Gaussian likelihood, both observed, no
        separate Vp/Vs datum); Student-t errors are treated as independent."""
        return (self.likelihood == "gaussian" and "vp" in obs and "vs" in obs
                and "vp_vs" not in obs and self.error_correlation > 0.0)
