"""The ``[profile]`` study section: a whole refraction profile tied by one thermal state.

::

    [profile]
    name = "TM-3 on axis"
    water_depth_km = 2.6
    pressure = "overburden"            # or "reference"
    compare = ["half_space", "axial", "uncoupled"]   # thermal states whose evidence is compared

    [profile.thermal]
    state = "half_space"               # half_space | plate | axial | uncoupled
    age_myr = [0.5, 30.0]              # a number fixes it; [lo, hi] is uniform
    scatter_c = 50.0

    [profile.heat_flow]
    value = 180.0                      # mW/m^2
    sigma = 30.0
    mode = "lower_bound"               # gaussian | lower_bound | off

    [[profile.layers]]
    name = "2A"
    top_km = 0.0
    bottom_km = 0.6
    vp = [4.3, 0.2]
    rocks = ["basalt", "gabbro"]       # optional: depth-appropriate default
    porosity = [0.0, 0.3]              # optional per-layer priors: number or [lo, hi]

An optional ``[plan]`` section (:mod:`bayescrust.config.plan`) sets ``bayescrust plan``'s
candidates for the profile. Errors name the file, the key and the allowed range
(:class:`StudyError`): values out of range (layer priors: the layer study's ranges; thermal
parameters: :data:`THERMAL_RANGES`), and every layer model and thermal state is built once
while reading, so a setting the run would refuse is refused here.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass

from .errors import StudyError
from .limits import PARAMETER_RANGES
from .reader import Reader

__all__ = ["ProfileStudy", "parse_profile_study", "profile_study_to_dict", "PROFILE_KEYS",
           "THERMAL_RANGES"]

PROFILE_KEYS = ("name", "water_depth_km", "pressure", "basement_km", "temperature_range_c",
                "thermal", "heat_flow", "layers", "compare")
_LAYER_KEYS = ("name", "top_km", "bottom_km", "vp", "vs", "vp_vs", "density", "rocks",
               "porosity", "melt_fraction", "serpentinization", "aspect_ratio")
_PRIOR_KEYS = ("porosity", "melt_fraction", "serpentinization", "aspect_ratio")
_THERMAL_PARAMS = {
    "half_space": ("age_myr", "mantle_temperature_c", "conductivity_w_mk", "scatter_c"),
    "plate": ("age_myr", "mantle_temperature_c", "plate_thickness_km", "conductivity_w_mk",
              "scatter_c"),
    "axial": ("lens_depth_km", "mush_offset_c", "conductivity_w_mk", "scatter_c"),
    "uncoupled": ("lo", "hi"),
}
#: Allowed values of the thermal parameters: (lo, hi, lo_open, unit). Input sanity limits, not
#: literature values: the age and mantle temperature as in a layer study's ``[thermal]``
#: tables, the plate thickness the range of ``physics.thermal.plate_temperature_c``, a positive
#: conductivity, a mush at or below the solidus (``mush_offset_c <= 0``).
THERMAL_RANGES = {
    "age_myr": (0.0, 200.0, True, "Myr"),
    "mantle_temperature_c": (800.0, 1800.0, False, "deg C"),
    "plate_thickness_km": (10.0, 300.0, False, "km"),
    "conductivity_w_mk": (0.0, 10.0, True, "W/m/K"),
    "lens_depth_km": (0.0, 100.0, True, "km"),
    "mush_offset_c": (-500.0, 0.0, False, "deg C"),
    "scatter_c": (0.0, 500.0, True, "deg C"),
    "lo": (-5.0, 1800.0, False, "deg C"),
    "hi": (-5.0, 1800.0, False, "deg C"),
}
_NUMBER_ONLY = ("scatter_c", "lo", "hi")


@dataclass(frozen=True)
class ProfileStudy:
    """A parsed profile study: the profile, the states to compare, the seed."""

    profile: object
    compare: dict
    seed: int | None
    source: str
    plan: object = None


def _prior(r: Reader, key, value, allowed=None):
    """A number (fixed) or ``[lo, hi]`` (uniform); ``allowed``: (lo, hi, lo_open, unit)."""
    from ..inference.priors import Uniform

    lim = {} if allowed is None else dict(zip(("lo", "hi", "lo_open", "unit"), allowed,
                                              strict=True))
    if isinstance(value, list):
        if len(value) != 2:
            r.got(key, value, "a number (fixed) or [lo, hi] (uniform)")
        lo, hi = (r.number(f"{key}[{i}]", v, **lim) for i, v in enumerate(value))
        if not lo < hi:
            r.fail(key, f"needs lo < hi; got [{lo:g}, {hi:g}]")
        return Uniform(lo, hi)
    return r.number(key, value, **lim)


def _layer_range(q):
    lo, hi, unit = PARAMETER_RANGES[q]
    return lo, hi, False, unit


def _layer_fail(r: Reader, key, table, profile, i, msg):
    """Report a layer model's refusal under the key it concerns."""
    name = profile.names[i]
    q = next((q for q in _PRIOR_KEYS if msg.startswith(f"priors[{q!r}]")), None)
    if q is not None and q in table:
        r.fail(f"{key}.{q}", f"layer {name!r}: {msg}")
    if msg.startswith("rocks:"):
        lo, hi = profile.temperature_range_c
        r.fail(f"{key}.rocks" if "rocks" in table else key,
               f"layer {name!r}: {msg} (in a profile the temperature prior of every layer is "
               f"profile.temperature_range_c = [{lo:g}, {hi:g}] deg C)")
    r.fail(key, f"layer {name!r}: {msg}")


