"""The distribution of a candidate datum given each state of the ensemble.

The new datum ``y`` of observable ``k`` with measurement error ``s`` follows the layer's own
likelihood (:meth:`bayescrust.inference.model.LayerModel.log_likelihood_terms`): Gaussian (or
Student-t) about the prediction, with the measurement error and the forward-model error
``tau = model_error * prediction`` in quadrature.

When the layer already observed ``k`` (value ``y0``, error ``s0``), both data share the
forward-model error (it belongs to the model, not to the measurement). For the Gaussian
likelihood the pair is bivariate normal about the prediction with covariance
``[[s0^2 + tau^2, tau^2], [tau^2, s^2 + tau^2]]``, and the new datum's factor is the
conditional density of ``y`` given ``y0`` (the standard conditional of a bivariate normal, e.g.
Anderson 2003, An Introduction to Multivariate Statistical Analysis, Thm. 2.5.1):
mean ``pred + tau^2 / (s0^2 + tau^2) (y0 - pred)``, variance
``s^2 + tau^2 - tau^4 / (s0^2 + tau^2)``. With the Student-t likelihood the same location and
scale are used with a t kernel (an approximation, stated in the docs).

When the candidate is Vp or Vs and the layer observed the other one (Gaussian likelihood, no
Vp/Vs datum), the two forward-model errors are correlated as in the layer's own likelihood
(the layer model's ``error_correlation``; by default the calibrated
:data:`bayescrust.inference.likelihood.MODEL_ERROR_CORRELATION`), and the new datum's factor is the
conditional density given the other datum (the same bivariate-normal conditional).

Heat flow (profiles) has no forward-model error in the profile's likelihood
(:class:`bayescrust.profile.HeatFlow`): a Gaussian candidate is ``N(q_pred, s)``. A *lower-bound*
candidate (``likelihood="lower_bound"``) is generated as ``y = q_pred - d + s e`` with ``e``
standard normal and an unknown deficit ``d ~ Uniform(0, D)`` (heat carried by hydrothermal
circulation that the probe does not see, Stein & Stein 1994); its density is the convolution

``p(y | q) = [Phi((q - y) / s) - Phi((q - D - y) / s)] / D``,

which, wherever ``q - y < D`` by several ``s``, is the profile's one-sided law
``Phi((q - y) / s)`` (:meth:`HeatFlow.log_likelihood`) up to the constant ``1 / D``; the profile's
law is its limit ``D -> inf`` (an improper density in ``y``, which cannot be simulated).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

__all__ = ["datum_location_scale", "datum_log_likelihood", "simulate_datum"]


def datum_location_scale(pred, *, sigma, model_error, existing=None, partner=None):
    """Location and scale (arrays like ``pred``) of the new datum given each state.

    ``partner`` = ``(pred_other, y_other, sigma_other, model_error_other, rho)`` conditions the
    datum on an observed other quantity whose model error is correlated (``rho``) with its own.
    """
    pred = np.asarray(pred, float)
    tau2 = (model_error * pred) ** 2
    if existing is None and partner is not None:
        p_o, y_o, s_o, me_o, rho = partner
        p_o = np.asarray(p_o, float)
        c = rho * model_error * me_o * pred * p_o
        var_o = s_o * s_o + (me_o * p_o) ** 2
        loc = pred + c / var_o * (y_o - p_o)
        return loc, np.sqrt(np.maximum(sigma * sigma + tau2 - c * c / var_o, 1e-300))
    if existing is None:
        return pred, np.sqrt(sigma * sigma + tau2)
    y0, s0 = existing
    a = tau2 / (s0 * s0 + tau2)
    loc = pred + a * (y0 - pred)
    scale = np.sqrt(sigma * sigma + tau2 - a * tau2)
    return loc, scale


def _log_ndtr_diff(a, b):
    """``log(Phi(a) - Phi(b))`` for ``a > b``, stable in both tails."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        lo_a, lo_b = special.log_ndtr(a), special.log_ndtr(b)
        low = lo_a + np.log1p(-np.exp(lo_b - lo_a))
        up_b, up_a = special.log_ndtr(-b), special.log_ndtr(-a)
        high = up_b + np.log1p(-np.exp(up_a - up_b))
    return np.where(b > 0, high, low)


def datum_log_likelihood(y, loc, scale, *, likelihood="gaussian", nu=4.0, deficit=None):
    """Log density of data ``y`` (m, 1) under states with ``loc``, ``scale`` (n,): (m, n).

    ``likelihood`` is ``"gaussian"``, ``"student_t"`` (``nu``) or ``"lower_bound"`` (with the
    largest ``deficit``; module docstring). An infinite scale (a datum with infinite error) gives
    zeros: it carries no information.
    """
    y = np.asarray(y, float)
    loc = np.asarray(loc, float)
    scale = np.asarray(scale, float)
    if np.all(np.isinf(scale)):
        return np.zeros(np.broadcast_shapes(y.shape, loc.shape))
    z = (y - loc) / scale
    if likelihood == "lower_bound":
        ll = _log_ndtr_diff(-z, -z - deficit / scale) - math.log(deficit)
        return np.where(np.isfinite(ll), ll, -np.inf)
    if likelihood == "gaussian":
        ll = -0.5 * z * z - np.log(scale) - 0.5 * math.log(2 * math.pi)
    else:
        c = (special.gammaln(0.5 * (nu + 1)) - special.gammaln(0.5 * nu)
             - 0.5 * math.log(nu * math.pi))
        ll = c - np.log(scale) - 0.5 * (nu + 1) * np.log1p(z * z / nu)
    return np.where(np.isfinite(ll), ll, -np.inf)


def simulate_datum(rng, loc, scale, *, likelihood="gaussian", nu=4.0, deficit=None):
    """One simulated datum per (true) state: ``loc + scale * noise`` (lower bound: minus a
    uniform deficit on ``[0, deficit]``); ``inf`` for infinite error (never used then)."""
    loc = np.asarray(loc, float)
    scale = np.asarray(scale, float)
    if likelihood == "lower_bound":
        noise = rng.standard_normal(loc.shape)
        with np.errstate(invalid="ignore"):
            y = loc - deficit * rng.random(loc.shape) + scale * noise
        return np.where(np.isinf(scale), np.inf, y)
    noise = (rng.standard_normal(loc.shape) if likelihood == "gaussian"
             else rng.standard_t(nu, size=loc.shape))
    with np.errstate(invalid="ignore"):
        return np.where(np.isinf(scale), np.inf, loc + scale * noise)
