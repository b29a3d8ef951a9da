"""Optional compiled kernels: whether numba is there, whether to use it, and ``jitable``.

The physics is written once, in numpy-compatible Python. Functions marked :func:`jitable` are
ordinary Python functions (the numpy reference calls them on arrays) that the compiled kernels
of :mod:`bayescrust.physics._accel` also call, on scalars: that module registers them with
numba (``register_jitable``) when it is first imported. numba is an optional extra
(``pip install bayescrust[fast]``); without it every path is the numpy reference.

numba is imported only when a compiled kernel is first used (it adds ~0.3 s and ~110 MiB of
resident memory to a process, mostly LLVM). The environment variable ``BAYESCRUST_ACCEL=0``
switches the compiled kernels off at import; :func:`use_accel` switches them off (or on) for a
block of code, e.g. to compare the two.
"""

from __future__ import annotations

import contextlib
import importlib.util
import os

#: Whether numba is installed (found, not imported).
AVAILABLE = importlib.util.find_spec("numba") is not None

_state = {"on": AVAILABLE and os.environ.get("BAYESCRUST_ACCEL", "1").strip() not in ("0", "")}

#: Functions marked :func:`jitable`, registered with numba by :mod:`._accel`.
JITABLE: list = []


def jitable(fn=None, *, inline=False):
    """Mark a numpy-compatible function as called by the compiled kernels (unchanged in Python;
    :mod:`._accel` registers it with numba's ``register_jitable``). ``@jitable(inline=True)``
    asks numba to inline it into its callers (measured 1.4x faster for the dry-pore DEM
    lookup; numba's inlining costs compile time, so it is kept to the outer functions)."""
    if fn is None:
        return lambda f: jitable(f, inline=inline)
    fn._jit_inline = inline
    JITABLE.append(fn)
    return fn


def enabled() -> bool:
    """True when the compiled kernels are available and switched on."""
    return _state["on"]


@contextlib.contextmanager
def switch(state: dict, on: bool):
    """Set ``state["on"]`` inside a ``with`` block; the old value is restored after."""
    old = state["on"]
    state["on"] = bool(on)
    try:
        yield
    finally:
        state["on"] = old


def use_accel(on: bool):
    """Switch the compiled kernels on or off inside a ``with`` block (off: numpy reference).

    Switching on without numba installed raises ``RuntimeError``.
    """
    if on and not AVAILABLE:
        raise RuntimeError("compiled kernels need numba: pip install 'bayescrust[fast]'")
    return switch(_state, on)
