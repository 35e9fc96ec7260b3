"""An emcee move that keeps several ensembles independent inside one sampler.

The walkers of one ``emcee.EnsembleSampler`` are laid out as ``groups`` blocks of equal
size. Each block is an ensemble of its own: the base move (differential evolution or
stretch) proposes for half of a block using only the other half of the same block, so
no information passes between blocks and they stay independently started chains, as
R-hat needs. All blocks' proposals go to the log-probability function in one vectorised
call, which removes the per-call overhead of running the ensembles one after another.
"""

from __future__ import annotations

import numpy as np
from emcee.moves.red_blue import RedBlueMove
from emcee.state import State

__all__ = ["GroupedMove"]


class GroupedMove(RedBlueMove):
    """Apply a red-blue ``base`` move separately within each block of walkers.

    Parameters
    ----------
    base : emcee.moves.RedBlueMove
        The proposal (``DEMove()``, ``StretchMove()``); only its ``setup`` and
        ``get_proposal`` are used.
    groups : int
        Number of independent ensembles (blocks of consecutive walkers).
    """

    def __init__(self, base: RedBlueMove, groups: int):
        super().__init__(nsplits=2, randomize_split=True)
        self.base = base
        self.groups = int(groups)

    def propose(self, model, state):
        """Propose within each block, evaluate all blocks at once, accept per walker."""
        nwalkers, ndim = state.coords.shape
        per_group = nwalkers // self.groups
        self.base.setup(state.coords[:per_group])
        halves = np.tile(np.arange(per_group) % 2, (self.groups, 1))
        for row in halves:
            model.random.shuffle(row)
        halves = halves.ravel()
        group_of = np.repeat(np.arange(self.groups), per_group)
        accepted = np.zeros(nwalkers, dtype=bool)
        for split in (0, 1):
            moving = halves == split
            proposals, factors = [], []
            for g in range(self.groups):
                in_group = group_of == g
                s = state.coords[in_group & moving]
                c = state.coords[in_group & ~moving]
                q, f = self.base.get_proposal(s, [c], model.random)
                proposals.append(q)
                factors.append(f)
            q = np.concatenate(proposals)
            factors = np.concatenate(factors)
            new_log_probs, new_blobs = model.compute_log_prob_fn(q)
            index = np.flatnonzero(moving)  # same order as the concatenated blocks
            log_u = np.log(model.random.rand(len(index)))
            accept = factors + new_log_probs - state.log_prob[index] > log_u
            accepted[index] = accept
            new_state = State(q, log_prob=new_log_probs, blobs=new_blobs)
            state = self.update(state, new_state, accepted, moving)
        return state, accepted
