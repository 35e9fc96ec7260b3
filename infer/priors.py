"""Prior distributions for the life-cycle parameters, their defaults and transforms.

A study's ``[parameters]`` table gives each parameter either a bare number (a
:class:`Fixed` value) or a table naming a prior family:

=============  ===========================  ============================================
family         keys                         density on the parameter's own scale
=============  ===========================  ============================================
log-uniform    ``low``, ``high``            1 / (x ln(high/low)) on [low, high]
log-normal     ``median``, ``sigma``        ln x ~ Normal(ln median, sigma), truncated
                                            to the parameter's support
uniform        ``low``, ``high``            1 / (high - low) on [low, high]
beta           ``a``, ``b``                 Beta(a, b) (parameters on [0, 1] only)
normal         ``mean``, ``sd``             Normal(mean, sd) truncated to the support
=============  ===========================  ============================================

Supports (:data:`SUPPORT`): mu (0, 1), s (0, 1], h [0, 1], F [0, 1), nu [0, 1),
Ne (0, inf), alpha (0, inf).  Prior bounds may touch the ends of a support
(``uniform(0, 1)`` for s is allowed: a single end point carries no probability);
a fixed value must lie inside it.

Defaults when a parameter is omitted (:data:`DEFAULTS`, :func:`defaults_for`):

=====  ==========================  ===========================================================
name   deterministic model         drift model
=====  ==========================  ===========================================================
mu     log-uniform(1e-09, 0.001)   same
s      uniform(0, 1)               same
h      uniform(0, 1)               same
F      fixed 0                     fixed 0 (the drift model needs F = 0)
nu     fixed 0 (no back mutation)  fixed 1e-09 (Wright's density needs nu > 0; small enough
                                   that it does not matter for a deleterious allele)
Ne     fixed inf (not used)        required: there is no sensible default
alpha  fixed 1 (equal rates)       same
=====  ==========================  ===========================================================

Sampling coordinates: every prior maps its support to the whole real line with
:meth:`Prior.to_unconstrained` / :meth:`Prior.from_unconstrained`, which also returns
log|dx/dz| so a sampler in z sees the right density:

* log-uniform: logit of the position of ln x within [ln low, ln high];
* uniform, beta: logit of the position of x within the interval;
* log-normal and normal: logit of the position within the parameter's support when
  it is bounded (mu, s, h, F, nu), log(x - lower end) when it is half-bounded
  (Ne, alpha).

Reports summarise each parameter on its *sampling scale* (:meth:`Prior.sampling_scale`):
log10 for the log-uniform and log-normal priors, the parameter itself otherwise.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
from scipy import special

from infer.errors import InputError

__all__ = [
    "PARAMETERS",
    "SUPPORT",
    "DEFAULTS",
    "DRIFT_DEFAULTS",
    "FAMILIES",
    "Prior",
    "LogUniform",
    "LogNormal",
    "Uniform",
    "Beta",
    "Normal",
    "Fixed",
    "defaults_for",
    "defaults_table",
    "parse_parameter",
]

#: every life-cycle parameter, in the canonical order used in reports and arrays
PARAMETERS: tuple[str, ...] = ("mu", "s", "h", "F", "nu", "Ne", "alpha")

#: support of each parameter (lower, upper); which ends are included is in _CLOSED
SUPPORT: dict[str, tuple[float, float]] = {
    "mu": (0.0, 1.0),
    "s": (0.0, 1.0),
    "h": (0.0, 1.0),
    "F": (0.0, 1.0),
    "nu": (0.0, 1.0),
    "Ne": (0.0, math.inf),
    "alpha": (0.0, math.inf),
}
_CLOSED: dict[str, tuple[bool, bool]] = {
    "mu": (False, False),
    "s": (False, True),
    "h": (True, True),
    "F": (True, False),
    "nu": (True, False),
    "Ne": (False, False),
    "alpha": (False, False),
}


# ---------------------------------------------------------------------------
# validation helpers (shared with observations.py and study.py)


def _fmt(value: Any) -> str:
    """Quote a value as the user wrote it (TOML spelling for booleans and strings)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, str):
        return f'"{value}"'
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        return "a list"
    return repr(value)


