"""JSON rendering with stable formatting: NaN and infinities become null."""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np

__all__ = ["to_jsonable", "dumps"]


def to_jsonable(value: Any) -> Any:
    """Convert numpy scalars and arrays, tuples and non-finite floats for JSON."""
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
        v = float(value)
        return v if math.isfinite(v) else None
    return value


def dumps(value: Any) -> str:
    """Indented JSON text with a final newline; identical input gives identical text."""
    return json.dumps(to_jsonable(value), indent=2, allow_nan=False) + "\n"
