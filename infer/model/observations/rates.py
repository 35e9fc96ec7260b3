"""Observation kinds that do not depend on the allele frequency.

* ``sporadic`` (:class:`Sporadic`) -- new-mutation cases among births (the direct
  method), binomial with 2·mu·penetrance (dominant) or mu_female·penetrance.
* ``fertility`` (:class:`Fertility`) -- children of affected and of reference people;
  the conditional binomial that removes the unknown baseline fertility.
* ``estimate`` (:class:`Estimate`) -- an outside estimate of mu, s or Ne with a
  published 95 % interval; a normal term on the log scale.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from infer.core import balance
from infer.errors import InputError
from infer.model.observations.base import (
    Observation,
    at_least_one,
    binomial_draw,
    check_not_above,
    log_binomial,
    parse_mode,
)
from infer.validate import choice, format_number, probability, quote_value, real_number, whole_count

__all__ = ["Sporadic", "Fertility", "Estimate"]

_Z975 = 1.959963984540054  # standard normal 97.5 % quantile


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
        if table["mode"] == "recessive":
            raise InputError(
                '"recessive" is not allowed: a new recessive mutation does not show in its '
                'carrier, so sporadic cases need mode = "dominant" or "x-linked-male"',
                field=f"{field}.mode",
            )
        mode = parse_mode(table, field, inheritance, ("dominant", "x-linked-male"))
        penetrance = probability(table.get("penetrance", 1.0), f"{field}.penetrance")
        if penetrance == 0 and cases > 0:
            raise InputError("0 cannot produce sporadic cases", field=f"{field}.penetrance")
        return {"cases": cases, "births": births, "mode": mode, "penetrance": penetrance}

    def rate(self, params) -> np.ndarray:
        """Probability that a birth is a sporadic case, per row."""
        mu = np.asarray(params["mu"], dtype=float)
        if self.mode == "dominant":
            return 2.0 * mu * self.penetrance
        mu_female, _ = balance.sex_specific_rates(mu, params["alpha"])
        return np.asarray(mu_female, dtype=float) * self.penetrance

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


@dataclass
class Fertility(Observation):
    """Children of affected people against children of reference people.

    Derivation (the conditional binomial): the ``A`` affected people have
    X ~ Poisson(A·w·λ) children and the ``R`` reference people Y ~ Poisson(R·λ),
    independently, with λ the unknown baseline fertility.  Given the total
    T = X + Y, X ~ Binomial(T, A·w / (A·w + R)), which no longer involves λ.  The
    relative fitness is w = 1 − h·s (dominant) or 1 − s (recessive, x-linked-male);
    this assumes selection acts through fertility alone.
    """

    kind: ClassVar[str] = "fertility"
    depends_on_frequency: ClassVar[bool] = False
    statistic_name: ClassVar[str] = "children of affected people"
    required: ClassVar[tuple[str, ...]] = (
        "affected_people", "affected_children", "reference_people", "reference_children", "mode",
    )

    affected_people: int = 1
    affected_children: int = 0
    reference_people: int = 1
    reference_children: int = 0
    mode: str = "dominant"

    @classmethod
    def _parse(cls, table, field, inheritance):
        values = {k: whole_count(table[k], f"{field}.{k}") for k in cls.required if k != "mode"}
        at_least_one(values["affected_people"], f"{field}.affected_people")
        at_least_one(values["reference_people"], f"{field}.reference_people")
        values["mode"] = parse_mode(table, field, inheritance)
        return values

    def relative_fitness(self, params) -> np.ndarray:
        """Relative fitness w per row: 1 − h·s (dominant), 1 − s (recessive, x-linked-male)."""
        s = np.asarray(params["s"], dtype=float)
        if self.mode == "dominant":
            return 1.0 - np.asarray(params["h"], dtype=float) * s
        return 1.0 - s

    @property
    def total_children(self) -> int:
        """T, the total number of children."""
        return self.affected_children + self.reference_children

    def share(self, params) -> np.ndarray:
        """A·w / (A·w + R): the chance that a child has an affected parent."""
        aw = self.affected_people * np.clip(self.relative_fitness(params), 0.0, None)
        return aw / (aw + self.reference_people)

    def _log_likelihood(self, state):
        return log_binomial(self.affected_children, self.total_children, self.share(state.params))

    def statistic(self):
        """The observed children of affected people."""
        return float(self.affected_children)

    def expected(self, state):
        """Expected children of affected people given the total, T·share."""
        return self.total_children * self.share(state.params)

    def simulate(self, state, rng):
        """Binomial draws of the affected people's children given the total."""
        return binomial_draw(rng, self.total_children, self.share(state.params))

    def describe(self):
        """One line for reports."""
        return (
            f"{self.label}: {self.affected_people} affected people had {self.affected_children} "
            f"children, {self.reference_people} reference people had {self.reference_children} "
            f"({self.mode}; selection through fertility alone)"
        )

    def parameters_used(self, model="deterministic"):
        """Life-cycle parameters the likelihood depends on: s (and h)."""
        return {"s", "h"} if self.mode == "dominant" else {"s"}


