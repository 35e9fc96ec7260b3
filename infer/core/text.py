"""Wording shared by every job and renderer: the caution, compact numbers, user text.

Kept free of numpy so that the command line's ``--help`` can use it. Text from a
user's file (a study title, an observation label, a locus name) goes through
:func:`shown` before it reaches a terminal or a report heading or table, and through
:func:`spreadsheet_safe` before it becomes a CSV cell.
"""

from __future__ import annotations

import math
import unicodedata

__all__ = ["CAUTION", "CAUTION_LINE", "caution_sentence", "fmt", "shown", "spreadsheet_safe"]

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


#: bidirectional controls (Unicode category Cf) that reorder what a terminal shows
_BIDI = frozenset("\u061c\u200e\u200f\u202a\u202b\u202c\u202d\u202e"
                  "\u2066\u2067\u2068\u2069")


def _escape(char: str) -> str:
    code = ord(char)
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def shown(text) -> str:
    r"""``text`` with every control character written as a literal escape.

    Control characters (Unicode category Cc: C0 including tab, CR and line feed, DEL,
    C1), the line and paragraph separators U+2028 and U+2029 and the bidirectional
    controls would move the cursor, ring the bell, start a new line inside a heading or
    a table row, or reorder the text; they are shown as ``\x1b``, ``\u2028``.
    Everything else, backslashes included, is left alone.

    Parameters
    ----------
    text : object
        Converted with ``str``.

    Returns
    -------
    str
    """
    text = str(text)
    if text.isprintable() and not _BIDI.intersection(text):
        return text
    return "".join(_escape(c) if unicodedata.category(c) in ("Cc", "Zl", "Zp") or c in _BIDI
                   else c for c in text)


#: first characters that make a spreadsheet read a cell as a formula (OWASP, "CSV
#: Injection": = + - @, tab and carriage return)
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def spreadsheet_safe(text: str) -> str:
    """A CSV cell of user text that no spreadsheet runs as a formula.

    A cell starting with ``= + - @``, a tab or a carriage return gets a leading single
    quote (common practice, OWASP "CSV Injection"); others are returned unchanged.
    """
    return "'" + text if text.startswith(_FORMULA_START) else text
