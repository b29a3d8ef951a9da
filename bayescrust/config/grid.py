"""Reader of a grid study file: the velocity grid, its name mapping, depth zones and run options.

A grid study is its own TOML file (``bayescrust map STUDY``)::

    title = "..."
    seed = 1
    [thermal.young]            # thermal-state priors, as in a layer study
    kind = "half_space"
    [grid]
    file = "section.nc"        # NetCDF or CSV, relative to the study file
    depth = "z"                # depth dim (or CSV column), positive down
    depth_unit = "km"          # or "m"
    depth_reference = "sea_level"   # or "seafloor"
    seafloor = "seafloor"      # variable/column name, or a number (required, also for
                               # depth_reference = "seafloor": it sets the pressure)
    variables = { vp = "vp" }  # observable -> variable
    sigmas = { vp = 0.1 }      # observable -> variable name or number
    age = 5.0                  # crustal age, Myr: a number, a per-column variable name, or
                               # { axis = 0.0, half_rate_mm_yr = 25.0 } (or full_rate_mm_yr;
                               # distance_unit = "km"): age = |distance - axis| / half rate
    [[grid.zones]]
    name = "upper crust"
    top_km = 0.0               # below the seafloor
    bottom_km = 1.5
    rocks = ["basalt", "diabase"]
    thermal_prior = "young"    # optional, a [thermal.NAME]
    priors = { porosity = { dist = "uniform", lo = 0.0, hi = 0.3 } }

Errors are :class:`~.errors.StudyError` naming the file and the dotted key.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from pathlib import Path

from .errors import StudyError
from .limits import known_rocks
from .priors import read_priors
from .reader import Reader
from .thermal import read_thermal, read_thermal_name

__all__ = ["GridStudy", "load_grid_study", "parse_grid_study", "GRID_KEYS"]

TOP = ("title", "description", "seed", "thermal", "grid")
GRID_KEYS = ("file", "depth", "depth_unit", "depth_reference", "seafloor", "distance",
             "ensemble", "variables", "sigmas", "age", "zones", "level_km", "n_points", "min_ess",
             "chunk_size", "path", "n_table", "validate_nodes")
ZONE_KEYS = ("name", "top_km", "bottom_km", "rocks", "thermal_prior", "priors")
_OBS = ("vp", "vs", "vp_vs", "density")
AGE_KEYS = ("axis", "half_rate_mm_yr", "full_rate_mm_yr", "distance_unit")


def _read_age(r, value):
    """``grid.age``: a number (Myr), a variable name, or {axis, half_rate_mm_yr, ...}."""
    from ..grid.ages import AGE_MAX_MYR

    if isinstance(value, str):
        return r.string("grid.age", value)
    if isinstance(value, dict):
        r.keys("grid.age", value, AGE_KEYS)
        rates = [k for k in ("half_rate_mm_yr", "full_rate_mm_yr") if k in value]
        if len(rates) != 1:
            r.fail("grid.age", "give exactly one of half_rate_mm_yr, full_rate_mm_yr "
                   "(age = |distance - axis| / half rate; km / (mm/yr) = Myr)")
        out = {rates[0]: r.number(f"grid.age.{rates[0]}", value[rates[0]], 0.0, 300.0,
                                  lo_open=True, unit="mm/yr")}
        if "axis" in value:
            out["axis"] = r.number("grid.age.axis", value["axis"], None, None)
        if "distance_unit" in value:
            out["distance_unit"] = r.string("grid.age.distance_unit", value["distance_unit"],
                                            ("km", "m"))
        return out
    return r.number("grid.age", value, 0.0, AGE_MAX_MYR, unit="Myr")


@dataclass(frozen=True)
class GridStudy:
    """A validated grid study: ``mapping`` (GridMapping), ``zones`` (Zone objects), options."""

    source: str
    title: str
    seed: int
    file: Path
    mapping: object
    zones: tuple
    options: dict
    validate_nodes: int


def load_grid_study(path) -> GridStudy:
    """Read and validate a grid study file (see the module docstring)."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise StudyError(str(path), "", "file not found") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise StudyError(str(path), "", f"cannot read the study file ({exc})") from None
    return parse_grid_study(text, source=str(path), base=p.parent)


