"""The exact discrete Wright–Fisher transition, on distributions over gene counts.

One generation (the life cycle of docs/model.md, autosomal, F = 0): zygotes at frequency x
are selected and their gametes mutate, giving q_gam = :func:`infer.core.life_cycle.autosomal_step`
(x); the next zygotes are 2Ne genes drawn binomially, k ~ Binomial(2Ne, q_gam), at
frequency k/(2Ne) (Fisher 1930; Wright 1931, Genetics 16:97). Carried as a distribution,
the masses w over points x become Σ_p w_p C(2N, k) q_p^k (1 - q_p)^(2N-k) over k = 0..2N.

Used where 2Ne is at most :data:`EXACT_GENES` (``Ne`` is rounded to whole genes, 2Ne to the
nearest integer); above it :mod:`infer.core.history.diffusion` takes over. Rows of
different 2Ne share one padded count axis.
"""

from __future__ import annotations

import numpy as np

from infer.core.life_cycle import autosomal_step
from infer.core.stats import log_choose

__all__ = ["EXACT_GENES", "transition", "binomial_masses", "wright_fisher_generations"]

#: the most genes (2Ne) carried by the exact discrete transition; above it the diffusion
EXACT_GENES = 200


def transition(genes, probability):
    """Binomial probabilities of k = 0..max(genes) genes for each point.

    Parameters
    ----------
    genes : ndarray of int, shape (n,)
        Genes drawn in each row.
    probability : ndarray, shape (n, P)
        Chance per gene drawn at each point.

    Returns
    -------
    (ndarray, ndarray)
        The new points k/genes, shape (n, K) with K = max(genes) + 1 (0 beyond a row's
        genes), and the matrix C(g, k) q^k (1 - q)^(g - k), shape (n, P, K).
    """
    genes = np.asarray(genes, dtype=float)
    size = int(genes.max()) + 1
    k = np.arange(size, dtype=float)
    g = genes[:, None, None]
    kk = k[None, None, :]
    q = np.clip(np.asarray(probability, dtype=float), 0.0, 1.0)[:, :, None]
    with np.errstate(all="ignore"):
        # log C(g, k) per row and count, formed once; k log q + (g-k) log(1-q) as products
        log_q, log_p = np.log(q), np.log1p(-q)
        rest = g - kk
        log_pmf = (log_choose(g, kk) + np.where(kk > 0, kk * log_q, 0.0)
                   + np.where(rest > 0, rest * log_p, 0.0))
        matrix = np.where(kk <= g, np.exp(log_pmf), 0.0)
    new_points = np.where(k[None, :] <= genes[:, None], k[None, :] / genes[:, None], 0.0)
    return new_points, matrix


def binomial_masses(masses, genes, probability):
    """Points and masses after drawing ``genes`` genes at ``probability`` from each point.

    ``masses`` and ``probability`` have shape (n, P); see :func:`transition`.
    """
    points, matrix = transition(genes, probability)
    return points, np.einsum("np,npk->nk", np.asarray(masses, dtype=float), matrix)


def wright_fisher_generations(points, masses, params, count):
    """Carry a distribution ``count`` generations by the exact Wright–Fisher transition.

    Parameters
    ----------
    points, masses : ndarray, shape (n, P)
        Frequencies among zygotes and their probabilities.
    params : dict of str to ndarray
        ``(n,)`` arrays of Ne, mu, s, h, nu (F = 0).
    count : int
        Generations (>= 1).

    Returns
    -------
    (ndarray, ndarray)
        Points k/(2Ne) and masses, shape (n, max 2Ne + 1).
    """
    genes = np.rint(2.0 * np.asarray(params["Ne"], dtype=float)).astype(int)
    rate = {k: np.asarray(params[k], dtype=float)[:, None] for k in ("mu", "s", "h", "nu")}

    def gametes(x):
        return autosomal_step(x, rate["mu"], rate["s"], rate["h"], 0.0, rate["nu"])

    points, masses = binomial_masses(masses, genes, gametes(points))
    if count > 1:
        # the same matrix every generation from the points k/(2Ne): T[j, k] = P(k | j)
        _, matrix = transition(genes, gametes(points))
        for _ in range(count - 1):
            masses = np.einsum("nj,njk->nk", masses, matrix)
    return points, masses
