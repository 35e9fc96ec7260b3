"""The ``carrier-mothers`` kind: tested mothers of affected sons (X-linked).

:class:`CarrierMothers` -- of ``tested`` mothers of affected sons, ``carriers`` carry the
allele: binomial on :func:`infer.core.carriers.carrier_mother_share` (times the test's
sensitivity). The share depends on alpha, the male-to-female germ-line rate ratio: the
classic way to estimate it.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from infer.core.carriers import carrier_mother_share
from infer.core.stats import log_binomial
from infer.errors import InputError
from infer.model.observations.base import (
    Observation,
    ascertainment_text,
    at_least_one,
    binomial_draw,
    check_not_above,
    free_ascertainment,
    parse_ascertainment,
)
from infer.validate import format_number, probability, whole_count

__all__ = ["CarrierMothers"]


@dataclass
class CarrierMothers(Observation):
    """``carriers`` of ``tested`` mothers of affected sons, at an X-linked locus.

    Binomial(tested, sensitivity × P(mother carries | affected son)); the sons are taken
    as ascertained without regard to family history (a series restricted to isolated
    cases sees fewer carriers than this).
    """

    kind: ClassVar[str] = "carrier-mothers"
    depends_on_frequency: ClassVar[bool] = True
    statistic_name: ClassVar[str] = "carrier mothers"
    ascertainment: ClassVar[tuple[str, ...]] = ("penetrance", "phenocopy")
    required: ClassVar[tuple[str, ...]] = ("tested", "carriers")
    optional: ClassVar[tuple[str, ...]] = ("sensitivity", *ascertainment)

    tested: int = 1
    carriers: int = 0
    sensitivity: float = 1.0
    penetrance: float | None = None
    phenocopy: float | None = None

    @classmethod
    def _parse(cls, table, field, inheritance):
        if inheritance != "x-linked":
            raise InputError('carrier mothers of affected sons need inheritance = "x-linked"',
                             field=f"{field}.kind")
        tested = whole_count(table["tested"], f"{field}.tested")
        at_least_one(tested, f"{field}.tested")
        carriers = whole_count(table["carriers"], f"{field}.carriers")
        check_not_above(carriers, tested, "tested", f"{field}.carriers")
        sensitivity = probability(table.get("sensitivity", 1.0), f"{field}.sensitivity")
        if sensitivity == 0 and carriers > 0:
            raise InputError("0 cannot find the carriers counted", field=f"{field}.sensitivity")
        return {"tested": tested, "carriers": carriers, "sensitivity": sensitivity,
                **parse_ascertainment(table, field, cls.ascertainment, 0)}

    def _share(self, state) -> np.ndarray:
        p = state.params
        share = carrier_mother_share(
            state.q_male, state.q_female, p["mu"], p["s"], p["h"], p["F"], p["alpha"],
            self.ascertained("penetrance", p), self.ascertained("phenocopy", p))
        return self.sensitivity * share

    def _log_likelihood(self, state):
        return log_binomial(self.carriers, self.tested, self._share(state))

    def _given_frequency(self, x, params):
        raise ValueError("the drift model covers autosomal loci only")

    def statistic(self):
        """The mothers found to be carriers."""
        return float(self.carriers)

    def expected(self, state):
        """Tested × sensitivity × carrier share."""
        return np.where(state.exists, self.tested * self._share(state), np.nan)

    def simulate(self, state, rng):
        """Binomial draws of carrier mothers."""
        return binomial_draw(rng, self.tested, np.where(state.exists, self._share(state),
                                                        np.nan))

    def statistic_trials(self, state):
        """Binomial(tested, share) at every row."""
        return self.tested

    def _draw_table_fields(self, state, rng):
        return {"carriers": int(rng.binomial(self.tested, float(self._share(state)[0])))}

    def frequency_statistic(self):
        """None: the carrier share measures where mutations arise, not the frequency."""
        return None

    def describe(self):
        """One line for reports."""
        sens = ("" if self.sensitivity == 1
                else f", test sensitivity {format_number(self.sensitivity)}")
        return (f"{self.label}: {self.carriers} of {self.tested} mothers of affected sons "
                f"carry the allele{sens}{ascertainment_text(self)}")

    def parameters_used(self, model="deterministic"):
        """The balance (mu, s, h, F, nu), alpha, and free ascertainment parameters."""
        return {"mu", "s", "h", "F", "nu", "alpha"} | free_ascertainment(self)
