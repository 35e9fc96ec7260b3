"""Observation kinds: one small class each, with a vectorised log-likelihood.

Every kind validates its table (:meth:`Observation.from_table`), gives the exact
log-probability of its data for each row of a :class:`~infer.state.State` (binomial
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
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
from scipy import special

from infer import balance
from infer.errors import InputError
from infer.priors import _check_keys, _choice, _count, _fmt, _fmt_num, _probability, _real
from infer.state import State

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

_FREQUENCY_PARAMETERS = {"mu", "s", "h", "F", "nu"}
_Z975 = 1.959963984540054  # standard normal 97.5 % quantile


@functools.lru_cache(maxsize=1024)
def _log_choose(n: int, k: int) -> float:
    """log C(n, k) (exact normalising constant, computed once per observation)."""
    return float(special.gammaln(n + 1.0) - special.gammaln(k + 1.0)
                 - special.gammaln(n - k + 1.0))


def _log_binomial(k, n, p):
    """log C(n, k) p^k (1-p)^(n-k), vectorised over p; -inf where p is NaN or outside [0, 1]."""
    p = np.asarray(p, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        value = _log_choose(n, k) + special.xlogy(k, p) + special.xlog1py(n - k, -p)
        good = (p >= 0) & (p <= 1)  # False for NaN
    return np.where(good & ~np.isnan(value), value, -np.inf)


def _binomial_draw(rng, n, p):
    """Binomial draws; NaN where p is not a probability."""
    p = np.asarray(p, dtype=float)
    good = np.isfinite(p) & (p >= 0) & (p <= 1)
    draw = rng.binomial(n, np.where(good, p, 0.0)).astype(float)
    return np.where(good, draw, np.nan)


def x_linked_daughter_genotypes(q_male, q_female, F=0.0):
    """Daughters' genotype frequencies (AA, Aa, aa) at an X-linked locus.

    A daughter gets an egg X (allele frequency x) and a sperm X (frequency y).
    Sons get the egg's X, so x = q_male; q_female = (x + y)/2 gives y = 2 q_female - x.
    Without inbreeding AA = (1-x)(1-y), Aa = x(1-y) + y(1-x), aa = xy; with
    inbreeding F a share F of daughters carry two copies identical by descent of
    an allele drawn at the daughters' frequency q_female (derived, the usual
    identity-by-descent mixture).
    """
    x = np.asarray(q_male, dtype=float)
    qf = np.asarray(q_female, dtype=float)
    y = 2.0 * qf - x
    F = np.asarray(F, dtype=float)
    AA = (1 - F) * (1 - x) * (1 - y) + F * (1 - qf)
    Aa = (1 - F) * (x * (1 - y) + y * (1 - x))
    aa = (1 - F) * x * y + F * qf
    return AA, Aa, aa


@dataclass
class Observation:
    """Base class of the observation kinds.

    Subclasses declare ``kind``, ``depends_on_frequency``, ``required``,
    ``optional`` (names with defaults) and ``statistic_name``, and implement
    ``_parse`` (validation), ``_probability`` or ``log_likelihood``, ``expected``,
    ``simulate`` and ``describe``.
    """

    kind: ClassVar[str]
    depends_on_frequency: ClassVar[bool]
    statistic_name: ClassVar[str]
    required: ClassVar[tuple[str, ...]]
    optional: ClassVar[tuple[str, ...]] = ()

    label: str
    inheritance: str

    # -- construction -------------------------------------------------------
    @classmethod
    def from_table(cls, table: dict, *, field: str, inheritance: str) -> Observation:
        """Validate a study-file table and build the observation.

        Raises
        ------
        InputError
            With ``field=f"{field}.<name>"`` and the bad value quoted.
        """
        _check_keys(table, cls.required, ("kind", "label", *cls.optional), field)
        label = table.get("label")
        if label is None:
            match = re.search(r"\[(\d+)\]$", field)
            label = f"{cls.kind} {match.group(1)}" if match else cls.kind
        elif not isinstance(label, str) or not label.strip():
            raise InputError(f"{_fmt(label)} is not a non-empty text", field=f"{field}.label")
        values = cls._parse(table, field, inheritance)
        return cls(label=label.strip(), inheritance=inheritance, **values)

    @classmethod
    def _parse(cls, table: dict, field: str, inheritance: str) -> dict:
        raise NotImplementedError

    # -- likelihood ---------------------------------------------------------
    def log_likelihood(self, state: State) -> np.ndarray:
        """Log-probability of the data for each row of ``state``; shape ``(n,)``.

        Frequency kinds give -inf where the row has no stable equilibrium.
        """
        value = self._log_likelihood(state)
        if self.depends_on_frequency:
            value = np.where(state.exists, value, -np.inf)
        return np.where(np.isnan(value), -np.inf, value)

    def log_likelihood_given_frequency(self, x, params: dict) -> np.ndarray:
        """Log P(data | allele frequency x) for the drift model (autosomal, F = 0).

        Parameters
        ----------
        x : ndarray, shape (n, m)
            Frequencies among zygotes: m quadrature nodes for each of n rows.
        params : dict of str to ndarray
            Life-cycle parameters, ``(n,)`` arrays.

        Returns
        -------
        ndarray, shape (n, m)
        """
        if not self.depends_on_frequency:
            raise TypeError(f"{self.kind} does not depend on the allele frequency")
        x = np.asarray(x, dtype=float)
        column = {k: np.asarray(v, dtype=float)[..., None] for k, v in params.items()}
        return self._given_frequency(x, column)

    def _given_frequency(self, x, params):
        raise NotImplementedError

    def statistic(self) -> float:
        """The observed number compared in predictive checks (``statistic_name``)."""
        raise NotImplementedError

    def as_table(self) -> dict:
        """The observation as a study-file table (``parse_observation`` reads it back)."""
        table = {"kind": self.kind, "label": self.label}
        for name in (*self.required, *self.optional):
            value = getattr(self, name)
            if value is not None:
                table[name] = value
        return table

    def parameters_used(self, model: str = "deterministic") -> set[str]:
        """Life-cycle parameters the likelihood depends on."""
        used = set(_FREQUENCY_PARAMETERS)
        if self.inheritance == "x-linked":
            used.add("alpha")
        if model == "drift":
            used.add("Ne")
        return used


def _check_not_above(value: int, limit: int, limit_name: str, field: str) -> None:
    if value > limit:
        raise InputError(f"{value} is more than {limit_name} {limit}", field=field)


def _at_least_one(value: int, field: str) -> None:
    if value < 1:
        raise InputError(f"{value} is not at least 1", field=field)


_AUTOSOMAL_MODES = ("dominant", "recessive")
_X_MODES = ("x-linked-male",)


def _mode(table, field, inheritance, allowed=("dominant", "recessive", "x-linked-male")):
    mode = _choice(table["mode"], allowed, f"{field}.mode")
    if inheritance == "x-linked" and mode in _AUTOSOMAL_MODES:
        raise InputError(
            f'{_fmt(mode)} needs inheritance = "autosomal"; an x-linked study uses '
            f'mode = "x-linked-male"',
            field=f"{field}.mode",
        )
    if inheritance == "autosomal" and mode in _X_MODES:
        raise InputError(
            f'{_fmt(mode)} needs inheritance = "x-linked"', field=f"{field}.mode"
        )
    return mode


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
        observed = _count(table["observed"], f"{field}.observed")
        sampled = _count(table["sampled"], f"{field}.sampled")
        _at_least_one(sampled, f"{field}.sampled")
        _check_not_above(observed, sampled, "sampled", f"{field}.observed")
        sex = None
        if inheritance == "x-linked":
            if "sex" not in table:
                raise InputError(
                    'missing; an x-linked allele count needs sex = "male", "female" or "all"',
                    field=f"{field}.sex",
                )
            sex = _choice(table["sex"], ("male", "female", "all"), f"{field}.sex")
        elif "sex" in table:
            raise InputError(
                f"{_fmt(table['sex'])}: sex applies only to inheritance = \"x-linked\"",
                field=f"{field}.sex",
            )
        return {"observed": observed, "sampled": sampled, "sex": sex}

    def _frequency(self, state):
        if self.inheritance == "x-linked":
            return {"male": state.q_male, "female": state.q_female, "all": state.q}[self.sex]
        return state.q

    def _log_likelihood(self, state):
        return _log_binomial(self.observed, self.sampled, self._frequency(state))

    def _given_frequency(self, x, params):
        return _log_binomial(self.observed, self.sampled, x)

    def statistic(self):
        return float(self.observed)

    def expected(self, state):
        """Expected copies, sampled · q."""
        return self.sampled * np.where(state.exists, self._frequency(state), np.nan)

    def simulate(self, state, rng):
        """Binomial draws of the observed copies; NaN where there is no equilibrium."""
        q = np.where(state.exists, self._frequency(state), np.nan)
        return _binomial_draw(rng, self.sampled, q)

    def describe(self):
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
        counts = {g: _count(table[g], f"{field}.{g}") for g in cls.required}
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
        value = special.gammaln(self.total + 1.0) - sum(special.gammaln(c + 1.0) for c in k)
        with np.errstate(divide="ignore", invalid="ignore"):
            for count, p in zip(k, freqs):
                value = value + special.xlogy(count, np.clip(p, 0.0, 1.0))
        return value

    def _log_likelihood(self, state):
        return self._log_multinomial(self._frequencies(state))

    def _given_frequency(self, x, params):
        return self._log_multinomial(balance.genotype_frequencies(x, params["F"]))

    def statistic(self):
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

    def describe(self):
        who = "daughters" if self.inheritance == "x-linked" else "people"
        return f"{self.label}: genotypes AA {self.AA}, Aa {self.Aa}, aa {self.aa} ({who})"


@dataclass
class Affected(Observation):
    """``affected`` of ``total`` births (male births for ``x-linked-male``).

    Binomial on ``balance.affected_fraction``: penetrance × (Aa + aa) for a
    dominant, × aa for a recessive, × q_male for an X-linked disorder in sons.
    """

    kind: ClassVar[str] = "affected"
    depends_on_frequency: ClassVar[bool] = True
    statistic_name: ClassVar[str] = "affected births"
    required: ClassVar[tuple[str, ...]] = ("affected", "total", "mode")
    optional: ClassVar[tuple[str, ...]] = ("penetrance",)

    affected: int = 0
    total: int = 1
    mode: str = "dominant"
    penetrance: float = 1.0

    @classmethod
    def _parse(cls, table, field, inheritance):
        affected = _count(table["affected"], f"{field}.affected")
        total = _count(table["total"], f"{field}.total")
        _at_least_one(total, f"{field}.total")
        _check_not_above(affected, total, "total", f"{field}.affected")
        mode = _mode(table, field, inheritance)
        penetrance = _probability(table.get("penetrance", 1.0), f"{field}.penetrance")
        if penetrance == 0 and affected > 0:
            raise InputError("0 cannot produce affected births", field=f"{field}.penetrance")
        return {"affected": affected, "total": total, "mode": mode, "penetrance": penetrance}

    def _fraction(self, state):
        if self.mode == "x-linked-male":
            return balance.affected_fraction(self.mode, state.q_male, 0.0, self.penetrance)
        return balance.affected_fraction(self.mode, state.q, state.params["F"], self.penetrance)

    def _log_likelihood(self, state):
        return _log_binomial(self.affected, self.total, self._fraction(state))

    def _given_frequency(self, x, params):
        fraction = balance.affected_fraction(self.mode, x, params["F"], self.penetrance)
        return _log_binomial(self.affected, self.total, fraction)

    def statistic(self):
        return float(self.affected)

    def expected(self, state):
        """Expected affected births, total × affected fraction."""
        return np.where(state.exists, self.total * self._fraction(state), np.nan)

    def simulate(self, state, rng):
        """Binomial draws of affected births; NaN where there is no equilibrium."""
        fraction = np.where(state.exists, self._fraction(state), np.nan)
        return _binomial_draw(rng, self.total, fraction)

    def describe(self):
        births = "male births" if self.mode == "x-linked-male" else "births"
        pen = "" if self.penetrance == 1 else f", penetrance {_fmt_num(self.penetrance)}"
        return f"{self.label}: {self.affected} affected of {self.total} {births} ({self.mode}{pen})"

    def parameters_used(self, model="deterministic"):
        used = super().parameters_used(model)
        return used - {"F"} if self.mode == "x-linked-male" else used


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
        cases = _count(table["cases"], f"{field}.cases")
        births = _count(table["births"], f"{field}.births")
        _at_least_one(births, f"{field}.births")
        _check_not_above(cases, births, "births", f"{field}.cases")
        if table["mode"] == "recessive":
            raise InputError(
                '"recessive" is not allowed: a new recessive mutation does not show in its '
                'carrier, so sporadic cases need mode = "dominant" or "x-linked-male"',
                field=f"{field}.mode",
            )
        mode = _mode(table, field, inheritance, ("dominant", "x-linked-male"))
        penetrance = _probability(table.get("penetrance", 1.0), f"{field}.penetrance")
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
        return _log_binomial(self.cases, self.births, self.rate(state.params))

    def statistic(self):
        return float(self.cases)

    def expected(self, state):
        """Expected cases, births × rate."""
        return self.births * self.rate(state.params)

    def simulate(self, state, rng):
        """Binomial draws of the number of cases."""
        return _binomial_draw(rng, self.births, self.rate(state.params))

    def describe(self):
        births = "male births" if self.mode == "x-linked-male" else "births"
        pen = "" if self.penetrance == 1 else f", penetrance {_fmt_num(self.penetrance)}"
        return (
            f"{self.label}: {self.cases} new-mutation cases in {self.births} {births} "
            f"({self.mode}{pen})"
        )

    def parameters_used(self, model="deterministic"):
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
        values = {k: _count(table[k], f"{field}.{k}") for k in cls.required if k != "mode"}
        _at_least_one(values["affected_people"], f"{field}.affected_people")
        _at_least_one(values["reference_people"], f"{field}.reference_people")
        values["mode"] = _mode(table, field, inheritance)
        return values

    def relative_fitness(self, params) -> np.ndarray:
        """w per row: 1 − h·s (dominant), 1 − s (recessive, x-linked-male)."""
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
        return _log_binomial(self.affected_children, self.total_children, self.share(state.params))

    def statistic(self):
        return float(self.affected_children)

    def expected(self, state):
        """Expected children of affected people given the total, T·share."""
        return self.total_children * self.share(state.params)

    def simulate(self, state, rng):
        """Binomial draws of the affected people's children given the total."""
        return _binomial_draw(rng, self.total_children, self.share(state.params))

    def describe(self):
        return (
            f"{self.label}: {self.affected_people} affected people had {self.affected_children} "
            f"children, {self.reference_people} reference people had {self.reference_children} "
            f"({self.mode}; selection through fertility alone)"
        )

    def parameters_used(self, model="deterministic"):
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
        parameter = _choice(table["parameter"], ("mu", "s", "Ne"), f"{field}.parameter")
        values = {k: _real(table[k], f"{field}.{k}") for k in ("median", "lower", "upper")}
        if values["lower"] <= 0:
            raise InputError(f"{_fmt(table['lower'])} is not above 0", field=f"{field}.lower")
        if not values["lower"] < values["median"]:
            raise InputError(
                f"{_fmt(table['median'])} is not above lower {_fmt(table['lower'])}",
                field=f"{field}.median",
            )
        if not values["median"] < values["upper"]:
            raise InputError(
                f"{_fmt(table['upper'])} is not above median {_fmt(table['median'])}",
                field=f"{field}.upper",
            )
        if parameter in ("mu", "s") and values["median"] > 1:
            raise InputError(
                f"{_fmt(table['median'])} is above 1, outside the range of {parameter}",
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
        return float(self.median)

    def expected(self, state):
        """The parameter itself: the median the estimate would report on average (log scale)."""
        return np.asarray(state.params[self.parameter], dtype=float).copy()

    def simulate(self, state, rng):
        """A published median drawn around each row's parameter value."""
        theta = np.asarray(state.params[self.parameter], dtype=float)
        return theta * np.exp(self.sigma * rng.standard_normal(theta.shape))

    def describe(self):
        return (
            f"{self.label}: outside estimate of {self.parameter}, {_fmt_num(self.median)} "
            f"(95 % interval {_fmt_num(self.lower)} to {_fmt_num(self.upper)})"
        )

    def parameters_used(self, model="deterministic"):
        return {self.parameter}


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
        raise InputError(f"{_fmt(table)} is not a table", field=field)
    if "kind" not in table:
        raise InputError(f"missing; must be one of {', '.join(KINDS)}", field=f"{field}.kind")
    kind = _choice(table["kind"], KINDS, f"{field}.kind")
    return KINDS[kind].from_table(table, field=field, inheritance=inheritance)
