"""Study files: read a TOML study description into frozen settings objects.

This module only *builds* settings from TOML (stdlib :mod:`tomllib`) and reports bad input as
``file: key: got X, expected Y``. It never samples or computes physics; the objects of the Python
API (layers, priors, thermal priors) are built on request by the ``build_*`` functions, which import
:mod:`bayescrust.inference` lazily.

The file format is documented key by key in ``docs/study-file.md``.
"""

from __future__ import annotations

import difflib
import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .inference.layer import DEPTH_RANGE_KM, WATER_DEPTH_RANGE_KM
from .inference.layer import OBSERVABLES as _LAYER_OBSERVABLES
from .inference.model import DERIVED_QUANTITIES
from .inference.model import PARAMETER_RANGES as _MODEL_RANGES
from .physics.rocks import ROCKS

__all__ = [
    "StudyError",
    "Observation",
    "PriorSpec",
    "ThermalSpec",
    "LayerSpec",
    "SamplerSpec",
    "StudySpec",
    "load_study",
    "parse_study",
    "study_to_dict",
    "dumps_toml",
    "build_layer",
    "build_prior",
    "build_thermal_prior",
    "layer_arguments",
    "known_rocks",
]

# --------------------------------------------------------------------------------------------
# Tables of allowed keys and ranges (ranges are input sanity limits, not literature values)
# --------------------------------------------------------------------------------------------

#: Units of the free parameters of a layer other than the rock fractions.
_PARAMETER_UNITS = {
    "temperature_c": "deg C",
    "porosity": "volume fraction",
    "aspect_ratio": "",
    "melt_fraction": "volume fraction",
    "melt_aspect_ratio": "",
    "serpentinization": "fraction of the ultramafic volume",
}

#: Free parameters: (lo, hi, unit); the ranges are the inference package's own.
PARAMETER_RANGES: dict[str, tuple[float, float, str]] = {
    k: (float(lo), float(hi), _PARAMETER_UNITS.get(k, ""))
    for k, (lo, hi) in _MODEL_RANGES.items()
}

#: Observable quantities of a layer: (lo, hi, unit) for the value; sigma must be > 0.
OBSERVABLES: dict[str, tuple[float, float, str]] = {
    k: (float(lo), float(hi), unit) for k, ((lo, hi), unit) in _LAYER_OBSERVABLES.items()
}

#: Derived quantities a hypothesis may constrain besides parameters and rock fractions.
DERIVED = tuple(DERIVED_QUANTITIES)

DEFAULT_ROCKS = ("basalt", "gabbro", "harzburgite")

PRIOR_KINDS: dict[str, tuple[str, ...]] = {
    "uniform": ("lo", "hi"),
    "loguniform": ("lo", "hi"),
    "normal": ("mean", "sd"),
    "truncated_normal": ("mean", "sd", "lo", "hi"),
    "beta": ("a", "b"),
    "dirichlet": ("alpha",),
    "fixed": ("value",),
}

#: Thermal-state prior kinds: key -> (kind of value, lo, hi, unit); "prior" takes a number or a
#: prior table, "number" a number only. Bounds are input sanity limits.
THERMAL_KINDS: dict[str, dict[str, tuple[str, float, float, str]]] = {
    "uniform": {"lo": ("number", -5.0, 2000.0, "deg C"), "hi": ("number", -5.0, 2000.0, "deg C")},
    "half_space": {
        "age_myr": ("prior", 0.0, 200.0, "Myr"),
        "mantle_temperature_c": ("prior", 800.0, 2000.0, "deg C"),
        "scatter_c": ("number", 0.0, 500.0, "deg C"),
        "surface_temperature_c": ("number", -5.0, 50.0, "deg C"),
        "diffusivity_m2_s": ("number", 1e-8, 1e-4, "m^2/s"),
    },
    "hot_axial": {
        "offset_c": ("number", -500.0, 500.0, "deg C"),
        "sd_c": ("number", 0.0, 1000.0, "deg C"),
        "below_c": ("number", 0.0, 2000.0, "deg C"),
        "above_c": ("number", 0.0, 2000.0, "deg C"),
    },
}

#: Forward-model settings ([forward] table): key -> allowed values or (lo, hi, unit).
FORWARD_KEYS: dict[str, Any] = {
    "mixing": ("hill", "voigt", "reuss", "hashin_shtrikman"),
    "inclusion_scheme": ("dem", "self_consistent", "kuster_toksoz"),
    "serpentine": ("lizardite", "antigorite"),
    "frequency_hz": (1e-3, 1e3, "Hz"),
    "grain_size_mm": (1e-3, 100.0, "mm"),
    "anelastic": (True, False),
    "salinity": (0.0, 0.3, "mass fraction"),
}

TOP_KEYS = (
    "title", "description", "water_depth_km", "seed", "rocks", "model_error",
    "likelihood", "student_t_nu", "thermal_prior", "priors", "thermal", "hypotheses", "layers",
    "sampler", "forward", "run",
)
LAYER_KEYS = (
    "name", "top_km", "bottom_km", "pressure_gpa", "vp", "vs", "vp_vs", "density", "rocks",
    "priors", "hypotheses", "thermal_prior", "model_error",
)
SAMPLER_KEYS = ("method", "walkers", "min_ess", "max_steps", "tau_factor", "exact_points")
LIKELIHOOD_KINDS = ("gaussian", "student_t")


