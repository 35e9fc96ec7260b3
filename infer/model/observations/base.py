"""The base class of the observation kinds and the likelihood helpers they share.

:class:`Observation` validates a study-file table and defines the interface every kind
implements (log-likelihood per row of a :class:`~infer.model.balance_state.State`, expected and
simulated predictive statistic, description); :func:`log_binomial` and
:func:`binomial_draw` are the exact binomial terms, :func:`parse_mode`,
:func:`check_not_above` and :func:`at_least_one` the checks several kinds share.
The kinds live in :mod:`infer.model.observations.frequency` and :mod:`infer.model.observations.rates`; the
registry is :data:`infer.model.observations.kinds.KINDS`.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from scipy import special

from infer.errors import InputError
from infer.model.balance_state import State
from infer.validate import check_keys, choice, quote_value

__all__ = [
    "Observation",
    "FREQUENCY_PARAMETERS",
    "log_binomial",
    "binomial_draw",
    "x_linked_daughter_genotypes",
    "check_not_above",
    "at_least_one",
    "parse_mode",
]

#: life-cycle parameters the equilibrium allele frequency depends on
FREQUENCY_PARAMETERS = {"mu", "s", "h", "F", "nu"}


@functools.lru_cache(maxsize=1024)
def _log_choose(n: int, k: int) -> float:
    """Log of C(n, k) (exact normalising constant, computed once per observation)."""
    return float(special.gammaln(n + 1.0) - special.gammaln(k + 1.0)
                 - special.gammaln(n - k + 1.0))


def log_binomial(k, n, p):
    """Log of C(n, k) p^k (1-p)^(n-k), vectorised over p; -inf where p is NaN or outside [0, 1]."""
    p = np.asarray(p, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        value = _log_choose(n, k) + special.xlogy(k, p) + special.xlog1py(n - k, -p)
        good = (p >= 0) & (p <= 1)  # False for NaN
    return np.where(good & ~np.isnan(value), value, -np.inf)


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

    def binomial_form(self) -> tuple[int, int, float] | None:
        """``(k, n, c)`` when P(data | x) is binomial in x, else None.

        That is, log P(data | x) = c + log[C(n, k) x^k (1 - x)^(n - k)] for an autosomal
        locus with F = 0; the drift model then uses the fast sample probability of
        :func:`infer.core.drift.stationary.log_binomial_probability`.
        """
        return None

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
        used = set(FREQUENCY_PARAMETERS)
        if self.inheritance == "x-linked":
            used.add("alpha")
        if model == "drift":
            used.add("Ne")
        return used


def check_not_above(value: int, limit: int, limit_name: str, field: str) -> None:
    """Refuse a count above its limit (``observed`` above ``sampled``...)."""
    if value > limit:
        raise InputError(f"{value} is more than {limit_name} {limit}", field=field)


def at_least_one(value: int, field: str) -> None:
    """Refuse a count below 1 (a sample size or number of people)."""
    if value < 1:
        raise InputError(f"{value} is not at least 1", field=field)


_AUTOSOMAL_MODES = ("dominant", "recessive")
_X_MODES = ("x-linked-male",)


def parse_mode(table, field, inheritance, allowed=("dominant", "recessive", "x-linked-male")):
    """The ``mode`` of a table, checked against the study's inheritance."""
    mode = choice(table["mode"], allowed, f"{field}.mode")
    if inheritance == "x-linked" and mode in _AUTOSOMAL_MODES:
        raise InputError(
            f'{quote_value(mode)} needs inheritance = "autosomal"; an x-linked study uses '
            f'mode = "x-linked-male"',
            field=f"{field}.mode",
        )
    if inheritance == "autosomal" and mode in _X_MODES:
        raise InputError(
            f'{quote_value(mode)} needs inheritance = "x-linked"', field=f"{field}.mode"
        )
    return mode
