"""Citations of the data and methods a forward model uses, read from the package data files."""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from ._data import load_table
from .rocks import ROCKS, Rock

__all__ = ["citations"]

_DATA_FILES = ("methods", "fluids", "anelastic", "thermal")


def _collect(node, out: list[str]) -> None:
    """Append every value of a key starting with ``source`` in a nested TOML table."""
    if isinstance(node, Mapping):
        for key, value in node.items():
            if key.startswith("source"):
                for item in value if isinstance(value, list) else [value]:
                    if isinstance(item, str):
                        out.append(item)
            else:
                _collect(value, out)


def citations(rocks: Iterable[str | Rock] | None = None) -> list[str]:
    """List the sources behind a forward model: methods, minerals, rocks, fluids, solidi.

    Parameters
    ----------
    rocks : iterable of str or Rock, or a result, optional
        The end-member rocks used (default: all built-in rocks), or an inversion result whose
        ``settings["rocks"]`` names them. Only the minerals of these rocks, plus the
        serpentinites, are cited.

    Returns
    -------
    list of str
        Unique source strings in a stable order (methods first).

    Examples
    --------
    >>> refs = citations(["gabbro"])
    >>> any("Abramson" in r for r in refs) and any("Karato" in r for r in refs)
    True
    """
    settings = getattr(rocks, "settings", None)  # a LayerResult (duck-typed: no upward import)
    forward: Mapping = {}
    if isinstance(settings, Mapping):
        rocks = settings.get("rocks")
        forward = settings.get("forward") or {}
    chosen = [ROCKS[r] if isinstance(r, str) else r for r in (rocks or ROCKS)]
    # the serpentinites enter through serpentinisation of a peridotite (or as rocks of their own)
    if any(r.ultramafic for r in chosen):
        chosen += [ROCKS["serpentinite"], ROCKS["antigorite_serpentinite"]]
    minerals_used = {m for r in chosen for m in r.modes}
    mantle = any(r.ultramafic for r in chosen)
    # what does not apply to the rocks: serpentinisation and the peridotite solidus without a
    # peridotite, the gabbro solidus without a crustal rock
    skip = set() if mantle else {"serpentinization", "serpentine", "peridotite_solidus"}
    if all(r.ultramafic or r.name in ("serpentinite", "antigorite_serpentinite")
           for r in chosen):
        skip.add("gabbro_solidus")
    out: list[str] = []
    _collect({k: v for k, v in load_table("methods").items() if k not in skip}, out)
    mineral_table = load_table("minerals")["minerals"]
    for name in sorted(minerals_used):
        _collect(mineral_table[name], out)
    for rock in chosen:
        if rock.source:
            out.append(f"{rock.name}: {rock.source}")
    # the attenuation law a run used (of a run's settings; every law otherwise)
    anelastic = dict(load_table("anelastic"))
    if settings is not None:
        law = forward.get("attenuation_law", "jackson2002")
        anelastic = {k: v for k, v in anelastic.items()
                     if k == "constants" or (forward.get("anelastic", True) and k == law)}
    _collect(anelastic, out)
    for name in _DATA_FILES[1:]:
        if name != "anelastic":
            _collect({k: v for k, v in load_table(name).items() if k not in skip}, out)
    return list(dict.fromkeys(out))
