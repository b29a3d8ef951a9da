"""Candidate additions: an observable with a 1-sigma error, and the default lists for a layer and
a profile.

A candidate is one new, independent measurement of an observable of the layer (Vp, Vs, Vp/Vs,
density) with a stated measurement error. Measured again, an observable the layer already has
shares the forward-model error with the existing datum (see :mod:`.likelihood`). Heat flow is an
observable of a whole profile, not of one layer: :data:`PROFILE_OBSERVABLES` names it; the profile
planner (:mod:`.profile`) accepts it, a layer planner rejects it with a clear message. In a profile
a layer candidate names its ``layer``; a heat-flow candidate has the ``mode`` of the profile's own
heat-flow law (:class:`bayescrust.profile.HeatFlow`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..inference.layer import OBSERVABLES

__all__ = ["Candidate", "default_candidates", "default_profile_candidates", "LAYER_OBSERVABLES",
           "PROFILE_OBSERVABLES", "HEAT_FLOW_MODES", "HEAT_FLOW_SIGMAS", "as_candidates"]

#: Observables a candidate of one layer may name (those of :class:`bayescrust.Layer`).
LAYER_OBSERVABLES = tuple(OBSERVABLES)
#: Observables only a profile can predict (surface heat flow, mW/m^2); hook for the profile study.
PROFILE_OBSERVABLES = ("heat_flow",)
#: Laws of a heat-flow candidate, as :class:`bayescrust.profile.HeatFlow`'s ``mode``.
HEAT_FLOW_MODES = ("gaussian", "lower_bound", "off")

_UNITS = {k: unit for k, (_, unit) in OBSERVABLES.items()} | {"heat_flow": "mW/m^2"}
_NAMES = {"vp": "Vp", "vs": "Vs", "vp_vs": "Vp/Vs", "density": "density",
          "heat_flow": "heat flow"}

#: Default candidate errors (1 sigma) per observable, in the observable's unit. These are
#: planning choices, not literature values: a spread from a good to a rough measurement.
_DEFAULT_SIGMAS = {"vs": (0.05, 0.1, 0.2, 0.3), "vp_vs": (0.02, 0.05), "density": (0.03, 0.1),
                   "vp": (0.03, 0.06)}
#: Default heat-flow candidate errors (mW/m^2): planning choices from a good marine probe
#: measurement to a rough one, not literature values.
HEAT_FLOW_SIGMAS = (5.0, 10.0, 20.0)


@dataclass(frozen=True)
class Candidate:
    """One candidate new datum.

    Parameters
    ----------
    observable : str
        ``vp``, ``vs`` (km/s), ``vp_vs`` or ``density`` (g/cm^3); ``heat_flow`` for profiles.
    sigma : float
        Its 1-sigma measurement error, in the observable's unit; ``inf`` is the "measure
        nothing" baseline (the datum carries no information).
    model_error : float, optional
        Forward-model error of this observable as a fraction of the predicted value (added in
        quadrature, as in the layer's likelihood); default: the layer model's own setting.
    label : str, optional
        Name in tables and figures (default e.g. ``"Vs ± 0.1 km/s"``).
    layer : str, optional
        Profiles: the layer the datum is measured in (by name); not for heat flow.
    mode : str
        Heat flow only: ``"gaussian"``, ``"lower_bound"`` (the probe sees at most the conductive
        heat flow: the measured value is the conductive one minus an unknown deficit, uniform on
        ``[0, max_deficit]``, plus the error; see :mod:`.likelihood`) or ``"off"`` (not used:
        no information).
    max_deficit : float, optional
        Lower-bound heat flow: the largest heat (mW/m^2) the probe may miss; default the largest
        heat flow predicted by today's states (the probe may miss any part of it).
    """

    observable: str
    sigma: float
    model_error: float | None = None
    label: str | None = None
    layer: str | None = None
    mode: str = "gaussian"
    max_deficit: float | None = None

    def __post_init__(self):
        allowed = LAYER_OBSERVABLES + PROFILE_OBSERVABLES
        if self.observable not in allowed:
            raise ValueError(f"candidate observable must be one of {list(allowed)}; "
                             f"got {self.observable!r}")
        try:
            s = float(self.sigma)
        except (TypeError, ValueError) as exc:
            raise ValueError(f"candidate {self.observable}: sigma must be a number; got "
                             f"{self.sigma!r}") from exc
        if math.isnan(s) or not s > 0:
            raise ValueError(f"candidate {self.observable}: sigma must be > 0 (inf for no "
                             f"information); got {self.sigma!r}")
        object.__setattr__(self, "sigma", s)
        if self.model_error is not None:
            me = float(self.model_error)
            if not math.isfinite(me) or not 0.0 <= me <= 0.5:
                raise ValueError(f"candidate {self.observable}: model_error must be in [0, 0.5]"
                                 f" (fraction of the predicted value); got {self.model_error!r}")
            object.__setattr__(self, "model_error", me)
        if self.mode not in HEAT_FLOW_MODES or (self.mode != "gaussian"
                                                 and self.observable != "heat_flow"):
            raise ValueError(f"candidate {self.observable}: mode must be one of "
                             f"{list(HEAT_FLOW_MODES)} (modes other than 'gaussian' are for "
                             f"heat_flow only); got {self.mode!r}")
        if self.layer is not None and (self.observable in PROFILE_OBSERVABLES
                                       or not isinstance(self.layer, str)):
            raise ValueError(f"candidate {self.observable}: layer must be a layer name and is "
                             f"not used with heat flow (a profile-wide datum); got "
                             f"{self.layer!r}")
        if self.max_deficit is not None:
            md = float(self.max_deficit)
            if self.mode != "lower_bound" or not (math.isfinite(md) and md > 0):
                raise ValueError(f"candidate {self.observable}: max_deficit must be > 0 mW/m^2 "
                                 f"and is for mode 'lower_bound' only; got {self.max_deficit!r}")
            object.__setattr__(self, "max_deficit", md)
        if self.label is None:
            text = f"{self.name} ± {self.sigma:g} {self.unit}".strip()
            if self.mode != "gaussian":
                text += f" ({self.mode.replace('_', ' ')})"
            if self.layer is not None:
                text += f" in {self.layer}"
            object.__setattr__(self, "label", text)

    @property
    def informative(self) -> bool:
        """False for the "measure nothing" baselines (infinite sigma, heat-flow mode "off")."""
        return math.isfinite(self.sigma) and self.mode != "off"

    @property
    def name(self) -> str:
        """Trade name of the observable (``Vs``, ``Vp/Vs``, ...)."""
        return _NAMES[self.observable]

    @property
    def unit(self) -> str:
        """Unit of the observable and of ``sigma``."""
        return _UNITS[self.observable]


def default_candidates(layer=None) -> tuple[Candidate, ...]:
    """Ten default candidates: Vs at four errors, Vp/Vs, density and a tighter Vp at two each.

    With a ``layer`` that has a Vp error of its own, the Vp candidates are kept only where they
    are tighter than it (a repeat Vp with a larger error than today's is of little interest).
    """
    out = []
    vp_sigma = None
    if layer is not None and getattr(layer, "vp", None) is not None:
        vp_sigma = layer.vp[1]
    for obs, sigmas in _DEFAULT_SIGMAS.items():
        for s in sigmas:
            if obs == "vp" and vp_sigma is not None and s >= vp_sigma:
                continue
            out.append(Candidate(obs, s))
    return tuple(out)


def as_candidates(candidates, layer=None, *, profile=False) -> tuple[Candidate, ...]:
    """Validate a list of :class:`Candidate` (or ``(observable, sigma)`` pairs); ``None`` gives
    :func:`default_candidates`. ``heat_flow`` needs a profile (``profile=True``)."""
    if candidates is None:
        return default_candidates(layer)
    out = []
    for c in candidates:
        if not isinstance(c, Candidate):
            try:
                obs, s = c
            except (TypeError, ValueError) as exc:
                raise ValueError(f"a candidate must be a Candidate or an (observable, sigma) "
                                 f"pair; got {c!r}") from exc
            c = Candidate(obs, s)
        if c.observable in PROFILE_OBSERVABLES and not profile:
            raise ValueError(f"candidate {c.label!r}: {c.name} is predicted by a profile's "
                             "thermal model, not by one layer; plan it on a profile")
        out.append(c)
    if not out:
        raise ValueError("candidates: give at least one candidate")
    labels = [c.label for c in out]
    dup = sorted({x for x in labels if labels.count(x) > 1})
    if dup:
        raise ValueError(f"candidates: labels must be distinct; repeated {dup}")
    return tuple(out)


def default_profile_candidates(profile, target_layer) -> tuple[Candidate, ...]:
    """Heat flow at :data:`HEAT_FLOW_SIGMAS` (and one lower bound at 10 mW/m^2), and in the
    ``target_layer`` Vs at 0.1 and 0.2 km/s, Vp/Vs at 0.05, density at 0.05 g/cm^3 and a repeat
    Vp at half today's error (if it has Vp). Planning choices, not literature values."""
    out = [Candidate("heat_flow", s) for s in HEAT_FLOW_SIGMAS]
    out.append(Candidate("heat_flow", 10.0, mode="lower_bound"))
    out += [Candidate("vs", s, layer=target_layer) for s in (0.1, 0.2)]
    out += [Candidate("vp_vs", 0.05, layer=target_layer),
            Candidate("density", 0.05, layer=target_layer)]
    lay = profile.layers[profile.names.index(target_layer)]
    if lay.vp is not None:
        out.append(Candidate("vp", round(0.5 * lay.vp[1], 4), layer=target_layer))
    return tuple(out)


def _check_candidates(profile, cands):
    """``cands`` unchanged if every layer candidate names a layer of ``profile`` (or the profile
    has one layer); a ValueError otherwise."""
    for c in cands:
        if c.observable == "heat_flow":
            continue
        if c.layer is None:
            if profile.n_layers != 1:
                raise ValueError(f"candidate {c.label!r}: name its layer (one of "
                                 f"{list(profile.names)})")
        elif c.layer not in profile.names:
            raise ValueError(f"candidate {c.label!r}: layer {c.layer!r} is not in the profile; "
                             f"allowed {list(profile.names)}")
    return cands
