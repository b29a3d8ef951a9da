"""Reading a whole study file: the top-level keys, then each section by its own reader.

To add a section ``[NAME]``: write ``config/NAME.py`` with ``read_NAME(r, key, value)``, add
``"NAME"`` to :data:`TOP_KEYS`, call the reader in :func:`read_study` and give
:class:`~.specs.StudySpec` a field (with a default) for the result.
"""

from __future__ import annotations

import dataclasses
import re
import tomllib
from pathlib import Path

from ..inference.layer import WATER_DEPTH_RANGE_KM
from .errors import StudyError
from .forward import read_forward
from .hypotheses import read_hypotheses
from .layers import read_layer, read_model_error
from .limits import DEFAULT_ROCKS, known_rocks, layer_slug
from .plan import read_plan
from .priors import read_priors
from .reader import Reader
from .sampler import read_sampler
from .specs import SamplerSpec, StudySpec
from .thermal import read_thermal, read_thermal_name

__all__ = ["TOP_KEYS", "LIKELIHOOD_KINDS", "load_study", "parse_study", "read_study"]

TOP_KEYS = (
    "title", "description", "water_depth_km", "seed", "rocks", "model_error",
    "likelihood", "student_t_nu", "thermal_prior", "priors", "thermal", "hypotheses", "layers",
    "sampler", "forward", "plan", "run",
)
LIKELIHOOD_KINDS = ("gaussian", "student_t")


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
    return read_study(Reader(source), data)


#: Top-level tables that make a file another kind of study, and the command that reads it.
OTHER_KINDS = {"profile": "`bayescrust profile` (or `bayescrust plan`)",
               "grid": "`bayescrust map`"}


def read_study(r: Reader, data: dict) -> StudySpec:
    for key, command in OTHER_KINDS.items():
        if key in data and key not in TOP_KEYS:  # say which command, not "unknown key"
            r.fail(key, f"a [{key}] study; run it with {command}")
    r.keys("", data, TOP_KEYS)
    if "water_depth_km" not in data:
        r.fail("water_depth_km", "missing; water depth above the seafloor in km")
    water = r.number("water_depth_km", data["water_depth_km"], *WATER_DEPTH_RANGE_KM,
                         unit="km")
    title = r.string("title", data["title"]) if "title" in data else Path(r.source).stem
    desc = data.get("description", "")
    if not isinstance(desc, str):
        r.got("description", desc, "a string")
    seed = r.integer("seed", data["seed"], 0, 2**63 - 1) if "seed" in data else 0
    rocks = r.rock_list("rocks", data["rocks"]) if "rocks" in data else DEFAULT_ROCKS
    model_error = None
    if "model_error" in data:
        model_error = read_model_error(r, "model_error", data["model_error"])
    likelihood = "gaussian"
    if "likelihood" in data:
        likelihood = r.string("likelihood", data["likelihood"], LIKELIHOOD_KINDS)
    nu = None
    if "student_t_nu" in data:
        nu = r.number("student_t_nu", data["student_t_nu"], 1.0, 1000.0)
    forward = read_forward(r, "forward", data["forward"]) if "forward" in data else {}
    thermal = read_thermal(r, "thermal", data["thermal"]) if "thermal" in data else {}
    names = tuple(thermal)
    tp = None
    if "thermal_prior" in data:
        tp = read_thermal_name(r, "thermal_prior", data["thermal_prior"], names)
    elif names:
        tp = names[0]
    priors = read_priors(r, "priors", data["priors"], rocks) if "priors" in data else {}
    hyps = None
    if "hypotheses" in data:
        hyps = read_hypotheses(r, "hypotheses", data["hypotheses"], rocks)
    sampler = read_sampler(r, "sampler", data["sampler"]) if "sampler" in data else SamplerSpec()
    plan = read_plan(r, "plan", data["plan"]) if "plan" in data else None
    if "layers" not in data:
        r.fail("layers", "missing; expected at least one [[layers]] table")
    raw_layers = data["layers"]
    if not isinstance(raw_layers, list) or not raw_layers:
        r.got("layers", raw_layers, "one or more [[layers]] tables")
    layers = tuple(read_layer(r, f"layers[{i}]", v, rocks, names)
                   for i, v in enumerate(raw_layers))
    seen = {}
    for i, lay in enumerate(layers):
        slug = layer_slug(lay.name)  # each layer writes into a folder named after it
        if slug in seen:
            r.got(f"layers[{i}].name", lay.name,
                     f"a name distinct from layer {seen[slug]!r} (both give folder {slug!r})")
        seen[slug] = lay.name
    if "rocks" not in data:
        # no rocks named anywhere: each layer gets the rock set of its depth zone
        # (Layer 2, Layer 3, uppermost mantle; see bayescrust.inference.hypotheses.DEPTH_ZONES)
        from ..inference.hypotheses import default_rocks

        layers = tuple(lay if lay.rocks is not None else dataclasses.replace(
            lay, rocks=default_rocks(0.5 * (lay.top_km + lay.bottom_km))) for lay in layers)
    # hypotheses must refer to rocks used by the layer
    for i, lay in enumerate(layers):
        hy = lay.hypotheses if lay.hypotheses is not None else hyps
        use_rocks = lay.rocks or rocks
        for hname, conds in (hy or {}).items():
            for p in conds:
                if p in known_rocks() and p not in use_rocks:
                    where = (f"layers[{i}].hypotheses" if lay.hypotheses is not None
                             else "hypotheses")
                    r.fail(f"{where}.{hname}.{p}",
                              f"rock {p!r} is not among the rocks of layer {lay.name!r} "
                              f"({', '.join(use_rocks)})")
        pri = dict(priors)
        pri.update(lay.priors)
        fr = pri.get("fractions")
        if fr is not None and isinstance(fr.params.get("alpha"), list) \
                and len(fr.params["alpha"]) != len(use_rocks):
            r.got(f"layers[{i}].priors.fractions.alpha" if "fractions" in lay.priors
                     else "priors.fractions.alpha", fr.params["alpha"],
                     f"one value per rock of layer {lay.name!r} ({len(use_rocks)})")
    if plan is not None and plan.layer is not None and plan.layer not in seen.values():
        from .errors import suggest

        r.fail("plan.layer", f"no layer named {plan.layer!r}; "
                             f"{suggest(plan.layer, list(seen.values()))}")
    return StudySpec(r.source, title, desc, water, seed, rocks, model_error, likelihood,
                     nu, forward, priors, thermal, tp, hyps, layers, sampler, plan=plan)
