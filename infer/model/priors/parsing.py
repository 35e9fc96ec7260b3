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
Ne (0, inf), alpha (0, inf), penetrance (0, 1], completeness (0, 1], phenocopy [0, 1).
Prior bounds may touch the ends of a support
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
pen.   fixed 1 (``penetrance``)    same
comp.  fixed 1 (``completeness``)  same
phen.  fixed 0 (``phenocopy``)     same
s_m.   as s (``s_male``)           same
s_f.   as s (``s_female``)         same
=====  ==========================  ===========================================================

Sex-specific selection: ``s_male`` and ``s_female`` are given together, in place of s
(autosomal, deterministic model); s is then their mean (:class:`SexAverage`), the balance
is :func:`infer.core.two_sex.two_sex_balance`, and a fertility observation with
``sex = "male"`` or ``"female"`` reads that sex's coefficient.

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

import math
from typing import Any

import numpy as np

from infer.core.supports import (
    EXTENDED_SUPPORT,
    PARAMETERS,
    SUPPORT,
    in_extended_support,
    in_support,
    support_text,
)
from infer.errors import InputError
from infer.model.priors.families import (
    FAMILIES,
    Beta,
    Fixed,
    LogNormal,
    LogUniform,
    Normal,
    Prior,
    Uniform,
)
from infer.validate import check_keys, choice, one_of, quote_value, real_number

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
    "SameAsS",
    "SexAverage",
    "is_placeholder",
    "defaults_table",
    "parse_parameter",
    "MIN_RELATIVE_SPREAD",
    "relative_spread",
]

class _Placeholder(Fixed):
    """A stand-in without a value (NaN); equal to another of its class and parameter."""

    def __eq__(self, other):
        return type(other) is type(self) and other.parameter == self.parameter

    def __hash__(self):
        return hash((type(self).__name__, self.parameter))


class SameAsS(_Placeholder):
    """s_male or s_female not given: selection is the same in both sexes (value NaN)."""

    def describe(self) -> str:
        """One line for reports."""
        return "as s (no difference between the sexes)"

    def as_dict(self) -> dict:
        """The value for summary.json."""
        return {"fixed": None, "as": "s"}


class SexAverage(_Placeholder):
    """s when s_male and s_female are given: their mean, not a parameter of its own."""

    def describe(self) -> str:
        """One line for reports."""
        return "(s_male + s_female) / 2"

    def as_dict(self) -> dict:
        """The value for summary.json."""
        return {"fixed": None, "as": "(s_male + s_female) / 2"}


def is_placeholder(spec) -> bool:
    """A stand-in with no value of its own (:class:`SameAsS`, :class:`SexAverage`)."""
    return isinstance(spec, _Placeholder)


