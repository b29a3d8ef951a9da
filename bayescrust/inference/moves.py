"""A vectorised differential-evolution snooker move for emcee.

emcee's own ``DESnookerMove`` loops over walkers in Python (it dominated a profile of this
package's runs). This move makes the same kind of proposal for the whole sub-ensemble in array
operations. emcee is imported lazily: build the move with :func:`snooker_move`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["snooker_move"]


def snooker_move(gamma_range=(1.2, 2.2)):
    """Return a vectorised DE-snooker move (ter Braak & Vrugt 2008, Stat. Comput. 18, 435).

    For a walker ``x`` the move draws three distinct walkers ``z, z1, z2`` of the complementary
    sub-ensembles, projects ``z1 - z2`` onto the line through ``x`` and ``z`` and proposes
    ``x' = x + gamma * proj(z1 - z2)`` with ``gamma ~ U(gamma_range)``; the proposal is accepted
    with
    the Metropolis ratio times ``(|x' - z| / |x - z|) ** (ndim - 1)`` (ter Braak & Vrugt 2008,
    eq. 4). As emcee's red-blue scheme holds the complementary walkers fixed during an update,
    the move leaves the target invariant.
    """
    from emcee.moves.red_blue import RedBlueMove

    lo, hi = float(gamma_range[0]), float(gamma_range[1])

    class SnookerMove(RedBlueMove):
        def __init__(self):
            super().__init__(nsplits=4)

        def get_proposal(self, s, c, random):
            ns, ndim = s.shape
            c = np.concatenate(c, axis=0)
            nc = c.shape[0]
            # three distinct indices per walker, drawn without replacement
            i0 = random.randint(nc, size=ns)
            i1 = random.randint(nc - 1, size=ns)
            i1 = i1 + (i1 >= i0)
            i2 = random.randint(nc - 2, size=ns)
            a, b = np.minimum(i0, i1), np.maximum(i0, i1)
            i2 = i2 + (i2 >= a)
            i2 = i2 + (i2 >= b)
            z, z1, z2 = c[i0], c[i1], c[i2]
            delta = s - z
            norm = np.sqrt(np.sum(delta * delta, axis=1))
            safe = np.where(norm > 0, norm, 1.0)
            e = delta / safe[:, None]
            gamma = lo + (hi - lo) * random.rand(ns)
            step = gamma * np.sum(e * (z1 - z2), axis=1)
            q = s + step[:, None] * e
            new = np.sqrt(np.sum((q - z) ** 2, axis=1))
            with np.errstate(divide="ignore"):
                factor = (ndim - 1.0) * (np.log(new) - np.log(safe))
            factor = np.where(norm > 0, factor, -np.inf)
            return q, factor

    return SnookerMove()
