"""The ``estimate`` kind: a published estimate of mu, s or Ne with its 95 % interval.

:class:`Estimate` -- a normal term on the log scale for the reported median.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from scipy import special

from infer.core.stats import Z975, sigma_of_log
from infer.errors import InputError
from infer.model.observations.base import Observation
from infer.validate import choice, format_number, quote_value, real_number

__all__ = ["Estimate"]


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
        parameter = choice(table["parameter"], ("mu", "s", "Ne"), f"{field}.parameter")
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
        if parameter in ("mu", "s") and values["median"] > 1:
            raise InputError(
                f"{quote_value(table['median'])} is above 1, outside the range of {parameter}",
                field=f"{field}.median",
            )
        return {"parameter": parameter, **values}

    @property
    def sigma(self) -> float:
        """Standard deviation on the log scale implied by the 95 % interval."""
        return float(sigma_of_log(self.lower, self.upper))

    def _log_likelihood(self, state):
        theta = np.asarray(state.params[self.parameter], dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = (math.log(self.median) - np.log(theta)) / self.sigma
        return -0.5 * z * z - math.log(self.sigma) - 0.5 * math.log(2.0 * math.pi)

    def statistic(self):
        """The published median."""
        return float(self.median)

    def expected(self, state):
        """The parameter itself: the median the estimate would report on average (log scale)."""
        return np.asarray(state.params[self.parameter], dtype=float).copy()

    def simulate(self, state, rng):
        """A published median drawn around each row's parameter value."""
        theta = np.asarray(state.params[self.parameter], dtype=float)
        return theta * np.exp(self.sigma * rng.standard_normal(theta.shape))

    def statistic_trials(self, state):
        """None: a published median is not a count (see :meth:`predictive_tails`)."""
        return None

    def predictive_tails(self, state):
        """Exact log-normal tails of the published median around each row's parameter."""
        theta = np.asarray(state.params[self.parameter], dtype=float)
        z = (math.log(self.statistic()) - np.log(theta)) / self.sigma
        lower = float(np.mean(special.ndtr(z)))
        return lower, 1.0 - lower, "log-normal"

    def _draw_table_fields(self, state, rng):
        """A new published median and its 95 % interval of the same width on the log scale."""
        sigma = self.sigma
        theta = np.asarray(state.params[self.parameter], dtype=float)
        median = float((theta * np.exp(sigma * rng.standard_normal(theta.shape)))[0])
        return {"median": median, "lower": float(median * np.exp(-Z975 * sigma)),
                "upper": float(median * np.exp(Z975 * sigma))}

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
