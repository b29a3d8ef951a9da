"""Sampling coordinates of one layer: the map between the sampler's coordinates and the
parameters, and the prior density in those coordinates.

The ensemble moves (differential evolution, a kernel-density independence proposal) work best
on unbounded, roughly Gaussian coordinates. A layer's parameters are bounded (fractions on the
simplex, porosity in [0, 0.3], ...) and some span decades (aspect ratios), so each free
parameter is sampled in its own coordinate:

- ``"linear"``: the value (temperature, always: profiles read and set it directly; and
  parameters with an unbounded prior);
- ``"logit"``: ``z = logit((x - lo) / (hi - lo))`` for a prior with a bounded support ``[lo,
  hi]``;
- ``"logit_log"``: the same on ln x for a bounded log-scale prior (``LogUniform``);
- ``"paired"``: the pore compliance ``w = ln(amount) + ln(1 + A / shape)`` of a porosity or
  melt fraction whose shape (aspect ratio) is log-scaled (:data:`PORE_CROSSOVER`);
- rock fractions by stick-breaking: ``z_i = logit(v_i)`` with ``v_i = f_i / (1 - f_0 - ... -
  f_{i-1})``; under ``Dirichlet(a)`` the ``v_i`` are independent ``Beta(a_i, a_{i+1} + ... +
  a_{n-1})`` (the construction of the Dirichlet distribution by stick-breaking), so each
  ``z_i`` has the density of a logit-Beta and the simplex has no edge the moves can cross.

Each map is one-to-one on the support, so the prior, the unit-cube map (used by the exact
path) and the posterior are the same; the density of a coordinate is the prior density times
the Jacobian ``|dx/dz|`` (tested against scipy's densities and against the exact path). Measured
on a Layer-2B test layer (basalt + diabase, Vp 5.0, Vs 2.6 km/s; 4000 steps, seeds 1-3), the
walker autocorrelation time with ``aspect_ratio`` fixed went from 13-15 steps (linear
coordinates) to 9-11, with ``aspect_ratio = LogUniform(0.01, 1)`` from 21-25 to 12-17, and on
the 7.1 km/s gabbro/harzburgite benchmark layer from 11-13 to 7.5-10; with altered gabbro as a
third rock (3000 steps) from 11-16 (fractions on the simplex) to 8-10.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

from .priors import LogUniform, Uniform

__all__ = ["PORE_CROSSOVER", "Coordinates"]

#: (amount, shape) pairs: with a log-scaled shape the amount is sampled as its pore compliance
AMOUNT_SHAPE = (("porosity", "aspect_ratio"), ("melt_fraction", "melt_aspect_ratio"))

#: Aspect ratio where a dry pore's dilute bulk compliance turns from the sphere value to the
#: crack value in a host with Poisson's ratio 0.25: spheres add 3(1 - nu) / (2(1 - 2 nu)) = 2.25
#: times the porosity to K/K* - 1 (Mackenzie 1950), penny cracks (16/9)(1 - nu^2) / (1 - 2 nu)
#: times the crack density 3 phi / (4 pi alpha), i.e. 0.796 phi / alpha (Walsh 1965); 0.796 / 2.25
#: [computed]. Sets a sampling coordinate only: any positive value gives the same posterior.
PORE_CROSSOVER = 0.354

_EDGE = 1e-300  # unit-interval positions are kept in [_EDGE, 1 - eps] so logits stay finite


def _log_sigmoid(z):
    """ln(1 / (1 + e^-z)), stable for large |z|."""
    return -np.logaddexp(0.0, -z)


def _logit(t):
    return special.logit(np.clip(t, _EDGE, 1.0 - np.finfo(float).epsneg))


@dataclass(frozen=True)
class _Coord:
    col: int
    kind: str
    lo: float = 0.0  # bounds of the logit kinds (of ln x for "logit_log")
    hi: float = 1.0
    shape_col: int = -1  # the paired shape's column


@dataclass(frozen=True, eq=False)
class Coordinates:
    """The coordinates of a layer model's sampled points.

    Parameters
    ----------
    n_fractions : int
        Sampled fraction columns (``n_rocks - 1``, 0 when fixed).
    alpha : ndarray
        Dirichlet concentration of the rock fractions.
    free : tuple of str
        Free scalar parameters in column order after the fractions.
    priors : dict
        Prior of every free scalar parameter.
    """

    n_fractions: int
    alpha: np.ndarray
    free: tuple
    priors: dict

    def __post_init__(self):
        k, pr = self.n_fractions, self.priors
        bounded = {p for p in self.free if p != "temperature_c"
                   and math.isfinite(pr[p].bounds[0]) and math.isfinite(pr[p].bounds[1])}
        # log-scale priors on a bounded positive support (LogUniform)
        logs = {p for p in bounded if getattr(pr[p], "log_scale", False) and pr[p].bounds[0] > 0}
        paired = {a: s for a, s in AMOUNT_SHAPE if s in logs and a in self.free}
        col = {p: k + j for j, p in enumerate(self.free)}
        coords = {}
        for p in self.free:
            lo, hi = pr[p].bounds
            if p in paired:
                coords[p] = _Coord(col[p], "paired", shape_col=col[paired[p]])
            elif p in logs:
                coords[p] = _Coord(col[p], "logit_log", math.log(lo), math.log(hi))
            elif p in bounded:
                coords[p] = _Coord(col[p], "logit", lo, hi)
            else:
                coords[p] = _Coord(col[p], "linear")
        object.__setattr__(self, "paired", paired)
        object.__setattr__(self, "coords", coords)
        a = np.asarray(self.alpha, float)
        # stick-breaking Beta parameters (a_i, a_{i+1} + ... + a_{n-1}) and their ln B
        tail = np.cumsum(a[::-1])[::-1]
        object.__setattr__(self, "_stick", (a[:k], tail[1:k + 1],
                                            special.betaln(a[:k], tail[1:k + 1]).sum()))
        # range checks: linear Uniform priors
        box = [(c.col, pr[p].lo, pr[p].hi, -math.log(pr[p].hi - pr[p].lo))
               for p, c in coords.items() if c.kind == "linear" and type(pr[p]) is Uniform]
        object.__setattr__(self, "_box", (
            np.array([b[0] for b in box], int), np.array([b[1] for b in box]),
            np.array([b[2] for b in box]), float(sum(b[3] for b in box))))
        # logit coordinates of uniform priors (in x or ln x): density sigma(z) (1 - sigma(z))
        uni = [c.col for p, c in coords.items()
               if (c.kind == "logit" and type(pr[p]) is Uniform)
               or (c.kind == "logit_log" and type(pr[p]) is LogUniform)]
        object.__setattr__(self, "_uniform_logit", np.array(uni, int))
        object.__setattr__(self, "_other", tuple(
            (coords[p], pr[p].logpdf) for p in self.free
            if coords[p].col not in uni and not (coords[p].kind == "linear"
                                                 and type(pr[p]) is Uniform)))

    # ------------------------------------------------------------------ names
    def names(self, kind: str) -> tuple[str, ...]:
        """Free scalar parameters sampled in coordinate ``kind``."""
        return tuple(p for p, c in self.coords.items() if c.kind == kind)

    # ------------------------------------------------------------------ decoding
    def ln_value(self, theta, c: _Coord):
        """ln(value) of a ``logit_log`` or ``paired`` coordinate."""
        z = theta[:, c.col]
        if c.kind == "paired":
            return z - np.log1p(PORE_CROSSOVER * np.exp(-self.ln_value(
                theta, self._shape(c))))
        return c.lo + (c.hi - c.lo) * special.expit(z)

    def _shape(self, c: _Coord) -> _Coord:
        return next(s for s in self.coords.values() if s.col == c.shape_col)

    def value(self, theta, name: str):
        """The value of free scalar parameter ``name`` at sampled points (n, ndim)."""
        c = self.coords[name]
        if c.kind == "linear":
            return theta[:, c.col]
        if c.kind == "logit":
            return c.lo + (c.hi - c.lo) * special.expit(theta[:, c.col])
        return np.exp(self.ln_value(theta, c))

    def fractions(self, theta) -> np.ndarray:
        """Rock fractions (n, n_fractions + 1) of sampled points (fractions sampled): stick
        ``i`` takes the share ``sigma(z_i)`` of what the earlier sticks left."""
        k = self.n_fractions
        out = np.empty((theta.shape[0], k + 1))
        rest = np.ones(theta.shape[0])
        for i in range(k):  # loop over rocks (a handful), not samples
            out[:, i] = rest * special.expit(theta[:, i])
            rest = rest * special.expit(-theta[:, i])
        out[:, k] = rest
        return out

    # ------------------------------------------------------------------ prior density
    def log_density(self, theta) -> np.ndarray:
        """Normalised log prior density of sampled points (n, ndim) in these coordinates;
        ``-inf`` outside the support."""
        k = self.n_fractions
        bcols, blo, bhi, bdens = self._box
        with np.errstate(all="ignore"):
            x = theta[:, bcols]
            ok = ((x >= blo) & (x <= bhi)).all(axis=1)
            lp = np.full(theta.shape[0], bdens)
            if k:  # per stick: Beta(a, b) of sigma(z) times the Jacobian sigma(z) sigma(-z)
                z = theta[:, :k]
                a, b, log_beta = self._stick
                lp += (a * _log_sigmoid(z) + b * _log_sigmoid(-z)).sum(axis=1) - log_beta
            if self._uniform_logit.size:
                z = theta[:, self._uniform_logit]
                lp += (_log_sigmoid(z) + _log_sigmoid(-z)).sum(axis=1)
            for c, logpdf in self._other:
                z = theta[:, c.col]
                if c.kind == "linear":
                    lp = lp + logpdf(z)
                elif c.kind == "logit":  # dx/dz = (hi - lo) sigma(z) sigma(-z)
                    x = c.lo + (c.hi - c.lo) * special.expit(z)
                    lp = lp + logpdf(x) + math.log(c.hi - c.lo) + _log_sigmoid(z) + _log_sigmoid(-z)
                else:  # ln x coordinates: p(x) x (paired: a unit-Jacobian shear of ln x)
                    lx = self.ln_value(theta, c)
                    lp = lp + logpdf(np.exp(lx)) + lx
                    if c.kind == "logit_log":
                        lp = lp + math.log(c.hi - c.lo) + _log_sigmoid(z) + _log_sigmoid(-z)
        return np.where(ok & ~np.isnan(lp), lp, -np.inf)

    # ------------------------------------------------------------------ encoding
    def from_unit(self, u) -> np.ndarray:
        """Points of the unit hypercube (n, ndim) to prior draws in these coordinates.

        Fractions by the stick-breaking construction of the Dirichlet distribution (each stick's
        Beta quantile); scalars through each prior's ``ppf``.
        """
        out = np.empty_like(u)
        k = self.n_fractions
        a = np.asarray(self.alpha, float)
        for i in range(k):  # loop over rocks (a handful), not samples
            out[:, i] = _logit(special.betaincinv(a[i], a[i + 1:].sum(), u[:, i]))
        values = {p: self.priors[p].ppf(u[:, c.col]) for p, c in self.coords.items()}
        for p, c in self.coords.items():
            x = values[p]
            if c.kind == "logit":
                x = _logit((x - c.lo) / (c.hi - c.lo))
            elif c.kind != "linear":
                # a prior whose support starts at 0 (Uniform porosity) maps u = 0 to x = 0: the
                # smallest normal float instead, so the coordinate stays finite
                x = np.log(np.maximum(x, np.finfo(float).tiny))
                if c.kind == "logit_log":
                    x = _logit((x - c.lo) / (c.hi - c.lo))
                elif c.kind == "paired":
                    x = x + np.log1p(PORE_CROSSOVER / values[self.paired[p]])
            out[:, c.col] = x
        return out
