"""The observation protocol: the base class every kind implements, and shared helpers.

:class:`Observation` validates a study-file table and declares what every kind gives
the rest of qhat, so that nothing outside the kinds' modules looks at a kind's name:
its log-likelihood per row of a :class:`~infer.model.balance_state.BalanceState` (and
given the allele frequency, for the drift model), the expected, simulated and exactly
tailed predictive statistic, new data of the study's shape for calibration, what it
contributes to a balance plot's observed band
(:class:`~infer.model.observations.share.FrequencyStatistic`), an
assumption the report states, and a one-line description. :data:`PROTOCOL` lists the
methods each kind defines itself (checked by tests/model/test_protocol.py).

Helpers: :func:`binomial_draw` and :func:`x_linked_daughter_genotypes`;
:func:`parse_mode`, :func:`check_not_above` and :func:`at_least_one` are the checks
several kinds share. The kinds live in
:mod:`~infer.model.observations.frequency`, :mod:`~infer.model.observations.sporadic`,
:mod:`~infer.model.observations.fertility` and :mod:`~infer.model.observations.published`;
the registry is :data:`infer.model.observations.kinds.KINDS`.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from scipy import special

from infer.core.choices import AUTOSOMAL_MODES, MODES, X_LINKED_MODES
from infer.core.stats import log_binomial
from infer.core.supports import ASCERTAINMENT, NAMED_COMPLETENESS
from infer.errors import InputError
from infer.model.balance_state import BalanceState
from infer.model.observations.share import FrequencyStatistic
from infer.validate import check_keys, choice, format_number, probability, quote_value

__all__ = [
    "Observation",
    "PROTOCOL",
    "FREQUENCY_PROTOCOL",
    "FREQUENCY_PARAMETERS",
    "parse_ascertainment",
    "free_ascertainment",
    "seen_share",
    "ascertainment_text",
    "log_binomial",
    "binomial_draw",
    "x_linked_daughter_genotypes",
    "check_not_above",
    "at_least_one",
    "parse_mode",
]

#: life-cycle parameters the equilibrium allele frequency depends on
FREQUENCY_PARAMETERS = {"mu", "s", "h", "F", "nu"}

#: methods every kind defines itself (the base class only states their contract)
PROTOCOL = (
    "_parse",
    "_log_likelihood",
    "statistic",
    "expected",
    "simulate",
    "_draw_table_fields",
    "statistic_trials",
    "frequency_statistic",
    "describe",
)
#: methods a kind with ``depends_on_frequency = True`` defines as well (the drift model)
FREQUENCY_PROTOCOL = ("_given_frequency",)


def binomial_draw(rng, n, p):
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
    """Base class of the observation kinds: the protocol every kind implements.

    A kind is a dataclass that declares ``kind`` (its name in a study file),
    ``depends_on_frequency``, ``statistic_name``, ``required`` and ``optional`` (its
    table's fields, which are also its dataclass fields), optionally ``assumption``, and
    defines every method in :data:`PROTOCOL` (and :data:`FREQUENCY_PROTOCOL` when it
    depends on the allele frequency). The base class builds on those: validation
    (:meth:`from_table`), the -inf convention of :meth:`log_likelihood`, the round trip
    :meth:`as_table`, :meth:`simulate_table` and the exact :meth:`predictive_tails`.
    """

    kind: ClassVar[str]
    depends_on_frequency: ClassVar[bool]
    statistic_name: ClassVar[str]
    required: ClassVar[tuple[str, ...]]
    optional: ClassVar[tuple[str, ...]] = ()
    #: a sentence an estimate report adds to its assumptions when the study has this kind
    assumption: ClassVar[str | None] = None
    #: ascertainment parameters (``infer.core.supports.ASCERTAINMENT``) this kind reads;
    #: its table may fix each for this observation alone (a field of the same name)
    ascertainment: ClassVar[tuple[str, ...]] = ()

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
        check_keys(table, cls.required, ("kind", "label", *cls.optional), field)
        label = table.get("label")
        if label is None:
            match = re.search(r"\[(\d+)\]$", field)
            label = f"{cls.kind} {match.group(1)}" if match else cls.kind
        elif not isinstance(label, str) or not label.strip():
            raise InputError(
                f"{quote_value(label)} is not a non-empty text", field=f"{field}.label"
            )
        values = cls._parse(table, field, inheritance)
        return cls(label=label.strip(), inheritance=inheritance, **values)

    @classmethod
    def _parse(cls, table: dict, field: str, inheritance: str) -> dict:
        """Validated dataclass fields from the table (raise InputError naming the field)."""
        raise NotImplementedError

    # -- ascertainment ------------------------------------------------------
    def bind_ascertainment(self, fixed: dict, free=()) -> None:
        """Remember the study's ascertainment parameters (``Study`` calls this).

        ``fixed`` maps names to the study's fixed values, ``free`` names those that carry
        a prior. An ascertainment parameter this observation does not fix itself then
        reads as the study's in :meth:`ascertained` and in reports.
        """
        object.__setattr__(self, "_study_fixed", dict(fixed))
        object.__setattr__(self, "_study_free", tuple(free))

    def ascertained(self, name: str, params: dict | None = None):
        """The value of ascertainment parameter ``name`` this observation sees.

        Its own field when the table gives one, else the study's fixed value, else the
        row values ``params[name]`` (the parameter carries a prior; ``None`` without
        ``params``), else the neutral value of ``ASCERTAINMENT``.
        """
        own = getattr(self, name, None)
        fixed = getattr(self, "_study_fixed", {})
        if isinstance(own, str):  # a parameter of its own, "completeness_<tag>"
            if own in fixed:
                return fixed[own]
            if params is not None and own in params:
                return np.asarray(params[own], dtype=float)
            return None
        if own is not None:
            return own
        if name in fixed:
            return fixed[name]
        if params is not None and name in params:
            return np.asarray(params[name], dtype=float)
        if name in getattr(self, "_study_free", ()):
            return None
        return ASCERTAINMENT[name]

    # -- likelihood ---------------------------------------------------------
    def log_likelihood(self, state: BalanceState) -> np.ndarray:
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
        return self.frequency_likelihood(params)(x)

    def frequency_likelihood(self, params: dict):
        """Log P(data | x) as a function of ``x`` alone, for fixed parameter rows.

        The same values as :meth:`log_likelihood_given_frequency`; the parameter columns
        are prepared once, for a quadrature that asks for many sets of nodes.

        Parameters
        ----------
        params : dict of str to ndarray
            Life-cycle parameters, ``(n,)`` arrays.

        Returns
        -------
        callable
            ``x`` of shape (n, m) to log P(data | x) of shape (n, m).
        """
        if not self.depends_on_frequency:
            raise TypeError(f"{self.kind} does not depend on the allele frequency")
        column = {k: np.asarray(v, dtype=float)[..., None] for k, v in params.items()}

        def log_p(x):
            return self._given_frequency(np.asarray(x, dtype=float), column)

        return log_p

    def _log_likelihood(self, state: BalanceState) -> np.ndarray:
        """Log-probability of the data per row (NaN and -inf become -inf)."""
        raise NotImplementedError

    def _given_frequency(self, x, params):
        """Log P(data | x), ``x`` of shape (n, m) and ``params`` as (n, 1) columns."""
        raise NotImplementedError

    def binomial_form(self) -> tuple[int, int, float] | None:
        """``(k, n, c)`` when P(data | x) is binomial in x, else None.

        That is, log P(data | x) = c + log[C(n, k) x^k (1 - x)^(n - k)] for an autosomal
        locus with F = 0; the drift model then uses the fast sample probability of
        :func:`infer.core.drift.stationary.log_binomial_probability`.
        """
        return None

    # -- predictive statistic -----------------------------------------------
    def statistic(self) -> float:
        """The observed number compared in predictive checks (``statistic_name``)."""
        raise NotImplementedError

    def expected(self, state: BalanceState) -> np.ndarray:
        """Expected value of the statistic for each row of ``state``; NaN where undefined."""
        raise NotImplementedError

    def simulate(self, state: BalanceState, rng: np.random.Generator) -> np.ndarray:
        """One replicated statistic per row of ``state`` (posterior predictive draws)."""
        raise NotImplementedError

    def statistic_trials(self, state: BalanceState) -> int | None:
        """Trials n when the statistic at every row is Binomial(n, expected / n), or None.

        None when it has no binomial law at the rows of ``state`` (checks then use
        :meth:`simulate`, unless :meth:`predictive_tails` is overridden with another
        closed form).
        """
        raise NotImplementedError

    def predictive_tails(self, state: BalanceState) -> tuple[float, float, str] | None:
        """Exact tails of the observed statistic t, averaged over the rows of ``state``.

        Returns
        -------
        tuple or None
            ``(P(T <= t), P(T >= t), law)``, NaN tails when no row is finite; None when
            the statistic has no closed form (callers simulate it).
        """
        n = self.statistic_trials(state)
        if n is None:
            return None
        t = self.statistic()
        expected = self.expected(state)
        p = np.asarray(expected, dtype=float) / n if n else np.zeros_like(expected)
        good = np.isfinite(p)
        if not good.any():
            return math.nan, math.nan, "binomial"
        p = np.clip(p[good], 0.0, 1.0)
        # bdtr(k, n, p) = P(T <= k), bdtrc(k, n, p) = P(T > k) (scipy.special)
        upper = special.bdtrc(t - 1, n, p) if t >= 1 else np.ones_like(p)
        return float(np.mean(special.bdtr(t, n, p))), float(np.mean(upper)), "binomial"

    # -- calibration ----------------------------------------------------------
    def simulate_table(self, state: BalanceState, rng: np.random.Generator) -> dict:
        """New data of this observation's shape, drawn at the single row of ``state``.

        The same totals, label and settings with new counts: the table a study file
        would hold (``parse_observation`` reads it back). Simulation-based calibration
        (:mod:`infer.inference.calibration`) draws its data sets with it; under the
        drift model pass a state at a frequency drawn from Wright's density
        (:meth:`~infer.model.balance_state.BalanceState.at_frequency`).

        Raises
        ------
        ValueError
            When ``state`` has more than one row.
        """
        if state.n != 1:
            raise ValueError(f"simulate_table needs a state of one row, not {state.n}")
        return {**self.as_table(), **self._draw_table_fields(state, rng)}

    def _draw_table_fields(self, state: BalanceState, rng: np.random.Generator) -> dict:
        """The table fields that change, drawn at the one row of ``state``."""
        raise NotImplementedError

    # -- reports --------------------------------------------------------------
    def frequency_statistic(self) -> FrequencyStatistic | None:
        """The observation as an observed share of a balance quantity, or None.

        Kinds that measure the allele frequency (allele copies, affected births) return
        one; kinds that inform mu or s directly return None.
        """
        raise NotImplementedError

    def describe(self) -> str:
        """One line for reports."""
        raise NotImplementedError

    def data_warnings(self) -> list[str]:
        """Sentences about this observation's data a practitioner expects flagged.

        None by default; a kind returns one where its data alone undercut the analysis
        (fertility at or above the reference, for instance).
        """
        return []

    def as_table(self) -> dict:
        """The observation as a study-file table (``parse_observation`` reads it back)."""
        table = {"kind": self.kind, "label": self.label}
        for name in (*self.required, *self.optional):
            value = getattr(self, name)
            if value is not None:
                table[name] = value
        return table

    def needs_free(self) -> set[str]:
        """Parameters that must carry a prior for this observation to inform anything."""
        return set()

    def parameters_used(self, model: str = "deterministic") -> set[str]:
        """Life-cycle parameters the likelihood depends on."""
        used = set(FREQUENCY_PARAMETERS)
        if self.inheritance == "x-linked":
            used.add("alpha")
        if model == "drift":
            used.add("Ne")
        return used


def seen_share(genetic_share, observation, params):
    """The share of births counted as affected: completeness × (genetic + phenocopy).

    ``genetic_share`` already carries the penetrance; phenocopies (affected births
    without a germ-line mutation, a rate per birth) are counted like any affected birth
    and registered with the same completeness. Capped at 1.
    """
    completeness = observation.ascertained("completeness", params)
    phenocopy = observation.ascertained("phenocopy", params)
    if isinstance(completeness, float) and isinstance(phenocopy, float) \
            and completeness == 1.0 and phenocopy == 0.0:
        return genetic_share  # every affected birth seen, none non-heritable: no work
    return np.clip(completeness * (np.asarray(genetic_share, dtype=float) + phenocopy),
                   0.0, 1.0)


def ascertainment_text(observation) -> str:
    """``, penetrance 0.8, completeness 0.9`` for the values that are not neutral."""
    parts = []
    for name, neutral in (("penetrance", 1.0), ("completeness", 1.0), ("phenocopy", 0.0)):
        if name not in observation.ascertainment:
            continue
        value = observation.ascertained(name)
        own = getattr(observation, name, None)
        if value is None and isinstance(own, str):
            parts.append(f"{own} from its prior")
        elif value is None:
            parts.append(f"{name} from its prior")
        elif value != neutral:
            parts.append(f"{name} {format_number(value)}")
    return "".join(f", {part}" for part in parts)


def free_ascertainment(observation) -> set[str]:
    """The ascertainment parameters an observation reads from the study's priors."""
    names = set()
    for name in observation.ascertainment:
        if observation.ascertained(name) is None:
            own = getattr(observation, name, None)
            names.add(own if isinstance(own, str) else name)
    return names


def parse_ascertainment(table: dict, field: str, names, cases: int) -> dict:
    """The observation's own fixed ascertainment values (absent keys give ``None``).

    Each is a probability; penetrance or completeness 0 is refused when there are
    ``cases`` (they could not have been seen).
    """
    values = {}
    for name in names:
        if name not in table:
            values[name] = None
            continue
        if name == "completeness" and isinstance(table[name], str):
            if not NAMED_COMPLETENESS.fullmatch(table[name]):
                raise InputError(
                    f"{quote_value(table[name])} is neither a probability nor the name of a "
                    'parameter of the form "completeness_<tag>" (lower-case letters, digits, '
                    "_)", field=f"{field}.{name}")
            values[name] = table[name]
            continue
        value = probability(table[name], f"{field}.{name}")
        if name in ("penetrance", "completeness") and value == 0 and cases > 0:
            raise InputError("0 cannot produce the affected births counted",
                             field=f"{field}.{name}")
        if name == "phenocopy" and value == 1:
            raise InputError("1 is not below 1: every birth would be affected",
                             field=f"{field}.{name}")
        values[name] = value
    return values


def check_not_above(value: int, limit: int, limit_name: str, field: str) -> None:
    """Refuse a count above its limit (``observed`` above ``sampled``...)."""
    if value > limit:
        raise InputError(f"{value} is more than {limit_name} {limit}", field=field)


def at_least_one(value: int, field: str) -> None:
    """Refuse a count below 1 (a sample size or number of people)."""
    if value < 1:
        raise InputError(f"{value} is not at least 1", field=field)


def parse_mode(table, field, inheritance, allowed=MODES):
    """The ``mode`` of a table, checked against the study's inheritance."""
    mode = choice(table["mode"], allowed, f"{field}.mode")
    if inheritance == "x-linked" and mode in AUTOSOMAL_MODES:
        raise InputError(
            f'{quote_value(mode)} needs inheritance = "autosomal"; an x-linked study uses '
            f'mode = "x-linked-male"',
            field=f"{field}.mode",
        )
    if inheritance == "autosomal" and mode in X_LINKED_MODES:
        raise InputError(
            f'{quote_value(mode)} needs inheritance = "x-linked"', field=f"{field}.mode"
        )
    return mode