# --------------------------------------------------------------------------------------------
# Errors
# --------------------------------------------------------------------------------------------


class StudyError(ValueError):
    """Bad study file: names the file, the key (or line) and what was expected.

    Parameters
    ----------
    file : str
        The study file as the user named it.
    key : str
        Dotted key (``layers[2].vp``) or ``line N`` for syntax errors.
    message : str
        ``got X, expected Y`` or another one-line explanation.
    """

    def __init__(self, file: str, key: str, message: str):
        self.file = str(file)
        self.key = key
        self.message = message
        super().__init__(f"{self.file}: {key}: {message}" if key else f"{self.file}: {message}")


def _suggest(key: str, allowed) -> str:
    close = difflib.get_close_matches(str(key), list(allowed), n=1, cutoff=0.5)
    if close:
        return f"did you mean {close[0]!r}?"
    return "allowed keys: " + ", ".join(sorted(allowed))


# --------------------------------------------------------------------------------------------
# Settings objects (frozen; only hold values)
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Observation:
    """An observed quantity with its 1-sigma error (same unit as the value)."""

    value: float
    sigma: float


@dataclass(frozen=True)
class PriorSpec:
    """A prior distribution by kind (see :data:`PRIOR_KINDS`) and its parameters."""

    kind: str
    params: dict[str, Any] = field(default_factory=dict)

    def describe(self) -> str:
        inner = ", ".join(f"{k}={v}" for k, v in self.params.items())
        return f"{self.kind}({inner})"


@dataclass(frozen=True)
class ThermalSpec:
    """A named thermal-state prior (kind in :data:`THERMAL_KINDS`)."""

    name: str
    kind: str
    params: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class LayerSpec:
    """One layer of the study: depths below the seafloor (km) and observations."""

    name: str
    top_km: float
    bottom_km: float
    observations: dict[str, Observation]
    pressure_gpa: float | None = None
    rocks: tuple[str, ...] | None = None
    priors: dict[str, PriorSpec] = field(default_factory=dict)
    hypotheses: dict[str, dict[str, tuple[float, float]]] | None = None
    thermal_prior: str | None = None
    model_error: float | dict[str, float] | None = None


@dataclass(frozen=True)
class SamplerSpec:
    """Sampler settings; ``None`` leaves the inference package's default."""

    method: str = "mcmc"
    walkers: int | None = None
    min_ess: float | None = None
    max_steps: int | None = None
    tau_factor: float | None = None
    exact_points: int | None = None

    def arguments(self, method: str | None = None) -> dict:
        """Keyword arguments of ``invert_layer`` (mcmc) or ``exact_layer`` (exact)."""
        m = method or self.method
        if m == "exact":
            return {} if self.exact_points is None else {"n_points": self.exact_points}
        names = {"walkers": "n_walkers", "min_ess": "min_ess", "max_steps": "max_steps",
                 "tau_factor": "tau_factor"}
        return {api: getattr(self, k) for k, api in names.items() if getattr(self, k) is not None}


@dataclass(frozen=True)
class StudySpec:
    """A whole study as read from one file."""

    source: str
    title: str
    description: str
    water_depth_km: float
    seed: int
    rocks: tuple[str, ...]
    model_error: float | dict[str, float] | None
    likelihood: str
    student_t_nu: float | None
    forward: dict[str, Any]
    priors: dict[str, PriorSpec]
    thermal: dict[str, ThermalSpec]
    thermal_prior: str | None
    hypotheses: dict[str, dict[str, tuple[float, float]]] | None
    layers: tuple[LayerSpec, ...]
    sampler: SamplerSpec

    def layer(self, name: str) -> LayerSpec:
        """Return the layer called ``name`` (``KeyError`` with the nearest name otherwise)."""
        for lay in self.layers:
            if lay.name == name:
                return lay
        names = [lay.name for lay in self.layers]
        raise KeyError(f"no layer named {name!r}; {_suggest(name, names)}")

    # resolved per-layer settings -----------------------------------------------------------
    def rocks_for(self, layer: LayerSpec) -> tuple[str, ...]:
        return layer.rocks if layer.rocks is not None else self.rocks

    def priors_for(self, layer: LayerSpec) -> dict[str, PriorSpec]:
        merged = dict(self.priors)
        merged.update(layer.priors)
        return merged

    def hypotheses_for(self, layer: LayerSpec):
        return layer.hypotheses if layer.hypotheses is not None else self.hypotheses

    def thermal_for(self, layer: LayerSpec) -> ThermalSpec | None:
        name = layer.thermal_prior or self.thermal_prior
        if name is None:
            return None
        return self.thermal[name]

    def model_error_for(self, layer: LayerSpec) -> float | dict[str, float] | None:
        return layer.model_error if layer.model_error is not None else self.model_error


# --------------------------------------------------------------------------------------------
# Reading
# --------------------------------------------------------------------------------------------


