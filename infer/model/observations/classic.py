"""The counts the classic direct and indirect estimates of mu read from a study.

:func:`classic_counts` pools, for one mode, the new-mutation cases (``sporadic`` and
``registry``), the affected births (``affected`` and ``registry``) and the fertility
counts (``fertility``) of a study's observations. The estimates themselves are computed
by :mod:`infer.jobs.estimate.direct_indirect`; only this module looks at the kinds.
"""

from __future__ import annotations

from dataclasses import dataclass

from infer.core.choices import NEW_MUTATION_MODES
from infer.model.observations.fertility import Fertility
from infer.model.observations.frequency import Affected
from infer.model.observations.registry import Registry
from infer.model.observations.sporadic import Sporadic

__all__ = ["ClassicCounts", "classic_counts"]


@dataclass(frozen=True)
class ClassicCounts:
    """Pooled counts of one mode (``"dominant"`` or ``"x-linked-male"``).

    Attributes
    ----------
    mode : str
    cases, case_births : int
        New-mutation cases and the births they were counted in.
    case_exposure : float
        Sum of births × penetrance × completeness over the new-mutation observations.
    affected, affected_births : int
        Affected births and the births they were counted in.
    affected_exposure : float
        Sum of births × penetrance × completeness over the affected-birth observations.
    affected_people, affected_children, reference_people, reference_children : int
        The fertility counts, summed over the fertility observations of the mode.
    case_labels, affected_labels, fertility_labels : tuple of str
        The observations each part comes from.
    nested : bool
        The new-mutation cases and the affected births come from the same ``registry``
        observations, so the cases are a subset of the affected births.
    known_status : int
        Affected births whose parents' status is known (nested only; else 0).
    fertility_penetrance : float
        The penetrance the fertility observations read (one value).
    """

    mode: str
    cases: int
    case_births: int
    case_exposure: float
    affected: int
    affected_births: int
    affected_exposure: float
    affected_people: int
    affected_children: int
    reference_people: int
    reference_children: int
    case_labels: tuple[str, ...]
    affected_labels: tuple[str, ...]
    fertility_labels: tuple[str, ...]
    nested: bool = False
    known_status: int = 0
    fertility_penetrance: float = 1.0


def classic_counts(observations) -> ClassicCounts | None:
    """The pooled counts of the first mode with new-mutation, affected and fertility data.

    Returns
    -------
    ClassicCounts or None
        None when no mode has all three (new-mutation cases, affected births and
        fertility), so neither both estimates nor their ratio can be formed.
    """
    for mode in NEW_MUTATION_MODES:
        cases = [o for o in observations if isinstance(o, (Sporadic, Registry))
                 and o.mode == mode]
        affected = [o for o in observations if isinstance(o, (Affected, Registry))
                    and o.mode == mode]
        fertility = [o for o in observations if isinstance(o, Fertility) and o.mode == mode]
        if not (cases and affected and fertility):
            continue
        seen = _seen_factors([*cases, *affected])
        fertility_penetrance = {o.ascertained("penetrance") for o in fertility}
        if seen is None or len(fertility_penetrance) != 1 or None in fertility_penetrance:
            return None  # the classic formulas need fixed, known ascertainment
        nested = (all(isinstance(o, Registry) for o in cases)
                  and {id(o) for o in cases} == {id(o) for o in affected})
        return ClassicCounts(
            mode=mode,
            cases=sum(o.sporadic if isinstance(o, Registry) else o.cases for o in cases),
            case_births=sum(o.births for o in cases),
            case_exposure=float(sum(o.births * seen[id(o)] for o in cases)),
            affected=sum(o.affected for o in affected),
            affected_births=sum(_births(o) for o in affected),
            affected_exposure=float(sum(_births(o) * seen[id(o)] for o in affected)),
            affected_people=sum(o.affected_people for o in fertility),
            affected_children=sum(o.affected_children for o in fertility),
            reference_people=sum(o.reference_people for o in fertility),
            reference_children=sum(o.reference_children for o in fertility),
            case_labels=tuple(o.label for o in cases),
            affected_labels=tuple(o.label for o in affected),
            fertility_labels=tuple(o.label for o in fertility),
            nested=nested,
            known_status=sum(o.affected - o.unknown for o in cases) if nested else 0,
            fertility_penetrance=float(fertility_penetrance.pop()),
        )
    return None


def _seen_factors(observations) -> dict | None:
    """Penetrance × completeness of each observation; None when one is free or phenocopies.

    The classic direct and indirect formulas count every affected birth as genetic.
    """
    factors = {}
    for o in observations:
        penetrance, completeness = o.ascertained("penetrance"), o.ascertained("completeness")
        if penetrance is None or completeness is None or o.ascertained("phenocopy") != 0:
            return None
        factors[id(o)] = float(penetrance) * float(completeness)
    return factors


def _births(observation) -> int:
    return observation.births if isinstance(observation, Registry) else observation.total
