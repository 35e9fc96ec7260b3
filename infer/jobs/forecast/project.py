"""Every draw projected forward through the deterministic life cycle (pure maths on arrays).

Generation 0 is the present: each posterior draw's newborns at that draw's exact
equilibrium (:func:`infer.core.balance.autosomal_balance`,
:func:`infer.core.x_linked.x_linked_balance`). From then on the changed values act: the
selection of generation 0 and of every later one, mutation in every gamete made from
now, and the inbreeding and penetrance of every generation born from now (generation 1
on). One generation is :func:`infer.core.life_cycle.autosomal_step` (or
:func:`~infer.core.life_cycle.x_linked_step`), applied to all draws at once; only the
generations are looped over.

Incidence is the affected share of births, with the study's conventions
(:func:`infer.core.balance.affected_fraction`): penetrance x (Aa + aa) for a dominant,
penetrance x aa for a recessive (genotype shares with the generation's F), and
penetrance x q_male among male births for an X-linked locus.

What to expect when selection stops (s = 0), the checks of tests/jobs/forecast. With
s = 0 every genotype has fitness 1, so w̄ = 1 and the selected gametes carry the allele
at q_sel = Aa/2 + aa = pq(1 - F) + q² (1 - F) + qF = q; mutation then gives::

    q' = q (1 - nu) + (1 - q) mu,    so    Δq = mu (1 - q) - nu q ≈ mu

for q ≪ 1 and nu ≪ mu (Crow & Kimura 1970, An Introduction to Population Genetics
Theory, ch. 6: the change of q under mutation alone). A dominant (F = 0) is seen in
Aa + aa = 1 - p² = 2q - q², which rises by 2Δq(1 - q) - Δq² ≈ 2 mu per generation at
first, about mu per gene copy. A recessive is seen in aa = q², which rises by
(q + Δq)² - q² = 2qΔq + Δq² ≈ 2 q mu per generation at first: slowly, because an allele
at equilibrium frequency q meets another copy only q of the time.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from infer.core.balance import affected_fraction, autosomal_balance
from infer.core.life_cycle import autosomal_step, newborn_frequency, x_linked_step
from infer.core.two_sex import two_sex_balance, two_sex_genotypes, two_sex_step
from infer.core.x_linked import x_linked_balance

__all__ = ["equilibrium_state", "frequency_and_incidence", "trajectories"]


def equilibrium_state(inheritance: str, values: dict) -> tuple[tuple, np.ndarray]:
    """Each row's exact equilibrium as the state the life cycle iterates.

    Parameters
    ----------
    inheritance : {"autosomal", "x-linked"}
    values : dict of str to numpy.ndarray
        ``mu, s, h, F, nu`` (and ``alpha``), shape (n,).

    Returns
    -------
    state : tuple of numpy.ndarray
        ``(q,)`` among zygotes, or ``(x, y)`` among the eggs and X-bearing sperm that
        made the newborns (x = q_male, y = 2 q_female - q_male).
    exists : numpy.ndarray
        Boolean (n,): the row has a stable interior equilibrium.
    """
    v = values
    if inheritance == "x-linked":
        balance = x_linked_balance(v["mu"], v["s"], v["h"], v["F"], v["nu"], v["alpha"])
        x = np.asarray(balance.q_male, dtype=float)
        return (x, 2.0 * np.asarray(balance.q_female, dtype=float) - x), np.asarray(
            balance.exists, dtype=bool)
    if _by_sex(v):  # the sperm and egg frequencies (infer.core.two_sex)
        balance = two_sex_balance(v["mu"], v["s_male"], v["s_female"], v["h"], v["F"],
                                  v["nu"])
        return ((np.asarray(balance.q_sperm, dtype=float),
                 np.asarray(balance.q_egg, dtype=float)),
                np.asarray(balance.exists, dtype=bool))
    balance = autosomal_balance(v["mu"], v["s"], v["h"], v["F"], v["nu"])
    return (np.asarray(balance.q_hat, dtype=float),), np.asarray(balance.exists, dtype=bool)


def _by_sex(values: dict) -> bool:
    """Selection differs by sex in these values (s_male and s_female given)."""
    return "s_male" in values and bool(np.isfinite(values["s_male"]).any())


def frequency_and_incidence(inheritance: str, mode: str, state: tuple, F, penetrance
                            ) -> tuple[np.ndarray, np.ndarray]:
    """The allele frequency among newborns and the affected share of births.

    Returns
    -------
    tuple of numpy.ndarray
        ``(q, incidence)``; X-linked: q over all X chromosomes and the affected share of
        male births.
    """
    if inheritance == "x-linked":
        x, _, q = newborn_frequency(*state)
        return q, affected_fraction("x-linked-male", x, penetrance=penetrance)
    if len(state) == 2:  # sperm and eggs at their own frequencies
        _, het, hom = two_sex_genotypes(*state, F)
        shown = het + hom if mode == "dominant" else hom
        return 0.5 * (state[0] + state[1]), np.asarray(penetrance, dtype=float) * shown
    (q,) = state
    return q, affected_fraction(mode, q, F, penetrance)


def _step(inheritance: str, state: tuple, v: dict, F) -> tuple:
    if inheritance == "x-linked":
        return x_linked_step(*state, v["mu"], v["s"], v["h"], F, v["nu"], v["alpha"])
    if len(state) == 2 or _by_sex(v):
        x, y = state if len(state) == 2 else (state[0], state[0])
        return two_sex_step(x, y, v["mu"], v["s_male"], v["s_female"], v["h"], F, v["nu"])
    return (autosomal_step(state[0], v["mu"], v["s"], v["h"], F, v["nu"]),)


def trajectories(inheritance: str, mode: str, before: dict, after: dict, generations: int,
                 state: tuple | None = None) -> Iterator[tuple[int, np.ndarray, np.ndarray]]:
    """Yield ``(t, q, incidence)`` for t = 0 ... generations, every row at once.

    Parameters
    ----------
    inheritance : {"autosomal", "x-linked"}
    mode : {"dominant", "recessive", "x-linked-male"}
        Which genotypes are affected.
    before, after : dict of str to numpy.ndarray
        The life-cycle values of each row (``mu, s, h, F, nu, alpha, penetrance``, shape
        (n,)) as the report has them and as changed; ``before`` fixes the starting
        equilibrium and generation 0's inbreeding and penetrance.
    generations : int
        Generations projected.
    state : tuple of numpy.ndarray, optional
        The starting state of :func:`equilibrium_state` under ``before``, when the caller
        has it already (it is solved here otherwise).

    Yields
    ------
    tuple
        ``(t, q, incidence)``, arrays of shape (n,); rows without an equilibrium under
        ``before`` are NaN throughout.
    """
    if state is None:
        state, _ = equilibrium_state(inheritance, before)
    F, penetrance = before["F"], before["penetrance"]
    for t in range(int(generations) + 1):
        q, incidence = frequency_and_incidence(inheritance, mode, state, F, penetrance)
        yield t, q, incidence
        if t < generations:
            state = _step(inheritance, state, after, F)
            F, penetrance = after["F"], after["penetrance"]
