"""One-dimensional priors and the Dirichlet prior on rock fractions.

Every prior is a frozen dataclass that only holds values and offers

- ``logpdf(x)``: normalised log density (``-inf`` outside the support, never raises),
- ``sample(rng, n)``: ``n`` independent draws with a :class:`numpy.random.Generator`,
- ``ppf(u)``: the quantile function (maps the unit interval onto the support; used by the exact
  reference to lay quasi-random points on the prior),
- ``bounds``: the support ``(lo, hi)``,
- ``describe()``: a short human-readable string (stored in the run's settings).

Constructors validate their arguments and raise ``ValueError`` naming the argument and the allowed
range. The methods are vectorised and skip validation (they are called from the log-probability).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import special, stats

__all__ = [
    "Prior",
    "Uniform",
    "LogUniform",
    "Normal",
    "TruncatedNormal",
    "Beta",
    "Fixed",
    "Tabulated",
    "Dirichlet",
    "as_prior",
]


def _finite(name: str, value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{name} must be a finite number; got {value!r}") from exc
    if not math.isfinite(v):
        raise ValueError(f"{name} must be a finite number; got {value!r}")
    return v


def _ordered(cls: str, lo, hi) -> tuple[float, float]:
    lo = _finite(f"{cls}: lower bound", lo)
    hi = _finite(f"{cls}: upper bound", hi)
    if not lo < hi:
        raise ValueError(f"{cls}: bounds must satisfy lower < upper; got ({lo:g}, {hi:g})")
    return lo, hi


class Prior:
    """Protocol of a one-dimensional prior (documentation base class).

    Subclasses implement ``logpdf``, ``ppf``, ``bounds`` and ``describe``; ``sample`` defaults to
    inverse-transform sampling through ``ppf``.
    """

    fixed = False
    #: Whether samplers work on ln(x) for this prior (a positive scale spanning decades; see
    #: ``bayescrust.inference.coordinates``).
    log_scale = False

    def logpdf(self, x):  # pragma: no cover - interface
        raise NotImplementedError

    def ppf(self, u):  # pragma: no cover - interface
        raise NotImplementedError

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """Draw ``n`` values by inverse-transform sampling."""
        return self.ppf(rng.random(n))

    @property
    def bounds(self) -> tuple[float, float]:  # pragma: no cover - interface
        raise NotImplementedError

    def describe(self) -> str:  # pragma: no cover - interface
        return type(self).__name__


@dataclass(frozen=True)
class Uniform(Prior):
    """Uniform prior on ``[lo, hi]``."""

    lo: float
    hi: float

    def __post_init__(self):
        lo, hi = _ordered("Uniform", self.lo, self.hi)
        object.__setattr__(self, "lo", lo)
        object.__setattr__(self, "hi", hi)

    def logpdf(self, x):
        x = np.asarray(x, dtype=float)
        inside = (x >= self.lo) & (x <= self.hi)
        return np.where(inside, -math.log(self.hi - self.lo), -np.inf)

    def ppf(self, u):
        return self.lo + (self.hi - self.lo) * np.asarray(u, dtype=float)

    @property
    def bounds(self):
        return (self.lo, self.hi)

    def describe(self):
        return f"Uniform({self.lo:g}, {self.hi:g})"


@dataclass(frozen=True)
class LogUniform(Prior):
    """Log-uniform prior on ``[lo, hi]`` with ``0 < lo < hi`` (density proportional to 1/x).

    A layer's sampler works on ln(x), where this prior is uniform (``log_scale``).
    """

    lo: float
    hi: float
    log_scale = True

    def __post_init__(self):
        lo, hi = _ordered("LogUniform", self.lo, self.hi)
        if lo <= 0:
            raise ValueError(f"LogUniform: lower bound must be > 0; got {lo:g}")
        object.__setattr__(self, "lo", lo)
        object.__setattr__(self, "hi", hi)

    def logpdf(self, x):
        x = np.asarray(x, dtype=float)
        inside = (x >= self.lo) & (x <= self.hi)
        with np.errstate(divide="ignore", invalid="ignore"):
            val = -np.log(np.where(inside, x, 1.0)) - math.log(math.log(self.hi / self.lo))
        return np.where(inside, val, -np.inf)

    def ppf(self, u):
        u = np.asarray(u, dtype=float)
        return self.lo * (self.hi / self.lo) ** u

    @property
    def bounds(self):
        return (self.lo, self.hi)

    def describe(self):
        return f"LogUniform({self.lo:g}, {self.hi:g})"


@dataclass(frozen=True)
class Normal(Prior):
    """Normal prior with mean ``mu`` and standard deviation ``sigma > 0`` (unbounded)."""

    mu: float
    sigma: float

    def __post_init__(self):
        _finite("Normal: mu", self.mu)
        if not _finite("Normal: sigma", self.sigma) > 0:
            raise ValueError(f"Normal: sigma must be > 0; got {self.sigma:g}")

    def logpdf(self, x):
        z = (np.asarray(x, dtype=float) - self.mu) / self.sigma
        return -0.5 * z * z - math.log(self.sigma) - 0.5 * math.log(2 * math.pi)

    def ppf(self, u):
        return self.mu + self.sigma * special.ndtri(np.asarray(u, dtype=float))

    def sample(self, rng, n):
        return self.mu + self.sigma * rng.standard_normal(n)

    @property
    def bounds(self):
        return (-math.inf, math.inf)

    def describe(self):
        return f"Normal({self.mu:g}, {self.sigma:g})"


@dataclass(frozen=True)
class TruncatedNormal(Prior):
    """Normal(``mu``, ``sigma``) truncated to ``[lo, hi]``."""

    mu: float
    sigma: float
    lo: float
    hi: float
    _logz: float = field(init=False, repr=False, compare=False)
    _clo: float = field(init=False, repr=False, compare=False)
    _chi: float = field(init=False, repr=False, compare=False)

    def __post_init__(self):
        _finite("TruncatedNormal: mu", self.mu)
        if not _finite("TruncatedNormal: sigma", self.sigma) > 0:
            raise ValueError(f"TruncatedNormal: sigma must be > 0; got {self.sigma:g}")
        lo, hi = _ordered("TruncatedNormal", self.lo, self.hi)
        a, b = (lo - self.mu) / self.sigma, (hi - self.mu) / self.sigma
        clo, chi = special.ndtr(a), special.ndtr(b)
        if not chi - clo > 1e-12:
            raise ValueError(
                f"TruncatedNormal: [{lo:g}, {hi:g}] holds no probability mass of "
                f"Normal({self.mu:g}, {self.sigma:g})"
            )
        object.__setattr__(self, "_clo", float(clo))
        object.__setattr__(self, "_chi", float(chi))
        object.__setattr__(self, "_logz", float(math.log(chi - clo)))

    def logpdf(self, x):
        x = np.asarray(x, dtype=float)
        z = (x - self.mu) / self.sigma
        val = -0.5 * z * z - math.log(self.sigma) - 0.5 * math.log(2 * math.pi) - self._logz
        return np.where((x >= self.lo) & (x <= self.hi), val, -np.inf)

    def ppf(self, u):
        u = np.asarray(u, dtype=float)
        x = self.mu + self.sigma * special.ndtri(self._clo + u * (self._chi - self._clo))
        return np.clip(x, self.lo, self.hi)

    @property
    def bounds(self):
        return (self.lo, self.hi)

    def describe(self):
        return f"TruncatedNormal({self.mu:g}, {self.sigma:g}, [{self.lo:g}, {self.hi:g}])"


@dataclass(frozen=True)
class Beta(Prior):
    """Beta(``a``, ``b``) prior scaled to ``[lo, hi]`` (default the unit interval)."""

    a: float
    b: float
    lo: float = 0.0
    hi: float = 1.0

    def __post_init__(self):
        for name in ("a", "b"):
            if not _finite(f"Beta: {name}", getattr(self, name)) > 0:
                raise ValueError(f"Beta: {name} must be > 0; got {getattr(self, name)!r}")
        _ordered("Beta", self.lo, self.hi)

    def logpdf(self, x):
        x = np.asarray(x, dtype=float)
        w = self.hi - self.lo
        return stats.beta.logpdf((x - self.lo) / w, self.a, self.b) - math.log(w)

    def ppf(self, u):
        return self.lo + (self.hi - self.lo) * special.betaincinv(
            self.a, self.b, np.asarray(u, dtype=float)
        )

    def sample(self, rng, n):
        return self.lo + (self.hi - self.lo) * rng.beta(self.a, self.b, n)

    @property
    def bounds(self):
        return (self.lo, self.hi)

    def describe(self):
        return f"Beta({self.a:g}, {self.b:g}, [{self.lo:g}, {self.hi:g}])"


@dataclass(frozen=True)
class Fixed(Prior):
    """A parameter held at ``value`` (not sampled). A plain number in ``priors`` means this."""

    value: float
    fixed = True

    def __post_init__(self):
        object.__setattr__(self, "value", _finite("Fixed: value", self.value))

    def logpdf(self, x):
        return np.zeros_like(np.asarray(x, dtype=float))

    def ppf(self, u):
        return np.full_like(np.asarray(u, dtype=float), self.value)

    @property
    def bounds(self):
        return (self.value, self.value)

    def describe(self):
        return f"Fixed({self.value:g})"


@dataclass(frozen=True, eq=False)
class Tabulated(Prior):
    """A prior given by a density tabulated on a grid (linear interpolation, normalised here).

    Parameters
    ----------
    grid : array_like, shape (m,)
        Strictly increasing abscissae; the support is ``[grid[0], grid[-1]]``.
    density : array_like, shape (m,)
        Non-negative density values (any normalisation).
    label : str
        Used by ``describe()``.
    """

    grid: np.ndarray
    density: np.ndarray
    label: str = "Tabulated"

    def __post_init__(self):
        g = np.asarray(self.grid, dtype=float)
        d = np.asarray(self.density, dtype=float)
        if g.ndim != 1 or g.shape != d.shape or g.size < 2:
            raise ValueError("Tabulated: grid and density must be 1-D arrays of equal length >= 2")
        if not (np.all(np.isfinite(g)) and np.all(np.isfinite(d))):
            raise ValueError("Tabulated: grid and density must be finite")
        if np.any(np.diff(g) <= 0):
            raise ValueError("Tabulated: grid must be strictly increasing")
        if np.any(d < 0) or not np.any(d > 0):
            raise ValueError("Tabulated: density must be >= 0 with some positive value")
        # Exact normalisation of the piecewise-linear density.
        cdf = np.concatenate([[0.0], np.cumsum(0.5 * (d[1:] + d[:-1]) * np.diff(g))])
        z = cdf[-1]
        object.__setattr__(self, "grid", g)
        object.__setattr__(self, "density", d / z)
        object.__setattr__(self, "_cdf", cdf / z)

    def logpdf(self, x):
        x = np.asarray(x, dtype=float)
        inside = (x >= self.grid[0]) & (x <= self.grid[-1])
        p = np.interp(x, self.grid, self.density)
        with np.errstate(divide="ignore"):
            return np.where(inside, np.log(p), -np.inf)

    def ppf(self, u):
        # Invert the piecewise-quadratic CDF of the piecewise-linear density exactly.
        u = np.clip(np.asarray(u, dtype=float), 0.0, 1.0)
        g, d, c = self.grid, self.density, self._cdf
        i = np.clip(np.searchsorted(c, u, side="right") - 1, 0, g.size - 2)
        h = g[i + 1] - g[i]
        slope = (d[i + 1] - d[i]) / h
        r = u - c[i]
        a = 0.5 * slope
        # Solve a t^2 + d_i t - r = 0 for t in [0, h] (stable form).
        disc = np.sqrt(np.maximum(d[i] ** 2 + 4 * a * r, 0.0))
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.where(np.abs(d[i] + disc) > 0, 2 * r / (d[i] + disc), 0.0)
        return np.clip(g[i] + np.clip(t, 0.0, h), g[0], g[-1])

    @property
    def bounds(self):
        return (float(self.grid[0]), float(self.grid[-1]))

    def mean(self) -> float:
        """Mean of the tabulated distribution (trapezoid rule on a fine grid)."""
        x = np.linspace(self.grid[0], self.grid[-1], 20001)
        p = np.interp(x, self.grid, self.density)
        return float(np.trapezoid(x * p, x))

    def describe(self):
        return self.label


@dataclass(frozen=True, eq=False)
class Dirichlet:
    """Dirichlet prior on the rock-fraction simplex.

    Parameters
    ----------
    alpha : float or sequence of float
        Concentration parameters (all > 0); a number applies to every rock. ``Dirichlet(1)`` is
        uniform on the simplex.
    """

    alpha: object = 1.0

    def resolve(self, n: int) -> np.ndarray:
        """Concentrations as an array of length ``n`` (validated)."""
        a = np.asarray(self.alpha, dtype=float)
        if a.ndim == 0:
            a = np.full(n, float(a))
        if a.shape != (n,):
            raise ValueError(f"Dirichlet: alpha must have one value per rock ({n}); got {a.shape}")
        if not np.all(np.isfinite(a)) or np.any(a <= 0):
            raise ValueError(f"Dirichlet: alpha must be finite and > 0; got {a.tolist()}")
        return a

    def describe(self) -> str:
        return f"Dirichlet({np.asarray(self.alpha).tolist()})"


def as_prior(name: str, value) -> Prior:
    """Turn a user value into a prior: a number fixes the parameter, a :class:`Prior` is kept."""
    if isinstance(value, Prior):
        return value
    if isinstance(value, (int, float, np.integer, np.floating)) and not isinstance(value, bool):
        v = float(value)
        if not math.isfinite(v):
            raise ValueError(f"priors[{name!r}] must be finite; got {value!r}")
        return Fixed(v)
    raise ValueError(
        f"priors[{name!r}] must be a number (fixes it) or a prior from bayescrust.priors; "
        f"got {value!r}"
    )
