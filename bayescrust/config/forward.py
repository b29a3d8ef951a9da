"""Section reader: ``[forward]`` (forward-model settings)."""

from __future__ import annotations

from typing import Any

from .reader import Reader

__all__ = ["DEFAULT_ATTENUATION_LAW", "FORWARD_KEYS", "read_forward"]

#: Names of ``physics.anelastic.ATTENUATION_LAWS`` and its default, kept here so that reading a
#: study file does not import the physics (a test checks that the two agree).
DEFAULT_ATTENUATION_LAW = "jackson2002"

#: Forward-model settings ([forward] table): key -> allowed values or (lo, hi, unit).
FORWARD_KEYS: dict[str, Any] = {
    "mixing": ("hill", "voigt", "reuss", "hashin_shtrikman"),
    "inclusion_scheme": ("dem", "self_consistent", "kuster_toksoz"),
    "serpentine": ("lizardite", "antigorite"),
    "frequency_hz": (1e-3, 1e3, "Hz"),
    "grain_size_mm": (1e-3, 100.0, "mm"),
    "anelastic": (True, False),
    "attenuation_law": (DEFAULT_ATTENUATION_LAW, "yamauchi_takei2016"),
    "salinity": (0.0, 0.3, "mass fraction"),
}


def read_forward(r: Reader, key, value) -> dict[str, Any]:
    table = r.table(key, value)
    r.keys(key, table, tuple(FORWARD_KEYS))
    out: dict[str, Any] = {}
    for k, v in table.items():
        allowed = FORWARD_KEYS[k]
        if k == "anelastic":
            if not isinstance(v, bool):
                r.got(f"{key}.{k}", v, "true or false")
            out[k] = v
        elif isinstance(allowed[0], str):
            out[k] = r.string(f"{key}.{k}", v, allowed)
        else:
            out[k] = r.number(f"{key}.{k}", v, allowed[0], allowed[1], unit=allowed[2])
    return out