def _uncoupled_range(r: Reader, key, kw, trange):
    """The uncoupled state's temperatures must lie within ``temperature_range_c`` (the layers'
    proposal; outside it the state's evidence would be truncated). Values the file sets are
    checked; the defaults (``Uncoupled``'s 0-1400 deg C) are clipped to the range."""
    from ..profile.thermal import Uncoupled

    t_lo, t_hi = trange
    for b, inside in (("lo", lambda v: v >= t_lo), ("hi", lambda v: v <= t_hi)):
        if b in kw and not inside(kw[b]):
            i, side = (0, "below") if b == "lo" else (1, "above")
            r.fail(f"{key}.{b}", f"got {kw[b]:g} deg C, {side} profile.temperature_range_c[{i}] "
                                 f"= {trange[i]:g} deg C; the uncoupled state's temperatures "
                                 f"must lie within temperature_range_c [{t_lo:g}, {t_hi:g}] "
                                 "deg C (widen the range or narrow the state)")
    kw.setdefault("lo", max(Uncoupled.lo, t_lo))
    kw.setdefault("hi", min(Uncoupled.hi, t_hi))


def _thermal(r: Reader, key, table, water_depth_km, trange, state_name=None):
    from ..profile.thermal import THERMAL_STATES

    table = r.table(key, table)
    name = state_name or r.string(f"{key}.state", table.get("state", "half_space"),
                                  list(THERMAL_STATES))
    allowed = _THERMAL_PARAMS[name]
    kw = {}
    for k, v in table.items():
        if k == "state":
            continue
        if k not in allowed:
            if state_name is not None:
                continue  # parameters of the main state that this compared state lacks
            r.keys(key, {k: v}, ("state",) + allowed)
        lo, hi, lo_open, unit = THERMAL_RANGES[k]
        kw[k] = (r.number(f"{key}.{k}", v, lo, hi, lo_open=lo_open, unit=unit)
                 if k in _NUMBER_ONLY else _prior(r, f"{key}.{k}", v, THERMAL_RANGES[k]))
    if name == "axial":
        kw["water_depth_km"] = water_depth_km
    if name == "uncoupled":
        _uncoupled_range(r, key, kw, trange)
    try:
        return THERMAL_STATES[name](**kw)
    except ValueError as exc:
        r.fail(key, str(exc))


