"""Prior families on one life-cycle parameter, and the fixed value.

Each family (:data:`FAMILIES`) gives its log density, distribution and quantile
functions and a transform of its range to the whole real line
(:meth:`Prior.to_unconstrained` / :meth:`Prior.from_unconstrained`, which also returns
log|dx/dz|).  The families and their keys are listed in :mod:`infer.model.priors.parsing`, which
validates study files and re-exports everything here.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from scipy import special

from infer.core.supports import (
    CLOSED_ENDS,
    EXTENDED_SUPPORT,
    SUPPORT,
    logit_from,
    logit_to,
    support_text,
)
from infer.validate import format_number

__all__ = [
    "FAMILIES",
    "Prior",
    "LogUniform",
    "LogNormal",
    "Uniform",
    "Beta",
    "Normal",
    "Fixed",
]


class Prior:
    """A prior on one life-cycle parameter.

    Subclasses set ``family`` and implement ``_log_density``, ``_quantile``, ``_cdf``
    and the transform pair.  Public methods take and return float arrays and
    broadcast over any shape.

    Attributes
    ----------
    family : str
        The family name as written in a study file (``"log-uniform"``...).
    parameter : str
        The parameter this prior is on (``"mu"``...).
    sampling_scale_name : str
        ``"log10"`` for log-uniform and log-normal, ``"linear"`` otherwise.
    """

    family: ClassVar[str]
    keys: ClassVar[tuple[str, ...]]
    sampling_scale_name: ClassVar[str] = "linear"
    parameter: str

    # -- public API --------------------------------------------------------
    def log_density(self, x) -> np.ndarray:
        """Log prior density at x on the parameter's own scale (-inf outside)."""
        x = np.asarray(x, dtype=float)
        inside = self._inside(x)
        with np.errstate(all="ignore"):
            value = self._log_density(np.where(inside, x, self._typical))
        return np.where(inside, value, -np.inf)

    def to_unconstrained(self, x) -> np.ndarray:
        """Map x (inside the prior's range) to the real line."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return self._to_unconstrained(np.asarray(x, dtype=float))

    def from_unconstrained(self, z) -> tuple[np.ndarray, np.ndarray]:
        """Map z on the real line back to x; also return log|dx/dz|."""
        with np.errstate(over="ignore", under="ignore"):
            return self._from_unconstrained(np.asarray(z, dtype=float))

    def log_density_unconstrained(self, z) -> tuple[np.ndarray, np.ndarray]:
        """Return x and the log density of z: log p(x(z)) + log|dx/dz|."""
        x, log_jac = self.from_unconstrained(z)
        return x, self.log_density(x) + log_jac

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """Draw n values (inverse-CDF sampling from ``rng``)."""
        return self.quantile(rng.random(int(n)))

    def quantile(self, p) -> np.ndarray:
        """Inverse CDF at probabilities p."""
        p = np.asarray(p, dtype=float)
        return np.clip(self._quantile(p), *self._range())

    def cdf(self, x) -> np.ndarray:
        """Prior probability below x."""
        x = np.clip(np.asarray(x, dtype=float), *self._range())
        return self._cdf(x)

    def interval(self, probability: float) -> tuple[float, float]:
        """Equal-tailed prior interval holding ``probability``."""
        tail = (1.0 - probability) / 2.0
        lower, upper = self.quantile([tail, 1.0 - tail])
        return float(lower), float(upper)

    def sampling_scale(self, x) -> np.ndarray:
        """The scale reports summarise on: log10(x) for log-* priors, else x."""
        x = np.asarray(x, dtype=float)
        if self.sampling_scale_name == "log10":
            with np.errstate(divide="ignore"):
                return np.log10(x)
        return x

    def sampling_scale_sd(self) -> float:
        """Prior standard deviation on the sampling scale (for ``contraction``).

        Computed from 20,000 equally spaced prior quantiles (midpoint rule on the
        probability scale); relative error well below 1e-3 for these families.
        """
        p = (np.arange(20000) + 0.5) / 20000
        return float(np.std(self.sampling_scale(self.quantile(p))))

    def describe(self) -> str:
        """One line for reports, e.g. ``log-uniform(1e-08, 0.001)``."""
        values = ", ".join(format_number(getattr(self, k)) for k in self.keys)
        return f"{self.family}({values}){self._truncation_note()}"

    def as_dict(self) -> dict:
        """The prior as written in a study file (for summary.json)."""
        return {"prior": self.family, **{k: getattr(self, k) for k in self.keys}}

    # -- defaults for subclasses ------------------------------------------
    def _range(self) -> tuple[float, float]:
        return SUPPORT[self.parameter]

    @functools.cached_property
    def _closed_range(self) -> tuple[float, float]:
        """Smallest and largest floats inside both the prior's range and the support."""
        lower, upper = self._range()
        s_lower, s_upper = SUPPORT[self.parameter]
        open_lower, open_upper = (not c for c in CLOSED_ENDS[self.parameter])
        if open_lower and lower <= s_lower:
            lower = float(np.nextafter(s_lower, np.inf))
        if open_upper and upper >= s_upper:
            upper = float(np.nextafter(s_upper, -np.inf))
        return max(lower, s_lower), min(upper, s_upper)

    def _inside(self, x):
        lower, upper = self._closed_range
        return (x >= lower) & (x <= upper)

    @functools.cached_property
    def _typical(self) -> float:
        return float(self._quantile(np.asarray(0.5)))

    def _truncation_note(self) -> str:
        return ""

    def __repr__(self) -> str:
        return f"<{self.parameter} ~ {self.describe()}>"

    def __eq__(self, other) -> bool:
        return (
            type(self) is type(other)
            and self.parameter == other.parameter
            and all(getattr(self, k) == getattr(other, k) for k in self.keys)
        )

    __hash__ = None  # type: ignore[assignment]


