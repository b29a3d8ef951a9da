"""Section reader: ``[[layers]]`` (depths, observations, per-layer settings) and ``model_error``."""

from __future__ import annotations

import math

from ..inference.layer import DEPTH_RANGE_KM, PRESSURE_RANGE_GPA
from .hypotheses import read_hypotheses
from .limits import OBSERVABLES
from .priors import read_priors
from .reader import Reader
from .specs import LayerSpec, Observation
from .thermal import read_thermal_name

__all__ = ["LAYER_KEYS", "read_observation", "read_model_error", "read_layer"]

LAYER_KEYS = (
    "name", "top_km", "bottom_km", "pressure_gpa", "vp", "vs", "vp_vs", "density", "rocks",
    "priors", "hypotheses", "thermal_prior", "model_error",
)


def read_observation(r: Reader, key, value, name) -> Observation:
    lo, hi, unit = OBSERVABLES[name]
    if isinstance(value, list):
        if len(value) != 2:
            r.got(key, value, f"[value, sigma] in {unit or 'the same unit'}")
        v, s = value
        vkey, skey = f"{key}[0]", f"{key}[1]"
    elif isinstance(value, dict):
        r.keys(key, value, ("value", "sigma"))
        if "value" not in value or "sigma" not in value:
            r.got(key, value, "a table with both 'value' and 'sigma'")
        v, s = value["value"], value["sigma"]
        vkey, skey = f"{key}.value", f"{key}.sigma"
    else:
        r.got(key, value, f"[value, sigma] in {unit or 'the same unit'}")
    val = r.number(vkey, v, lo, hi, unit=unit)
    if isinstance(s, bool) or not isinstance(s, (int, float)) or not math.isfinite(s) or s <= 0:
        r.got(skey, s, "a 1-sigma error > 0")
    if s > hi - lo:
        r.got(skey, s, f"a 1-sigma error <= {hi - lo:g} {unit}".rstrip())
    return Observation(val, float(s))


def read_model_error(r: Reader, key, value):
    """A fraction of the observed value, or a table of fractions per observed quantity."""
    if isinstance(value, dict):
        r.keys(key, value, tuple(OBSERVABLES))
        return {q: r.number(f"{key}.{q}", v, 0.0, 0.5, unit="(fraction of the value)")
                for q, v in value.items()}
    return r.number(key, value, 0.0, 0.5, unit="(fraction of the observed value)")


#: Smallest Vp/Vs of any isotropic elastic solid: K = rho (Vp^2 - 4/3 Vs^2) >= 0 requires
#: Vp/Vs >= sqrt(4/3) (e.g. Mavko, Mukerji & Dvorkin 2009, The Rock Physics Handbook, 2nd ed.,
#: section 2.2; a mathematical consequence of the definitions of the moduli).
VP_VS_MIN = (4.0 / 3.0) ** 0.5


def read_layer(r: Reader, key, value, study_rocks, thermal_names) -> LayerSpec:
    t = r.table(key, value)
    r.keys(key, t, LAYER_KEYS)
    if "name" not in t:
        r.fail(f"{key}.name", "missing; every layer needs a name")
    name = r.string(f"{key}.name", t["name"])
    for req in ("top_km", "bottom_km"):
        if req not in t:
            r.fail(f"{key}.{req}", "missing; depth below the seafloor in km")
    top = r.number(f"{key}.top_km", t["top_km"], *DEPTH_RANGE_KM, unit="km")
    bottom = r.number(f"{key}.bottom_km", t["bottom_km"], *DEPTH_RANGE_KM, unit="km")
    if bottom <= top:
        r.got(f"{key}.bottom_km", t["bottom_km"],
                 f"a depth greater than top_km ({top:g} km)")
    obs = {q: read_observation(r, f"{key}.{q}", t[q], q) for q in OBSERVABLES if q in t}
    if not obs:
        r.fail(key, "no observation; expected at least one of vp, vs, vp_vs, density "
                       "as [value, sigma]")
    if "vp" in obs and "vs" in obs:
        vp, vs = obs["vp"].value, obs["vs"].value
        if vp * vp < VP_VS_MIN**2 * vs * vs:
            r.fail(f"{key}.vs", f"got Vs {vs:g} km/s with Vp {vp:g} km/s, i.e. Vp/Vs "
                                f"{vp / vs:.3f}; expected Vp/Vs >= sqrt(4/3) = {VP_VS_MIN:.4f} "
                                f"(Vs <= {vp / VP_VS_MIN:.3f} km/s): a lower ratio needs a "
                                "negative bulk modulus, K = rho (Vp^2 - 4/3 Vs^2)")
    pressure = None
    if "pressure_gpa" in t:
        pressure = r.number(f"{key}.pressure_gpa", t["pressure_gpa"], *PRESSURE_RANGE_GPA,
                            unit="GPa")
    rocks = r.rock_list(f"{key}.rocks", t["rocks"]) if "rocks" in t else None
    use_rocks = rocks or study_rocks
    priors = read_priors(r, f"{key}.priors", t["priors"], use_rocks) if "priors" in t else {}
    hyps = (read_hypotheses(r, f"{key}.hypotheses", t["hypotheses"], use_rocks)
            if "hypotheses" in t else None)
    tp = None
    if "thermal_prior" in t:
        tp = read_thermal_name(r, f"{key}.thermal_prior", t["thermal_prior"], thermal_names)
    me = None
    if "model_error" in t:
        me = read_model_error(r, f"{key}.model_error", t["model_error"])
    return LayerSpec(name, top, bottom, obs, pressure, rocks, priors, hyps, tp, me)
