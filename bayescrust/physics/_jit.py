"""Optional compiled kernels: whether numba is there, whether to use it, and ``jitable``.

The physics is written once, in numpy-compatible Python. Functions marked :func:`jitable` are
ordinary Python functions (the numpy reference calls them on arrays) that numba can also compile
when a compiled kernel in :mod:`bayescrust.physics._accel` calls them on scalars. numba is an
optional extra (``pip install bayescrust[fast]``); without it every path is the numpy reference.

The environment variable ``BAYESCRUST_ACCEL=0`` switches the compiled kernels off at import;
:func:`use_accel` switches them off (or on) for a block of code, e.g. to compare the two.
"""

from __future__ import annotations

import contextlib
import os

try:  # pragma: no cover - depends on the installation
    from numba.extending import register_jitable as _register_jitable

    AVAILABLE = True
except ImportError:  # pragma: no cover - depends on the installation
    _register_jitable = None
    AVAILABLE = False

_state = {"on": AVAILABLE and os.environ.get("BAYESCRUST_ACCEL", "1").strip() not in ("0", "")}


def jitable(fn):
    """Mark a numpy-compatible scalar/array function as compilable by numba (unchanged in
    Python)."""
    return fn if _register_jitable is None else _register_jitable(fn)


def enabled() -> bool:
    """True when the compiled kernels are available and switched on."""
    return _state["on"]


@contextlib.contextmanager
def use_accel(on: bool):
    """Switch the compiled kernels on or off inside a ``with`` block (off: numpy reference).

    Switching on without numba installed raises ``RuntimeError``.
    """
    if on and not AVAILABLE:
        raise RuntimeError("compiled kernels need numba: pip install 'bayescrust[fast]'")
    old = _state["on"]
    _state["on"] = bool(on)
    try:
        yield
    finally:
        _state["on"] = old