@dataclass
class Estimate(Observation):
    """An outside estimate of ``parameter`` with a published 95 % interval.

    ln(median) ~ Normal(ln θ, σ) with σ = (ln upper − ln lower) / (2 · 1.959964): the
    density of the reported log median, so the term is a true log-density.
    """

    kind: ClassVar[str] = "estimate"
    depends_on_frequency: ClassVar[bool] = False
    statistic_name: ClassVar[str] = "published median"
    required: ClassVar[tuple[str, ...]] = ("parameter", "median", "lower", "upper")

    parameter: str = "mu"
    median: float = 1.0
    lower: float = 0.5
    upper: float = 2.0

    @classmethod
    def _parse(cls, table, field, inheritance):
        parameter = choice(table["parameter"], ("mu", "s", "Ne"), f"{field}.parameter")
        values = {k: real_number(table[k], f"{field}.{k}") for k in ("median", "lower", "upper")}
        if values["lower"] <= 0:
            raise InputError(
                f"{quote_value(table['lower'])} is not above 0", field=f"{field}.lower"
            )
        if not values["lower"] < values["median"]:
            raise InputError(
                f"{quote_value(table['median'])} is not above lower {quote_value(table['lower'])}",
                field=f"{field}.median",
            )
        if not values["median"] < values["upper"]:
            raise InputError(
                f"{quote_value(table['upper'])} is not above median {quote_value(table['median'])}",
                field=f"{field}.upper",
            )
        if parameter in ("mu", "s") and values["median"] > 1:
            raise InputError(
                f"{quote_value(table['median'])} is above 1, outside the range of {parameter}",
                field=f"{field}.median",
            )
        return {"parameter": parameter, **values}

    @property
    def sigma(self) -> float:
        """Standard deviation on the log scale implied by the 95 % interval."""
        return (math.log(self.upper) - math.log(self.lower)) / (2.0 * _Z975)

    def _log_likelihood(self, state):
        theta = np.asarray(state.params[self.parameter], dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = (math.log(self.median) - np.log(theta)) / self.sigma
        return -0.5 * z * z - math.log(self.sigma) - 0.5 * math.log(2.0 * math.pi)

    def statistic(self):
        """The published median."""
        return float(self.median)

    def expected(self, state):
        """The parameter itself: the median the estimate would report on average (log scale)."""
        return np.asarray(state.params[self.parameter], dtype=float).copy()

    def simulate(self, state, rng):
        """A published median drawn around each row's parameter value."""
        theta = np.asarray(state.params[self.parameter], dtype=float)
        return theta * np.exp(self.sigma * rng.standard_normal(theta.shape))

    def describe(self):
        """One line for reports."""
        return (
            f"{self.label}: outside estimate of {self.parameter}, {format_number(self.median)} "
            f"(95 % interval {format_number(self.lower)} to {format_number(self.upper)})"
        )

    def parameters_used(self, model="deterministic"):
        """The one parameter the estimate is of."""
        return {self.parameter}