def parse_profile_study(text: str, *, source: str = "<profile study>") -> ProfileStudy:
    """Parse a profile study file's text (see module docstring)."""
    from ..inference.layer import Layer
    from ..profile import HeatFlow, Profile
    from ..profile.spec import HEAT_FLOW_MODES, PRESSURE_MODES

    r = Reader(source)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StudyError(source, "(file)", f"not valid TOML: {exc}") from exc
    if "profile" not in data and ("layers" in data or "grid" in data):
        other = "bayescrust map" if "grid" in data else "bayescrust invert"
        r.fail("profile", f"missing: this is a {'grid' if 'grid' in data else 'layer'} study; "
                          f"run it with `{other}`")
    r.keys("(top level)", data, ("profile", "run", "plan"))
    if "profile" not in data:
        r.fail("profile", "missing: a profile study needs a [profile] table")
    p = r.table("profile", data["profile"])
    r.keys("profile", p, PROFILE_KEYS)
    hw = r.number("profile.water_depth_km", p.get("water_depth_km", 3.0), 0.0, 11.0, unit="km")
    raw_layers = p.get("layers")
    if not isinstance(raw_layers, list) or not raw_layers:
        r.fail("profile.layers", "needs at least one [[profile.layers]] table")
    layers, rocks, priors = [], [], []
    for i, lt in enumerate(raw_layers):
        k = f"profile.layers[{i}]"
        lt = r.table(k, lt)
        r.keys(k, lt, _LAYER_KEYS)
        kw = {"name": r.string(f"{k}.name", lt.get("name", f"layer {i + 1}"))}
        for d in ("top_km", "bottom_km"):
            if d not in lt:
                r.fail(f"{k}.{d}", "missing (km below the seafloor)")
            kw[d] = r.number(f"{k}.{d}", lt[d], 0.0, 100.0, unit="km")
        if layers and abs(kw["top_km"] - layers[-1].bottom_km) > 1e-6:
            r.fail(f"{k}.top_km", f"got {kw['top_km']:g}, expected {layers[-1].bottom_km:g} km, "
                   f"the bottom_km of layer {layers[-1].name!r} (layers are contiguous, top "
                   "to bottom)")
        for ob in ("vp", "vs", "vp_vs", "density"):
            if ob in lt:
                v = lt[ob]
                if not (isinstance(v, list) and len(v) == 2):
                    r.got(f"{k}.{ob}", v, "[value, sigma]")
                kw[ob] = tuple(r.number(f"{k}.{ob}", x) for x in v)
        try:
            layers.append(Layer(water_depth_km=hw, **kw))
        except ValueError as exc:
            r.fail(k, str(exc))
        rocks.append(r.rock_list(f"{k}.rocks", lt["rocks"]) if "rocks" in lt else None)
        priors.append({q: _prior(r, f"{k}.{q}", lt[q], _layer_range(q))
                       for q in _PRIOR_KEYS if q in lt})
    tr = p.get("temperature_range_c", [0.0, 1600.0])
    if not (isinstance(tr, list) and len(tr) == 2):
        r.got("profile.temperature_range_c", tr, "[lo, hi] deg C")
    t_lo, t_hi = (r.number(f"profile.temperature_range_c[{i}]", tr[i], -5.0, 1800.0,
                           unit="deg C") for i in (0, 1))
    if not t_lo < t_hi:
        r.got("profile.temperature_range_c", tr, "[lo, hi] deg C with lo < hi")
    thermal = _thermal(r, "profile.thermal", p.get("thermal", {}), hw, (t_lo, t_hi))
    hf = None
    if "heat_flow" in p:
        ht = r.table("profile.heat_flow", p["heat_flow"])
        r.keys("profile.heat_flow", ht, ("value", "sigma", "mode"))
        for q in ("value", "sigma"):
            if q not in ht:
                r.fail(f"profile.heat_flow.{q}", "missing (mW/m^2)")
        hf = HeatFlow(r.number("profile.heat_flow.value", ht["value"], 0.0, 2000.0,
                               unit="mW/m^2"),
                      r.number("profile.heat_flow.sigma", ht["sigma"], 0.0, 2000.0,
                               lo_open=True, unit="mW/m^2"),
                      r.string("profile.heat_flow.mode", ht.get("mode", "gaussian"),
                               list(HEAT_FLOW_MODES)))
    kw = {}
    if "basement_km" in p:
        kw["basement_km"] = r.number("profile.basement_km", p["basement_km"], 0.0, 100.0)
    try:
        profile = Profile(
            layers, thermal, water_depth_km=hw, rocks=rocks, priors=priors, heat_flow=hf,
            pressure=r.string("profile.pressure", p.get("pressure", "overburden"),
                              list(PRESSURE_MODES)),
            temperature_range_c=(t_lo, t_hi),
            name=r.string("profile.name", p.get("name", "profile")), **kw)
    except ValueError as exc:
        r.fail("profile", str(exc))
    for i, lt in enumerate(raw_layers):  # what the run builds: refuse here what it would refuse
        try:
            profile.layer_model(i)
        except ValueError as exc:
            _layer_fail(r, f"profile.layers[{i}]", lt, profile, i, str(exc))
    compare = {}
    names = p.get("compare", [])
    if not isinstance(names, list):
        r.got("profile.compare", names, "a list of thermal-state names")
    for j, n in enumerate(names):
        n = r.string(f"profile.compare[{j}]", n, list(_THERMAL_PARAMS))
        compare[n] = _thermal(r, "profile.thermal", p.get("thermal", {}), hw, (t_lo, t_hi),
                              state_name=n)
    seed = None
    if "run" in data:
        run = r.table("run", data["run"])
        r.keys("run", run, ("seed",))
        if "seed" in run:
            seed = r.integer("run.seed", run["seed"], 0, 2**63 - 1)
    if not math.isfinite(hw):  # pragma: no cover - number() already checks
        r.fail("profile.water_depth_km", "must be finite")
    plan = None
    if "plan" in data:
        from .plan import read_plan

        plan = read_plan(r, "plan", data["plan"])
        names = list(profile.names)
        for i, c in enumerate(data["plan"].get("candidates") or ()):
            if isinstance(c, dict) and c.get("layer", names[0]) not in names:
                r.got(f"plan.candidates[{i}].layer", c["layer"], f"one of {names}")
    return ProfileStudy(profile=profile, compare=compare, seed=seed, source=source, plan=plan)


