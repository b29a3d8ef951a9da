"""Section reader: ``[thermal.NAME]`` thermal-state priors and ``thermal_prior`` selections."""

from __future__ import annotations

from typing import Any

from .priors import check_bounds, read_dist
from .reader import Reader
from .specs import ThermalSpec

__all__ = ["THERMAL_KINDS", "read_thermal", "read_thermal_name"]

#: Thermal-state prior kinds: key -> (kind of value, lo, hi, unit); "prior" takes a number or a
#: prior table, "number" a number only. Bounds are input sanity limits.
THERMAL_KINDS: dict[str, dict[str, tuple[str, float, float, str]]] = {
    "uniform": {"lo": ("number", -5.0, 1800.0, "deg C"), "hi": ("number", -5.0, 1800.0, "deg C")},
    "half_space": {
        "age_myr": ("prior", 0.0, 200.0, "Myr"),
        "mantle_temperature_c": ("prior", 800.0, 1800.0, "deg C"),
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


def read_thermal(r: Reader, key, value) -> dict[str, ThermalSpec]:
    table = r.table(key, value)
    if not table:
        r.got(key, value, "one or more [thermal.NAME] tables")
    out = {}
    for tname, body in table.items():
        tkey = f"{key}.{tname}"
        body = r.table(tkey, body)
        if "kind" not in body:
            r.fail(f"{tkey}.kind", "missing; expected one of " + ", ".join(THERMAL_KINDS))
        kind = r.string(f"{tkey}.kind", body["kind"], tuple(THERMAL_KINDS))
        fields = THERMAL_KINDS[kind]
        r.keys(tkey, body, ("kind",) + tuple(fields))
        params: dict[str, Any] = {}
        for p, (what, lo, hi, unit) in fields.items():
            if p not in body:
                if kind == "uniform":
                    r.fail(f"{tkey}.{p}", "missing; a uniform thermal prior needs lo and hi")
                continue
            pk, v = f"{tkey}.{p}", body[p]
            if what == "prior" and isinstance(v, dict):
                spec = read_dist(r, pk, v,
                                  ("uniform", "loguniform", "normal", "truncated_normal"))
                check_bounds(r, pk, spec, lo, hi, unit)
                if p == "age_myr" and spec.kind in ("normal",):
                    r.got(f"{pk}.dist", spec.kind,
                             "a prior with positive support (uniform, loguniform, "
                             "truncated_normal with lo > 0)")
                if p == "age_myr" and spec.params.get("lo", 1.0) <= 0:
                    r.got(f"{pk}.lo", spec.params["lo"], "an age > 0 Myr")
                params[p] = spec
            else:
                open_lo = p in ("sd_c", "below_c", "above_c", "scatter_c", "age_myr",
                                "diffusivity_m2_s")
                params[p] = r.number(pk, v, lo, hi, lo_open=open_lo, unit=unit)
        if kind == "uniform" and params["lo"] >= params["hi"]:
            r.got(f"{tkey}.hi", params["hi"], f"a number > lo ({params['lo']:g})")
        out[tname] = ThermalSpec(tname, kind, params)
    return out


def read_thermal_name(r: Reader, key, value, names) -> str:
    if not isinstance(value, str):
        r.got(key, value, "the name of a [thermal.NAME] table")
    if value not in names:
        if not names:
            r.fail(key, f"got {value!r}, but the file defines no [thermal.NAME] tables")
        r.fail(key, f"got {value!r}, expected one of {', '.join(map(repr, names))}")
    return value
