"""The reader's primitives: type and range checks that name the file and the dotted key.

Each study-file section has its own module with a ``read_<section>(r, key, value, ...)``
function taking a :class:`Reader`; the primitives here are shared by all of them.
"""

from __future__ import annotations

import difflib
import math

from .errors import StudyError, describe_value, suggest
from .limits import known_rocks

__all__ = ["Reader"]


class Reader:
    """Walks the parsed TOML, collecting the dotted key for error messages."""

    def __init__(self, source: str):
        self.source = source

    def fail(self, key: str, message: str):
        raise StudyError(self.source, key, message)

    def got(self, key: str, value, expected: str):
        self.fail(key, f"got {describe_value(value)}, expected {expected}")

    # primitives ----------------------------------------------------------------------------
    def keys(self, key: str, table: dict, allowed) -> None:
        for k in table:
            if k not in allowed:
                self.fail(f"{key}.{k}" if key else k, f"unknown key; {suggest(k, allowed)}")

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
