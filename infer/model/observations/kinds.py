"""The registry of observation kinds and the parser of one ``[[observations]]`` table.

Every kind implements the protocol of :class:`~infer.model.observations.base.Observation`:
validation of its table, the exact log-probability of its data for each row of a
:class:`~infer.model.balance_state.BalanceState` (normalising constants included, so the
values are true log-probabilities), the expected, simulated and exactly tailed value of
one predictive statistic, new data of its shape for calibration, its share of a balance
plot's observed band, and a one-line description.

Kinds (``kind = ...`` in a study's ``[[observations]]``):

* ``allele-count`` -- ``observed`` of ``sampled`` allele copies carry the allele;
  binomial on q (X-linked: ``sex`` picks q_male, q_female or q over all X).
* ``genotype-count`` -- ``AA``, ``Aa``, ``aa`` people; multinomial on the zygote
  genotype frequencies with inbreeding F (X-linked: daughters).
* ``affected`` -- ``affected`` of ``total`` births; binomial on penetrance times the
  frequency of the affected genotypes.
* ``sporadic`` -- ``cases`` of new mutations among ``births``; the direct method,
  binomial with 2·mu·penetrance (dominant) or mu_female·penetrance (x-linked-male).
* ``registry`` -- ``affected`` of ``births``, ``sporadic`` of them new mutations
  (optional ``familial_unknown``); the multinomial over new-mutation, inherited and
  unaffected births (one registry, one likelihood).
* ``capture-recapture`` -- cases found by one of two sources or both; informs the
  study's ``completeness`` (the split between the sources integrated out).
* ``carrier-mothers`` -- tested mothers of affected sons (X-linked); binomial on the
  carrier share, which depends on alpha.
* ``fertility`` -- children of affected and of reference people; the conditional
  binomial that removes the unknown baseline fertility.
* ``estimate`` -- an outside estimate of any parameter with a published 95 % interval;
  a normal term on the log (or, on [0, 1], logit) scale.

Each kind is one module: :mod:`~infer.model.observations.frequency` (the first three),
:mod:`~infer.model.observations.sporadic`, :mod:`~infer.model.observations.registry`,
:mod:`~infer.model.observations.capture`, :mod:`~infer.model.observations.carriers`,
:mod:`~infer.model.observations.fertility` and
:mod:`~infer.model.observations.published`. This module holds only the registry
:data:`KINDS` and :func:`parse_observation`: import a kind's class from its own module.
"""

from __future__ import annotations

from typing import Any

from infer.errors import InputError
from infer.model.observations.base import Observation
from infer.model.observations.fertility import Fertility
from infer.model.observations.capture import CaptureRecapture
from infer.model.observations.carriers import CarrierMothers
from infer.model.observations.frequency import Affected, AlleleCount, GenotypeCount
from infer.model.observations.published import Estimate
from infer.model.observations.registry import Registry
from infer.model.observations.sporadic import Sporadic
from infer.validate import choice, quote_value

__all__ = ["KINDS", "parse_observation"]

#: every observation kind, by its ``kind`` name in a study file (one line per kind)
KINDS: dict[str, type[Observation]] = {
    cls.kind: cls
    for cls in (
        AlleleCount,
        GenotypeCount,
        Affected,
        Sporadic,
        Registry,
        CaptureRecapture,
        CarrierMothers,
        Fertility,
        Estimate,
    )
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
