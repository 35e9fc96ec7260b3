"""The ``fertility`` kind: children of affected people against children of reference people.

:class:`Fertility` -- the conditional binomial that removes the unknown baseline
fertility; it assumes selection acts through fertility alone.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from infer.core.stats import log_binomial
from infer.model.observations.base import (
    Observation,
    ascertainment_text,
    at_least_one,
    binomial_draw,
    free_ascertainment,
    parse_ascertainment,
    parse_mode,
)
from infer.errors import InputError
from infer.validate import choice, quote_value, whole_count

#: the ``sex`` of a fertility table: whose children were counted
SEXES = ("male", "female")

__all__ = ["Fertility", "observed_relative_fertility"]


def observed_relative_fertility(affected_people: int, affected_children: int,
                                reference_people: int, reference_children: int) -> float:
    """Relative fertility (children per affected / per reference person); nan if undefined.

    The point estimate of the relative fertility w (the maximum of the conditional
    binomial likelihood of :class:`Fertility`; common practice).
    """
    if not (affected_people > 0 and reference_people > 0 and reference_children > 0):
        return float("nan")
    return (affected_children / affected_people) / (reference_children / reference_people)


@dataclass
class Fertility(Observation):
    """Children of affected people against children of reference people.

    Derivation (the conditional binomial): the ``A`` affected people have
    X ~ Poisson(A·w·λ) children and the ``R`` reference people Y ~ Poisson(R·λ),
    independently, with λ the unknown baseline fertility.  Given the total
    T = X + Y, X ~ Binomial(T, A·w / (A·w + R)), which no longer involves λ.  The
    genotype's relative fitness is 1 − h·s (dominant) or 1 − s (recessive,
    x-linked-male); this assumes selection acts through fertility alone.

    With penetrance P < 1 only the affected carriers are selected (non-penetrant
    carriers have normal fertility, an assumption): the genotype's loss is P times the
    affected people's, so affected people have w = 1 − h·s / P (dominant) or 1 − s / P,
    and a genotype's selection above P is impossible (w < 0 has no probability).

    ``sex = "male"`` or ``"female"`` (autosomal): the affected people are all men or all
    women, and the genotype's selection is that sex's s_male or s_female when the study
    gives selection by sex (else s, the same in both sexes). Without ``sex`` the people
    are read as of both sexes, at the mean s.
    """

    kind: ClassVar[str] = "fertility"
    depends_on_frequency: ClassVar[bool] = False
    assumption: ClassVar[str | None] = (
        "The fertility data are read as the whole of selection: the model assumes "
        "selection acts through fertility alone (no extra mortality before reproductive "
        "age).")
    statistic_name: ClassVar[str] = "children of affected people"
    required: ClassVar[tuple[str, ...]] = (
        "affected_people", "affected_children", "reference_people", "reference_children", "mode",
    )
    ascertainment: ClassVar[tuple[str, ...]] = ("penetrance",)
    optional: ClassVar[tuple[str, ...]] = (*ascertainment, "sex")

    affected_people: int = 1
    affected_children: int = 0
    reference_people: int = 1
    reference_children: int = 0
    mode: str = "dominant"
    penetrance: float | None = None
    sex: str | None = None

    @classmethod
    def _parse(cls, table, field, inheritance):
        values = {k: whole_count(table[k], f"{field}.{k}") for k in cls.required if k != "mode"}
        at_least_one(values["affected_people"], f"{field}.affected_people")
        at_least_one(values["reference_people"], f"{field}.reference_people")
        values["mode"] = parse_mode(table, field, inheritance)
        if "sex" in table:
            if inheritance != "autosomal":
                raise InputError(
                    f'{quote_value(table["sex"])}: sex applies to an autosomal locus (an '
                    'x-linked study\'s affected people are the hemizygous men of mode '
                    '"x-linked-male")', field=f"{field}.sex")
            values["sex"] = choice(table["sex"], SEXES, f"{field}.sex")
        return {**values, **parse_ascertainment(table, field, cls.ascertainment,
                                                values["affected_people"])}

    def relative_fitness(self, params) -> np.ndarray:
        """Affected people's relative fitness w per row: 1 − h·s / P (dominant), 1 − s / P.

        P the penetrance (1: every carrier affected, w the genotype's 1 − h·s or 1 − s).
        """
        s = np.asarray(params["s"], dtype=float)
        if self.sex is not None and f"s_{self.sex}" in params:
            own = np.asarray(params[f"s_{self.sex}"], dtype=float)
            s = np.where(np.isnan(own), s, own)  # NaN: selection the same in both sexes
        if self.mode == "dominant":
            s = np.asarray(params["h"], dtype=float) * s
        return 1.0 - s / self.ascertained("penetrance", params)

    @property
    def observed_f(self) -> float:
        """The observed relative fertility (:func:`observed_relative_fertility`)."""
        return observed_relative_fertility(self.affected_people, self.affected_children,
                                           self.reference_people, self.reference_children)

    def data_warnings(self) -> list[str]:
        """Fertility at or above the reference (f >= 1) shows no selection.

        The classic indirect estimate then has no selection to balance (common practice;
        typical of late-onset disorders whose onset follows reproduction).
        """
        f = self.observed_f
        if not f >= 1:
            return []
        return [f'observation "{self.label}": affected people had {f:.3g} times the '
                "reference fertility (f >= 1), so fertility shows no selection against the "
                "allele; s is then near 0 from these data and the estimate of mu rests on "
                "the other observations and the priors. Typical of late-onset disorders "
                "(onset after the reproductive years), where selection through fertility "
                "is weak and mutation-selection balance with s from fertility does not "
                "apply"]

    @property
    def total_children(self) -> int:
        """T, the total number of children."""
        return self.affected_children + self.reference_children

    def share(self, params) -> np.ndarray:
        """A·w / (A·w + R): the chance that a child has an affected parent."""
        w = self.relative_fitness(params)
        # w < 0 (the genotype's selection above the penetrance) has no probability
        aw = self.affected_people * np.where(w >= 0, w, np.nan)
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

    def statistic_trials(self, state):
        """Binomial(T, share) at every row, given the total T."""
        return self.total_children

    def _draw_table_fields(self, state, rng):
        """Both counts Poisson, at the reference people's observed rate as the baseline λ.

        Not the conditional binomial: the total T varies too, as in a new study.
        """
        w = np.clip(self.relative_fitness(state.params), 0.0, None)
        baseline = self.reference_children / self.reference_people
        affected_children = rng.poisson(self.affected_people * w * baseline)
        reference_children = rng.poisson(self.reference_people * baseline)
        return {"affected_children": int(affected_children[0]),
                "reference_children": int(reference_children)}

    def frequency_statistic(self):
        """None: children of affected people measure the fitness, not the frequency."""
        return None

    def describe(self):
        """One line for reports."""
        return (
            f"{self.label}: {self.affected_people} affected people had {self.affected_children} "
            f"children, {self.reference_people} reference people had {self.reference_children} "
            f"({self.mode}{'' if self.sex is None else ', ' + self.sex}"
            f"{ascertainment_text(self)}; selection through fertility alone)"
        )

    def parameters_used(self, model="deterministic"):
        """Life-cycle parameters the likelihood depends on: s (and h)."""
        selection = {"s"} if self.sex is None else {"s", f"s_{self.sex}"}
        used = selection | {"h"} if self.mode == "dominant" else selection
        return used | free_ascertainment(self)
