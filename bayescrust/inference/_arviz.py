"""arviz's diagnostics (ESS, R-hat, HDI) on their numpy path.

arviz 0.2x runs parts of ``ess`` and ``rhat`` through numba whenever numba is installed
(``arviz.Numba.numba_flag``). Those functions are compiled again in every process (~0.6 s at
the first ``ess`` of a run) and, on the arrays of one layer (64 walkers x a few hundred
draws), run slower than numpy (measured: ess bulk 17 ms against 7 ms). The statistics are the
same; only the arithmetic of the variances differs (rounding). arviz 1.x has no numba path and
no such switch. arviz stays the one source of these diagnostics (DEVELOPERS.md).
"""

from __future__ import annotations

import contextlib

__all__ = ["numpy_diagnostics"]


@contextlib.contextmanager
def numpy_diagnostics():
    """Yield the ``arviz`` module with its numba path off inside the block (restored after).

    Not thread-safe: the switch is a class attribute of arviz.
    """
    import arviz as az

    switch = getattr(az, "Numba", None)
    on = bool(getattr(switch, "numba_flag", False))
    if on:
        switch.disable_numba()
    try:
        yield az
    finally:
        if on:
            switch.numba_flag = True
