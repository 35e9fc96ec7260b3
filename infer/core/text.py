"""Wording shared by every job and renderer: the caution and compact numbers.

Kept free of numpy so that the command line's ``--help`` can use it.
"""

from __future__ import annotations

import math

__all__ = ["CAUTION", "CAUTION_LINE", "caution_sentence", "fmt"]

#: the paragraph at the top of every report a person reads
CAUTION = (
    "**Caution.** This is a research estimate under a population-genetic model, not a "
    "clinical or genetic-counselling result. Do not use it for decisions about patients "
    "or families; defer to licensed clinical practice and local rules."
)

#: the one-line form, for terminals, JSON documents and file attributes
CAUTION_LINE = "research estimate, not a clinical or genetic-counselling result"


def caution_sentence() -> str:
    """:data:`CAUTION_LINE` as a sentence of its own (capital letter, full stop)."""
    return CAUTION_LINE[0].upper() + CAUTION_LINE[1:] + "."


def fmt(value, digits: int = 3) -> str:
    """Format a number compactly (scientific below 1e-3), '—' for missing."""
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    v = float(value)
    if not math.isfinite(v):
        return "—"
    if v == 0:
        return "0"
    if abs(v) < 1e-3 or abs(v) >= 1e5:
        return f"{v:.{digits - 1}e}"
    return f"{v:.{digits}g}"
