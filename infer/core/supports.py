"""The life-cycle parameters, their supports, and maps from an interval to the real line.

Supports (:data:`SUPPORT`, ends included as in :data:`CLOSED_ENDS`): mu (0, 1),
s (0, 1], h [0, 1], F [0, 1), nu [0, 1), Ne (0, inf), alpha (0, inf), and the
ascertainment parameters (:data:`ASCERTAINMENT`) penetrance (0, 1], completeness (0, 1],
phenocopy [0, 1).

:func:`logit_to` and :func:`logit_from` map an interval to the whole real line and
back (the sampling coordinates of :mod:`infer.model.priors.families`).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from infer.validate import format_number

__all__ = [
    "PARAMETERS",
    "BALANCE_PARAMETERS",
    "ASCERTAINMENT",
    "SUPPORT",
    "CLOSED_ENDS",
    "in_support",
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
PARAMETERS: tuple[str, ...] = (*BALANCE_PARAMETERS, *ASCERTAINMENT)

#: support of each parameter (lower, upper); which ends are included is in CLOSED_ENDS
SUPPORT: dict[str, tuple[float, float]] = {
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
}
#: whether each end of a parameter's support (lower, upper) belongs to it
CLOSED_ENDS: dict[str, tuple[bool, bool]] = {
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
}


def in_support(name: str, x: np.ndarray) -> np.ndarray:
    """Elementwise: does x lie inside the support of parameter ``name``."""
    lower, upper = SUPPORT[name]
    closed_lower, closed_upper = CLOSED_ENDS[name]
    above = x >= lower if closed_lower else x > lower
    below = x <= upper if closed_upper else x < upper
    return above & below


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
