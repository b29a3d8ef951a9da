"""Ensemble moves for emcee: a vectorised DE-snooker move, a KDE independence move and emcee's
DE move, all with a vectorised accept step.

emcee's own ``DESnookerMove`` loops over walkers in Python (it dominated a profile of this
package's runs); :func:`snooker_move` makes the same kind of proposal for the whole
sub-ensemble in array operations. :func:`kde_move` proposes from a Gaussian kernel density
fitted to the complementary walkers, drawing from emcee's random state (emcee's ``KDEMove``
draws from numpy's global state, which would break reproducibility by seed). emcee's red-blue
``propose`` accepts or rejects walker by walker in a Python loop (a third of emcee's per-step
cost at 64 walkers); every move here accepts the whole sub-ensemble in array operations, with
the same uniform draws in the same order, so the chain is the same to the bit
(:func:`de_move` is emcee's ``DEMove`` with that accept step). emcee is imported lazily: build
the moves with these functions.
"""

from __future__ import annotations

import numpy as np

__all__ = ["kde_move", "snooker_move", "de_move"]


def _vector_accept(base):
    """``base`` (an emcee ``RedBlueMove`` subclass) with :meth:`propose` accepting the whole
    sub-ensemble at once.

    The same algorithm as emcee 3's ``RedBlueMove.propose`` (Foreman-Mackey et al. 2013, PASP
    125, 306: split the ensemble, propose for one part given the others, accept each walker
    with probability ``min(1, exp(factor + lp' - lp))``), drawing the walkers' uniforms in the
    order the loop did: ``RandomState.rand(n)`` gives the same numbers as ``n`` calls of
    ``rand()``. Accepted proposals are written into the state in place, as emcee's
    ``Move.update`` does, from index arrays instead of its boolean masks and a new ``State``
    per part (emcee's machinery 0.22 -> 0.19 ms a step, measured with a do-nothing proposal
    and a trivial log-probability at 64 walkers); with blobs, emcee's ``update`` is used.
    """

    class VectorAccept(base):
        def propose(self, model, state):
            nwalkers, ndim = state.coords.shape
            if nwalkers < 2 * ndim and not self.live_dangerously:
                raise RuntimeError("It is unadvisable to use a red-blue move with fewer "
                                   "walkers than twice the number of dimensions.")
            self.setup(state.coords)
            accepted = np.zeros(nwalkers, dtype=bool)
            inds = np.arange(nwalkers) % self.nsplits
            if self.randomize_split:
                model.random.shuffle(inds)
            # walker indices of each part, in increasing order (emcee's boolean masks)
            parts = [np.flatnonzero(inds == k) for k in range(self.nsplits)]
            for split, j in enumerate(parts):
                coords = state.coords  # updated in place, as emcee's ``Move.update`` does
                s = coords[j]
                c = [coords[p] for k, p in enumerate(parts) if k != split]
                q, factors = self.get_proposal(s, c, model.random)
                new_log_probs, new_blobs = model.compute_log_prob_fn(q)
                lnpdiff = factors + new_log_probs - state.log_prob[j]
                ok = lnpdiff > np.log(model.random.rand(j.size))
                accepted[j] = ok
                if new_blobs is None:  # emcee's update without its masks and State
                    coords[j[ok]] = q[ok]
                    state.log_prob[j[ok]] = new_log_probs[ok]
                else:
                    new_state = type(state)(q, log_prob=new_log_probs, blobs=new_blobs)
                    state = self.update(state, new_state, accepted, inds == split)
            return state, accepted

    VectorAccept.__name__ = VectorAccept.__qualname__ = base.__name__
    return VectorAccept


def de_move(**kwargs):
    """emcee's differential-evolution move (``emcee.moves.DEMove(**kwargs)``: ter Braak 2006;
    Nelson et al. 2013) with the vectorised accept step of this module."""
    import emcee

    return _vector_accept(emcee.moves.DEMove)(**kwargs)


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

    class SnookerMove(_vector_accept(RedBlueMove)):
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


def kde_move(bandwidth_factor=None):
    """Return an independence move proposing from a Gaussian KDE of the complementary walkers.

    The proposal density is the kernel mixture ``q(x) = (1/m) sum_j N(x; c_j, h^2 C)`` over the
    ``m`` complementary walkers ``c_j``, with ``C`` their covariance and Scott's bandwidth
    factor ``h = m^(-1/(d+4))`` (Scott 1992, Multivariate Density Estimation; the default of
    :class:`scipy.stats.gaussian_kde`). With emcee's red-blue scheme the complementary
    sub-ensemble is fixed during an update, so this Metropolis-Hastings independence proposal,
    accepted with the target ratio times ``q(x) / q(x')``, leaves the target invariant (the
    construction of emcee's ``KDEMove``; Foreman-Mackey et al. 2013 for the ensemble scheme).
    In a few dimensions it jumps between separated modes in one step, which cuts the
    autocorrelation time of the multi-modal rock-type posteriors several-fold (measured in
    ``tests/benchmarks``). If the walkers are degenerate (singular covariance) the move
    proposes nothing and is rejected. All draws come from emcee's random state.

    Parameters
    ----------
    bandwidth_factor : float, optional
        ``h``; default Scott's rule.
    """
    from emcee.moves.red_blue import RedBlueMove

    class KDEIndependenceMove(_vector_accept(RedBlueMove)):
        def get_proposal(self, s, c, random):
            c = np.concatenate(c, axis=0)
            m, d = c.shape
            h = m ** (-1.0 / (d + 4.0)) if bandwidth_factor is None else float(bandwidth_factor)
            # np.cov(c, rowvar=False), step by step as numpy does it (same bits), without its
            # argument handling (a tenth of the move's cost)
            x = c.copy().T
            x -= x.mean(axis=1)[:, None]
            with np.errstate(over="ignore", invalid="ignore"):
                cov = np.dot(x, x.T)
            cov *= np.true_divide(1, m - 1)
            if not np.all(np.isfinite(cov)):  # walkers beyond the float range (an improper
                return s.copy(), np.full(s.shape[0], -np.inf)  # posterior): propose nothing
            try:
                chol = np.linalg.cholesky(cov * h * h)
            except np.linalg.LinAlgError:
                return s.copy(), np.full(s.shape[0], -np.inf)
            inv = np.linalg.inv(chol)
            q = c[random.randint(m, size=s.shape[0])] + random.randn(s.shape[0], d) @ chol.T
            yc = c @ inv.T  # kernel centres in whitened coordinates
            nc = np.sum(yc * yc, axis=1)

            # the kernel density (up to a constant, which cancels in the ratio) at the current
            # and the proposed points together: one pass of array operations
            y = np.concatenate([s, q]) @ inv.T
            e = -0.5 * np.maximum(np.sum(y * y, axis=1)[:, None] + nc[None, :]
                                  - 2.0 * y @ yc.T, 0.0)
            top = e.max(axis=1)
            log_q = top + np.log(np.exp(e - top[:, None]).sum(axis=1))
            return q, log_q[:s.shape[0]] - log_q[s.shape[0]:]

    return KDEIndependenceMove()
