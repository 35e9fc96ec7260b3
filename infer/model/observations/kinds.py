"""Observation kinds: one small class each, with a vectorised log-likelihood.

Every kind validates its table (:meth:`Observation.from_table`), gives the exact
log-probability of its data for each row of a :class:`~infer.model.balance_state.State` (binomial
and multinomial normalising constants included, so the values are true
log-probabilities), the expected and simulated value of one summary statistic for
posterior predictive checks, and a one-line description.

Kinds (``kind = ...`` in a study's ``[[observations]]``):

* ``allele-count`` -- ``observed`` of ``sampled`` allele copies carry the allele;
  binomial on q (X-linked: ``sex`` picks q_male, q_female or q over all X).
* ``genotype-count`` -- ``AA``, ``Aa``, ``aa`` people; multinomial on the zygote
  genotype frequencies with inbreeding F (X-linked: daughters).
* ``affected`` -- ``affected`` of ``total`` births; binomial on penetrance times the
  frequency of the affected genotypes.
* ``sporadic`` -- ``cases`` of new mutations among ``births``; the direct method,
  binomial with 2·mu·penetrance (dominant) or mu_female·penetrance (x-linked-male).
* ``fertility`` -- children of affected and of reference people; the conditional
  binomial that removes the unknown baseline fertility.
* ``estimate`` -- an outside estimate of mu, s or Ne with a published 95 % interval;
  a normal term on the log scale.

The frequency kinds are defined in :mod:`infer.model.observations.frequency`, the others in
:mod:`infer.model.observations.rates` and the base class in :mod:`infer.model.observations.base`; all are
importable from here, with the registry :data:`KINDS`.
"""

from __future__ import annotations

from typing import Any

from infer.errors import InputError
from infer.model.observations.base import Observation, x_linked_daughter_genotypes
from infer.model.observations.frequency import Affected, AlleleCount, GenotypeCount
from infer.model.observations.rates import Estimate, Fertility, Sporadic
from infer.validate import choice, quote_value

__all__ = [
    "Observation",
    "AlleleCount",
    "GenotypeCount",
    "Affected",
    "Sporadic",
    "Fertility",
    "Estimate",
    "KINDS",
    "parse_observation",
    "x_linked_daughter_genotypes",
]

KINDS: dict[str, type[Observation]] = {
    cls.kind: cls for cls in (AlleleCount, GenotypeCount, Affected, Sporadic, Fertility, Estimate)
}


def parse_observation(table: Any, *, field: str, inheritance: str) -> Observation:
    """Validate one ``[[observations]]`` table and build its observation.

    Parameters
    ----------
    table : dict
        The table from the study file.
    field : str
        Its place in the file, ``"observations[2]"`` (counted from 1).
    inheritance : str
        The study's inheritance, ``"autosomal"`` or ``"x-linked"``.

    Raises
    ------
    InputError
        Unknown or missing kind, or any error of the kind's own validation.
    """
    if not isinstance(table, dict):
        raise InputError(f"{quote_value(table)} is not a table", field=field)
    if "kind" not in table:
        raise InputError(f"missing; must be one of {', '.join(KINDS)}", field=f"{field}.kind")
    kind = choice(table["kind"], KINDS, f"{field}.kind")
    return KINDS[kind].from_table(table, field=field, inheritance=inheritance)