def _fmt_num(value: float) -> str:
    """Compact number for descriptions: ``1e-08``, ``0.001``, ``1``."""
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    return f"{value:.6g}"


def _one_of(allowed) -> str:
    return "must be one of " + ", ".join(str(a) for a in allowed)


def _real(value: Any, field: str) -> float:
    """A finite real number (int or float, never a boolean)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{_fmt(value)} is not a number", field=field)
    number = float(value)
    if not math.isfinite(number):
        raise InputError(f"{_fmt(value)} is not a finite number", field=field)
    return number


def _count(value: Any, field: str) -> int:
    """A whole number >= 0 (``12`` or ``12.0``; never ``12.5``, ``-1`` or ``true``)."""
    number = _real(value, field)
    if number != math.floor(number):
        raise InputError(f"{_fmt(value)} is not a whole number", field=field)
    if number < 0:
        raise InputError(f"{_fmt(value)} is negative", field=field)
    return int(number)


def _probability(value: Any, field: str) -> float:
    """A probability in [0, 1]."""
    number = _real(value, field)
    if not 0.0 <= number <= 1.0:
        raise InputError(f"{_fmt(value)} is not a probability in [0, 1]", field=field)
    return number


def _choice(value: Any, allowed, field: str) -> str:
    """One of a fixed set of names."""
    if not isinstance(value, str) or value not in allowed:
        raise InputError(f"{_fmt(value)} is not allowed; {_one_of(allowed)}", field=field)
    return value


def _check_keys(table: dict, required, optional, field: str) -> None:
    """Refuse unknown keys (listing the allowed set) and missing required keys."""
    allowed = [*required, *optional]
    for key in table:
        if key not in allowed:
            raise InputError(f'unknown key "{key}"; {_one_of(allowed)}', field=f"{field}.{key}")
    for key in required:
        if key not in table:
            raise InputError("missing", field=f"{field}.{key}")


def _in_support(name: str, x: np.ndarray) -> np.ndarray:
    lower, upper = SUPPORT[name]
    closed_lower, closed_upper = _CLOSED[name]
    above = x >= lower if closed_lower else x > lower
    below = x <= upper if closed_upper else x < upper
    return above & below


def _support_text(name: str) -> str:
    lower, upper = SUPPORT[name]
    closed_lower, closed_upper = _CLOSED[name]
    return (
        f"{'[' if closed_lower else '('}{_fmt_num(lower)}, "
        f"{_fmt_num(upper)}{']' if closed_upper else ')'}"
    )


# ---------------------------------------------------------------------------
# transforms between an interval and the real line


def _logit_to(z, lower, upper):
    """x = lower + (upper - lower) * sigmoid(z), with log|dx/dz|.

    log|dx/dz| = log(upper - lower) + log sigmoid(z) + log sigmoid(-z)
               = log(upper - lower) - |z| - 2 log(1 + exp(-|z|)), free of overflow.
    """
    z = np.asarray(z, dtype=float)
    x = lower + (upper - lower) * special.expit(z)
    log_jac = math.log(upper - lower) - np.abs(z) - 2.0 * np.log1p(np.exp(-np.abs(z)))
    return np.clip(x, lower, upper), log_jac


def _logit_from(x, lower, upper):
    u = (np.asarray(x, dtype=float) - lower) / (upper - lower)
    return special.logit(u)


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
        values = ", ".join(_fmt_num(getattr(self, k)) for k in self.keys)
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
        open_lower, open_upper = (not c for c in _CLOSED[self.parameter])
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
        return _logit_from(np.log(x), math.log(self.low), math.log(self.high))

    def _from_unconstrained(self, z):
        log_x, log_jac = _logit_to(z, math.log(self.low), math.log(self.high))
        x = np.clip(np.exp(log_x), self.low, self.high)
        return x, log_jac + log_x


class Uniform(_Interval):
    """Uniform on [low, high]."""

    family = "uniform"

    def _log_density(self, x):
        return np.full_like(x, -math.log(self.high - self.low))

    def _cdf(self, x):
        return (x - self.low) / (self.high - self.low)

    def _quantile(self, p):
        return self.low + p * (self.high - self.low)

    def _to_unconstrained(self, x):
        return _logit_from(x, self.low, self.high)

    def _from_unconstrained(self, z):
        return _logit_to(z, self.low, self.high)


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
        return _logit_to(z, 0.0, 1.0)


class _SupportTransform(Prior):
    """Log-normal and normal: transforms follow the parameter's support."""

    def _to_unconstrained(self, x):
        lower, upper = SUPPORT[self.parameter]
        if math.isinf(upper):
            return np.log(x - lower)
        return _logit_from(x, lower, upper)

    def _from_unconstrained(self, z):
        lower, upper = SUPPORT[self.parameter]
        if math.isinf(upper):
            return lower + np.exp(z), np.asarray(z, dtype=float).copy()
        return _logit_to(z, lower, upper)

    # the density is a normal density of y = g(x) truncated to g(support)
    def _y_limits(self):
        lower, upper = SUPPORT[self.parameter]
        return self._g(lower), self._g(upper)

    def _mass(self) -> float:
        """Probability the untruncated distribution gives to the support."""
        return self._support_mass

    @functools.cached_property
    def _support_mass(self) -> float:
        y_lower, y_upper = self._y_limits()
        return float(special.ndtr((y_upper - self._m) / self._s)
                     - special.ndtr((y_lower - self._m) / self._s))

    def _cdf(self, x):
        y_lower, _ = self._y_limits()
        with np.errstate(divide="ignore"):
            y = self._g(x)
        below = special.ndtr((y_lower - self._m) / self._s)
        return (special.ndtr((y - self._m) / self._s) - below) / self._mass()

    def _quantile(self, p):
        y_lower, y_upper = self._y_limits()
        a = special.ndtr((y_lower - self._m) / self._s)
        b = special.ndtr((y_upper - self._m) / self._s)
        y = self._m + self._s * special.ndtri(a + p * (b - a))
        return self._g_inverse(y)

    def _truncation_note(self) -> str:
        if 1.0 - self._mass() > 1e-9:
            return f" truncated to {_support_text(self.parameter)}"
        return ""


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
        return f" truncated to {_support_text(self.parameter)}"