DEFAULTS: dict[str, Prior | Fixed] = {
    "mu": LogUniform("mu", 1e-9, 1e-3),
    "s": Uniform("s", 0.0, 1.0),
    "h": Uniform("h", 0.0, 1.0),
    "F": Fixed("F", 0.0),
    "nu": Fixed("nu", 0.0),
    "Ne": Fixed("Ne", math.inf),
    "alpha": Fixed("alpha", 1.0),
    "penetrance": Fixed("penetrance", 1.0),
    "completeness": Fixed("completeness", 1.0),
    "phenocopy": Fixed("phenocopy", 0.0),
    "s_male": SameAsS("s_male", math.nan),
    "s_female": SameAsS("s_female", math.nan),
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


def _check_prior_range(name: str, low: float, high: float, field: str,
                       extended: bool = False) -> None:
    """A prior's [low, high] must lie within the closure of the parameter's support.

    With ``extended`` (a uniform prior) the wider EXTENDED_SUPPORT applies where given.
    """
    lower, upper = EXTENDED_SUPPORT.get(name, SUPPORT[name]) if extended else SUPPORT[name]
    shown = _extended_text(name) if extended else f"the support {support_text(name)} of {name}"
    if low < lower:
        raise InputError(f"{quote_value(low)} is outside {shown}", field=f"{field}.low")
    if high > upper:
        raise InputError(f"{quote_value(high)} is outside {shown}", field=f"{field}.high")


def _extended_text(name: str) -> str:
    """Where a fixed value or a uniform prior of ``name`` may lie, in words."""
    if name not in EXTENDED_SUPPORT:
        return f"the support {support_text(name)} of {name}"
    lower, upper = EXTENDED_SUPPORT[name]
    return (f"[{lower:g}, {upper:g}], the range of {name} as a fixed value or a uniform prior "
            f"(h < 0: heterozygote advantage; h > 1: Aa below aa; autosomal deterministic "
            f"model only; other priors keep {support_text(name)})")


def _parse_prior(name: str, table: dict, field: str) -> Prior:
    if "prior" not in table:
        raise InputError(f"missing; {one_of(FAMILIES)}", field=f"{field}.prior")
    family = choice(table["prior"], FAMILIES, f"{field}.prior")
    cls = FAMILIES[family]
    check_keys(table, ("prior", *cls.keys), (), field)
    values = {k: real_number(table[k], f"{field}.{k}") for k in cls.keys}

    if cls in (LogUniform, Uniform):
        low, high = values["low"], values["high"]
        if low >= high:
            raise InputError(
                f"{quote_value(table['low'])} is not below high {quote_value(table['high'])}",
                field=f"{field}.low",
            )
        _check_prior_range(name, low, high, field, extended=cls is Uniform)
        if cls is LogUniform and low <= 0:
            raise InputError(
                f"{quote_value(table['low'])} is not above 0 (a log-uniform prior needs low > 0)",
                field=f"{field}.low",
            )
    elif cls is LogNormal:
        if values["median"] <= 0 or not in_support(name, np.asarray(values["median"])):
            raise InputError(
                f"{quote_value(table['median'])} is outside the support "
                f"{support_text(name)} of {name}",
                field=f"{field}.median",
            )
        if values["sigma"] <= 0:
            raise InputError(
                f"{quote_value(table['sigma'])} is not above 0", field=f"{field}.sigma"
            )
    elif cls is Normal:
        if values["sd"] <= 0:
            raise InputError(f"{quote_value(table['sd'])} is not above 0", field=f"{field}.sd")
    elif cls is Beta:
        if SUPPORT[name][1] > 1:
            raise InputError(
                f'"beta" is for parameters on [0, 1]; {name} has support {support_text(name)}',
                field=f"{field}.prior",
            )
        for key in ("a", "b"):
            if values[key] <= 0:
                raise InputError(
                    f"{quote_value(table[key])} is not above 0", field=f"{field}.{key}"
                )

    prior = cls(name, **values)
    # refused when the support lies far out in one tail; a mean inside the support keeps
    # its mode there however wide the prior (sd 1e300 on s is uniform on (0, 1])
    if cls in (LogNormal, Normal) and prior._mass() < 1e-12 and _mean_outside(prior):
        raise InputError(
            f"{prior.describe()} puts no probability inside the support "
            f"{support_text(name)} of {name}",
            field=field,
        )
    _check_spread(prior, table, field)
    return prior


def _mean_outside(prior: Prior) -> bool:
    """True when the normal's mean lies outside the support (on its own scale)."""
    a, b = prior._standard_limits()
    return bool(a > 0 or b < 0)


#: the narrowest prior accepted: its middle half must span this share of its median,
#: both on the parameter's scale and in the sampler's coordinates (where float64 spacing
#: is 2.2e-16 of the value; the sampler and the exact quadrature need many distinct
#: values across the posterior)
MIN_RELATIVE_SPREAD = 1e-10
_SPREAD_KEY = {LogNormal: "sigma", Normal: "sd"}


def relative_spread(prior: Prior) -> float:
    """The prior's interquartile range as a share of its median.

    The smaller of its value on the parameter's scale and in the unconstrained
    coordinates (where the median counts as at least 1).
    """
    with np.errstate(all="ignore"):
        x = prior.quantile(np.array([0.25, 0.5, 0.75]))
        z = prior.to_unconstrained(x)
        on_x = (x[2] - x[0]) / abs(x[1]) if x[1] != 0 else math.inf
        on_z = (z[2] - z[0]) / max(1.0, abs(z[1]))
    return float(min(on_x, on_z))


def _check_spread(prior: Prior, table: dict, field: str) -> None:
    spread = relative_spread(prior)
    if not (math.isfinite(spread) and spread < MIN_RELATIVE_SPREAD):
        return
    key = _SPREAD_KEY.get(type(prior))
    shown = f"{quote_value(table[key])} is too narrow: " if key else "too narrow: "
    raise InputError(
        f"{shown}the middle half of {prior.describe()} spans {spread:.2g} x its median, "
        f"below the {MIN_RELATIVE_SPREAD:g} x that double precision can sample; fix "
        f"{prior.parameter} at a bare number instead",
        field=f"{field}.{key}" if key else field,
    )


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
        raise InputError(f'unknown parameter "{name}"; {one_of(PARAMETERS)}', field=field)
    if isinstance(value, dict):
        return _parse_prior(name, value, field)
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(
            f"{quote_value(value)} is neither a number nor a prior table "
            f'(such as {{ prior = "uniform", low = 0, high = 1 }})',
            field=field,
        )
    number = real_number(value, field)
    if not in_extended_support(name, np.asarray(number)):
        raise InputError(f"{quote_value(value)} is outside {_extended_text(name)}", field=field)
    return Fixed(name, number)
