"""Observation kinds that depend on the allele frequency.

* ``allele-count`` (:class:`AlleleCount`) -- binomial on q (X-linked: ``sex`` picks
  q_male, q_female or q over all X).
* ``genotype-count`` (:class:`GenotypeCount`) -- multinomial on the zygote genotype
  frequencies with inbreeding F (X-linked: daughters).
* ``affected`` (:class:`Affected`) -- binomial on penetrance times the frequency of the
  affected genotypes.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from scipy import special

from infer.core import balance
from infer.core.stats import log_choose, log_multinomial_coefficient
from infer.errors import InputError
from infer.model.observations.base import (
    Observation,
    at_least_one,
    binomial_draw,
    check_not_above,
    ascertainment_text,
    free_ascertainment,
    log_binomial,
    parse_ascertainment,
    parse_mode,
    seen_share,
    x_linked_daughter_genotypes,
)
from infer.model.observations.share import FrequencyStatistic
from infer.validate import choice, quote_value, whole_count

__all__ = ["AlleleCount", "GenotypeCount", "Affected", "affected_share"]


def affected_share(mode: str, state, penetrance: float = 1.0) -> np.ndarray:
    """Probability that a birth is affected, per row of a ``BalanceState``.

    ``balance.affected_fraction``: penetrance × (Aa + aa) (dominant), × aa (recessive)
    with the state's inbreeding F, × q_male among male births (x-linked-male).
    """
    if mode == "x-linked-male":
        return balance.affected_fraction(mode, state.q_male, 0.0, penetrance)
    return balance.affected_fraction(mode, state.q, state.params["F"], penetrance)


@dataclass
class AlleleCount(Observation):
    """``observed`` of ``sampled`` allele copies carry the deleterious allele.

    Binomial(sampled, q); for an X-linked locus ``sex`` says which chromosomes were
    sampled: ``"male"`` (q_male), ``"female"`` (q_female) or ``"all"`` (q).
    """

    kind: ClassVar[str] = "allele-count"
    depends_on_frequency: ClassVar[bool] = True
    statistic_name: ClassVar[str] = "allele copies observed"
    required: ClassVar[tuple[str, ...]] = ("observed", "sampled")
    optional: ClassVar[tuple[str, ...]] = ("sex",)

    observed: int = 0
    sampled: int = 1
    sex: str | None = None

    @classmethod
    def _parse(cls, table, field, inheritance):
        observed = whole_count(table["observed"], f"{field}.observed")
        sampled = whole_count(table["sampled"], f"{field}.sampled")
        at_least_one(sampled, f"{field}.sampled")
        check_not_above(observed, sampled, "sampled", f"{field}.observed")
        sex = None
        if inheritance == "x-linked":
            if "sex" not in table:
                raise InputError(
                    'missing; an x-linked allele count needs sex = "male", "female" or "all"',
                    field=f"{field}.sex",
                )
            sex = choice(table["sex"], ("male", "female", "all"), f"{field}.sex")
        elif "sex" in table:
            raise InputError(
                f"{quote_value(table['sex'])}: sex applies only to inheritance = \"x-linked\"",
                field=f"{field}.sex",
            )
        return {"observed": observed, "sampled": sampled, "sex": sex}

    def _frequency(self, state):
        if self.inheritance == "x-linked":
            return {"male": state.q_male, "female": state.q_female, "all": state.q}[self.sex]
        return state.q

    def _log_likelihood(self, state):
        return log_binomial(self.observed, self.sampled, self._frequency(state))

    def _given_frequency(self, x, params):
        return log_binomial(self.observed, self.sampled, x)

    def binomial_form(self):
        """Already a binomial sample of allele copies."""
        return (self.observed, self.sampled, 0.0) if self.inheritance == "autosomal" else None

    def statistic(self):
        """The observed allele copies."""
        return float(self.observed)

    def expected(self, state):
        """Expected copies, sampled · q."""
        return self.sampled * np.where(state.exists, self._frequency(state), np.nan)

    def simulate(self, state, rng):
        """Binomial draws of the observed copies; NaN where there is no equilibrium."""
        q = np.where(state.exists, self._frequency(state), np.nan)
        return binomial_draw(rng, self.sampled, q)

    def statistic_trials(self, state):
        """Binomial(sampled, q) at every row."""
        return self.sampled

    def _draw_table_fields(self, state, rng):
        return {"observed": int(rng.binomial(self.sampled, self._frequency(state))[0])}

    def frequency_statistic(self):
        """The observed allele frequency, against q_hat (X-linked: the chosen q)."""
        quantity = {"male": "q_male", "female": "q_female"}.get(self.sex, "q_hat")
        return FrequencyStatistic(self.observed, self.sampled, quantity, 1.0,
                                  "allele frequency", of_alleles=True)

    def describe(self):
        """One line for reports."""
        where = f" ({self.sex} X chromosomes)" if self.sex else ""
        return (
            f"{self.label}: {self.observed} of {self.sampled} allele copies carry the "
            f"allele{where}"
        )


@dataclass
class GenotypeCount(Observation):
    """Genotype counts ``AA``, ``Aa``, ``aa`` of people sampled at birth.

    Multinomial on AA p²(1−F)+pF, Aa 2pq(1−F), aa q²(1−F)+qF; at an X-linked locus
    the counts are of daughters (:func:`x_linked_daughter_genotypes`).  The
    predictive statistic is the number of allele copies, Aa + 2·aa.
    """

    kind: ClassVar[str] = "genotype-count"
    depends_on_frequency: ClassVar[bool] = True
    statistic_name: ClassVar[str] = "allele copies (Aa + 2 aa)"
    required: ClassVar[tuple[str, ...]] = ("AA", "Aa", "aa")

    AA: int = 0
    Aa: int = 0
    aa: int = 0

    @classmethod
    def _parse(cls, table, field, inheritance):
        counts = {g: whole_count(table[g], f"{field}.{g}") for g in cls.required}
        if sum(counts.values()) < 1:
            raise InputError("all three genotype counts are 0", field=f"{field}.AA")
        return counts

    @property
    def total(self) -> int:
        """Number of people genotyped."""
        return self.AA + self.Aa + self.aa

    def _frequencies(self, state):
        F = state.params["F"]
        if self.inheritance == "x-linked":
            return x_linked_daughter_genotypes(state.q_male, state.q_female, F)
        return balance.genotype_frequencies(state.q, F)

    def _log_multinomial(self, freqs):
        k = (self.AA, self.Aa, self.aa)
        value = log_multinomial_coefficient(k)
        with np.errstate(divide="ignore", invalid="ignore"):
            for count, p in zip(k, freqs, strict=True):
                value = value + special.xlogy(count, np.clip(p, 0.0, 1.0))
        return value

    def _log_likelihood(self, state):
        return self._log_multinomial(self._frequencies(state))

    def _given_frequency(self, x, params):
        return self._log_multinomial(balance.genotype_frequencies(x, params["F"]))

    def binomial_form(self):
        """A binomial in the 2N allele copies times a constant, when F = 0.

        Under Hardy-Weinberg the multinomial is N!/(AA! Aa! aa!) 2^Aa x^k (1-x)^(2N-k)
        with k = Aa + 2aa.
        """
        if self.inheritance != "autosomal":
            return None
        k, n = self.Aa + 2 * self.aa, 2 * self.total
        constant = (log_multinomial_coefficient((self.AA, self.Aa, self.aa))
                    + self.Aa * np.log(2.0) - log_choose(n, k))
        return k, n, float(constant)

    def statistic(self):
        """The observed allele copies, Aa + 2·aa."""
        return float(self.Aa + 2 * self.aa)

    def expected(self, state):
        """Expected allele copies, N·(Aa + 2 aa) frequencies."""
        _, Aa, aa = self._frequencies(state)
        return np.where(state.exists, self.total * (Aa + 2 * aa), np.nan)

    def simulate(self, state, rng):
        """Multinomial draws of the genotype counts, returned as Aa + 2·aa."""
        freqs = np.stack(np.broadcast_arrays(*self._frequencies(state)), axis=-1)
        good = state.exists & np.all(np.isfinite(freqs) & (freqs >= 0), axis=-1)
        freqs = np.where(good[:, None], np.clip(freqs, 0.0, 1.0), [1.0, 0.0, 0.0])
        freqs = freqs / freqs.sum(axis=-1, keepdims=True)
        draws = rng.multinomial(self.total, freqs)
        return np.where(good, draws[:, 1] + 2.0 * draws[:, 2], np.nan)

    def statistic_trials(self, state):
        """2N allele copies, binomial in q only in Hardy-Weinberg proportions (F = 0).

        X-linked daughters' copies come from two frequencies, and inbreeding makes the two
        copies of a person dependent: no binomial law then.
        """
        if self.inheritance != "autosomal" or np.any(state.params["F"] > 0):
            return None
        return 2 * self.total  # allele copies of people in Hardy-Weinberg proportions

    def _draw_table_fields(self, state, rng):
        freqs = np.stack(np.broadcast_arrays(*self._frequencies(state)), axis=-1)
        AA, Aa, aa = (int(c) for c in rng.multinomial(self.total, freqs)[0])
        return {"AA": AA, "Aa": Aa, "aa": aa}

    def frequency_statistic(self):
        """The allele frequency among the genotyped copies, (Aa + 2 aa) / 2N.

        Against q_hat; at an X-linked locus the people are daughters, so q_female.
        """
        quantity = "q_female" if self.inheritance == "x-linked" else "q_hat"
        return FrequencyStatistic(self.Aa + 2 * self.aa, 2 * self.total, quantity, 1.0,
                                  "allele frequency", of_alleles=True)

    def describe(self):
        """One line for reports."""
        who = "daughters" if self.inheritance == "x-linked" else "people"
        return f"{self.label}: genotypes AA {self.AA}, Aa {self.Aa}, aa {self.aa} ({who})"


@dataclass
class Affected(Observation):
    """``affected`` of ``total`` births (male births for ``x-linked-male``).

    Binomial on the counted share c·(P·g + φ): g = (Aa + aa) for a dominant, aa for a
    recessive, q_male for an X-linked disorder in sons (``balance.affected_fraction``);
    P the penetrance, c the completeness of the count, φ the phenocopy rate per birth
    (:func:`seen_share`).
    """

    kind: ClassVar[str] = "affected"
    depends_on_frequency: ClassVar[bool] = True
    statistic_name: ClassVar[str] = "affected births"
    #: (c1, c2) of the affected share c1 x + c2 x^2 per mode: 1 - (1 - x)^2, x^2, x
    _SHARE_POLYNOMIAL: ClassVar[dict] = {"dominant": (2.0, -1.0), "recessive": (0.0, 1.0),
                                         "x-linked-male": (1.0, 0.0)}
    ascertainment: ClassVar[tuple[str, ...]] = ("penetrance", "completeness", "phenocopy")
    required: ClassVar[tuple[str, ...]] = ("affected", "total", "mode")
    optional: ClassVar[tuple[str, ...]] = ascertainment

    affected: int = 0
    total: int = 1
    mode: str = "dominant"
    penetrance: float | None = None
    completeness: float | None = None
    phenocopy: float | None = None

    @classmethod
    def _parse(cls, table, field, inheritance):
        affected = whole_count(table["affected"], f"{field}.affected")
        total = whole_count(table["total"], f"{field}.total")
        at_least_one(total, f"{field}.total")
        check_not_above(affected, total, "total", f"{field}.affected")
        mode = parse_mode(table, field, inheritance)
        return {"affected": affected, "total": total, "mode": mode,
                **parse_ascertainment(table, field, cls.ascertainment, affected)}

    def _fraction(self, state):
        penetrance = self.ascertained("penetrance", state.params)
        return seen_share(affected_share(self.mode, state, penetrance), self, state.params)

    def _log_likelihood(self, state):
        return log_binomial(self.affected, self.total, self._fraction(state))

    def _given_frequency(self, x, params):
        penetrance = self.ascertained("penetrance", params)
        fraction = balance.affected_fraction(self.mode, x, params["F"], penetrance)
        return log_binomial(self.affected, self.total, seen_share(fraction, self, params))

    def statistic(self):
        """The observed affected births."""
        return float(self.affected)

    def expected(self, state):
        """Expected affected births, total × affected fraction."""
        return np.where(state.exists, self.total * self._fraction(state), np.nan)

    def simulate(self, state, rng):
        """Binomial draws of affected births; NaN where there is no equilibrium."""
        fraction = np.where(state.exists, self._fraction(state), np.nan)
        return binomial_draw(rng, self.total, fraction)

    def statistic_trials(self, state):
        """Binomial(total, affected fraction) at every row."""
        return self.total

    def _draw_table_fields(self, state, rng):
        return {"affected": int(rng.binomial(self.total, self._fraction(state))[0])}

    def frequency_statistic(self):
        """The affected share of births, against the incidence (sons: q_male) × P × c.

        P and c at the study's values (1 where they carry a prior: the share is then
        read as if every affected birth were seen).
        """
        quantity = "q_male" if self.mode == "x-linked-male" else f"incidence_{self.mode}"
        scale = 1.0
        for name in ("penetrance", "completeness"):
            value = self.ascertained(name)
            scale *= 1.0 if value is None else float(value)
        return FrequencyStatistic(self.affected, self.total, quantity, scale,
                                  f"affected share of births ({self.mode})", of_alleles=False,
                                  share_polynomial=self._SHARE_POLYNOMIAL[self.mode])

    def describe(self):
        """One line for reports."""
        births = "male births" if self.mode == "x-linked-male" else "births"
        seen = ascertainment_text(self)
        return (f"{self.label}: {self.affected} affected of {self.total} {births} "
                f"({self.mode}{seen})")

    def parameters_used(self, model="deterministic"):
        """Life-cycle parameters the likelihood depends on (no F for sons)."""
        used = super().parameters_used(model) | free_ascertainment(self)
        return used - {"F"} if self.mode == "x-linked-male" else used
