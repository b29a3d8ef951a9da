"""Boundary validation shared by the public physics functions.

Public functions validate once with these helpers; private kernels (called from the
log-probability) never do. Every error names the quantity, the value and the allowed range.
"""

from __future__ import annotations

import numpy as np

__all__ = ["as_float_array", "check_range"]


def as_float_array(name: str, value) -> np.ndarray:
    """Return ``value`` as a float array, raising ``ValueError`` naming ``name`` if non-finite."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{name} must be a number or an array of numbers; got {value!r}") from exc
    if not np.all(np.isfinite(arr)):
        bad = arr[~np.isfinite(arr)].ravel()[0]
        raise ValueError(f"{name} must be finite; got {bad}")
    return arr


def check_range(
    name: str,
    value,
    lo: float,
    hi: float,
    *,
    lo_open: bool = False,
    hi_open: bool = False,
    unit: str = "",
) -> np.ndarray:
    """Validate that every element of ``value`` lies in the interval [lo, hi].

    Parameters
    ----------
    name : str
        Name of the quantity, used in the error message.
    value : array_like
        Values to check.
    lo, hi : float
        Allowed bounds.
    lo_open, hi_open : bool, optional
        Exclude the bound itself.
    unit : str, optional
        Unit appended to the message.

    Returns
    -------
    numpy.ndarray
        ``value`` as a float array.

    Raises
    ------
    ValueError
        If a value is non-finite or outside the range; the message names the quantity, the first
        offending value and the allowed range.
    """
    arr = as_float_array(name, value)
    below = arr <= lo if lo_open else arr < lo
    above = arr >= hi if hi_open else arr > hi
    bad = below | above
    if np.any(bad):
        first = arr[bad].ravel()[0]
        lb = "(" if lo_open else "["
        rb = ")" if hi_open else "]"
        u = f" {unit}" if unit else ""
        raise ValueError(f"{name} must be in {lb}{lo:g}, {hi:g}{rb}{u}; got {first:g}")
    return arr