@dataclass(frozen=True)
class Fixed:
    """A parameter held at one value (a bare number in the study file)."""

    parameter: str
    value: float

    def describe(self) -> str:
        """One line for reports, e.g. ``fixed 0``."""
        return f"fixed {_fmt_num(self.value)}"

    def as_dict(self) -> dict:
        """The value for summary.json."""
        return {"fixed": self.value}


FAMILIES: dict[str, type[Prior]] = {
    cls.family: cls for cls in (LogUniform, LogNormal, Uniform, Beta, Normal)
}

DEFAULTS: dict[str, Prior | Fixed] = {
    "mu": LogUniform("mu", 1e-9, 1e-3),
    "s": Uniform("s", 0.0, 1.0),
    "h": Uniform("h", 0.0, 1.0),
    "F": Fixed("F", 0.0),
    "nu": Fixed("nu", 0.0),
    "Ne": Fixed("Ne", math.inf),
    "alpha": Fixed("alpha", 1.0),
}
"""Defaults of the deterministic model (Ne = inf: an infinite population, unused)."""

DRIFT_DEFAULTS: dict[str, Prior | Fixed] = {
    **{k: v for k, v in DEFAULTS.items() if k != "Ne"},
    "nu": Fixed("nu", 1e-9),
}
"""Defaults of the drift model; Ne has none (a study must give it)."""


def defaults_for(model: str) -> dict[str, Prior | Fixed]:
    """Defaults for ``model`` (``"deterministic"`` or ``"drift"``)."""
    return dict(DRIFT_DEFAULTS if model == "drift" else DEFAULTS)


def defaults_table() -> list[tuple[str, str, str]]:
    """Rows (parameter, deterministic default, drift default) for the README."""
    return [
        (
            name,
            DEFAULTS[name].describe() if name != "Ne" else "not used",
            DRIFT_DEFAULTS[name].describe() if name in DRIFT_DEFAULTS else "required",
        )
        for name in PARAMETERS
    ]