class _Interval(Prior):
    """Shared validation of the ``low``/``high`` families."""

    keys = ("low", "high")

    def __init__(self, parameter: str, low: float, high: float):
        self.parameter, self.low, self.high = parameter, float(low), float(high)

    def _range(self):
        return self.low, self.high


class LogUniform(_Interval):
    """Log-uniform on [low, high]: density 1 / (x ln(high/low)); needs low > 0."""

    family = "log-uniform"
    sampling_scale_name = "log10"

    def _width(self):
        return math.log(self.high) - math.log(self.low)

    def _log_density(self, x):
        return -np.log(x) - math.log(self._width())

    def _cdf(self, x):
        return (np.log(x) - math.log(self.low)) / self._width()

    def _quantile(self, p):
        return np.exp(math.log(self.low) + p * self._width())

    def _to_unconstrained(self, x):
        return logit_from(np.log(x), math.log(self.low), math.log(self.high))

    def _from_unconstrained(self, z):
        log_x, log_jac = logit_to(z, math.log(self.low), math.log(self.high))
        x = np.clip(np.exp(log_x), self.low, self.high)
        return x, log_jac + log_x


class Uniform(_Interval):
    """Uniform on [low, high]."""

    family = "uniform"

    @functools.cached_property
    def _closed_range(self) -> tuple[float, float]:
        # h may reach outside [0, 1] through a uniform prior (EXTENDED_SUPPORT)
        if self.parameter in EXTENDED_SUPPORT:
            return self.low, self.high
        return Prior._closed_range.func(self)

    def _log_density(self, x):
        return np.full_like(x, -math.log(self.high - self.low))

    def _cdf(self, x):
        return (x - self.low) / (self.high - self.low)

    def _quantile(self, p):
        return self.low + p * (self.high - self.low)

    def _to_unconstrained(self, x):
        return logit_from(x, self.low, self.high)

    def _from_unconstrained(self, z):
        return logit_to(z, self.low, self.high)


class Beta(Prior):
    """Beta(a, b) on [0, 1]."""

    family = "beta"
    keys = ("a", "b")

    def __init__(self, parameter: str, a: float, b: float):
        self.parameter, self.a, self.b = parameter, float(a), float(b)

    def _range(self):
        return 0.0, 1.0

    def _log_density(self, x):
        return (
            special.xlogy(self.a - 1, x)
            + special.xlog1py(self.b - 1, -x)
            - special.betaln(self.a, self.b)
        )

    def _cdf(self, x):
        return special.betainc(self.a, self.b, x)

    def _quantile(self, p):
        return special.betaincinv(self.a, self.b, p)

    def _to_unconstrained(self, x):
        return special.logit(x)

    def _from_unconstrained(self, z):
        return logit_to(z, 0.0, 1.0)


