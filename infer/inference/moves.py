"""emcee moves that keep several ensembles independent inside one sampler.

The walkers of one ``emcee.EnsembleSampler`` are laid out as ``groups`` blocks of equal
size. Each block is an ensemble of its own: a move updates a random half of every block
using only the other half of the same block (the red-blue scheme of emcee's
``RedBlueMove``; Foreman-Mackey et al. 2013, PASP 125:306), so no information passes
between blocks and they stay independently started chains, as R-hat needs.

The proposals of all blocks are drawn with one set of array operations, and all of them
go to the vectorised log-probability function in one call. That function is called
directly with the arrays it returns (log-probability and per-observation log-likelihood
columns), not through emcee's ``compute_log_prob``, which unpacks every walker's result
in a Python loop; the sampler, its random state and its storage are emcee's.

Three proposals. Two are symmetric in the sense their references prove:

- :class:`GroupedDifferentialEvolution`: ``q = x + gamma * (c_i - c_j)`` for a random
  ordered pair of distinct walkers of the other half, ``gamma = 2.38 / sqrt(2 ndim)``
  jittered by a relative 1e-5 (ter Braak 2006, Statistics and Computing 16:239; the
  constants of emcee's ``DEMove``, after Nelson et al. 2014, ApJS 210:11);
- :class:`GroupedStretch`: ``q = c + z (x - c)`` with ``g(z) ~ 1/sqrt(z)`` on
  ``[1/a, a]`` and the factor ``z^(ndim - 1)`` (Goodman & Weare 2010, CAMCoS 5:65).

The third, :class:`GroupedIndependence`, draws every walker's proposal from a fixed density
g of its own block (``infer.inference.proposal``) and accepts with the
Metropolis–Hastings factor ``g(x) / g(q)`` (the independence sampler of Tierney 1994,
Annals of Statistics 22:1701). It needs no other walker, so all walkers move at once.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from infer.inference.emcee_loader import load_emcee

emcee = load_emcee()

__all__ = ["GroupedDifferentialEvolution", "GroupedStretch", "GroupedIndependence"]

#: evaluate(points (n, ndim)) -> (log_prob (n,), blobs (n, k) or None)
Evaluate = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray | None]]


class _GroupedMove(emcee.moves.Move):
    """Red-blue updates within each block of walkers; subclasses give the proposal."""

    def __init__(self, groups: int, evaluate: Evaluate):
        self.groups = int(groups)
        self.evaluate = evaluate

    def _proposal(self, moving: np.ndarray, other: np.ndarray, random):
        """Proposals and log proposal factors for moving (g, m, ndim) given other (g, k, ndim)."""
        raise NotImplementedError

    def propose(self, model, state):
        """Update both halves of every block in turn; return the state and acceptances."""
        nwalkers, ndim = state.coords.shape
        per_group = nwalkers // self.groups
        half = per_group // 2
        random = model.random
        # a random split of each block into two halves (one permutation per block)
        order = np.argsort(random.rand(self.groups, per_group), axis=1)
        order += (np.arange(self.groups) * per_group)[:, None]
        accepted = np.zeros(nwalkers, dtype=bool)
        for moving, other in ((order[:, :half], order[:, half:]),
                              (order[:, half:], order[:, :half])):
            proposals, factors = self._proposal(state.coords[moving], state.coords[other],
                                                random)
            index = moving.ravel()
            proposals = proposals.reshape(-1, ndim)
            log_prob, blobs = self.evaluate(proposals)
            log_u = np.log(random.rand(index.size))
            accept = factors.ravel() + log_prob - state.log_prob[index] > log_u
            taken = index[accept]
            state.coords[taken] = proposals[accept]
            state.log_prob[taken] = log_prob[accept]
            if blobs is not None:
                state.blobs[taken] = blobs[accept]
            accepted[taken] = True
        return state, accepted


class GroupedDifferentialEvolution(_GroupedMove):
    """Differential-evolution proposals within each block (see the module docstring).

    Parameters
    ----------
    groups : int
        Number of independent ensembles (blocks of consecutive walkers).
    evaluate : callable
        ``evaluate(points)`` -> ``(log_prob, blobs)`` for an (n, ndim) array.
    sigma : float
        Relative jitter of the scale factor gamma.
    """

    def __init__(self, groups: int, evaluate: Evaluate, sigma: float = 1.0e-5):
        super().__init__(groups, evaluate)
        self.sigma = sigma

    def _proposal(self, moving, other, random):
        groups, m, ndim = moving.shape
        k = other.shape[1]
        # a uniformly chosen ordered pair (i, j), i != j, of the other half
        i = random.randint(k, size=(groups, m))
        j = random.randint(k - 1, size=(groups, m))
        j += j >= i
        rows = np.arange(groups)[:, None]
        difference = other[rows, i] - other[rows, j]
        gamma = 2.38 / np.sqrt(2 * ndim) * (1 + self.sigma * random.randn(groups, m, 1))
        return moving + gamma * difference, np.zeros((groups, m))


class GroupedStretch(_GroupedMove):
    """Affine-invariant stretch proposals within each block (see the module docstring).

    Parameters
    ----------
    groups : int
        Number of independent ensembles (blocks of consecutive walkers).
    evaluate : callable
        ``evaluate(points)`` -> ``(log_prob, blobs)`` for an (n, ndim) array.
    a : float
        Stretch scale (> 1).
    """

    def __init__(self, groups: int, evaluate: Evaluate, a: float = 2.0):
        super().__init__(groups, evaluate)
        self.a = a

    def _proposal(self, moving, other, random):
        groups, m, ndim = moving.shape
        z = ((self.a - 1.0) * random.rand(groups, m) + 1) ** 2 / self.a
        partner = other[np.arange(groups)[:, None], random.randint(other.shape[1],
                                                                   size=(groups, m))]
        return partner + z[..., None] * (moving - partner), (ndim - 1.0) * np.log(z)


class GroupedIndependence(emcee.moves.Move):
    """Independence Metropolis–Hastings proposals, one fixed density per block.

    Parameters
    ----------
    proposals : sequence of MixtureProposal
        One density per block of walkers (``groups = len(proposals)``); each block's was
        fitted to that block's own pilot draws, so blocks stay independent.
    evaluate : callable
        ``evaluate(points)`` -> ``(log_prob, blobs)`` for an (n, ndim) array.
    """

    def __init__(self, proposals, evaluate: Evaluate):
        self.proposals = list(proposals)
        self.groups = len(self.proposals)
        self.evaluate = evaluate
        #: (coordinates, log g) of every walker after the last move: a walker that has not
        #: moved since (no other move took it elsewhere) keeps its density, which is fixed
        self._known: tuple[np.ndarray, np.ndarray] | None = None

    def _current_log_density(self, current: np.ndarray) -> np.ndarray:
        """The proposal log density of every walker (g, m), recomputed where it moved.

        Each block's density is fixed, so a cached value is exact for a walker whose
        coordinates are unchanged; the others (moved by another move, or every walker at
        the first call) are evaluated.
        """
        groups, m, ndim = current.shape
        flat = current.reshape(-1, ndim)
        known = np.empty(len(flat))
        stale = np.ones(len(flat), dtype=bool)
        if self._known is not None and self._known[0].shape == flat.shape:
            coords, values = self._known
            stale = np.any(coords != flat, axis=1)
            known[~stale] = values[~stale]
        for g, density in enumerate(self.proposals):
            rows = g * m + np.flatnonzero(stale[g * m:(g + 1) * m])
            if rows.size:
                known[rows] = density.log_density(flat[rows])
        return known.reshape(groups, m)

    def _draw(self, current: np.ndarray, random):
        """Proposals (g, m, ndim), and log g at the current points and at the proposals."""
        groups, m, ndim = current.shape
        proposed = np.empty_like(current)
        at_proposed = np.empty((groups, m))
        for g, density in enumerate(self.proposals):
            proposed[g] = density.sample(random, m)
        at_current = self._current_log_density(current)
        for g, density in enumerate(self.proposals):
            at_proposed[g] = density.log_density(proposed[g])
        return proposed, at_current, at_proposed

    def _proposal(self, current: np.ndarray, random):
        """Proposals (g, m, ndim) and log factors log g(current) - log g(proposal)."""
        proposed, at_current, at_proposed = self._draw(current, random)
        return proposed, at_current - at_proposed

    def propose(self, model, state):
        """Move every walker at once; return the state and acceptances."""
        nwalkers, ndim = state.coords.shape
        per_group = nwalkers // self.groups
        current = state.coords.reshape(self.groups, per_group, ndim)
        proposed, at_current, at_proposed = self._draw(current, model.random)
        proposed = proposed.reshape(-1, ndim)
        log_prob, blobs = self.evaluate(proposed)
        log_u = np.log(model.random.rand(nwalkers))
        accept = (at_current - at_proposed).ravel() + log_prob - state.log_prob > log_u
        state.coords[accept] = proposed[accept]
        state.log_prob[accept] = log_prob[accept]
        if blobs is not None:
            state.blobs[accept] = blobs[accept]
        self._known = (state.coords.copy(),
                       np.where(accept, at_proposed.ravel(), at_current.ravel()))
        return state, accept