def _check_prior_range(name: str, low: float, high: float, field: str) -> None:
    """A prior's [low, high] must lie within the closure of the parameter's support."""
    lower, upper = SUPPORT[name]
    if low < lower:
        raise InputError(
            f"{_fmt(low)} is outside the support {_support_text(name)} of {name}",
            field=f"{field}.low",
        )
    if high > upper:
        raise InputError(
            f"{_fmt(high)} is outside the support {_support_text(name)} of {name}",
            field=f"{field}.high",
        )


def _parse_prior(name: str, table: dict, field: str) -> Prior:
    if "prior" not in table:
        raise InputError(f"missing; {_one_of(FAMILIES)}", field=f"{field}.prior")
    family = _choice(table["prior"], FAMILIES, f"{field}.prior")
    cls = FAMILIES[family]
    _check_keys(table, ("prior", *cls.keys), (), field)
    values = {k: _real(table[k], f"{field}.{k}") for k in cls.keys}

    if cls in (LogUniform, Uniform):
        low, high = values["low"], values["high"]
        if low >= high:
            raise InputError(
                f"{_fmt(table['low'])} is not below high {_fmt(table['high'])}",
                field=f"{field}.low",
            )
        _check_prior_range(name, low, high, field)
        if cls is LogUniform and low <= 0:
            raise InputError(
                f"{_fmt(table['low'])} is not above 0 (a log-uniform prior needs low > 0)",
                field=f"{field}.low",
            )
    elif cls is LogNormal:
        if values["median"] <= 0 or not _in_support(name, np.asarray(values["median"])):
            raise InputError(
                f"{_fmt(table['median'])} is outside the support {_support_text(name)} of {name}",
                field=f"{field}.median",
            )
        if values["sigma"] <= 0:
            raise InputError(f"{_fmt(table['sigma'])} is not above 0", field=f"{field}.sigma")
    elif cls is Normal:
        if values["sd"] <= 0:
            raise InputError(f"{_fmt(table['sd'])} is not above 0", field=f"{field}.sd")
    elif cls is Beta:
        if SUPPORT[name][1] > 1:
            raise InputError(
                f'"beta" is for parameters on [0, 1]; {name} has support {_support_text(name)}',
                field=f"{field}.prior",
            )
        for key in ("a", "b"):
            if values[key] <= 0:
                raise InputError(f"{_fmt(table[key])} is not above 0", field=f"{field}.{key}")

    prior = cls(name, **values)
    if cls in (LogNormal, Normal) and prior._mass() < 1e-12:
        raise InputError(
            f"{prior.describe()} puts no probability inside the support "
            f"{_support_text(name)} of {name}",
            field=field,
        )
    return prior


def parse_parameter(name: str, value: Any, *, field: str) -> Prior | Fixed:
    """Validate one entry of a study's ``[parameters]`` table.

    Parameters
    ----------
    name : str
        Parameter name; one of :data:`PARAMETERS`.
    value : number or dict
        A bare number (fixed) or a table ``{prior = "...", ...}``.
    field : str
        Where the entry sits in the file (``"parameters.mu"``), for error messages.

    Returns
    -------
    Prior or Fixed

    Raises
    ------
    InputError
        Unknown parameter or family, missing or extra keys, low >= high, values
        outside the support, sigma/sd <= 0, non-finite numbers or booleans.
    """
    if name not in SUPPORT:
        raise InputError(f'unknown parameter "{name}"; {_one_of(PARAMETERS)}', field=field)
    if isinstance(value, dict):
        return _parse_prior(name, value, field)
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(
            f"{_fmt(value)} is neither a number nor a prior table "
            f'(such as {{ prior = "uniform", low = 0, high = 1 }})',
            field=field,
        )
    number = _real(value, field)
    if not _in_support(name, np.asarray(number)):
        raise InputError(
            f"{_fmt(value)} is outside the support {_support_text(name)} of {name}", field=field
        )
    return Fixed(name, number)
