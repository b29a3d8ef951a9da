"""Errors of the study-file reader and the "did you mean" suggestions they carry."""

from __future__ import annotations

import difflib

__all__ = ["StudyError", "suggest", "describe_value"]


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


def suggest(key: str, allowed) -> str:
    """``did you mean 'x'?`` for the nearest allowed key, else the list of allowed keys."""
    close = difflib.get_close_matches(str(key), list(allowed), n=1, cutoff=0.5)
    if close:
        return f"did you mean {close[0]!r}?"
    return "allowed keys: " + ", ".join(sorted(allowed))


def describe_value(value) -> str:
    """Short form of a TOML value for ``got X`` in error messages."""
    if isinstance(value, str):
        return repr(value)
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        return f"a list of {len(value)}" if len(value) > 3 else repr(value)
    return repr(value)