def parse_grid_study(text, *, source="<string>", base=None) -> GridStudy:
    """Validate the TOML text of a grid study; see :func:`load_grid_study`."""
    from ..grid.levels import Zone
    from ..grid.source import GridMapping
    from .build import build_prior, build_thermal_prior

    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StudyError(source, "", f"TOML syntax error: {exc}") from None
    r = Reader(source)
    r.keys("", data, TOP)
    if "grid" not in data:
        r.fail("grid", "missing; a grid study needs a [grid] table")
    g = r.table("grid", data["grid"])
    r.keys("grid", g, GRID_KEYS)
    for k in ("file", "depth", "variables", "sigmas", "zones"):
        if k not in g:
            r.fail(f"grid.{k}", "missing")
    seed = r.integer("seed", data.get("seed", 0), 0, 2**63 - 1)
    thermal = read_thermal(r, "thermal", data["thermal"]) if "thermal" in data else {}
    variables = r.table("grid.variables", g["variables"])
    r.keys("grid.variables", variables, _OBS)
    variables = {k: r.string(f"grid.variables.{k}", v) for k, v in variables.items()}
    sigmas = r.table("grid.sigmas", g["sigmas"])
    r.keys("grid.sigmas", sigmas, _OBS)
    sig = {}
    for k, v in sigmas.items():
        sig[k] = v if isinstance(v, str) else r.number(f"grid.sigmas.{k}", v, 0.0, None,
                                                       lo_open=True)
    for k in variables:
        if k not in sig:
            r.fail(f"grid.sigmas.{k}", f"missing; every variable needs a sigma ({k})")
    age = _read_age(r, g["age"]) if "age" in g else None
    if "seafloor" not in g:  # no default: 0 km of water would pass silently
        r.fail("grid.seafloor", "missing; give the seafloor depth below sea level (a variable "
               "name or a number, depth unit): it sets each level's pressure, and the depth "
               "below the seafloor of a sea-level-referenced grid")
    sf = g["seafloor"]
    if not isinstance(sf, str):
        sf = r.number("grid.seafloor", sf, 0.0, 11000.0)
    try:
        mapping = GridMapping(
            variables=variables, sigmas=sig, depth=r.string("grid.depth", g["depth"]),
            depth_unit=r.string("grid.depth_unit", g.get("depth_unit", "km"), ("km", "m")),
            depth_reference=r.string("grid.depth_reference",
                                     g.get("depth_reference", "sea_level"),
                                     ("sea_level", "seafloor")),
            seafloor=sf, ensemble=g.get("ensemble"), distance=g.get("distance"), age=age)
    except ValueError as exc:
        r.fail("grid", str(exc))
    zones_raw = g["zones"]
    if not isinstance(zones_raw, list) or not zones_raw:
        r.got("grid.zones", zones_raw, "one or more [[grid.zones]] tables")
    zones = []
    for i, z in enumerate(zones_raw):
        key = f"grid.zones[{i}]"
        z = r.table(key, z)
        r.keys(key, z, ZONE_KEYS)
        for k in ("top_km", "bottom_km", "rocks"):
            if k not in z:
                r.fail(f"{key}.{k}", "missing")
        top = r.number(f"{key}.top_km", z["top_km"], 0.0, 100.0, unit="km")
        bottom = r.number(f"{key}.bottom_km", z["bottom_km"], 0.0, 100.0, unit="km")
        if not bottom > top:
            r.got(f"{key}.bottom_km", bottom, f"a depth > top_km ({top:g})")
        rocks = z["rocks"]
        if not isinstance(rocks, list) or not rocks:
            r.got(f"{key}.rocks", rocks, "a list of rock names")
        allowed = known_rocks()
        for j, rock in enumerate(rocks):
            r.string(f"{key}.rocks[{j}]", rock, tuple(allowed))
        priors = {}
        if "priors" in z:
            specs = read_priors(r, f"{key}.priors", z["priors"], rocks)
            priors = {k: build_prior(v) for k, v in specs.items()}
        if "thermal_prior" in z:
            name = read_thermal_name(r, f"{key}.thermal_prior", z["thermal_prior"],
                                     tuple(thermal))
            priors["temperature_c"] = build_thermal_prior(thermal[name])
        zname = r.string(f"{key}.name", z.get("name", f"zone {i + 1}"))
        zones.append(Zone(zname, top, bottom, rocks=tuple(rocks), priors=priors or None))
    by_top = sorted(range(len(zones)), key=lambda i: zones[i].top_km)
    for i, j in zip(by_top, by_top[1:], strict=False):  # disjoint iff no neighbours overlap
        a, b = zones[i], zones[j]
        if b.top_km < a.bottom_km:
            r.fail(f"grid.zones[{j}]", f"{b.name!r} ({b.top_km:g}-{b.bottom_km:g} km) overlaps "
                   f"grid.zones[{i}] {a.name!r} ({a.top_km:g}-{a.bottom_km:g} km below the "
                   "seafloor); zones must not overlap")
    if age is not None:
        from ..grid.ages import age_aware

        if not any(age_aware(z) for z in zones):
            r.fail("grid.age", "given, but no zone has a thermal_prior of kind 'half_space' "
                   "(the crustal age only enters the half-space geotherm)")
    opts = {}
    for k, lo, hi in (("level_km", 1e-3, 10.0), ("min_ess", 0.0, 1e6)):
        if k in g:
            opts[k] = r.number(f"grid.{k}", g[k], lo, hi)
    for k, lo, hi in (("n_points", 16, 2**22), ("chunk_size", 1, 10**8), ("n_table", 5, 10**5)):
        if k in g:
            opts[k] = r.integer(f"grid.{k}", g[k], lo, hi)
    if "path" in g:
        opts["path"] = r.string("grid.path", g["path"], ("auto", "tabulated", "batched"))
    val = r.integer("grid.validate_nodes", g.get("validate_nodes", 0), 0, 10**4)
    f = Path(r.string("grid.file", g["file"]))
    if base is not None and not f.is_absolute():
        f = Path(base) / f
    return GridStudy(source=source, title=str(data.get("title", "")), seed=seed, file=f,
                     mapping=mapping, zones=tuple(zones), options=opts, validate_nodes=val)
