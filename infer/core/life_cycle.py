"""One generation of the qhat life cycle, deterministic (docs/model.md, 'Life cycle').

The map whose fixed points :mod:`infer.core.balance` and :mod:`infer.core.x_linked`
solve for, written forward so that histories and forecasts can iterate it. Census at
birth, as everywhere in qhat.

Autosomal: zygotes at frequency q with inbreeding F have genotypes
AA = p(p(1-F) + F), Aa = 2pq(1-F), aa = q(q(1-F) + F); selection with fitnesses 1, 1-hs,
1-s gives q_sel = (Aa(1-hs)/2 + aa(1-s)) / w̄; gametes mutate, q' = q_sel(1-nu) +
(1-q_sel)mu; random union of gametes (with the next generation's F) gives the next
zygotes at q'.

X-linked: the state is (x, y), the frequencies among the eggs and X-bearing sperm that
made the current newborns (sons at x, daughters from one of each). Daughters are
selected (1, 1-hs, 1-s; F on daughters only) and their eggs mutate at mu_female; sons
are selected (1, 1-s) and their X-bearing sperm mutate at mu_male = alpha mu_female;
back mutation nu in both.

Every function takes arrays that broadcast against each other; nothing loops over rows.
"""

from __future__ import annotations

import numpy as np

from infer.core.balance import genotype_frequencies
from infer.core.x_linked import daughter_genotype_frequencies, sex_specific_rates

__all__ = ["autosomal_step", "x_linked_step", "newborn_frequency"]


def autosomal_step(q, mu, s, h, F=0.0, nu=0.0) -> np.ndarray:
    """Frequency among the next generation's zygotes, from q among this one's.

    Parameters
    ----------
    q : array_like
        Frequency of the deleterious allele among zygotes.
    mu, s, h, F, nu : array_like
        Forward mutation rate, selection coefficient, dominance, inbreeding
        coefficient, back mutation rate (broadcast against q).

    Returns
    -------
    numpy.ndarray
        q' (the equilibria of :func:`infer.core.balance.autosomal_balance` are its
        fixed points).
    """
    q, mu, s, h, nu = (np.asarray(v, dtype=float) for v in (q, mu, s, h, nu))
    _, het, hom = genotype_frequencies(q, F)
    selected_het = het * (1.0 - h * s)
    selected_hom = hom * (1.0 - s)
    # w̄ = 1 - s(h Aa + aa), formed without subtracting terms of order one
    w_bar = 1.0 - s * (h * het + hom)
    # w̄ = 0 only where every zygote is a lethal homozygote (q = 1, s = 1): the limit of
    # q_sel there, from any s < 1, is q itself
    q_sel = np.divide(0.5 * selected_het + selected_hom, w_bar,
                      out=np.array(q * np.ones_like(w_bar), dtype=float), where=w_bar > 0)
    return q_sel * (1.0 - nu) + (1.0 - q_sel) * mu


def x_linked_step(x, y, mu, s, h, F=0.0, nu=0.0, alpha=1.0) -> tuple[np.ndarray, np.ndarray]:
    """Egg and X-bearing sperm frequencies one generation on.

    Parameters
    ----------
    x, y : array_like
        Frequency of the deleterious allele among the eggs and X-bearing sperm that
        made the current newborns.
    mu : array_like
        Sex-averaged rate per X chromosome, (2 mu_female + mu_male) / 3.
    s, h, F, nu, alpha : array_like
        As in :func:`infer.core.x_linked.x_linked_balance`.

    Returns
    -------
    tuple of numpy.ndarray
        ``(x', y')``; newborn sons are at x', daughters at (x' + y') / 2.
    """
    x, y, s, h, nu = (np.asarray(v, dtype=float) for v in (x, y, s, h, nu))
    mu_female, mu_male = sex_specific_rates(mu, alpha)
    _, het, hom = daughter_genotype_frequencies(x, y, F)
    w_daughters = 1.0 - s * (h * het + hom)
    mothers = (0.5 * het * (1.0 - h * s) + hom * (1.0 - s)) / w_daughters
    fathers = x * (1.0 - s) / (1.0 - s * x)
    x_next = mothers * (1.0 - nu) + (1.0 - mothers) * mu_female
    y_next = fathers * (1.0 - nu) + (1.0 - fathers) * mu_male
    return x_next, y_next


def newborn_frequency(x, y) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """X-linked newborn frequencies from the gametes that made them.

    Returns
    -------
    tuple of numpy.ndarray
        ``(q_male, q_female, q_all)`` = (x, (x + y)/2, (2 q_female + q_male)/3), the
        quantities :class:`infer.core.x_linked.XLinkedBalance` reports.
    """
    x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    q_female = 0.5 * (x + y)
    return x, q_female, (2.0 * q_female + x) / 3.0