def _prior_value(p):
    """A prior as the study file writes it: a number (fixed), ``[lo, hi]`` (uniform), else
    ``None`` (a package default the file format cannot state, e.g. a normal prior)."""
    from ..inference.priors import Uniform

    if isinstance(p, (int, float)):
        return float(p)
    if getattr(p, "fixed", False):
        return float(p.value)
    if type(p) is Uniform:
        return [float(p.lo), float(p.hi)]
    return None


def _state_name(state):
    from ..profile.thermal import THERMAL_STATES

    return next(k for k, cls in THERMAL_STATES.items() if type(state) is cls)


def _param(state, k):
    return _prior_value(state.scatter_c if k == "scatter_c" else state.params[k])


def _thermal_dict(state, compared=()) -> dict:
    """The ``[profile.thermal]`` table: a parameter is written unless it is the default of
    every state that reads it (compared states share the table and keep their own defaults,
    so a value the file set equal to the main state's default is still written when a compared
    state's default differs)."""
    name = _state_name(state)
    d = {"state": name}
    if not state.coupled:
        return {**d, "lo": float(state.lo), "hi": float(state.hi)}
    readers = [state] + [s for s in compared if s.coupled]
    for k in _THERMAL_PARAMS[name]:
        v = _param(state, k)
        if v is None:
            continue
        if any(k in _THERMAL_PARAMS[_state_name(s)] and _param(s, k) != _param(type(s)(), k)
               for s in readers):
            d[k] = v
    return d


def profile_study_to_dict(study: ProfileStudy) -> dict:
    """The profile study as read, with the defaults it resolved (rocks of every layer, the
    temperature range, the pressure mode, ...), as plain data in the study-file layout.

    Thermal parameters at the defaults of every state that reads them are left out (the
    compared states share the ``[profile.thermal]`` table and keep their own defaults);
    ``ThermalState.describe()`` is the complete form."""
    import dataclasses

    prof = study.profile
    p = {"name": prof.name, "water_depth_km": prof.water_depth_km, "pressure": prof.pressure,
         "basement_km": prof.basement_km, "temperature_range_c": list(prof.temperature_range_c)}
    if study.compare:
        p["compare"] = list(study.compare)
    p["thermal"] = _thermal_dict(prof.thermal, tuple(study.compare.values()))
    if prof.heat_flow is not None:
        p["heat_flow"] = dataclasses.asdict(prof.heat_flow)
    layers = []
    for x, rocks, pri in zip(prof.layers, prof.rocks, prof.priors, strict=True):
        d = {"name": x.name, "top_km": x.top_km, "bottom_km": x.bottom_km}
        d.update({k: list(v) for k, v in x.observed.items()})
        d["rocks"] = list(rocks)
        d.update({k: _prior_value(v) for k, v in pri.items()})
        layers.append(d)
    p["layers"] = layers
    out = {"profile": p}
    if study.plan is not None:
        from .plan import plan_dict

        out["plan"] = plan_dict(study.plan)
    if study.seed is not None:
        out["run"] = {"seed": study.seed}
    return out
