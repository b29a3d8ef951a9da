"""The layer model: parameters, priors with physical constraints, log-probability (the
likelihood's error model is in :mod:`.likelihood`).

:class:`LayerModel` resolves a user's configuration once (forward model, solidus and serpentine
stability at the layer's pressure, thermal prior table) and exposes vectorised kernels over a
leading batch axis of sampled points ``theta`` of shape ``(n, ndim)``:

- :meth:`LayerModel.log_prob` - the log posterior density (up to the evidence) in one forward call;
  ``-inf`` outside the prior support, never raises;
- :meth:`LayerModel.log_prior`, :meth:`LayerModel.predict`, :meth:`LayerModel.log_likelihood_terms`;
- :meth:`LayerModel.quantities` - every parameter and derived quantity by name;
- :meth:`LayerModel.from_unit` / :meth:`LayerModel.sample_prior` - points from the prior.

Sampled coordinates (:mod:`.coordinates`) are those of the first ``n - 1`` rock fractions
followed by those of the free scalar parameters in the order of :data:`SCALAR_PARAMETERS`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from .coordinates import Coordinates
from .layer import Layer
from .likelihood import (  # noqa: F401 - DEFAULT_MODEL_ERROR, MODEL_ERROR_CORRELATION re-exported
    DEFAULT_MODEL_ERROR,
    MODEL_ERROR_CORRELATION,
    ObservationErrors,
    _error_correlation_for,
    _resolve_model_error,
)
from .priors import Dirichlet, LogUniform, Uniform, as_prior
from .thermal_priors import UniformTemperature, resolve_temperature_prior

__all__ = [
    "SCALAR_PARAMETERS",
    "DERIVED_QUANTITIES",
    "DEFAULT_MODEL_ERROR",
    "LayerModel",
    "default_priors",
]

#: Scalar parameters of one layer (besides the rock fractions), in sampling order.
SCALAR_PARAMETERS = (
    "temperature_c",
    "porosity",
    "aspect_ratio",
    "melt_fraction",
    "melt_aspect_ratio",
    "serpentinization",
)

#: Allowed range of each scalar parameter's prior support (physical validity of the forward model).
PARAMETER_RANGES = {
    "temperature_c": (-5.0, 1800.0),  # rock_properties' range (physics.rocks)
    "porosity": (0.0, 0.5),
    "aspect_ratio": (1e-4, 1.0),
    "melt_fraction": (0.0, 0.3),
    "melt_aspect_ratio": (1e-4, 1.0),
    "serpentinization": (0.0, 1.0),
}

#: Derived quantities computed for every sample (besides parameters and all rock fractions).
DERIVED_QUANTITIES = (
    "vp",
    "vs",
    "density",
    "vp_vs",
    "ultramafic_fraction",
    "gabbroic_fraction",
    "basaltic_fraction",
    "solidus_c",
    "melt_fraction_effective",
    "serpentinization_effective",
    "serpentine_fraction",
)

# Rock families used by derived quantities, default hypotheses and the solidus mix.
_GABBROIC = ("gabbro", "altered_gabbro", "olivine_gabbro", "troctolite")
_BASALTIC = ("basalt", "diabase")
_SERPENTINITES = ("serpentinite", "antigorite_serpentinite")
_SERPENTINITE_KIND = {"serpentinite": "lizardite", "antigorite_serpentinite": "antigorite"}

_DEPTH_POROUS_KM = 1.5  # mid-depth below which the default pore priors are narrow (Layer 2/3)


def default_priors(layer: Layer, rock_names, ultramafic) -> dict:
    """Default priors for a layer (documented in docs/inference.md).

    - ``fractions``: ``Dirichlet(1)`` (uniform on the simplex);
    - ``temperature_c``: ``UniformTemperature(0, 1400)``;
    - ``porosity``: ``Uniform(0, 0.3)`` if the layer's mid-depth is < 1.5 km below the seafloor
      (Layer 2, extrusives and dikes), else ``Uniform(0, 0.03)``;
    - ``aspect_ratio``: a pore-shape spread, ``LogUniform(0.01, 1)`` (thin cracks to round
      pores), if the layer's mid-depth is < 1.5 km below the seafloor, so Layer-2 Vp/Vs >= 1.9
      (needs aspect ratios <= ~0.02) can be fitted by water-filled cracks; else fixed 0.1
      (between penny cracks and spheres). Thin cracks at depth are shut by effective pressure
      either way (Walsh 1965, ``physics/pores.py``). Cost: docs/physics.md, "Pore-shape
      spread";
    - ``melt_fraction``: ``Uniform(0, 0.05)`` (effective only above the solidus);
    - ``melt_aspect_ratio``: fixed 0.05 (melt films/tubules);
    - ``serpentinization``: ``Uniform(0, 1)`` if a peridotite is present (a rock marked
      ``ultramafic`` in rocks.toml; serpentinite rocks are not: they are serpentine already;
      effective only below the serpentine stability limit), else fixed 0.
    """
    shallow = layer.mid_depth_km < _DEPTH_POROUS_KM
    return {
        "fractions": Dirichlet(1.0),
        "temperature_c": UniformTemperature(0.0, 1400.0),
        "porosity": Uniform(0.0, 0.3) if shallow else Uniform(0.0, 0.03),
        "aspect_ratio": LogUniform(0.01, 1.0) if shallow else 0.1,
        "melt_fraction": Uniform(0.0, 0.05),
        "melt_aspect_ratio": 0.05,
        "serpentinization": Uniform(0.0, 1.0) if np.any(ultramafic) else 0.0,
    }


@dataclass(frozen=True, eq=False)
class LayerModel(ObservationErrors):
    """Resolved posterior model of one layer (see module docstring).

    Build with :meth:`LayerModel.build`; the constructor only stores values.
    """

    layer: Layer
    forward: object
    rock_names: tuple
    alpha: np.ndarray
    fixed_fractions: np.ndarray | None
    scalar_priors: dict
    free: tuple
    fixed: dict
    pressure_gpa: float
    rock_solidus_c: np.ndarray
    serpentine_limit_c: float
    observed: dict
    model_error: dict
    likelihood: str
    nu: float
    ultramafic: np.ndarray
    families: dict
    settings: dict
    pore_pressure_gpa: float | None = None  # hydrostatic pore pressure (crack closure)
    error_correlation: float = MODEL_ERROR_CORRELATION  # of the Vp and Vs model errors

    # ------------------------------------------------------------------ construction
    @classmethod
    def build(
        cls,
        layer: Layer,
        *,
        rocks=("gabbro", "harzburgite"),
        priors=None,
        model_error=None,
        likelihood="gaussian",
        nu=4.0,
        forward=None,
    ) -> LayerModel:
        """Validate a configuration and precompute everything the log-probability needs.

        Parameters are those of :func:`bayescrust.invert_layer`.
        """
        from ..physics import thermal
        from ..physics.inclusions import KT_MAX_POROSITY_OVER_ASPECT, kt_crack_sum
        from ..physics.rocks import ForwardModel

        if not isinstance(layer, Layer):
            raise ValueError(f"layer must be a bayescrust.Layer; got {type(layer).__name__}")
        if forward is None:
            fm = ForwardModel(rocks=tuple(rocks))
            fwd_settings = {}
        elif isinstance(forward, dict):
            fm = ForwardModel(rocks=tuple(rocks), **forward)
            fwd_settings = dict(forward)
        else:  # a ready forward model (ForwardModel or a compatible callable)
            fm = forward
            fwd_settings = {"forward": repr(forward)}
        names = tuple(fm.rock_names)
        ultramafic = np.asarray(fm.ultramafic, bool)
        n = len(names)

        priors = {} if priors is None else dict(priors)
        defaults = default_priors(layer, names, ultramafic)
        known = set(defaults) | set(names)
        unknown = set(priors) - known
        if unknown:
            raise ValueError(
                f"priors: unknown parameter {sorted(unknown)}; allowed: fractions, "
                f"{', '.join(SCALAR_PARAMETERS)}, or a rock name {list(names)}"
            )
        # Rock fractions: a Dirichlet prior, or fixed values given by rock name.
        fixed_fractions = None
        alpha = np.ones(n)
        rock_keys = [k for k in priors if k in names]
        frac = priors.get("fractions", defaults["fractions"])
        if rock_keys:
            if "fractions" in priors:
                raise ValueError(
                    "priors: give either 'fractions' or per-rock fixed values, not both")
            vals = {}
            for k in rock_keys:
                v = as_prior(k, priors[k])
                if not v.fixed:
                    raise ValueError(
                        f"priors[{k!r}]: a rock fraction can only be fixed (a number); use "
                        "priors['fractions'] = Dirichlet(alpha) for a prior"
                    )
                vals[k] = v.value
            if set(rock_keys) != set(names):
                missing = [r for r in names if r not in vals]
                raise ValueError(f"priors: fixing rock fractions needs a value for every rock; "
                                 f"missing {missing}")
            fixed_fractions = np.array([vals[r] for r in names])
        elif n == 1:
            fixed_fractions = np.ones(1)
        elif isinstance(frac, Dirichlet):
            alpha = frac.resolve(n)
        else:
            try:
                fixed_fractions = np.asarray(frac, float).reshape(n)
            except (TypeError, ValueError) as exc:
                raise ValueError(
                    f"priors['fractions'] must be a Dirichlet prior or {n} fixed fractions"
                ) from exc
        if fixed_fractions is not None:
            f = fixed_fractions
            if (not np.all(np.isfinite(f)) or np.any(f < 0) or np.any(f > 1)
                    or abs(f.sum() - 1) > 1e-9):
                raise ValueError(
                    f"fixed rock fractions must be in [0, 1] and sum to 1; got {f.tolist()}"
                )

        scalar_priors, free, fixed = {}, [], {}
        for p in SCALAR_PARAMETERS:
            v = priors.get(p, defaults[p])
            pr = (resolve_temperature_prior(v, layer) if p == "temperature_c"
                  else as_prior(p, v))
            lo, hi = PARAMETER_RANGES[p]
            b = pr.bounds
            if not (lo <= b[0] and b[1] <= hi):
                raise ValueError(
                    f"priors[{p!r}]: support {b[0]:g}..{b[1]:g} must lie in [{lo:g}, {hi:g}]"
                )
            if p == "temperature_c" and not (np.isfinite(b[0]) and np.isfinite(b[1])):
                raise ValueError("priors['temperature_c'] must have a bounded support")
            scalar_priors[p] = pr
            if pr.fixed:
                fixed[p] = pr.value
            else:
                free.append(p)

        pressure = layer.resolved_pressure_gpa()
        # pore water in hydrostatic contact with the ocean (common practice, physics-reference
        # sec. 8): effective pressure = confining - pore pressure closes thin cracks (Walsh 1965)
        pore_pressure = float(min(pressure, thermal.hydrostatic_pore_pressure_gpa(
            layer.water_depth_km + layer.mid_depth_km)))
        try:
            per_sol = float(thermal.peridotite_solidus_c(pressure))
            gab_sol = float(thermal.gabbro_solidus_c(pressure))
        except ValueError as exc:  # name what the user wrote: the layer's depth
            key, what = (("pressure_gpa", "lower pressure") if layer.pressure_gpa is not None
                         else ("top_km/bottom_km", "shallower layer"))
            raise ValueError(
                f"{key}: the layer's pressure, {pressure:.2f} GPa, lies beyond the range of "
                f"the solidus laws ({exc}); give a {what}") from None
        if getattr(fm, "inclusion_scheme", None) == "kuster_toksoz":
            # a dilute theory (physics.inclusions.KT_MAX_POROSITY_OVER_ASPECT): a prior reaching
            # beyond it would be cut silently where the forward model returns NaN
            b = {p: scalar_priors[p].bounds for p in scalar_priors}
            worst = kt_crack_sum(b["porosity"][1], b["aspect_ratio"][0],
                                 b["melt_fraction"][1], b["melt_aspect_ratio"][0])
            if worst > KT_MAX_POROSITY_OVER_ASPECT:
                raise ValueError(
                    "inclusion_scheme 'kuster_toksoz' is a dilute theory: the priors must keep "
                    "porosity / aspect_ratio + melt_fraction / melt_aspect_ratio <= "
                    f"{KT_MAX_POROSITY_OVER_ASPECT:g}, but they reach {worst:.3g} (porosity <= "
                    f"{b['porosity'][1]:g}, aspect_ratio >= {b['aspect_ratio'][0]:g}, "
                    f"melt_fraction <= {b['melt_fraction'][1]:g}, melt_aspect_ratio >= "
                    f"{b['melt_aspect_ratio'][0]:g}); narrow them or use 'dem'")
        serp_kind = getattr(fm, "serpentine", "lizardite")
        serp_lim = float(thermal.serpentine_stability_c(pressure, kind=serp_kind))
        # A serpentinite end member exists only below its own stability limit: its fraction
        # cannot be switched off with temperature (as `serpentinization` is), so the
        # temperature prior must stay below the limit (Evans 2010; Ulmer & Trommsdorff 1995).
        t_hi = scalar_priors["temperature_c"].bounds[1]
        for rock, kind in _SERPENTINITE_KIND.items():
            if rock in names and (fixed_fractions is None or
                                  fixed_fractions[list(names).index(rock)] > 0):
                limit = float(thermal.serpentine_stability_c(pressure, kind=kind))
                if t_hi > limit:
                    raise ValueError(
                        f"rocks: {rock!r} ({kind}) is stable only below {limit:.0f} deg C at "
                        f"{pressure:.3f} GPa, but priors['temperature_c'] reaches {t_hi:.0f} "
                        f"deg C; restrict the temperature prior to <= {limit:.0f} deg C, or "
                        "model serpentine as `serpentinization` of a peridotite (switched off "
                        "above the stability limit)")
        mantle_like = ultramafic | np.isin(names, _SERPENTINITES)
        rock_solidus = np.where(mantle_like, per_sol, gab_sol)
        families = {
            "ultramafic_fraction": mantle_like.astype(float),
            "gabbroic_fraction": np.isin(names, _GABBROIC).astype(float),
            "basaltic_fraction": np.isin(names, _BASALTIC).astype(float),
            "_peridotite": ultramafic.astype(float),
            "_serpentinite": np.isin(names, _SERPENTINITES).astype(float),
        }
        observed = layer.observed
        me = _resolve_model_error(model_error, observed)
        rho_err = _error_correlation_for(model_error)
        if likelihood not in ("gaussian", "student_t"):
            raise ValueError(f"likelihood must be 'gaussian' or 'student_t'; got {likelihood!r}")
        nu = float(nu)
        if not math.isfinite(nu) or not nu > 0:
            raise ValueError(f"nu must be finite and > 0; got {nu!r}")

        settings = {
            "layer": layer.to_dict(),
            "rocks": list(names),
            "pressure_gpa": pressure,
            "priors": {
                "fractions": (list(map(float, fixed_fractions)) if fixed_fractions is not None
                              else f"Dirichlet({alpha.tolist()})"),
                **{p: (scalar_priors[p].value if scalar_priors[p].fixed
                       else scalar_priors[p].describe()) for p in SCALAR_PARAMETERS},
            },
            "temperature_prior": (priors["temperature_c"].describe()
                                  if hasattr(priors.get("temperature_c"), "for_layer")
                                  else scalar_priors["temperature_c"].describe()),
            "model_error": me,
            **({"model_error_correlation": rho_err} if "vp" in me and "vs" in me else {}),
            "likelihood": likelihood,
            "nu": nu if likelihood == "student_t" else None,
            "forward": fwd_settings,
            "solidus_c": {"peridotite": per_sol, "gabbro": gab_sol},
            "serpentine_stability_c": serp_lim,
            "pore_pressure_gpa": pore_pressure,
        }
        return cls(
            layer=layer, forward=fm, rock_names=names, alpha=alpha,
            fixed_fractions=fixed_fractions, scalar_priors=scalar_priors, free=tuple(free),
            fixed=fixed, pressure_gpa=pressure, rock_solidus_c=rock_solidus,
            serpentine_limit_c=serp_lim, observed=observed, model_error=me,
            error_correlation=rho_err, likelihood=likelihood, nu=nu, ultramafic=ultramafic,
            families=families, settings=settings, pore_pressure_gpa=pore_pressure,
        )

    # ------------------------------------------------------------------ coordinates
    @property
    def n_fraction_dims(self) -> int:
        """Number of sampled fraction coordinates (``n_rocks - 1``, or 0 if fixed)."""
        return 0 if self.fixed_fractions is not None else len(self.rock_names) - 1

    @property
    def parameter_names(self) -> tuple[str, ...]:
        """Names of the sampled coordinates, in order."""
        return tuple(self.rock_names[: self.n_fraction_dims]) + self.free

    @cached_property
    def coordinates(self) -> Coordinates:
        """The sampling coordinates of the free parameters (:mod:`.coordinates`): logit of
        bounded priors, ln x of log-scale priors, the pore compliance of a porosity whose
        aspect ratio is log-scaled, temperature as it is."""
        return Coordinates(self.n_fraction_dims, self.alpha, self.free,
                           {p: self.scalar_priors[p] for p in self.free})

    @property
    def ndim(self) -> int:
        """Number of sampled coordinates."""
        return self.n_fraction_dims + len(self.free)

    @cached_property
    def _rows(self):
        """The forward model's eight scalar rows (:meth:`ForwardModel.rows` order) per sampled
        point: for each, a constant (value, None) or a free parameter (None, name)."""
        p = self.pressure_gpa
        const = {"pressure": p,
                 "pore": p if self.pore_pressure_gpa is None else self.pore_pressure_gpa}
        out = []
        for name in ("temperature_c", "pressure", "porosity", "aspect_ratio", "melt_fraction",
                     "melt_aspect_ratio", "serpentinization", "pore"):
            if name in const:
                out.append((const[name], None))
            elif name in self.fixed:
                out.append((self.fixed[name], None))
            else:
                out.append((None, name))
        return tuple(out)

    def fractions(self, theta) -> np.ndarray:
        """Full rock fractions, shape (n, n_rocks), from sampled points (n, ndim)."""
        theta = np.atleast_2d(theta)
        if self.fixed_fractions is not None:
            return np.broadcast_to(self.fixed_fractions, (theta.shape[0], len(self.rock_names)))
        return self.coordinates.fractions(theta)

    def scalars(self, theta) -> dict[str, np.ndarray]:
        """Every scalar parameter (free and fixed) as arrays of shape (n,)."""
        theta = np.atleast_2d(theta)
        c = self.coordinates
        return {p: (np.full(theta.shape[0], self.fixed[p]) if p in self.fixed
                    else c.value(theta, p)) for p in SCALAR_PARAMETERS}

    # ------------------------------------------------------------------ prior
    def log_prior(self, theta) -> np.ndarray:
        """Normalised log prior density of sampled points (n, ndim) in the sampled coordinates
        (:attr:`coordinates`); ``-inf`` outside support."""
        return self.coordinates.log_density(np.atleast_2d(np.asarray(theta, float)))

    def from_unit(self, u) -> np.ndarray:
        """Map points of the unit hypercube (n, ndim) to prior draws (inverse transform) in the
        sampled coordinates: fractions by the stick-breaking construction of the Dirichlet
        distribution with Beta quantiles, scalars through each prior's ``ppf``."""
        return self.coordinates.from_unit(np.atleast_2d(np.asarray(u, float)))

    def sample_prior(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """``n`` independent prior draws, shape (n, ndim)."""
        return self.from_unit(rng.random((n, self.ndim)))

    # ------------------------------------------------------------------ physics
    def quantities(self, theta, *, predict=True) -> dict[str, np.ndarray]:
        """Parameters, all rock fractions and derived quantities by name, each shape (n,).

        With ``predict=False`` the forward model is not called (vp, vs, density, vp_vs omitted).
        """
        theta = np.atleast_2d(np.asarray(theta, float))
        f = self.fractions(theta)
        s = self.scalars(theta)
        out = {r: f[:, i] for i, r in enumerate(self.rock_names)}
        out.update(s)
        # sums of fractions are clipped to [0, 1]: fractions from the logit coordinates can
        # add up to 1 + ulp, which fell out of a class ending at 1 (1.8 % of basalt + diabase)
        for fam, mask in self.families.items():
            if not fam.startswith("_"):
                out[fam] = np.clip(f @ mask, 0.0, 1.0)
        out["solidus_c"], out["melt_fraction_effective"], out["serpentinization_effective"] = (
            self._effective(f, s["temperature_c"], s["melt_fraction"], s["serpentinization"]))
        out["serpentine_fraction"] = np.clip(
            out["serpentinization_effective"] * (f @ self.families["_peridotite"])
            + f @ self.families["_serpentinite"], 0.0, 1.0)
        if predict:
            vp, vs, rho = self._forward(f, out)
            out.update(vp=vp, vs=vs, density=rho, vp_vs=vp / vs)
        return out

    def _effective(self, f, t, melt, serp):
        """Solidus of the rock mix and the melt fraction and serpentinisation in effect: melt
        only above the solidus, serpentine only below its stability limit."""
        sol = f @ self.rock_solidus_c
        return (sol, np.where(t > sol, melt, 0.0),
                np.where(t < self.serpentine_limit_c, serp, 0.0))

    def predict(self, theta) -> dict[str, np.ndarray]:
        """The observables ``vp``, ``vs``, ``density``, ``vp_vs`` of sampled points (n, ndim);
        the same values as :meth:`quantities` without the other derived quantities (the
        log-probability's path: the forward model's flat rows, :meth:`ForwardModel.rows`,
        filled from the columns without per-parameter arrays)."""
        theta = np.atleast_2d(np.asarray(theta, float))
        f = self.fractions(theta)
        rows = getattr(self.forward, "rows", None)
        if rows is None:  # a compatible forward callable without flat rows: keywords
            s = self.scalars(theta)
            _, s["melt_fraction_effective"], s["serpentinization_effective"] = self._effective(
                f, s["temperature_c"], s["melt_fraction"], s["serpentinization"])
            vp, vs, rho = self._forward(f, s)
        else:
            sc = np.empty((8, theta.shape[0]))
            c = self.coordinates
            for k, (value, name) in enumerate(self._rows):
                sc[k] = value if name is None else c.value(theta, name)
            _, sc[4], sc[6] = self._effective(f, sc[0], sc[4], sc[6])
            with np.errstate(all="ignore"):
                vp, vs, rho = rows(np.clip(f, 0.0, 1.0), sc)
        return {"vp": vp, "vs": vs, "density": rho, "vp_vs": vp / vs}

    def _forward(self, f, q):
        with np.errstate(all="ignore"):
            return self.forward(
                np.clip(f, 0.0, 1.0), q["temperature_c"], self.pressure_gpa,
                porosity=q["porosity"], aspect_ratio=q["aspect_ratio"],
                melt_fraction=q["melt_fraction_effective"],
                melt_aspect_ratio=q["melt_aspect_ratio"],
                serpentinization=q["serpentinization_effective"],
                **({} if self.pore_pressure_gpa is None
                   else {"pore_pressure_gpa": self.pore_pressure_gpa}),
            )

    def log_prob(self, theta) -> np.ndarray:
        """Log posterior density (unnormalised) of sampled points (n, ndim), vectorised.

        Evaluates the prior everywhere and the forward model once, on the points inside the
        prior support; returns ``-inf`` elsewhere or where the forward model is not finite.
        """
        theta = np.atleast_2d(np.asarray(theta, float))
        lp = self.log_prior(theta)
        ok = np.isfinite(lp)
        if ok.all():  # the usual case: no copies
            lp = lp + sum(self.log_likelihood_terms(self.predict(theta)).values())
        elif ok.any():
            q = self.predict(theta[ok])
            lp[ok] = lp[ok] + sum(self.log_likelihood_terms(q).values())
        lp[np.isnan(lp)] = -np.inf
        return lp
