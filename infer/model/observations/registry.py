"""The ``registry`` kind: one birth registry's affected births and its new-mutation cases.

:class:`Registry` -- the multinomial over new-mutation affected, inherited affected and
unaffected births. The new-mutation cases of a registry are a subset of its affected
births, so one registry is one likelihood, never an ``affected`` and a ``sporadic``
binomial over the same births (:func:`shared_birth_warnings` flags such a pair).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from infer.core import balance
from infer.core.stats import log_binomial
from infer.model.observations.base import (
    Observation,
    ascertainment_text,
    at_least_one,
    binomial_draw,
    check_not_above,
    parse_ascertainment,
    seen_share,
)
from infer.model.observations.frequency import Affected, affected_share
from infer.model.observations.sporadic import (
    Sporadic,
    new_mutation_rate,
    parse_new_mutation_mode,
)
from infer.validate import whole_count

__all__ = ["Registry", "registry_cells", "shared_birth_warnings"]


def registry_cells(p_affected, rate_new):
    """The three cell probabilities (new mutation, inherited, unaffected), per row.

    ``p_affected`` is the affected share of births, ``rate_new`` the direct method's
    new-mutation rate. The new-mutation cell is the rate capped at the affected share:
    the two differ only by terms of order mu² where nearly every case is new (s near 1).
    """
    p_affected = np.clip(np.asarray(p_affected, dtype=float), 0.0, 1.0)
    new = np.minimum(np.asarray(rate_new, dtype=float), p_affected)
    return new, p_affected - new, 1.0 - p_affected


@dataclass
class Registry(Observation):
    """``affected`` of ``births``, ``sporadic`` of them new mutations (one registry).

    Each birth is a new-mutation case with probability r (the direct method: 2·mu·pen
    for ``dominant``, mu_female·pen per male birth for ``x-linked-male``, as
    ``sporadic``), an inherited case with probability a − r (a the affected share, as
    ``affected``), unaffected with 1 − a. Of the affected, ``familial_unknown`` have
    parents of unknown status; they count as affected and belong to either case cell.
    With that number given (its being unknown says nothing of the parameters), the
    probability of the counts is

        P = Binomial(A; N, a) · Binomial(S; A − U, r / a)

    (derived: summing the multinomial N!/(n1! n2! n3!) r^n1 (a−r)^n2 (1−a)^n3 over the
    new-mutation cases among the U, each set of U unknown cases equally likely, gives
    this; with U = 0 it is the multinomial itself).
    The predictive statistic is the affected births, Binomial(N, a).
    """

    kind: ClassVar[str] = "registry"
    depends_on_frequency: ClassVar[bool] = True
    statistic_name: ClassVar[str] = "affected births"
    ascertainment: ClassVar[tuple[str, ...]] = ("penetrance", "completeness", "phenocopy")
    required: ClassVar[tuple[str, ...]] = ("births", "affected", "sporadic", "mode")
    optional: ClassVar[tuple[str, ...]] = ("familial_unknown", *ascertainment)

    births: int = 1
    affected: int = 0
    sporadic: int = 0
    mode: str = "dominant"
    familial_unknown: int | None = None
    penetrance: float | None = None
    completeness: float | None = None
    phenocopy: float | None = None

    @classmethod
    def _parse(cls, table, field, inheritance):
        births = whole_count(table["births"], f"{field}.births")
        at_least_one(births, f"{field}.births")
        affected = whole_count(table["affected"], f"{field}.affected")
        check_not_above(affected, births, "births", f"{field}.affected")
        sporadic = whole_count(table["sporadic"], f"{field}.sporadic")
        check_not_above(sporadic, affected, "affected", f"{field}.sporadic")
        unknown = None
        if "familial_unknown" in table:
            unknown = whole_count(table["familial_unknown"], f"{field}.familial_unknown")
            check_not_above(unknown, affected - sporadic, "affected minus sporadic",
                            f"{field}.familial_unknown")
        mode = parse_new_mutation_mode(table, field, inheritance, "registry new-mutation cases")
        return {"births": births, "affected": affected, "sporadic": sporadic, "mode": mode,
                "familial_unknown": unknown,
                **parse_ascertainment(table, field, cls.ascertainment, affected)}

    @property
    def unknown(self) -> int:
        """Affected births whose parents' status is unknown (0 when not given)."""
        return self.familial_unknown or 0

    @property
    def familial(self) -> int:
        """Affected births with an affected parent (inherited cases)."""
        return self.affected - self.sporadic - self.unknown

    def _log_counts(self, p_affected, rate_new):
        new, _, _ = registry_cells(p_affected, rate_new)
        a = np.clip(np.asarray(p_affected, dtype=float), 0.0, 1.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            share = np.where(a > 0, new / a, 0.0)
        return (log_binomial(self.affected, self.births, p_affected)
                + log_binomial(self.sporadic, self.affected - self.unknown, share))

    def _counted(self, genetic_share, params):
        """(counted affected share, counted new-mutation share) of births, per row.

        Genetic cases carry the penetrance P (their new-mutation part r·P capped at the
        genetic share); phenocopies φ have unaffected parents and count as new; the
        completeness c multiplies both (:func:`~infer.model.observations.base.seen_share`).
        """
        penetrance = self.ascertained("penetrance", params)
        new_genetic = np.minimum(new_mutation_rate(self.mode, params, penetrance),
                                 genetic_share)
        return (seen_share(genetic_share, self, params),
                seen_share(new_genetic, self, params))

    def _cells(self, state):
        penetrance = self.ascertained("penetrance", state.params)
        return self._counted(affected_share(self.mode, state, penetrance), state.params)

    def _log_likelihood(self, state):
        return self._log_counts(*self._cells(state))

    def _given_frequency(self, x, params):
        penetrance = self.ascertained("penetrance", params)
        genetic = balance.affected_fraction(self.mode, x, params["F"], penetrance)
        return self._log_counts(*self._counted(genetic, params))

    def statistic(self):
        """The observed affected births."""
        return float(self.affected)

    def expected(self, state):
        """Expected affected births, births × affected share."""
        share, _ = self._cells(state)
        return np.where(state.exists, self.births * share, np.nan)

    def simulate(self, state, rng):
        """Binomial draws of affected births (the margin of the multinomial)."""
        share, _ = self._cells(state)
        return binomial_draw(rng, self.births, np.where(state.exists, share, np.nan))

    def statistic_trials(self, state):
        """Binomial(births, affected share) at every row."""
        return self.births

    def _draw_table_fields(self, state, rng):
        """All cells drawn jointly from one multinomial.

        New and inherited cases with known parents, cases with unknown parents (at the
        observed share of the affected), unaffected births.
        """
        new, inherited, unaffected = (float(np.ravel(c)[0])
                                      for c in registry_cells(*self._cells(state)))
        lost = self.unknown / self.affected if self.affected else 0.0
        cells = [new * (1 - lost), inherited * (1 - lost), (new + inherited) * lost, unaffected]
        sporadic, familial, unknown, _ = (int(c) for c in rng.multinomial(self.births, cells))
        table = {"affected": sporadic + familial + unknown, "sporadic": sporadic}
        if self.familial_unknown is not None:
            table["familial_unknown"] = unknown
        return table

    def _as_affected(self) -> Affected:
        affected = Affected(label=self.label, inheritance=self.inheritance,
                            affected=self.affected, total=self.births, mode=self.mode,
                            penetrance=self.penetrance, completeness=self.completeness,
                            phenocopy=self.phenocopy)
        affected.bind_ascertainment(getattr(self, "_study_fixed", {}),
                                    getattr(self, "_study_free", ()))
        return affected

    def frequency_statistic(self):
        """The affected share of births, as for ``affected``."""
        return self._as_affected().frequency_statistic()

    def describe(self):
        """One line for reports."""
        births = "male births" if self.mode == "x-linked-male" else "births"
        pen = ascertainment_text(self)
        unknown = f", {self.unknown} with parents of unknown status" if self.unknown else ""
        return (f"{self.label}: {self.affected} affected of {self.births} {births}, "
                f"{self.sporadic} of them new mutations{unknown} ({self.mode}{pen}; one "
                "registry, multinomial)")

    def parameters_used(self, model="deterministic"):
        """Life-cycle parameters the likelihood depends on (as ``affected``, with mu)."""
        return self._as_affected().parameters_used(model) | {"mu"}


def shared_birth_warnings(observations) -> list[str]:
    """Warnings for an ``affected`` and a ``sporadic`` observation over the same births.

    The same total suggests one registry read twice: its new-mutation cases are a subset
    of its affected births, and two independent binomials count them twice (intervals too
    narrow). They may be different registries; the study says, so this only warns.
    """
    affected = [o for o in observations if isinstance(o, Affected)]
    sporadic = [o for o in observations if isinstance(o, Sporadic)]
    return [f'observations "{a.label}" (affected) and "{s.label}" (sporadic) count the same '
            f"{a.total} births: if they are one registry, its new-mutation cases are among "
            "its affected births and two independent binomials count them twice (intervals "
            'too narrow); describe it as one observation of kind = "registry"'
            for a in affected for s in sporadic if a.total == s.births]