def layer_slug(name: str) -> str:
    """Folder-safe form of a layer name (letters and digits; other runs become ``_``)."""
    s = re.sub(r"[^A-Za-z0-9]+", "_", name).strip("_").lower()
    return s or "layer"


def known_rocks() -> tuple[str, ...]:
    """Names of the end-member rocks of the forward model."""
    return tuple(ROCKS)


def load_study(path) -> StudySpec:
    """Read and validate a study file.

    Parameters
    ----------
    path : str or path-like
        The TOML study file.

    Returns
    -------
    StudySpec

    Raises
    ------
    StudyError
        Missing or unreadable file, TOML syntax error (with line), unknown key (with the nearest
        valid key), wrong type or value out of range; the message names the file and the key.
    """
    name = str(path)
    p = Path(path)
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise StudyError(name, "", "file not found") from None
    except IsADirectoryError:
        raise StudyError(name, "", "is a folder, expected a TOML study file") from None
    except OSError as exc:
        raise StudyError(name, "", f"cannot read file ({exc.strerror})") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise StudyError(name, "", "not UTF-8 text, expected a TOML study file") from None
    return parse_study(text, source=name)


_LINE = re.compile(r"\(at line (\d+), column (\d+)\)")


def parse_study(text: str, *, source: str = "<string>") -> StudySpec:
    """Validate the TOML text of a study; see :func:`load_study`."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = _LINE.search(msg)
        where = f"line {m.group(1)}" if m else "TOML"
        detail = _LINE.sub("", msg).strip()
        if m:
            detail += f" (column {m.group(2)})"
        raise StudyError(source, where, f"TOML syntax error: {detail}") from None
    return _Reader(source).study(data)


def _fmt(value) -> str:
    if isinstance(value, str):
        return repr(value)
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        return f"a list of {len(value)}" if len(value) > 3 else repr(value)
    return repr(value)


class _Reader:
    """Walks the parsed TOML, collecting the dotted key for error messages."""

    def __init__(self, source: str):
        self.source = source

    def fail(self, key: str, message: str):
        raise StudyError(self.source, key, message)

    def got(self, key: str, value, expected: str):
        self.fail(key, f"got {_fmt(value)}, expected {expected}")

    # primitives ----------------------------------------------------------------------------
    def keys(self, key: str, table: dict, allowed) -> None:
        for k in table:
            if k not in allowed:
                self.fail(f"{key}.{k}" if key else k, f"unknown key; {_suggest(k, allowed)}")

    def table(self, key: str, value) -> dict:
        if not isinstance(value, dict):
            self.got(key, value, "a table")
        return value

    def number(self, key, value, lo=None, hi=None, *, lo_open=False, unit="") -> float:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            self.got(key, value, "a number" + (f" in {unit}" if unit else ""))
        x = float(value)
        u = f" {unit}" if unit else ""
        if not math.isfinite(x):
            self.got(key, value, "a finite number")
        if lo is not None and (x <= lo if lo_open else x < lo):
            rng = f"> {lo:g}{u}" if lo_open else f">= {lo:g}{u}"
            if hi is not None:
                rng = f"a number in {'(' if lo_open else '['}{lo:g}, {hi:g}]{u}"
            self.got(key, value, rng)
        if hi is not None and x > hi:
            lb = "(" if lo_open else "["
            self.got(key, value, f"a number in {lb}{lo:g}, {hi:g}]{u}" if lo is not None
                     else f"<= {hi:g}{u}")
        return x

    def bound(self, key, value) -> float:
        """A range bound: a number, or -inf / inf for an open side."""
        if isinstance(value, bool) or not isinstance(value, (int, float)) or math.isnan(value):
            self.got(key, value, "a number (or -inf / inf for an open side)")
        return float(value)

    def integer(self, key, value, lo=None, hi=None) -> int:
        if isinstance(value, bool) or not isinstance(value, int):
            self.got(key, value, "an integer")
        if (lo is not None and value < lo) or (hi is not None and value > hi):
            self.got(key, value, f"an integer in [{lo}, {hi}]")
        return int(value)

    def string(self, key, value, choices=None) -> str:
        if not isinstance(value, str):
            self.got(key, value, "a string")
        if choices is not None and value not in choices:
            hint = difflib.get_close_matches(value, list(choices), n=1, cutoff=0.5)
            extra = f" (did you mean {hint[0]!r}?)" if hint else ""
            self.got(key, value, "one of " + ", ".join(repr(c) for c in choices) + extra)
        if choices is None and not value.strip():
            self.got(key, value, "a non-empty string")
        return value

    def rock(self, key, value) -> str:
        rocks = known_rocks()
        if not isinstance(value, str):
            self.got(key, value, "a rock name (string)")
        if value not in rocks:
            hint = difflib.get_close_matches(value, rocks, n=1, cutoff=0.5)
            extra = f"did you mean {hint[0]!r}? " if hint else ""
            self.fail(key, f"unknown rock {value!r}; {extra}known rocks: {', '.join(rocks)}")
        return value

    def rock_list(self, key, value) -> tuple[str, ...]:
        if not isinstance(value, list) or not value:
            self.got(key, value, "a non-empty list of rock names")
        out = tuple(self.rock(f"{key}[{i}]", v) for i, v in enumerate(value))
        if len(set(out)) != len(out):
            self.got(key, value, "each rock at most once")
        return out

    # compound ------------------------------------------------------------------------------
    def observation(self, key, value, name) -> Observation:
        lo, hi, unit = OBSERVABLES[name]
        if isinstance(value, list):
            if len(value) != 2:
                self.got(key, value, f"[value, sigma] in {unit or 'the same unit'}")
            v, s = value
            vkey, skey = f"{key}[0]", f"{key}[1]"
        elif isinstance(value, dict):
            self.keys(key, value, ("value", "sigma"))
            if "value" not in value or "sigma" not in value:
                self.got(key, value, "a table with both 'value' and 'sigma'")
            v, s = value["value"], value["sigma"]
            vkey, skey = f"{key}.value", f"{key}.sigma"
        else:
            self.got(key, value, f"[value, sigma] in {unit or 'the same unit'}")
        val = self.number(vkey, v, lo, hi, unit=unit)
        if isinstance(s, bool) or not isinstance(s, (int, float)) or not math.isfinite(s) or s <= 0:
            self.got(skey, s, "a 1-sigma error > 0")
        if s > hi - lo:
            self.got(skey, s, f"a 1-sigma error <= {hi - lo:g} {unit}".rstrip())
        return Observation(val, float(s))

    def prior(self, key, value, pname, rocks) -> PriorSpec:
        """A prior: a number (fixed value) or a table with ``dist`` and its parameters."""
        rng = PARAMETER_RANGES.get(pname)
        if pname == "fractions":
            if isinstance(value, dict):
                spec = self._dist(key, value, ("dirichlet",))
                alpha = spec.params["alpha"]
                if isinstance(alpha, list) and len(alpha) != len(rocks):
                    self.got(f"{key}.alpha", alpha, f"one value per rock ({len(rocks)})")
                return spec
            self.got(key, value, "a table {dist = \"dirichlet\", alpha = ...}")
        if isinstance(value, dict):
            kinds = tuple(k for k in PRIOR_KINDS if k not in ("dirichlet",))
            spec = self._dist(key, value, kinds)
            lo, hi = (rng[0], rng[1]) if rng else (0.0, 1.0)
            unit = rng[2] if rng else "volume fraction"
            for b in ("lo", "hi"):
                if b in spec.params:
                    self.number(f"{key}.{b}", spec.params[b], lo, hi, unit=unit)
            prm = spec.params
            if "lo" in prm and "hi" in prm and prm["lo"] >= prm["hi"]:
                self.got(f"{key}.hi", spec.params["hi"], f"a number > lo ({spec.params['lo']:g})")
            if spec.kind == "loguniform" and spec.params["lo"] <= 0:
                self.got(f"{key}.lo", spec.params["lo"], "a number > 0 for a log-uniform prior")
            return spec
        lo, hi = (rng[0], rng[1]) if rng else (0.0, 1.0)
        unit = rng[2] if rng else "volume fraction"
        x = self.number(key, value, lo, hi, unit=unit)
        return PriorSpec("fixed", {"value": x})

    def _dist(self, key, table, kinds) -> PriorSpec:
        if "dist" not in table:
            self.fail(f"{key}.dist", "missing; expected one of " + ", ".join(kinds))
        kind = self.string(f"{key}.dist", table["dist"], kinds)
        needed = PRIOR_KINDS[kind]
        self.keys(key, table, ("dist",) + needed)
        params: dict[str, Any] = {}
        for p in needed:
            if p not in table:
                self.fail(f"{key}.{p}", f"missing; a {kind} prior needs " + ", ".join(needed))
            v = table[p]
            if p == "alpha":
                if isinstance(v, list):
                    params[p] = [self.number(f"{key}.alpha[{i}]", a, 0, None, lo_open=True)
                                 for i, a in enumerate(v)]
                else:
                    params[p] = self.number(f"{key}.alpha", v, 0, None, lo_open=True)
            elif p in ("sd", "a", "b"):
                params[p] = self.number(f"{key}.{p}", v, 0, None, lo_open=True)
            else:
                params[p] = self.number(f"{key}.{p}", v)
        return PriorSpec(kind, params)

    def priors(self, key, value, rocks) -> dict[str, PriorSpec]:
        table = self.table(key, value)
        allowed = tuple(PARAMETER_RANGES) + ("fractions",) + tuple(rocks)
        self.keys(key, table, allowed)
        out = {}
        for k, v in table.items():
            if k in rocks and isinstance(v, dict):
                self.got(f"{key}.{k}", v, "a number (a rock fraction can only be fixed; use "
                                          "priors.fractions = {dist = \"dirichlet\", ...})")
            out[k] = self.prior(f"{key}.{k}", v, k, rocks)
        fixed = [k for k in out if k in rocks]
        if fixed and "fractions" in out:
            self.fail(f"{key}.fractions",
                      "give either fractions or fixed per-rock values, not both")
        if fixed and set(fixed) != set(rocks):
            missing = [r for r in rocks if r not in fixed]
            self.fail(f"{key}.{missing[0]}", f"missing; fixing rock fractions needs a value for "
                                           f"every rock ({', '.join(rocks)})")
        if fixed and abs(sum(out[k].params["value"] for k in fixed) - 1.0) > 1e-6:
            self.got(key, {k: out[k].params["value"] for k in fixed},
                     "fixed fractions summing to 1")
        return out

    def hypotheses(self, key, value, rocks_allowed) -> dict[str, dict[str, tuple[float, float]]]:
        table = self.table(key, value)
        if not table:
            self.got(key, value, "at least one named interpretation")
        allowed = tuple(PARAMETER_RANGES) + tuple(rocks_allowed) + DERIVED
        out = {}
        for hname, conds in table.items():
            bare = re.fullmatch(r"[A-Za-z0-9_-]+", hname)
            hkey = f"{key}.{hname}" if bare else f"{key}.{hname!r}"
            conds = self.table(hkey, conds)
            if not conds:
                self.got(hkey, conds, "at least one condition such as temperature_c = [900, 1400]")
            self.keys(hkey, conds, allowed)
            rng = {}
            for p, bounds in conds.items():
                ck = f"{hkey}.{p}"
                if not isinstance(bounds, list) or len(bounds) != 2:
                    self.got(ck, bounds, "[lower, upper]")
                lo = self.bound(f"{ck}[0]", bounds[0])
                hi = self.bound(f"{ck}[1]", bounds[1])
                if lo >= hi:
                    self.got(ck, bounds, "[lower, upper] with lower < upper")
                rng[p] = (lo, hi)
            out[hname] = rng
        return out

    def thermal(self, key, value) -> dict[str, ThermalSpec]:
        table = self.table(key, value)
        if not table:
            self.got(key, value, "one or more [thermal.NAME] tables")
        out = {}
        for tname, body in table.items():
            tkey = f"{key}.{tname}"
            body = self.table(tkey, body)
            if "kind" not in body:
                self.fail(f"{tkey}.kind", "missing; expected one of " + ", ".join(THERMAL_KINDS))
            kind = self.string(f"{tkey}.kind", body["kind"], tuple(THERMAL_KINDS))
            fields = THERMAL_KINDS[kind]
            self.keys(tkey, body, ("kind",) + tuple(fields))
            params: dict[str, Any] = {}
            for p, (what, lo, hi, unit) in fields.items():
                if p not in body:
                    if kind == "uniform":
                        self.fail(f"{tkey}.{p}", "missing; a uniform thermal prior needs lo and hi")
                    continue
                pk, v = f"{tkey}.{p}", body[p]
                if what == "prior" and isinstance(v, dict):
                    spec = self._dist(pk, v,
                                      ("uniform", "loguniform", "normal", "truncated_normal"))
                    self._bounds(pk, spec, lo, hi, unit)
                    if p == "age_myr" and spec.kind in ("normal",):
                        self.got(f"{pk}.dist", spec.kind,
                                 "a prior with positive support (uniform, loguniform, "
                                 "truncated_normal with lo > 0)")
                    if p == "age_myr" and spec.params.get("lo", 1.0) <= 0:
                        self.got(f"{pk}.lo", spec.params["lo"], "an age > 0 Myr")
                    params[p] = spec
                else:
                    open_lo = p in ("sd_c", "below_c", "above_c", "scatter_c", "age_myr",
                                    "diffusivity_m2_s")
                    params[p] = self.number(pk, v, lo, hi, lo_open=open_lo, unit=unit)
            if kind == "uniform" and params["lo"] >= params["hi"]:
                self.got(f"{tkey}.hi", params["hi"], f"a number > lo ({params['lo']:g})")
            out[tname] = ThermalSpec(tname, kind, params)
        return out

    def _bounds(self, key, spec: PriorSpec, lo, hi, unit) -> None:
        for b in ("lo", "hi"):
            if b in spec.params:
                self.number(f"{key}.{b}", spec.params[b], lo, hi, unit=unit)
        if "lo" in spec.params and "hi" in spec.params and spec.params["lo"] >= spec.params["hi"]:
            self.got(f"{key}.hi", spec.params["hi"], f"a number > lo ({spec.params['lo']:g})")
        if spec.kind == "loguniform" and spec.params["lo"] <= 0:
            self.got(f"{key}.lo", spec.params["lo"], "a number > 0 for a log-uniform prior")

    def sampler(self, key, value) -> SamplerSpec:
        table = self.table(key, value)
        self.keys(key, table, SAMPLER_KEYS)
        kw: dict[str, Any] = {}
        if "method" in table:
            kw["method"] = self.string(f"{key}.method", table["method"], ("mcmc", "exact"))
        if "walkers" in table:
            kw["walkers"] = self.integer(f"{key}.walkers", table["walkers"], 8, 10000)
        if "max_steps" in table:
            kw["max_steps"] = self.integer(f"{key}.max_steps", table["max_steps"], 100, 10_000_000)
        if "min_ess" in table:
            kw["min_ess"] = self.number(f"{key}.min_ess", table["min_ess"], 10.0, 1e7)
        if "tau_factor" in table:
            kw["tau_factor"] = self.number(f"{key}.tau_factor", table["tau_factor"], 1.0, 1000.0)
        if "exact_points" in table:
            kw["exact_points"] = self.integer(f"{key}.exact_points", table["exact_points"],
                                              256, 2**24)
        return SamplerSpec(**kw)

    def forward(self, key, value) -> dict[str, Any]:
        table = self.table(key, value)
        self.keys(key, table, tuple(FORWARD_KEYS))
        out: dict[str, Any] = {}
        for k, v in table.items():
            allowed = FORWARD_KEYS[k]
            if k == "anelastic":
                if not isinstance(v, bool):
                    self.got(f"{key}.{k}", v, "true or false")
                out[k] = v
            elif isinstance(allowed[0], str):
                out[k] = self.string(f"{key}.{k}", v, allowed)
            else:
                out[k] = self.number(f"{key}.{k}", v, allowed[0], allowed[1], unit=allowed[2])
        return out

    def model_error(self, key, value):
        """A fraction of the observed value, or a table of fractions per observed quantity."""
        if isinstance(value, dict):
            self.keys(key, value, tuple(OBSERVABLES))
            return {q: self.number(f"{key}.{q}", v, 0.0, 0.5, unit="(fraction of the value)")
                    for q, v in value.items()}
        return self.number(key, value, 0.0, 0.5, unit="(fraction of the observed value)")

    def layer(self, key, value, study_rocks, thermal_names) -> LayerSpec:
        t = self.table(key, value)
        self.keys(key, t, LAYER_KEYS)
        if "name" not in t:
            self.fail(f"{key}.name", "missing; every layer needs a name")
        name = self.string(f"{key}.name", t["name"])
        for req in ("top_km", "bottom_km"):
            if req not in t:
                self.fail(f"{key}.{req}", "missing; depth below the seafloor in km")
        top = self.number(f"{key}.top_km", t["top_km"], *DEPTH_RANGE_KM, unit="km")
        bottom = self.number(f"{key}.bottom_km", t["bottom_km"], *DEPTH_RANGE_KM, unit="km")
        if bottom <= top:
            self.got(f"{key}.bottom_km", t["bottom_km"],
                     f"a depth greater than top_km ({top:g} km)")
        obs = {q: self.observation(f"{key}.{q}", t[q], q) for q in OBSERVABLES if q in t}
        if not obs:
            self.fail(key, "no observation; expected at least one of vp, vs, vp_vs, density "
                           "as [value, sigma]")
        pressure = None
        if "pressure_gpa" in t:
            pressure = self.number(f"{key}.pressure_gpa", t["pressure_gpa"], 0.0, 5.0, unit="GPa")
        rocks = self.rock_list(f"{key}.rocks", t["rocks"]) if "rocks" in t else None
        use_rocks = rocks or study_rocks
        priors = self.priors(f"{key}.priors", t["priors"], use_rocks) if "priors" in t else {}
        hyps = (self.hypotheses(f"{key}.hypotheses", t["hypotheses"], use_rocks)
                if "hypotheses" in t else None)
        tp = None
        if "thermal_prior" in t:
            tp = self.thermal_name(f"{key}.thermal_prior", t["thermal_prior"], thermal_names)
        me = None
        if "model_error" in t:
            me = self.model_error(f"{key}.model_error", t["model_error"])
        return LayerSpec(name, top, bottom, obs, pressure, rocks, priors, hyps, tp, me)

    def thermal_name(self, key, value, names) -> str:
        if not isinstance(value, str):
            self.got(key, value, "the name of a [thermal.NAME] table")
        if value not in names:
            if not names:
                self.fail(key, f"got {value!r}, but the file defines no [thermal.NAME] tables")
            self.fail(key, f"got {value!r}, expected one of {', '.join(map(repr, names))}")
        return value

    def study(self, data: dict) -> StudySpec:
        self.keys("", data, TOP_KEYS)
        if "water_depth_km" not in data:
            self.fail("water_depth_km", "missing; water depth above the seafloor in km")
        water = self.number("water_depth_km", data["water_depth_km"], *WATER_DEPTH_RANGE_KM,
                             unit="km")
        title = self.string("title", data["title"]) if "title" in data else Path(self.source).stem
        desc = data.get("description", "")
        if not isinstance(desc, str):
            self.got("description", desc, "a string")
        seed = self.integer("seed", data["seed"], 0, 2**63 - 1) if "seed" in data else 0
        rocks = self.rock_list("rocks", data["rocks"]) if "rocks" in data else DEFAULT_ROCKS
        model_error = None
        if "model_error" in data:
            model_error = self.model_error("model_error", data["model_error"])
        likelihood = "gaussian"
        if "likelihood" in data:
            likelihood = self.string("likelihood", data["likelihood"], LIKELIHOOD_KINDS)
        nu = None
        if "student_t_nu" in data:
            nu = self.number("student_t_nu", data["student_t_nu"], 1.0, 1000.0)
        forward = self.forward("forward", data["forward"]) if "forward" in data else {}
        thermal = self.thermal("thermal", data["thermal"]) if "thermal" in data else {}
        names = tuple(thermal)
        tp = None
        if "thermal_prior" in data:
            tp = self.thermal_name("thermal_prior", data["thermal_prior"], names)
        elif names:
            tp = names[0]
        priors = self.priors("priors", data["priors"], rocks) if "priors" in data else {}
        hyps = None
        if "hypotheses" in data:
            hyps = self.hypotheses("hypotheses", data["hypotheses"], rocks)
        sampler = self.sampler("sampler", data["sampler"]) if "sampler" in data else SamplerSpec()
        if "layers" not in data:
            self.fail("layers", "missing; expected at least one [[layers]] table")
        raw_layers = data["layers"]
        if not isinstance(raw_layers, list) or not raw_layers:
            self.got("layers", raw_layers, "one or more [[layers]] tables")
        layers = tuple(self.layer(f"layers[{i}]", v, rocks, names)
                       for i, v in enumerate(raw_layers))
        seen = {}
        for i, lay in enumerate(layers):
            slug = layer_slug(lay.name)  # each layer writes into a folder named after it
            if slug in seen:
                self.got(f"layers[{i}].name", lay.name,
                         f"a name distinct from layer {seen[slug]!r} (both give folder {slug!r})")
            seen[slug] = lay.name
        # hypotheses must refer to rocks used by the layer
        for i, lay in enumerate(layers):
            hy = lay.hypotheses if lay.hypotheses is not None else hyps
            use_rocks = lay.rocks or rocks
            for hname, conds in (hy or {}).items():
                for p in conds:
                    if p in known_rocks() and p not in use_rocks:
                        where = (f"layers[{i}].hypotheses" if lay.hypotheses is not None
                                 else "hypotheses")
                        self.fail(f"{where}.{hname}.{p}",
                                  f"rock {p!r} is not among the rocks of layer {lay.name!r} "
                                  f"({', '.join(use_rocks)})")
            pri = dict(priors)
            pri.update(lay.priors)
            fr = pri.get("fractions")
            if fr is not None and isinstance(fr.params.get("alpha"), list) \
                    and len(fr.params["alpha"]) != len(use_rocks):
                self.got(f"layers[{i}].priors.fractions.alpha" if "fractions" in lay.priors
                         else "priors.fractions.alpha", fr.params["alpha"],
                         f"one value per rock of layer {lay.name!r} ({len(use_rocks)})")
        return StudySpec(self.source, title, desc, water, seed, rocks, model_error, likelihood,
                         nu, forward, priors, thermal, tp, hyps, layers, sampler)


# --------------------------------------------------------------------------------------------
# Echo: the resolved study as a plain dict / TOML text
# --------------------------------------------------------------------------------------------


def _prior_dict(spec: PriorSpec):
    if spec.kind == "fixed":
        return spec.params["value"]
    return {"dist": spec.kind, **spec.params}


def study_to_dict(study: StudySpec) -> dict:
    """The resolved study (defaults filled in, per-layer settings merged) as plain data."""
    out: dict[str, Any] = {
        "title": study.title,
        "water_depth_km": study.water_depth_km,
        "seed": study.seed,
        "rocks": list(study.rocks),
        "likelihood": study.likelihood,
    }
    if study.student_t_nu is not None:
        out["student_t_nu"] = study.student_t_nu
    if study.forward:
        out["forward"] = dict(study.forward)
    if study.description:
        out["description"] = study.description
    if study.model_error is not None:
        out["model_error"] = study.model_error
    if study.thermal_prior is not None:
        out["thermal_prior"] = study.thermal_prior
    s = study.sampler
    out["sampler"] = {k: v for k, v in vars(s).items() if v is not None}
    if study.thermal:
        out["thermal"] = {
            n: {"kind": t.kind, **{k: (_prior_dict(v) if isinstance(v, PriorSpec) else v)
                                   for k, v in t.params.items()}}
            for n, t in study.thermal.items()
        }
    layers = []
    for lay in study.layers:
        d: dict[str, Any] = {"name": lay.name, "top_km": lay.top_km, "bottom_km": lay.bottom_km}
        if lay.pressure_gpa is not None:
            d["pressure_gpa"] = lay.pressure_gpa
        for q, o in lay.observations.items():
            d[q] = [o.value, o.sigma]
        d["rocks"] = list(study.rocks_for(lay))
        me = study.model_error_for(lay)
        if me is not None:
            d["model_error"] = me
        th = study.thermal_for(lay)
        if th is not None:
            d["thermal_prior"] = th.name
        pri = study.priors_for(lay)
        if pri:
            d["priors"] = {k: _prior_dict(v) for k, v in pri.items()}
        hy = study.hypotheses_for(lay)
        if hy:
            d["hypotheses"] = {h: {p: list(b) for p, b in c.items()} for h, c in hy.items()}
        layers.append(d)
    out["layers"] = layers
    return out


_BARE = re.compile(r"^[A-Za-z0-9_-]+$")


def _tkey(k: str) -> str:
    return k if _BARE.match(k) else '"' + k.replace("\\", "\\\\").replace('"', '\\"') + '"'


def _tval(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        esc = v.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
        return f'"{esc}"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_tval(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_tkey(k)} = {_tval(x)}" for k, x in v.items()) + "}"
    if v is None:
        raise TypeError("TOML has no null value")
    return _tval(float(v))


def dumps_toml(data: dict, *, header: str = "") -> str:
    """Write nested plain data as TOML text (tables, arrays of tables, inline sub-tables).

    Small, dependency-free writer for the ``run.toml`` echo; ``tomllib.loads`` reads it back.
    """
    lines: list[str] = [f"# {h}".rstrip() for h in header.splitlines()] if header else []

    def emit(prefix: str, table: dict, array: bool = False):
        scalars = {k: v for k, v in table.items()
                   if not isinstance(v, dict) and not _is_table_list(v)}
        subtables = {k: v for k, v in table.items() if isinstance(v, dict)}
        tlists = {k: v for k, v in table.items() if _is_table_list(v)}
        if prefix:
            lines.append("")
            lines.append(f"[[{prefix}]]" if array else f"[{prefix}]")
        for k, v in scalars.items():
            if v is None:
                continue
            lines.append(f"{_tkey(k)} = {_tval(v)}")
        for k, v in subtables.items():
            emit(f"{prefix}.{_tkey(k)}" if prefix else _tkey(k), v)
        for k, v in tlists.items():
            for item in v:
                emit(f"{prefix}.{_tkey(k)}" if prefix else _tkey(k), item, array=True)

    emit("", data)
    return "\n".join(lines).lstrip("\n") + "\n"


def _is_table_list(v) -> bool:
    return isinstance(v, list) and bool(v) and all(isinstance(x, dict) for x in v)


# --------------------------------------------------------------------------------------------
# Builders: settings -> objects of the Python API (lazy import of the inference package)
# --------------------------------------------------------------------------------------------


def build_prior(spec: PriorSpec):
    """Turn a :class:`PriorSpec` into a ``bayescrust.priors`` object (or a float if fixed)."""
    if spec.kind == "fixed":
        return spec.params["value"]
    from bayescrust.inference import priors as P

    p = spec.params
    if spec.kind == "uniform":
        return P.Uniform(p["lo"], p["hi"])
    if spec.kind == "loguniform":
        return P.LogUniform(p["lo"], p["hi"])
    if spec.kind == "normal":
        return P.Normal(p["mean"], p["sd"])
    if spec.kind == "truncated_normal":
        return P.TruncatedNormal(p["mean"], p["sd"], p["lo"], p["hi"])
    if spec.kind == "beta":
        return P.Beta(p["a"], p["b"])
    if spec.kind == "dirichlet":
        return P.Dirichlet(p["alpha"])
    raise ValueError(f"unknown prior kind {spec.kind!r}")


def build_thermal_prior(spec: ThermalSpec | None):
    """Turn a :class:`ThermalSpec` into a thermal-state prior object (``None`` stays ``None``)."""
    if spec is None:
        return None
    from bayescrust.inference import thermal_priors as T  # noqa: N812

    kw = {k: (build_prior(v) if isinstance(v, PriorSpec) else v) for k, v in spec.params.items()}
    if spec.kind == "uniform":
        return T.UniformTemperature(kw["lo"], kw["hi"])
    if spec.kind == "half_space":
        return T.HalfSpaceCooling(**kw)
    if spec.kind == "hot_axial":
        return T.HotAxial(**kw)
    raise ValueError(f"unknown thermal prior kind {spec.kind!r}")


def build_layer(study: StudySpec, layer: LayerSpec):
    """The ``bayescrust.Layer`` of one layer of the study."""
    from bayescrust.inference.layer import Layer

    obs = {q: (o.value, o.sigma) for q, o in layer.observations.items()}
    kw = {}
    if layer.pressure_gpa is not None:
        kw["pressure_gpa"] = layer.pressure_gpa
    return Layer(layer.name, top_km=layer.top_km, bottom_km=layer.bottom_km,
                 water_depth_km=study.water_depth_km, **obs, **kw)


def layer_arguments(study: StudySpec, layer: LayerSpec, *, thermal: ThermalSpec | None = None,
                    with_thermal: bool = True) -> dict:
    """Keyword arguments of ``invert_layer`` / ``exact_layer`` for one layer (without the layer
    and the sampler settings).

    The temperature prior is, in order: the layer's own ``priors.temperature_c``; else
    ``thermal`` (if given) or the layer's selected thermal-state prior; else the study's
    ``priors.temperature_c``; else the inference package's default. ``with_thermal=False``
    leaves the thermal-state prior out.
    """
    kw: dict[str, Any] = {"rocks": study.rocks_for(layer)}
    pri = {k: build_prior(v) for k, v in study.priors_for(layer).items()}
    if with_thermal and "temperature_c" not in layer.priors:
        th = thermal if thermal is not None else study.thermal_for(layer)
        if th is not None:
            pri["temperature_c"] = build_thermal_prior(th)
    if pri:
        kw["priors"] = pri
    hy = study.hypotheses_for(layer)
    if hy is not None:
        kw["hypotheses"] = {h: dict(c) for h, c in hy.items()}
    me = study.model_error_for(layer)
    if me is not None:
        kw["model_error"] = dict(me) if isinstance(me, dict) else me
    if study.likelihood != "gaussian":
        kw["likelihood"] = study.likelihood
    if study.student_t_nu is not None:
        kw["nu"] = study.student_t_nu
    if study.forward:
        kw["forward"] = dict(study.forward)
    return kw
