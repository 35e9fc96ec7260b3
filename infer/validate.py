"""Validation of single values read from study and claim files.

Every check raises :class:`~infer.errors.InputError` with ``field`` set and the bad
value quoted as the user wrote it (:func:`quote_value`); a value outside a fixed set
names the set (``must be one of ...``, :func:`one_of`).  Used by
:mod:`infer.model.priors.parsing`, :mod:`infer.model.observations.kinds`,
:mod:`infer.files.study` and :mod:`infer.files.claim`.
"""

from __future__ import annotations

import math
import os
from typing import Any

from infer.errors import InputError

#: the largest count a study, claim or batch row may give: counts, and sums of a few of
#: them, stay exact in float64 (integers are exact up to 2**53, about 9.0e15) and within
#: the int64 counts numpy's binomial sampler takes
MAX_COUNT = 10**15

__all__ = [
    "quote_value",
    "format_number",
    "one_of",
    "real_number",
    "whole_count",
    "MAX_COUNT",
    "machine_memory",
    "probability",
    "choice",
    "check_keys",
]


def quote_value(value: Any) -> str:
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


def format_number(value: float) -> str:
    """Compact number for descriptions: ``1e-08``, ``0.001``, ``1``."""
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    return f"{value:.6g}"


def one_of(allowed) -> str:
    """The tail of an error message listing the allowed names: ``must be one of a, b``."""
    return "must be one of " + ", ".join(str(a) for a in allowed)


def real_number(value: Any, field: str) -> float:
    """A finite real number (int or float, never a boolean)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{quote_value(value)} is not a number", field=field)
    try:
        number = float(value)
    except OverflowError:  # TOML integers have no size limit
        raise InputError(f"{quote_value(value)} is too large", field=field) from None
    if not math.isfinite(number):
        raise InputError(f"{quote_value(value)} is not a finite number", field=field)
    return number


def whole_count(value: Any, field: str) -> int:
    """A whole number >= 0 (``12`` or ``12.0``; never ``12.5``, ``-1`` or ``true``)."""
    number = real_number(value, field)
    if number != math.floor(number):
        raise InputError(f"{quote_value(value)} is not a whole number", field=field)
    if number < 0:
        raise InputError(f"{quote_value(value)} is negative", field=field)
    if number > MAX_COUNT:
        raise InputError(
            f"{quote_value(value)} is above {MAX_COUNT:.0e}, the largest count accepted "
            "(counts must stay exact in float64, whose integers are exact up to 2**53)",
            field=field,
        )
    return int(number)


def probability(value: Any, field: str) -> float:
    """A probability in [0, 1]."""
    number = real_number(value, field)
    if not 0.0 <= number <= 1.0:
        raise InputError(f"{quote_value(value)} is not a probability in [0, 1]", field=field)
    return number


def choice(value: Any, allowed, field: str) -> str:
    """One of a fixed set of names."""
    if not isinstance(value, str) or value not in allowed:
        raise InputError(f"{quote_value(value)} is not allowed; {one_of(allowed)}", field=field)
    return value


def check_keys(table: dict, required, optional, field: str) -> None:
    """Refuse unknown keys (listing the allowed set) and missing required keys."""
    allowed = [*required, *optional]
    for key in table:
        if key not in allowed:
            raise InputError(f'unknown key "{key}"; {one_of(allowed)}', field=f"{field}.{key}")
    for key in required:
        if key not in table:
            raise InputError("missing", field=f"{field}.{key}")


def machine_memory() -> int | None:
    """Bytes of memory this process may use: physical memory, or a smaller cgroup limit.

    ``os.sysconf`` page size x physical pages, lowered to the cgroup (v2 ``memory.max`` or
    v1 ``memory.limit_in_bytes``) limit when one is set; None when neither is known.
    """
    sizes = []
    try:
        sizes.append(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES"))
    except (AttributeError, OSError, ValueError):
        pass
    for path in ("/sys/fs/cgroup/memory.max", "/sys/fs/cgroup/memory/memory.limit_in_bytes"):
        try:
            with open(path, encoding="ascii") as handle:
                text = handle.read().strip()
        except (OSError, UnicodeDecodeError):
            continue
        if text.isdigit():
            sizes.append(int(text))
    sizes = [size for size in sizes if size > 0]
    return min(sizes) if sizes else None
