"""What a population history is: epochs back in time, a founder event, the ancestral state.

Time runs in generations ago, 0 being the generation sampled today. An epoch covers the
generations from ``begins = ends + generations`` ago up to ``ends`` ago; during it the
life-cycle parameters named in ``values`` differ from the present-day ones (those of
``[parameters]``), every other parameter keeps its present-day value, and so does every
generation no epoch covers. Before the oldest epoch the population is at the model's
equilibrium (the exact balance, or Wright's stationary distribution under drift) for the
values of ``ancestral``: by default those of the oldest epoch, so that a population that
had long been as in its oldest epoch starts at that epoch's balance.

Generation convention (the life cycle of docs/model.md): the state is the frequency among
zygotes; one step of the epoch covering generation t ago produces the zygotes of t - 1
ago. The founder event acts on the zygotes of ``generations_ago``: they are replaced by
2·founders genes drawn from them (or set to the founder frequency when one is given).

A value in ``values``, ``ancestral`` or the founder frequency is a number or the name of a
row parameter (a free parameter such as ``q_founder``), looked up in the parameter dict.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["EPOCH_PARAMETERS", "Epoch", "Founder", "History", "resolve"]

#: the life-cycle parameters an epoch may change
EPOCH_PARAMETERS = ("Ne", "s", "h", "mu", "F", "nu")


@dataclass(frozen=True)
class Epoch:
    """A stretch of generations with its own parameter values.

    Attributes
    ----------
    generations : int
        Length in generations (>= 0).
    ends : int
        Generations ago at which the epoch ends (its more recent edge).
    values : mapping of str to float or str
        The parameters that differ from the present day (a number or a row-parameter name).
    """

    generations: int
    ends: int = 0
    values: dict = field(default_factory=dict)

    @property
    def begins(self) -> int:
        """Generations ago at which the epoch begins (its older edge)."""
        return self.ends + self.generations


@dataclass(frozen=True)
class Founder:
    """A founder event: the population restarts from ``founders`` people.

    Attributes
    ----------
    founders : int
        Number of founders (2·founders genes are drawn).
    generations_ago : int
        When the founders' zygotes are replaced (0 <= generations_ago <= the history's length).
    frequency : float, str or None
        The founders' allele frequency (a number or a row-parameter name), or None: drawn
        from the population (binomially under drift, its expectation when deterministic).
    """

    founders: int
    generations_ago: int
    frequency: float | str | None = None


@dataclass(frozen=True)
class History:
    """Epochs (most recent first, not overlapping), an optional founder, the ancestral values.

    Attributes
    ----------
    epochs : tuple of Epoch
    founder : Founder or None
    ancestral : mapping or None
        Values of the equilibrium before the oldest epoch; None means the oldest epoch's.
    """

    epochs: tuple = ()
    founder: Founder | None = None
    ancestral: dict | None = None

    @property
    def length(self) -> int:
        """Generations from the ancestral equilibrium to the present."""
        ages = [epoch.begins for epoch in self.epochs]
        if self.founder is not None:
            ages.append(self.founder.generations_ago)
        return max(ages, default=0)

    @property
    def ancestral_values(self) -> dict:
        """The values of the ancestral equilibrium (overrides of the present day)."""
        if self.ancestral is not None:
            return dict(self.ancestral)
        if not self.epochs:
            return {}
        return dict(max(self.epochs, key=lambda e: e.begins).values)

    @property
    def parameter_names(self) -> set[str]:
        """Row parameters the history refers to by name (e.g. ``q_founder``)."""
        named = [v for e in self.epochs for v in e.values.values()]
        named += list((self.ancestral or {}).values())
        if self.founder is not None:
            named.append(self.founder.frequency)
        return {v for v in named if isinstance(v, str)}

    def values_at(self, generations_ago: int) -> dict:
        """Overrides in force for the step that produces generation ``generations_ago - 1``."""
        for epoch in self.epochs:
            if epoch.ends < generations_ago <= epoch.begins:
                return dict(epoch.values)
        return {}

    def schedule(self, times=()) -> list[tuple]:
        """The actions that carry the ancestral state to the present, oldest first.

        Parameters
        ----------
        times : iterable of int
            Generations ago at which the state is recorded (each within the history).

        Returns
        -------
        list of tuple
            ``("steps", values, count)`` (count generations under the overrides
            ``values``), ``("found",)`` (the founder event) and ``("record", t)``; runs
            of steps under the same values are merged.
        """
        times = set(int(t) for t in times)
        founding = None if self.founder is None else self.founder.generations_ago
        actions: list[tuple] = []

        def mark(t):
            if t == founding:
                actions.append(("found",))
            if t in times:
                actions.append(("record", t))

        t = self.length
        mark(t)
        while t > 0:
            values = self.values_at(t)
            count = 0
            while t > 0 and self.values_at(t) == values:
                t -= 1
                count += 1
                if t == founding or t in times:
                    break
            actions.append(("steps", values, count))
            mark(t)
        return actions


def resolve(params: dict, values: dict, n: int) -> dict:
    """Row parameters under the overrides ``values`` (numbers or row-parameter names).

    Parameters
    ----------
    params : dict of str to ndarray
        The present-day parameters, ``(n,)`` arrays.
    values : dict
        Overrides; a string value names another entry of ``params``.
    n : int
        Number of rows.
    """
    out = dict(params)
    for name, value in values.items():
        out[name] = row_value(params, value, n)
    return out


def row_value(params: dict, value, n: int) -> np.ndarray:
    """A number or the name of a row parameter, as an ``(n,)`` float array."""
    if isinstance(value, str):
        return np.broadcast_to(np.asarray(params[value], dtype=float), (n,))
    return np.full(n, float(value))
