"""Block differential-evolution moves for the joint profile posterior.

A profile's posterior has one block of coordinates per layer plus the thermal block; a DE
proposal in all ~30 coordinates at once is rarely accepted. :func:`block_de_move` proposes a DE
step (ter Braak 2006) in one randomly chosen block at a time (the same block for the whole
sub-ensemble of an update), with ``gamma = 2.38 / sqrt(2 d_block)`` and, with probability
``p_jump``, ``gamma = 1`` (a jump by a whole inter-walker difference, which moves a layer
between the modes that other walkers occupy). The proposal is symmetric, so the Metropolis
ratio needs no correction; emcee's red-blue scheme keeps the target invariant.
"""

from __future__ import annotations

import numpy as np

__all__ = ["block_de_move", "block_kde_move", "profile_moves"]


def block_de_move(blocks, *, p_jump=0.1, jitter=1e-6):
    """Return an emcee move proposing DE steps in one block (list of index arrays) at a time."""
    from emcee.moves.red_blue import RedBlueMove

    blocks = [np.asarray(b, int) for b in blocks if len(b)]

    class BlockDEMove(RedBlueMove):
        def __init__(self):
            super().__init__(live_dangerously=True)

        def get_proposal(self, s, c, random):
            c = np.concatenate(c, axis=0)
            ns, nc = s.shape[0], c.shape[0]
            b = blocks[random.randint(len(blocks))]
            i1 = random.randint(nc, size=ns)
            i2 = random.randint(nc - 1, size=ns)
            i2 = i2 + (i2 >= i1)
            g = np.where(random.rand(ns) < p_jump, 1.0, 2.38 / np.sqrt(2.0 * b.size))
            diff = c[i1][:, b] - c[i2][:, b]
            q = s.copy()
            q[:, b] = s[:, b] + g[:, None] * diff * (1.0 + jitter * random.randn(ns, 1))
            return q, np.zeros(ns)

    return BlockDEMove()


def block_kde_move(blocks, *, bandwidth=0.3):
    """Independence proposal in one block from a Gaussian kernel density of the complementary
    walkers' values of that block (diagonal kernel, ``bandwidth`` times their sd per
    coordinate). The complementary walkers are fixed during a red-blue update, so the proposal
    density is known and the Metropolis-Hastings factor is ``log q(x) - log q(x')``; it moves
    a layer between separated modes (gabbro versus mantle rock) in one step."""
    from emcee.moves.red_blue import RedBlueMove
    from scipy.special import logsumexp

    blocks = [np.asarray(b, int) for b in blocks if len(b)]

    def log_kde(x, c, h):  # x (n, d), c (m, d), h (d,)
        z = (x[:, None, :] - c[None, :, :]) / h
        return logsumexp(-0.5 * np.sum(z * z, axis=2), axis=1)

    class BlockKDEMove(RedBlueMove):
        def __init__(self):
            super().__init__(live_dangerously=True)

        def get_proposal(self, s, c, random):
            c = np.concatenate(c, axis=0)
            ns = s.shape[0]
            b = blocks[random.randint(len(blocks))]
            cb = c[:, b]
            h = bandwidth * np.maximum(cb.std(axis=0), 1e-12)
            i = random.randint(cb.shape[0], size=ns)
            new = cb[i] + h * random.randn(ns, b.size)
            q = s.copy()
            q[:, b] = new
            return q, log_kde(s[:, b], cb, h) - log_kde(new, cb, h)

    return BlockKDEMove()


def profile_moves(blocks):
    """Move mix of the joint profile sampler: 50 % block DE, 15 % block DE over the thermal
    block together with one layer, 25 % block KDE independence, 10 % full DE (emcee)."""
    import emcee

    thermal = blocks[0]
    pairs = [np.concatenate([thermal, b]) for b in blocks[1:]] if len(thermal) else blocks[1:]
    return [(block_de_move(blocks), 0.5), (block_de_move(pairs), 0.15),
            (block_kde_move(blocks), 0.25), (emcee.moves.DEMove(), 0.1)]
