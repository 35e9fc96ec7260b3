"""The ``estimate`` kind: a published estimate of any parameter with its 95 % interval.

:class:`Estimate` -- a normal term for the reported median on the log scale (rates, s,
Ne, alpha) or the logit scale (h, F, penetrance, completeness, phenocopy: parameters on
[0, 1] whose published intervals may reach towards either end).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from scipy import special

from infer.core.stats import Z975, sigma_of_log
from infer.core.supports import NAMED_COMPLETENESS, PARAMETERS
from infer.errors import InputError
from infer.model.observations.base import Observation
from infer.validate import choice, format_number, quote_value, real_number

__all__ = ["Estimate", "LOGIT_SCALE"]

#: parameters whose published estimates are read on the logit scale (the rest: log)
LOGIT_SCALE = ("h", "F", "penetrance", "completeness", "phenocopy")


def _logit(parameter: str) -> bool:
    """Read on the logit scale: :data:`LOGIT_SCALE` and each registry's completeness."""
    return parameter in LOGIT_SCALE or bool(NAMED_COMPLETENESS.fullmatch(parameter))


def _to_scale(parameter: str, x):
    """The estimate's scale: logit for :data:`LOGIT_SCALE`, log otherwise."""
    x = np.asarray(x, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        if _logit(parameter):
            return np.log(x) - np.log1p(-x)
        return np.log(x)


def _from_scale(parameter: str, y):
    y = np.asarray(y, dtype=float)
    return special.expit(y) if _logit(parameter) else np.exp(y)


@dataclass
class Estimate(Observation):
    """An outside estimate of ``parameter`` with a published 95 % interval.

    g(median) ~ Normal(g(θ), σ) with σ = (g(upper) − g(lower)) / (2 · 1.959964), g = ln
    (or logit for :data:`LOGIT_SCALE`): the density of the reported median on that
    scale, so the term is a true log-density.
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
        named = table["parameter"]
        if isinstance(named, str) and NAMED_COMPLETENESS.fullmatch(named):
            parameter = named  # a registry's own completeness, declared in [parameters]
        else:
            parameter = choice(named, PARAMETERS, f"{field}.parameter")
        values = {k: real_number(table[k], f"{field}.{k}") for k in ("median", "lower", "upper")}
        if values["lower"] <= 0:
            raise InputError(
                f"{quote_value(table['lower'])} is not above 0", field=f"{field}.lower"
            )
        if not values["lower"] < values["median"]:
            raise InputError(
                f"{quote_value(table['median'])} is not above lower {quote_value(table['lower'])}",
                field=f"{field}.median",
            )
        if not values["median"] < values["upper"]:
            raise InputError(
                f"{quote_value(table['upper'])} is not above median {quote_value(table['median'])}",
                field=f"{field}.upper",
            )
        if parameter in ("mu", "s", "nu", "s_male", "s_female") and values["median"] > 1:
            raise InputError(
                f"{quote_value(table['median'])} is above 1, outside the range of {parameter}",
                field=f"{field}.median",
            )
        if _logit(parameter) and values["upper"] >= 1:
            raise InputError(
                f"{quote_value(table['upper'])} is not below 1: an estimate of {parameter} "
                "is read on the logit scale, so its interval lies inside (0, 1)",
                field=f"{field}.upper",
            )
        return {"parameter": parameter, **values}

    @property
    def sigma(self) -> float:
        """Standard deviation on the estimate's scale implied by the 95 % interval."""
        if _logit(self.parameter):
            return float((_to_scale(self.parameter, self.upper)
                          - _to_scale(self.parameter, self.lower)) / (2.0 * Z975))
        return float(sigma_of_log(self.lower, self.upper))

    def _z(self, theta) -> np.ndarray:
        """(g(median) − g(θ)) / σ per row."""
        theta = np.asarray(theta, dtype=float)
        return (_to_scale(self.parameter, self.median) - _to_scale(self.parameter, theta)) \
            / self.sigma

    def _log_likelihood(self, state):
        z = self._z(state.params[self.parameter])
        return -0.5 * z * z - math.log(self.sigma) - 0.5 * math.log(2.0 * math.pi)

    def statistic(self):
        """The published median."""
        return float(self.median)

    def expected(self, state):
        """The parameter itself: the median the estimate would report (on its scale)."""
        return np.asarray(state.params[self.parameter], dtype=float).copy()

    def _around(self, theta, rng):
        theta = np.asarray(theta, dtype=float)
        return _from_scale(self.parameter, _to_scale(self.parameter, theta)
                           + self.sigma * rng.standard_normal(theta.shape))

    def simulate(self, state, rng):
        """A published median drawn around each row's parameter value."""
        return self._around(state.params[self.parameter], rng)

    def statistic_trials(self, state):
        """None: a published median is not a count (see :meth:`predictive_tails`)."""
        return None

    def predictive_tails(self, state):
        """Exact tails of the published median around each row's parameter."""
        lower = float(np.mean(special.ndtr(self._z(state.params[self.parameter]))))
        return lower, 1.0 - lower, ("logit-normal" if _logit(self.parameter)
                                    else "log-normal")

    def _draw_table_fields(self, state, rng):
        """A new published median and its 95 % interval of the same width on the log scale."""
        median = float(np.ravel(self._around(state.params[self.parameter], rng))[0])
        centre, half = _to_scale(self.parameter, median), Z975 * self.sigma
        return {"median": median,
                "lower": float(_from_scale(self.parameter, centre - half)),
                "upper": float(_from_scale(self.parameter, centre + half))}

    def frequency_statistic(self):
        """None: an outside estimate is of a parameter, not of the frequency."""
        return None

    def describe(self):
        """One line for reports."""
        return (
            f"{self.label}: outside estimate of {self.parameter}, {format_number(self.median)} "
            f"(95 % interval {format_number(self.lower)} to {format_number(self.upper)})"
        )

    def parameters_used(self, model="deterministic"):
        """The one parameter the estimate is of."""
        return {self.parameter}
