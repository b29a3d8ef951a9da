"""Rock recipes: the built-in rocks (modal mineralogy by volume, with sources) and user mixes.

The recipes live in ``data/rocks.toml`` (each with its source and tag); :data:`ROCKS` holds them
by name. :func:`bayescrust.physics.rocks.rock_properties` and the forward model accept a rock
name, a :class:`Rock` or a mapping of mineral name -> volume fraction (a custom mix, ultramafic
when its mafic minerals reach the IUGS threshold of ``[classification]``).
"""

from __future__ import annotations

import difflib
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

from . import minerals
from ._checks import check_range
from ._data import load_table

__all__ = ["ROCKS", "Rock", "list_rocks"]

_ROCK_DATA = load_table("rocks")
#: Mafic minerals, and the fraction of them at or above which a custom mineral mix counts as
#: ultramafic (``[classification]`` of ``data/rocks.toml``: IUGS, Le Maitre et al. 2002).
_ULTRAMAFIC_MINERALS = tuple(str(m) for m in _ROCK_DATA["classification"]["ultramafic_minerals"])
_ULTRAMAFIC_THRESHOLD = float(_ROCK_DATA["classification"]["ultramafic_threshold"])


@dataclass(frozen=True)
class Rock:
    """A rock recipe: modal mineralogy by volume.

    Attributes
    ----------
    name : str
        Identifier.
    modes : mapping of str to float
        Mineral name -> volume fraction (sums to 1); a read-only mapping, so a recipe cannot be
        changed after construction (a plain dict passed in is copied).
    ultramafic : bool
        Whether ``serpentinization`` applies to this rock.
    description, source, tag : str
        Provenance of the recipe.
    """

    name: str
    modes: Mapping[str, float]
    ultramafic: bool
    description: str = ""
    source: str = ""
    tag: str = ""

    def __post_init__(self):
        object.__setattr__(self, "modes", MappingProxyType(dict(self.modes)))

    def __reduce__(self):
        # a mappingproxy does not pickle: rebuild from a plain copy (forward models are pickled
        # to worker processes)
        return (
            type(self),
            (self.name, dict(self.modes), self.ultramafic, self.description, self.source,
             self.tag),
        )


def _load_rocks() -> dict[str, Rock]:
    table = _ROCK_DATA["rocks"]
    out = {}
    for name, row in table.items():
        modes = {str(k): float(v) for k, v in row["modes"].items()}
        unknown = set(modes) - set(minerals.MINERALS)
        if unknown or abs(sum(modes.values()) - 1.0) > 1e-9:
            raise ValueError(
                f"rocks.toml: rocks.{name}.modes: unknown minerals {sorted(unknown)} or "
                f"fractions summing to {sum(modes.values())}, expected 1"
            )
        out[name] = Rock(
            name=name,
            modes=modes,
            ultramafic=bool(row["ultramafic"]),
            description=row.get("description", ""),
            source=row.get("source", ""),
            tag=row.get("tag", ""),
        )
    return out


#: Built-in rock recipes, by name.
ROCKS: dict[str, Rock] = _load_rocks()


def list_rocks() -> list[dict]:
    """List the built-in rocks with their modal mineralogy and sources.

    Returns
    -------
    list of dict
        One entry per rock: ``name``, ``description``, ``modes``, ``ultramafic``, ``source``,
        ``tag``.

    Examples
    --------
    >>> names = [r["name"] for r in list_rocks()]
    >>> "gabbro" in names and "harzburgite" in names
    True
    """
    return [
        {
            "name": r.name,
            "description": r.description,
            "modes": dict(r.modes),
            "ultramafic": r.ultramafic,
            "source": r.source,
            "tag": r.tag,
        }
        for r in ROCKS.values()
    ]


def _resolve_rock(item) -> Rock:
    if isinstance(item, Rock):
        return item
    if isinstance(item, str):
        if item not in ROCKS:
            near = difflib.get_close_matches(item, list(ROCKS), n=1)
            hint = f" (did you mean {near[0]!r}?)" if near else ""
            raise ValueError(f"unknown rock {item!r}{hint}; known rocks: {', '.join(ROCKS)}")
        return ROCKS[item]
    raise ValueError(f"rock must be a rock name or a Rock; got {item!r}")


def _custom_rock(modes: Mapping[str, float]) -> Rock:
    """A rock from a mapping of mineral name -> constant volume fraction."""
    for name in modes:
        if name not in minerals.MINERALS:
            near = difflib.get_close_matches(name, list(minerals.MINERALS), n=1)
            hint = f" (did you mean {near[0]!r}?)" if near else ""
            raise ValueError(
                f"unknown mineral {name!r}{hint}; known minerals: {', '.join(minerals.MINERALS)}"
            )
    fr = {k: float(check_range(f"fraction of {k}", v, 0.0, 1.0)) for k, v in modes.items()}
    total = sum(fr.values())
    if abs(total - 1.0) > 1e-6:
        raise ValueError(f"mineral fractions must sum to 1; got {total:.6g}")
    um = sum(fr.get(m, 0.0) for m in _ULTRAMAFIC_MINERALS) >= _ULTRAMAFIC_THRESHOLD
    return Rock(name="custom", modes=fr, ultramafic=um, description="user mineral mix")
