"""A small, dependency-free TOML writer (``run.toml`` and ``bayescrust check`` echo)."""

from __future__ import annotations

import math
import re

__all__ = ["dumps_toml"]

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
        return repr(float(v))  # numpy floats are floats but repr as np.float64(...)
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