class _SupportTransform(Prior):
    """Log-normal and normal: transforms follow the parameter's support."""

    def _to_unconstrained(self, x):
        lower, upper = SUPPORT[self.parameter]
        if math.isinf(upper):
            return np.log(x - lower)
        return logit_from(x, lower, upper)

    def _from_unconstrained(self, z):
        lower, upper = SUPPORT[self.parameter]
        if math.isinf(upper):
            return lower + np.exp(z), np.asarray(z, dtype=float).copy()
        return logit_to(z, lower, upper)

    # the density is a normal density of y = g(x) truncated to g(support)
    def _y_limits(self):
        lower, upper = SUPPORT[self.parameter]
        return self._g(lower), self._g(upper)

    def _mass(self) -> float:
        """Probability the untruncated distribution gives to the support."""
        return self._support_mass

    def _standard_limits(self) -> tuple[float, float]:
        """The support's ends in standard units, (g(end) - m) / s."""
        y_lower, y_upper = self._y_limits()
        with np.errstate(over="ignore"):
            return (y_lower - self._m) / self._s, (y_upper - self._m) / self._s

    @functools.cached_property
    def _support_mass(self) -> float:
        return float(_normal_between(*self._standard_limits()))

    def _cdf(self, x):
        a, _ = self._standard_limits()
        with np.errstate(divide="ignore", over="ignore"):
            t = (self._g(x) - self._m) / self._s
        return _normal_between(a, t) / self._mass()

    def _quantile(self, p):
        a, b = self._standard_limits()
        return self._g_inverse(self._m + self._s * _normal_inverse_between(a, b, p))

    def _truncation_note(self) -> str:
        if 1.0 - self._mass() > 1e-9:
            return f" truncated to {support_text(self.parameter)}"
        return ""


def _normal_between(a, t):
    """P(a < Z < t) for a standard normal Z and a <= t, without cancellation.

    Both ends beyond +1: a difference of upper tails; both below -1: of lower tails;
    otherwise a difference of erf terms, which near 0 keep their relative precision, so
    that a tiny interval around the mean (a normal prior with sd 1e300 on a parameter in
    [0, 1]) keeps its digits.
    """
    a, t = np.broadcast_arrays(np.asarray(a, dtype=float), np.asarray(t, dtype=float))
    upper = special.ndtr(-a) - special.ndtr(-t)
    lower = special.ndtr(t) - special.ndtr(a)
    middle = 0.5 * (special.erf(t / math.sqrt(2)) - special.erf(a / math.sqrt(2)))
    return np.where(a >= 1, upper, np.where(t <= -1, lower, middle))


def _normal_inverse_between(a, b, p):
    """The inverse of :func:`_normal_between`: z with P(a < Z < z) = p P(a < Z < b)."""
    p = np.asarray(p, dtype=float)
    mass = _normal_between(a, b)
    with np.errstate(all="ignore"):
        if a >= 1:     # upper tail: from the upper-tail probability of z
            return -special.ndtri(special.ndtr(-a) - p * mass)
        if b <= -1:    # lower tail
            return special.ndtri(special.ndtr(a) + p * mass)
        root2 = math.sqrt(2)
        return root2 * special.erfinv(special.erf(a / root2) + 2 * p * mass)


class LogNormal(_SupportTransform):
    """ln x ~ Normal(ln median, sigma), truncated to the parameter's support."""

    family = "log-normal"
    keys = ("median", "sigma")
    sampling_scale_name = "log10"

    def __init__(self, parameter: str, median: float, sigma: float):
        self.parameter, self.median, self.sigma = parameter, float(median), float(sigma)
        self._m, self._s = math.log(self.median), self.sigma

    @staticmethod
    def _g(x):
        if np.isscalar(x):
            return math.log(x) if x > 0 else -math.inf
        return np.log(x)

    @staticmethod
    def _g_inverse(y):
        return np.exp(y)

    def _log_density(self, x):
        y = np.log(x)
        return (
            -0.5 * ((y - self._m) / self._s) ** 2
            - math.log(self._s * math.sqrt(2 * math.pi))
            - y
            - math.log(self._mass())
        )


class Normal(_SupportTransform):
    """Normal(mean, sd) truncated to the parameter's support."""

    family = "normal"
    keys = ("mean", "sd")

    def __init__(self, parameter: str, mean: float, sd: float):
        self.parameter, self.mean, self.sd = parameter, float(mean), float(sd)
        self._m, self._s = self.mean, self.sd

    @staticmethod
    def _g(x):
        return x

    @staticmethod
    def _g_inverse(y):
        return y

    def _log_density(self, x):
        return (
            -0.5 * ((x - self._m) / self._s) ** 2
            - math.log(self._s * math.sqrt(2 * math.pi))
            - math.log(self._mass())
        )

    def _truncation_note(self) -> str:
        return f" truncated to {support_text(self.parameter)}"


@dataclass(frozen=True)
class Fixed:
    """A parameter held at one value (a bare number in the study file)."""

    parameter: str
    value: float

    def describe(self) -> str:
        """One line for reports, e.g. ``fixed 0``."""
        return f"fixed {format_number(self.value)}"

    def as_dict(self) -> dict:
        """The value for summary.json."""
        return {"fixed": self.value}


FAMILIES: dict[str, type[Prior]] = {
    cls.family: cls for cls in (LogUniform, LogNormal, Uniform, Beta, Normal)
}
