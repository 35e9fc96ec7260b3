"""A history under drift: the allele-frequency distribution carried through the epochs.

Start: Wright's stationary distribution (:mod:`infer.core.drift.stationary`) under the
ancestral values, gathered into the cells of :class:`infer.core.history.diffusion.Grid`.
Each run of generations under one set of values uses, row by row,

- the exact discrete Wright–Fisher transition (:mod:`infer.core.history.discrete`) where
  2Ne <= :data:`~infer.core.history.discrete.EXACT_GENES` (200 genes, Ne <= 100), and
- the forward diffusion equation (:mod:`infer.core.history.diffusion`) above it;

tests/core/history/test_history_switch.py checks that both agree at the switch. A founder
event draws 2·founders genes binomially from the zygotes (Nei, Maruyama & Chakraborty 1975,
Evolution 29:1 treat a bottleneck so; above 200 genes as one generation of neutral
diffusion at Ne = founders), or puts all mass at the founder frequency.

A distribution is points and masses, ``(n, P)`` arrays (cell points for the diffusion,
k/(2Ne) for the discrete transition, padded with zero masses where rows differ).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special

from infer.core.history.diffusion import CELLS, SUBSTEPS, Grid, diffusion_generations, \
    stationary_masses
from infer.core.history.discrete import EXACT_GENES, binomial_masses, wright_fisher_generations
from infer.core.history.spec import History, resolve, row_value
from infer.core.stats import log_choose

__all__ = ["FrequencyDistribution", "history_distributions", "EXACT_GENES"]


@dataclass(frozen=True)
class FrequencyDistribution:
    """Probability masses over allele frequencies among zygotes, one distribution per row.

    Attributes
    ----------
    points, masses : ndarray, shape (n, P)
    """

    points: np.ndarray
    masses: np.ndarray
    edges: np.ndarray | None = None

    def log_binomial(self, k: int, n: int) -> np.ndarray:
        """Log P(k of n sampled copies), the binomial averaged over each diffusion cell.

        Within a diffusion cell [e_j, e_j+1] the frequency is read as spread evenly, so its
        sample probability is ∫ C(n,k) x^k (1-x)^(n-k) dx / (e_j+1 - e_j) = [I_e_j+1(k+1,
        n-k+1) - I_e_j(k+1, n-k+1)] / ((n+1)(e_j+1 - e_j)), I the regularised incomplete
        beta function; at a point of the discrete lattice (``edges`` NaN) it is the
        binomial there.
        """
        x = np.clip(self.points, 0.0, 1.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            at_point = (log_choose(n, k)
                        + (k * np.log(x) if k else 0.0)
                        + ((n - k) * np.log1p(-x) if n - k else 0.0))
            if self.edges is None:
                return self.log_expectation(at_point)
            lo, hi = self.edges[:, :-1], self.edges[:, 1:]
            cell = np.isfinite(lo) & np.isfinite(hi) & (hi > lo)
            upper = special.betainc(k + 1, n - k + 1, np.where(cell, hi, 1.0))
            lower = special.betainc(k + 1, n - k + 1, np.where(cell, lo, 0.0))
            # the upper tail difference where both ends sit in it (no cancellation)
            upper_c = special.betaincc(k + 1, n - k + 1, np.where(cell, hi, 1.0))
            lower_c = special.betaincc(k + 1, n - k + 1, np.where(cell, lo, 0.0))
            share = np.where(upper < 0.5, upper - lower, lower_c - upper_c)
            averaged = np.log(share) - np.log(n + 1.0) - np.log(hi - lo)
        return self.log_expectation(np.where(cell, averaged, at_point))

    def expectation(self, values) -> np.ndarray:
        """Σ_p masses · values (values of shape (n, P))."""
        return np.sum(self.masses * values, axis=1)

    @property
    def mean(self) -> np.ndarray:
        """Mean allele frequency of each row."""
        return self.expectation(self.points)

    @property
    def heterozygosity(self) -> np.ndarray:
        """Expected 2x(1 - x) of each row."""
        return self.expectation(2.0 * self.points * (1.0 - self.points))

    def draw(self, rng: np.random.Generator) -> np.ndarray:
        """One frequency per row drawn from its distribution (NaN where masses are NaN)."""
        cumulative = np.cumsum(self.masses, axis=1)
        u = rng.uniform(size=cumulative.shape[0]) * cumulative[:, -1]
        index = np.minimum(np.sum(cumulative < u[:, None], axis=1), cumulative.shape[1] - 1)
        x = self.points[np.arange(cumulative.shape[0]), index]
        return np.where(np.isfinite(cumulative[:, -1]), x, np.nan)

    def log_expectation(self, log_p) -> np.ndarray:
        """Log of Σ_p masses · exp(log_p), ``log_p`` of shape (n, P) (log P(data | x))."""
        with np.errstate(divide="ignore"):
            log_w = np.log(self.masses)
        return special.logsumexp(log_w + log_p, axis=1)


def _pad(blocks, n, rows_of):
    width = max(b[0].shape[1] for b in blocks)
    points, masses = np.zeros((n, width)), np.zeros((n, width))
    edges = np.full((n, width + 1), np.nan)
    for (p, m, e), rows in zip(blocks, rows_of, strict=True):
        points[rows, : p.shape[1]] = p
        masses[rows, : m.shape[1]] = m
        if e is not None:
            edges[rows, : e.shape[1]] = e
    return points, masses, edges


def _generations(points, masses, params, count, cells, substeps, exact_genes):
    """Carry (points, masses) ``count`` generations under ``params`` (row-wise switch)."""
    n = points.shape[0]
    genes = 2.0 * np.asarray(params["Ne"], dtype=float)
    exact = np.rint(genes) <= exact_genes
    blocks, rows_of = [], []
    for rows in (np.flatnonzero(exact), np.flatnonzero(~exact)):
        if rows.size == 0:
            continue
        sub = {k: np.asarray(v)[rows] for k, v in params.items() if np.ndim(v) == 1}
        if exact[rows[0]]:
            blocks.append((*wright_fisher_generations(points[rows], masses[rows], sub, count),
                           None))
        else:
            grid = Grid(genes[rows], cells)
            cell_masses = grid.assign(points[rows], masses[rows])
            out = diffusion_generations(grid, cell_masses, sub, count, substeps)
            blocks.append((grid.points, out, grid.edges))
        rows_of.append(rows)
    return _pad(blocks, n, rows_of)


def _found(points, masses, founders, cells, substeps, exact_genes):
    """2·founders genes drawn from each row's zygotes: exact, or one generation of drift.

    Up to ``exact_genes`` genes the binomial draw is exact; above, it is one generation of
    the forward equation at Ne = founders without selection or mutation (variance
    x(1-x)/(2·founders), the diffusion limit of the same draw). Returns points, masses
    and the cell edges (None on the exact lattice).
    """
    n = points.shape[0]
    genes = np.full(n, 2 * founders)
    if 2 * founders <= exact_genes:
        return (*binomial_masses(masses, genes, points), None)
    grid = Grid(genes.astype(float), cells)
    neutral = dict(Ne=np.full(n, float(founders)), mu=np.full(n, 1e-12), nu=np.full(n, 1e-12),
                   s=np.zeros(n), h=np.full(n, 0.5))
    out = diffusion_generations(grid, grid.assign(points, masses), neutral, 1, substeps)
    return grid.points, out, grid.edges


def stationary_start(params, cells: int = CELLS):
    """Wright's stationary distribution of each row on the diffusion cells of its Ne.

    Returns ``(points, masses, edges)``.
    """
    grid = Grid(2.0 * np.asarray(params["Ne"], dtype=float), cells)
    return grid.points, stationary_masses(grid, params), grid.edges


def history_distributions(history: History, params: dict, times=(0,), *,
                          cells: int = CELLS, substeps: int = SUBSTEPS,
                          exact_genes: int = EXACT_GENES) -> dict:
    """The allele-frequency distribution at each recorded time of the history.

    Parameters
    ----------
    history : History
        F stays 0 (the drift model's scope).
    params : dict of str to ndarray
        ``(n,)`` arrays of Ne, mu, s, h, nu (and any row parameter the history names).
    times : iterable of int
        Generations ago to record.
    cells, substeps : int
        Resolution of the diffusion (:data:`~infer.core.history.diffusion.CELLS`,
        :data:`~infer.core.history.diffusion.SUBSTEPS`).
    exact_genes : int
        The switch: rows with 2Ne (rounded) at most this use the exact transition.

    Returns
    -------
    dict of int to FrequencyDistribution
    """
    n = int(np.shape(params["mu"])[0])
    params = {k: (np.broadcast_to(np.asarray(v, dtype=float), (n,)) if np.ndim(v) <= 1 else v)
              for k, v in params.items()}
    ancestral = history.ancestral_values
    points, masses, edges = stationary_start(resolve(params, ancestral, n), cells)
    untouched = True  # still the ancestral stationary distribution, unchanged
    recorded = {}
    for action in history.schedule(times):
        if action[0] == "steps":
            _, values, count = action
            rows = resolve(params, values, n)
            if untouched and values == ancestral and np.all(
                    np.rint(2.0 * rows["Ne"]) > exact_genes):
                continue  # the diffusion's exact stationary solution: nothing changes
            points, masses, edges = _generations(points, masses, rows, count,
                                                 cells, substeps, exact_genes)
            untouched = False
        elif action[0] == "found":
            founder = history.founder
            untouched = False
            if founder.frequency is not None:
                points = row_value(params, founder.frequency, n)[:, None].copy()
                masses, edges = np.ones((n, 1)), None
            else:
                points, masses, edges = _found(points, masses, founder.founders, cells, substeps,
                                        exact_genes)
        else:
            recorded[action[1]] = FrequencyDistribution(
                points.copy(), masses.copy(), None if edges is None else edges.copy())
    return recorded
