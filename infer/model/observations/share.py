"""An observation read as an observed share of a balance quantity.

:class:`FrequencyStatistic` is what a kind contributes to the observed band of a
balance plot (with its exact Clopper-Pearson interval), to the drift model's exact
predictive tails in ``qhat check`` and to the "frequency data only" statement of an
estimate report (:meth:`infer.model.observations.base.Observation.frequency_statistic`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from infer.core.stats import clopper_pearson

__all__ = ["FrequencyStatistic"]


@dataclass(frozen=True)
class FrequencyStatistic:
    """An observation read as an observed share, ``count`` of ``trials``, of a balance quantity.

    What a kind contributes to the observed band of a balance plot and to the "frequency
    data only" statement of an estimate report
    (:meth:`infer.model.observations.base.Observation.frequency_statistic`).

    Attributes
    ----------
    count, trials : int
        The observed share, k of n.
    quantity : str
        The balance quantity the share measures, named as the quantities a claim implies
        (:func:`infer.jobs.check.implied.implied_quantities`): ``"q_hat"``, ``"q_male"`` or
        ``"q_female"`` (allele frequencies; ``"q_male"`` also for affected sons), or
        ``"incidence_dominant"`` / ``"incidence_recessive"`` (affected share of births
        at full penetrance).
    scale : float
        The share's expectation is ``scale`` times the quantity: the penetrance for
        affected births, 1 for allele copies.
    description : str
        The share in words, for an axis: ``"allele frequency"``, ``"affected share of
        births (dominant)"``.
    of_alleles : bool
        The trials are allele copies, so the share is an allele frequency (an estimate
        report's balance plot draws it against the q curves).
    share_polynomial : tuple of float
        ``(c1, c2)``: at an autosomal locus with F = 0 one trial counts with probability
        ``scale * (c1 x + c2 x^2)`` at allele frequency x (x for allele copies; 2x - x^2
        and x^2 for dominant and recessive affected births, Hardy-Weinberg proportions),
        so its mean over a density of x needs only the first two moments.
    """

    count: int
    trials: int
    quantity: str
    scale: float
    description: str
    of_alleles: bool
    share_polynomial: tuple[float, float] = (1.0, 0.0)

    def share(self, x):
        """Probability that one trial counts at allele frequency ``x`` (autosomal, F = 0)."""
        c1, c2 = self.share_polynomial
        x = np.asarray(x, dtype=float)
        return self.scale * (c1 * x + c2 * x * x)

    def expected_count(self, mean: float, second: float) -> float:
        """Expected count when x has mean ``mean`` and second moment ``second`` = E[x^2]."""
        c1, c2 = self.share_polynomial
        return self.trials * self.scale * (c1 * mean + c2 * second)

    def clopper_pearson(self, level: float = 0.95) -> tuple[float, float]:
        """Exact central interval of the observed share (Clopper & Pearson 1934).

        :func:`infer.core.stats.clopper_pearson` of ``count`` and ``trials``.
        """
        return clopper_pearson(self.count, self.trials, level)
