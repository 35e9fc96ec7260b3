"""The ``sporadic`` kind: new-mutation cases among births (the direct method).

:class:`Sporadic` -- binomial with 2·mu·penetrance per birth (dominant) or
mu_female·penetrance per male birth (x-linked-male).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from infer.core import balance
from infer.core.choices import NEW_MUTATION_MODES
from infer.core.stats import log_binomial
from infer.errors import InputError
from infer.model.observations.base import (
    Observation,
    at_least_one,
    binomial_draw,
    ascertainment_text,
    check_not_above,
    free_ascertainment,
    parse_ascertainment,
    parse_mode,
)
from infer.validate import whole_count

__all__ = ["Sporadic", "new_mutation_rate", "parse_new_mutation_mode"]


def new_mutation_rate(mode: str, params: dict, penetrance: float = 1.0) -> np.ndarray:
    """Probability that a birth is an affected new-mutation case, per row (the direct method).

    ``2·mu·penetrance`` for ``"dominant"`` (either parental gamete may carry the new
    mutation); ``mu_female·penetrance`` per male birth for ``"x-linked-male"`` (a son gets
    only his mother's X; ``balance.sex_specific_rates``).
    """
    mu = np.asarray(params["mu"], dtype=float)
    if mode == "dominant":
        return 2.0 * mu * penetrance
    mu_female, _ = balance.sex_specific_rates(mu, params["alpha"])
    return np.asarray(mu_female, dtype=float) * penetrance


def parse_new_mutation_mode(table: dict, field: str, inheritance: str, what: str) -> str:
    """The ``mode`` of a table counting new-mutation cases: ``recessive`` is refused."""
    if table["mode"] == "recessive":
        raise InputError(
            '"recessive" is not allowed: a new recessive mutation does not show in its '
            f'carrier, so {what} need mode = "dominant" or "x-linked-male"',
            field=f"{field}.mode",
        )
    return parse_mode(table, field, inheritance, NEW_MUTATION_MODES)


@dataclass
class Sporadic(Observation):
    """``cases`` of new mutations among ``births`` (the direct method).

    A dominant new mutation shows in a child when either parental gamete carries
    one: probability 2·mu per birth (Vogel & Motulsky, *Human Genetics*, direct
    method).  An X-linked son inherits only his mother's X: probability mu_female,
    with mu_female = 3 mu / (2 + alpha) (``balance.sex_specific_rates``).  Both are
    multiplied by the penetrance; phenocopies add to them and the completeness of the
    count multiplies the sum (:meth:`rate`).
    """

    kind: ClassVar[str] = "sporadic"
    depends_on_frequency: ClassVar[bool] = False
    statistic_name: ClassVar[str] = "sporadic cases"
    ascertainment: ClassVar[tuple[str, ...]] = ("penetrance", "completeness", "phenocopy")
    required: ClassVar[tuple[str, ...]] = ("cases", "births", "mode")
    optional: ClassVar[tuple[str, ...]] = ascertainment

    cases: int = 0
    births: int = 1
    mode: str = "dominant"
    penetrance: float | None = None
    completeness: float | None = None
    phenocopy: float | None = None

    @classmethod
    def _parse(cls, table, field, inheritance):
        cases = whole_count(table["cases"], f"{field}.cases")
        births = whole_count(table["births"], f"{field}.births")
        at_least_one(births, f"{field}.births")
        check_not_above(cases, births, "births", f"{field}.cases")
        mode = parse_new_mutation_mode(table, field, inheritance, "sporadic cases")
        return {"cases": cases, "births": births, "mode": mode,
                **parse_ascertainment(table, field, cls.ascertainment, cases)}

    def rate(self, params) -> np.ndarray:
        """Probability that a birth is a counted sporadic case, per row.

        c·(r·P + φ): the new-mutation rate r of :func:`new_mutation_rate` times the
        penetrance P, plus phenocopies φ (their parents are unaffected: they look like new
        mutations), times the completeness c of the count.
        """
        penetrance = self.ascertained("penetrance", params)
        completeness = self.ascertained("completeness", params)
        phenocopy = self.ascertained("phenocopy", params)
        return np.clip(completeness * (new_mutation_rate(self.mode, params, penetrance)
                                       + phenocopy), 0.0, 1.0)

    def _log_likelihood(self, state):
        return log_binomial(self.cases, self.births, self.rate(state.params))

    def statistic(self):
        """The observed sporadic cases."""
        return float(self.cases)

    def expected(self, state):
        """Expected cases, births × rate."""
        return self.births * self.rate(state.params)

    def simulate(self, state, rng):
        """Binomial draws of the number of cases."""
        return binomial_draw(rng, self.births, self.rate(state.params))

    def statistic_trials(self, state):
        """Binomial(births, rate) at every row."""
        return self.births

    def _draw_table_fields(self, state, rng):
        return {"cases": int(rng.binomial(self.births, self.rate(state.params))[0])}

    def frequency_statistic(self):
        """None: new-mutation cases measure mu, not the allele frequency."""
        return None

    def describe(self):
        """One line for reports."""
        births = "male births" if self.mode == "x-linked-male" else "births"
        return (
            f"{self.label}: {self.cases} new-mutation cases in {self.births} {births} "
            f"({self.mode}{ascertainment_text(self)})"
        )

    def parameters_used(self, model="deterministic"):
        """Life-cycle parameters the likelihood depends on: mu (and alpha)."""
        used = {"mu", "alpha"} if self.mode == "x-linked-male" else {"mu"}
        return used | free_ascertainment(self)
