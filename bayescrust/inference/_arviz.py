"""The arviz functions bayescrust uses (``ess``, ``rhat``, ``hdi``, ``from_dict``), one door.

arviz stays the one source of these diagnostics and of the InferenceData (DEVELOPERS.md); this
module only decides where they are imported from.

- **arviz 1.x** re-exports them from ``arviz_stats`` and ``arviz_base`` (the very same function
  objects); ``import arviz`` also imports ``arviz_plots`` and with it matplotlib, which an
  inversion does not need (measured with arviz 1.3: 28 MiB of resident memory). So under 1.x
  :func:`module` imports the two sub-packages only.
- **arviz 0.2x** runs parts of ``ess`` and ``rhat`` through numba whenever numba is installed
  (``arviz.Numba.numba_flag``). Those functions are compiled again in every process (~0.6 s at
  the first ``ess`` of a run) and, on the arrays of one layer (64 walkers x a few hundred
  draws), run slower than numpy (measured: ess bulk 17 ms against 7 ms); the statistics are the
  same, only the rounding of the variances differs. :func:`numpy_diagnostics` switches that
  path off for a block. arviz 1.x has no numba path and no such switch.
"""

from __future__ import annotations

import contextlib
import functools
import types

__all__ = ["major_version", "module", "numpy_diagnostics"]


@functools.cache
def major_version() -> int:
    """Major version of the installed arviz, read without importing it."""
    from importlib.metadata import version

    return int(version("arviz").split(".")[0])


@functools.cache
def _lean():
    """arviz 1.x's ``ess``, ``rhat``, ``hdi`` and ``from_dict`` from the packages defining them."""
    from importlib.metadata import version

    import arviz_base
    import arviz_stats

    return types.SimpleNamespace(__version__=version("arviz"), ess=arviz_stats.ess,
                                 rhat=arviz_stats.rhat, hdi=arviz_stats.hdi,
                                 from_dict=arviz_base.from_dict)


def module():
    """The namespace to call ``ess``, ``rhat``, ``hdi`` and ``from_dict`` on: ``arviz`` itself
    under 0.2x; under 1.x the same functions taken from ``arviz_stats`` and ``arviz_base``."""
    if major_version() >= 1:
        return _lean()
    import arviz

    return arviz


@contextlib.contextmanager
def numpy_diagnostics():
    """Yield :func:`module` with arviz 0.2x's numba path off inside the block (restored after).

    Not thread-safe: the switch is a class attribute of arviz 0.2x.
    """
    az = module()
    switch = getattr(az, "Numba", None)
    on = bool(getattr(switch, "numba_flag", False))
    if on:
        switch.disable_numba()
    try:
        yield az
    finally:
        if on:
            switch.numba_flag = True
