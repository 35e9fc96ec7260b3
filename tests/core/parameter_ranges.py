"""Hypothesis strategies over the documented parameter ranges (docs/model.md).

mu 1e-10..1e-2, s 1e-6..1, h 0..1, F 0..0.5, Ne 10..1e7, nu 1e-9..1e-5, alpha 0.1..10;
the log-scale ones are drawn uniformly in their exponent. Shared by the property tests of
tests/core (balance, approximations, drift).
"""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, settings
from hypothesis import strategies as st

__all__ = ["ALPHA", "F", "FEW", "H", "MU", "NE", "NU", "NU_OR_ZERO", "S", "SETTINGS", "STEP",
           "failing_rows", "log_uniform", "rows"]

SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
FEW = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def log_uniform(low_exponent, high_exponent):
    """10**e with e uniform in [low_exponent, high_exponent]."""
    return st.floats(low_exponent, high_exponent).map(lambda e: 10.0**e)


MU = log_uniform(-10, -2)
S = log_uniform(-6, 0)
H = st.one_of(st.sampled_from([0.0, 0.5, 1.0]), st.floats(0.0, 1.0))
F = st.one_of(st.just(0.0), st.floats(0.0, 0.5))
NE = log_uniform(1, 7)
NU = log_uniform(-9, -5)
NU_OR_ZERO = st.one_of(st.just(0.0), NU)
ALPHA = log_uniform(-1, 1)
#: a relative or absolute change, far above rounding
STEP = st.floats(1e-3, 1.0)


def rows(*columns, max_size=24):
    """A list of parameter tuples, returned as one float array per column."""
    return st.lists(st.tuples(*columns), min_size=1, max_size=max_size).map(
        lambda r: tuple(np.array(c, dtype=float) for c in zip(*r, strict=True))
    )


def failing_rows(ok, limit: int = 3, **columns) -> str:
    """The first rows where ``ok`` is False, as ``name=value`` text for an assertion message."""
    ok = np.asarray(ok, dtype=bool)
    bad = np.flatnonzero(~ok.ravel())
    shown = []
    for i in bad[:limit]:
        values = ", ".join(f"{name}={np.broadcast_to(v, ok.shape).ravel()[i]:.6g}"
                           for name, v in columns.items())
        shown.append(f"({values})")
    return f"{bad.size} of {ok.size} rows fail, e.g. " + "; ".join(shown)
