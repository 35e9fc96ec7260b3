"""The life-cycle parameters, their supports, and maps from an interval to the real line.

Supports (:data:`SUPPORT`, ends included as in :data:`CLOSED_ENDS`): mu (0, 1),
s (0, 1], h [0, 1], F [0, 1), nu [0, 1), Ne (0, inf), alpha (0, inf), and the
ascertainment parameters (:data:`ASCERTAINMENT`) penetrance (0, 1], completeness (0, 1],
phenocopy [0, 1), and the sex-specific selection coefficients (:data:`SEX_SELECTION`)
s_male [0, 1], s_female [0, 1].

:func:`logit_to` and :func:`logit_from` map an interval to the whole real line and
back (the sampling coordinates of :mod:`infer.model.priors.families`).
"""

from __future__ import annotations

import math
import re

import numpy as np
from scipy import special

from infer.validate import format_number

__all__ = [
    "PARAMETERS",
    "BALANCE_PARAMETERS",
    "ASCERTAINMENT",
    "SEX_SELECTION",
    "NAMED_COMPLETENESS",
    "SUPPORT",
    "CLOSED_ENDS",
    "EXTENDED_SUPPORT",
    "in_support",
    "in_extended_support",
    "support_text",
    "logit_to",
    "logit_from",
]

#: every life-cycle parameter, in the canonical order used in reports and arrays
BALANCE_PARAMETERS: tuple[str, ...] = ("mu", "s", "h", "F", "nu", "Ne", "alpha")
#: how affected births are seen, with the value that means "as the genotype says": the
#: probability that a carrier of the affected genotype is affected (penetrance), that an
#: affected birth is registered (completeness), and the rate per birth of affected births
#: that carry no germ-line mutation (phenocopy: non-heritable cases)
ASCERTAINMENT: dict[str, float] = {"penetrance": 1.0, "completeness": 1.0, "phenocopy": 0.0}
#: selection against affected genotypes in males and in females (autosomal): given as a
#: pair in place of s, which is then their mean; NaN (absent) means "the same as s"
SEX_SELECTION: dict[str, float] = {"s_male": math.nan, "s_female": math.nan}
PARAMETERS: tuple[str, ...] = (*BALANCE_PARAMETERS, *ASCERTAINMENT, *SEX_SELECTION)

#: a completeness of its own for one registry: ``completeness_<tag>`` in [parameters],
#: named by an observation's ``completeness = "completeness_<tag>"``
NAMED_COMPLETENESS = re.compile(r"completeness_[a-z0-9][a-z0-9_]{0,30}")


class _ByParameter(dict):
    """A table by parameter name in which every ``completeness_<tag>`` reads as completeness."""

    def __missing__(self, name):
        if isinstance(name, str) and NAMED_COMPLETENESS.fullmatch(name):
            return self["completeness"]
        raise KeyError(name)

    def __contains__(self, name):
        return super().__contains__(name) or bool(
            isinstance(name, str) and NAMED_COMPLETENESS.fullmatch(name))

    def get(self, name, default=None):
        return self[name] if name in self else default


#: support of each parameter (lower, upper); which ends are included is in CLOSED_ENDS
SUPPORT: dict[str, tuple[float, float]] = _ByParameter({
    "mu": (0.0, 1.0),
    "s": (0.0, 1.0),
    "h": (0.0, 1.0),
    "F": (0.0, 1.0),
    "nu": (0.0, 1.0),
    "Ne": (0.0, math.inf),
    "alpha": (0.0, math.inf),
    "penetrance": (0.0, 1.0),
    "completeness": (0.0, 1.0),
    "phenocopy": (0.0, 1.0),
    "s_male": (0.0, 1.0),
    "s_female": (0.0, 1.0),
    # the founders' allele frequency of a [history] (infer/files/history.py); not a
    # life-cycle parameter, so not in PARAMETERS
    "q_founder": (0.0, 1.0),
})
#: wider ranges a parameter may take as a fixed value or through a uniform prior (the
#: other families keep SUPPORT): h in [-10, 10] for the autosomal deterministic balance
#: with general genotype fitness (h < 0 heterozygote advantage, h > 1 the heterozygote
#: below aa; rows with 1 - hs < 0 have no equilibrium); x-linked and drift studies refuse
#: h outside [0, 1] (infer/files/study.py)
EXTENDED_SUPPORT: dict[str, tuple[float, float]] = {"h": (-10.0, 10.0)}
#: whether each end of a parameter's support (lower, upper) belongs to it
CLOSED_ENDS: dict[str, tuple[bool, bool]] = _ByParameter({
    "mu": (False, False),
    "s": (False, True),
    "h": (True, True),
    "F": (True, False),
    "nu": (True, False),
    "Ne": (False, False),
    "alpha": (False, False),
    "penetrance": (False, True),
    "completeness": (False, True),
    "phenocopy": (True, False),
    "s_male": (True, True),
    "s_female": (True, True),
    "q_founder": (True, True),
})


def in_support(name: str, x: np.ndarray) -> np.ndarray:
    """Elementwise: does x lie inside the support of parameter ``name``."""
    lower, upper = SUPPORT[name]
    closed_lower, closed_upper = CLOSED_ENDS[name]
    above = x >= lower if closed_lower else x > lower
    below = x <= upper if closed_upper else x < upper
    return above & below


def in_extended_support(name: str, x: np.ndarray) -> np.ndarray:
    """Like :func:`in_support`, with :data:`EXTENDED_SUPPORT` (closed) where it applies."""
    if name not in EXTENDED_SUPPORT:
        return in_support(name, x)
    lower, upper = EXTENDED_SUPPORT[name]
    return (x >= lower) & (x <= upper)


def support_text(name: str) -> str:
    """The support of parameter ``name`` as an interval, e.g. ``(0, 1]``."""
    lower, upper = SUPPORT[name]
    closed_lower, closed_upper = CLOSED_ENDS[name]
    return (
        f"{'[' if closed_lower else '('}{format_number(lower)}, "
        f"{format_number(upper)}{']' if closed_upper else ')'}"
    )


# ---------------------------------------------------------------------------
# transforms between an interval and the real line


def logit_to(z, lower, upper):
    """Return x = lower + (upper - lower) * sigmoid(z), with log|dx/dz|.

    log|dx/dz| = log(upper - lower) + log sigmoid(z) + log sigmoid(-z)
               = log(upper - lower) - |z| - 2 log(1 + exp(-|z|)), free of overflow.
    """
    z = np.asarray(z, dtype=float)
    x = lower + (upper - lower) * special.expit(z)
    log_jac = math.log(upper - lower) - np.abs(z) - 2.0 * np.log1p(np.exp(-np.abs(z)))
    return np.clip(x, lower, upper), log_jac


def logit_from(x, lower, upper):
    """Inverse of :func:`logit_to`: the logit of x's position within [lower, upper]."""
    u = (np.asarray(x, dtype=float) - lower) / (upper - lower)
    return special.logit(u)
