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
    check_not_above,
    parse_mode,
)
from infer.validate import format_number, probability, whole_count

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
    multiplied by the penetrance.
    """

    kind: ClassVar[str] = "sporadic"
    depends_on_frequency: ClassVar[bool] = False
    statistic_name: ClassVar[str] = "sporadic cases"
    required: ClassVar[tuple[str, ...]] = ("cases", "births", "mode")
    optional: ClassVar[tuple[str, ...]] = ("penetrance",)

    cases: int = 0
    births: int = 1
    mode: str = "dominant"
    penetrance: float = 1.0

    @classmethod
    def _parse(cls, table, field, inheritance):
        cases = whole_count(table["cases"], f"{field}.cases")
        births = whole_count(table["births"], f"{field}.births")
        at_least_one(births, f"{field}.births")
        check_not_above(cases, births, "births", f"{field}.cases")
        mode = parse_new_mutation_mode(table, field, inheritance, "sporadic cases")
        penetrance = probability(table.get("penetrance", 1.0), f"{field}.penetrance")
        if penetrance == 0 and cases > 0:
            raise InputError("0 cannot produce sporadic cases", field=f"{field}.penetrance")
        return {"cases": cases, "births": births, "mode": mode, "penetrance": penetrance}

    def rate(self, params) -> np.ndarray:
        """Probability that a birth is a sporadic case, per row (:func:`new_mutation_rate`)."""
        return new_mutation_rate(self.mode, params, self.penetrance)

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
        pen = "" if self.penetrance == 1 else f", penetrance {format_number(self.penetrance)}"
        return (
            f"{self.label}: {self.cases} new-mutation cases in {self.births} {births} "
            f"({self.mode}{pen})"
        )

    def parameters_used(self, model="deterministic"):
        """Life-cycle parameters the likelihood depends on: mu (and alpha)."""
        return {"mu", "alpha"} if self.mode == "x-linked-male" else {"mu"}
