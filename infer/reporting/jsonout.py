"""JSON rendering with stable formatting (docs/reports.md, 'JSON documents').

Every JSON document qhat writes or prints opens with ``schema_version`` (the layout of
its keys, described by a JSON Schema in :mod:`infer.reporting.schemas`) and
``qhat_version``; NaN and infinities are written as the strings ``"nan"``, ``"inf"`` and
``"-inf"``, so no number is lost and the text stays strict JSON.
"""

from __future__ import annotations

import functools
import json
import math
from typing import Any

import numpy as np

__all__ = ["SCHEMA_VERSION", "NON_FINITE", "qhat_version", "versioned", "to_jsonable", "dumps"]

#: the layout version of every JSON document; raised when a key changes meaning or goes
SCHEMA_VERSION = "1"
#: how a non-finite number is written
NON_FINITE = ("inf", "-inf", "nan")


@functools.cache
def qhat_version() -> str:
    """The installed version of qhat (its distribution metadata, else ``infer.__version__``)."""
    from importlib import metadata

    try:
        return metadata.version("qhat")
    except metadata.PackageNotFoundError:
        from infer import __version__

        return str(__version__)


def versioned(document: dict) -> dict:
    """``document`` with ``schema_version`` and ``qhat_version`` as its first keys."""
    body = {k: v for k, v in document.items() if k not in ("schema_version", "qhat_version")}
    return {"schema_version": SCHEMA_VERSION, "qhat_version": qhat_version(), **body}


def _number(value: float) -> float | str:
    if math.isfinite(value):
        return value
    if math.isnan(value):
        return "nan"
    return "inf" if value > 0 else "-inf"


def to_jsonable(value: Any) -> Any:
    """Convert numpy scalars and arrays, tuples and non-finite floats for JSON.

    Non-finite floats become ``"inf"``, ``"-inf"`` or ``"nan"``; ``None`` stays ``None``
    (a value that does not apply).
    """
    if isinstance(value, dict):
        return {str(k): to_jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [to_jsonable(v) for v in value]
    if isinstance(value, np.ndarray):
        return [to_jsonable(v) for v in value.tolist()]
    if isinstance(value, (np.bool_, bool)):
        return bool(value)
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (np.floating, float)):
        return _number(float(value))
    return value


def dumps(value: Any) -> str:
    """Indented JSON text with a final newline; identical input gives identical text."""
    return json.dumps(to_jsonable(value), indent=2, allow_nan=False) + "\n"
