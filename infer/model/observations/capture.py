"""The ``capture-recapture`` kind: two sources of the same cases inform the completeness.

:class:`CaptureRecapture` -- the cases found by source 1 only, source 2 only and both,
given how many were found: a likelihood of the study's ``completeness`` alone
(:mod:`infer.core.capture`). The cases found are the union a ``registry`` or
``affected`` observation counts; that observation's count carries the frequency, this
one its completeness (the two factors of one multinomial, so nothing is counted twice).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from typing import ClassVar

import numpy as np

from infer.core.capture import TwoSourceLikelihood, prior_split_draws, split_draws
from infer.errors import InputError
from infer.model.observations.base import Observation, at_least_one, parse_ascertainment
from infer.validate import quote_value, whole_count

__all__ = ["CaptureRecapture"]


@dataclass
class CaptureRecapture(Observation):
    """``first_only``, ``second_only`` and ``both`` cases of two independent sources.

    P(cells | found, c) = ∫ Multinomial(n10, n01, n11; n, p1(1 − p2)/c, (1 − p1)p2/c,
    p1 p2/c) over the split of c between the sources (uniform over (p1, p2) given c);
    see :mod:`infer.core.capture` for the closed form and its check against Chapman
    (1951). The predictive statistic is ``both``, the overlap of the sources.
    """

    kind: ClassVar[str] = "capture-recapture"
    depends_on_frequency: ClassVar[bool] = False
    statistic_name: ClassVar[str] = "cases in both sources"
    assumption: ClassVar[str | None] = (
        "The two sources of the capture-recapture data find each affected birth "
        "independently (positive dependence between them makes the count look more "
        "complete than it is).")
    required: ClassVar[tuple[str, ...]] = ("first_only", "second_only", "both")
    ascertainment: ClassVar[tuple[str, ...]] = ("completeness",)
    #: ``completeness = "completeness_<tag>"``: the registry whose completeness it informs
    optional: ClassVar[tuple[str, ...]] = ("completeness",)

    first_only: int = 0
    second_only: int = 0
    both: int = 0
    completeness: str | None = None

    @classmethod
    def _parse(cls, table, field, inheritance):
        values = {k: whole_count(table[k], f"{field}.{k}") for k in cls.required}
        at_least_one(sum(values.values()), f"{field}.both")
        if "completeness" in table and not isinstance(table["completeness"], str):
            raise InputError(
                f"{quote_value(table['completeness'])}: two sources inform the completeness, "
                'so it cannot be fixed here; name the parameter they inform, e.g. '
                'completeness = "completeness_north", or leave the key out (the study\'s '
                "completeness)", field=f"{field}.completeness")
        values.update(parse_ascertainment(table, field, cls.ascertainment, 1))
        return values

    @property
    def found(self) -> int:
        """Cases found by either source."""
        return self.first_only + self.second_only + self.both

    @property
    def counts(self) -> tuple[int, int, int]:
        """(first only, second only, both)."""
        return self.first_only, self.second_only, self.both

    @cached_property
    def _table(self) -> TwoSourceLikelihood:
        return TwoSourceLikelihood(*self.counts)

    def _completeness(self, params) -> np.ndarray:
        return np.asarray(self.ascertained("completeness", params), dtype=float)

    def _log_likelihood(self, state):
        return self._table(self._completeness(state.params))

    def statistic(self):
        """The cases found by both sources."""
        return float(self.both)

    def _overlap_share(self, state, rng=None) -> np.ndarray:
        c = np.broadcast_to(self._completeness(state.params), (state.n,))
        p1, p2 = split_draws(c, self.counts, rng or np.random.default_rng(0))
        return p1 * p2 / c

    def expected(self, state):
        """Found × p1 p2 / c, the split drawn from its posterior given each row's c."""
        return self.found * self._overlap_share(state)

    def simulate(self, state, rng):
        """Binomial(found, p1 p2 / c) draws of the overlap, the split drawn per row."""
        share = self._overlap_share(state, rng)
        good = np.isfinite(share)
        out = np.full(share.shape, np.nan)
        out[good] = rng.binomial(self.found, np.clip(share[good], 0.0, 1.0))
        return out

    def statistic_trials(self, state):
        """None: the overlap's share varies with the split drawn at each row."""
        return None

    def _draw_table_fields(self, state, rng):
        """New cells at the row's completeness, the split drawn from its prior."""
        c = float(np.ravel(self._completeness(state.params))[0])
        p1, p2 = (float(v[0]) for v in prior_split_draws(np.array([c]), rng))
        cells = np.array([p1 * (1 - p2), (1 - p1) * p2, p1 * p2]) / c
        first, second, both = (int(v) for v in rng.multinomial(self.found, cells / cells.sum()))
        return {"first_only": first, "second_only": second, "both": both}

    def frequency_statistic(self):
        """None: the sources' overlap measures the completeness, not the frequency."""
        return None

    def describe(self):
        """One line for reports."""
        return (f"{self.label}: {self.found} cases found, {self.first_only} by the first "
                f"source only, {self.second_only} by the second only, {self.both} by both "
                f"(capture-recapture: informs {self.completeness or 'completeness'})")

    def parameters_used(self, model="deterministic"):
        """The completeness alone (the study's, or the registry's it names)."""
        return {self.completeness or "completeness"}

    def needs_free(self) -> set[str]:
        """The completeness must carry a prior for these data to inform it."""
        return {self.completeness or "completeness"}
