"""Vectorised root finding shared by the balance modules (autosomal and X-linked).

Helpers only: argument broadcasting, the model's parameter domain, a safeguarded Newton
iteration inside a bracket, and cubic evaluation with a rounding-aware sign test.
"""

from __future__ import annotations

import numpy as np

_EPS = np.finfo(float).eps
_SQRT_EPS = np.sqrt(_EPS)
_MAX_ITERATIONS = 200


def _as_float(*values):
    arrays = [np.asarray(v, dtype=float) for v in values]
    return arrays, np.broadcast_shapes(*(a.shape for a in arrays))


def _valid(mu, s, h, F, nu, any_dominance=False):
    """Boolean mask of parameter vectors inside the model's domain (NaN is outside).

    Checked first with one min/max pass per array (cheap); the element-wise mask is
    only built when some value falls outside. With ``any_dominance`` a finite h outside
    [0, 1] is inside too, as long as the heterozygote's fitness 1 - hs is not negative
    (the autosomal general-fitness domain of :mod:`infer.core.balance`).
    """
    if any_dominance and not (h.size and h.min() >= 0 and h.max() <= 1):
        with np.errstate(invalid="ignore"):
            h_inside = np.isfinite(h) & (h * s <= 1.0)
        if not np.all(h_inside):
            return _valid(mu, s, np.zeros_like(h), F, nu) & h_inside
        return _valid(mu, s, np.clip(h, 0.0, 1.0), F, nu)
    closed = ((s, 1.0), (h, 1.0))
    half_open = ((mu, 1.0), (F, 1.0), (nu, 1.0))
    try:
        inside = all(v.min() >= 0 and v.max() <= top for v, top in closed) and all(
            v.min() >= 0 and v.max() < top for v, top in half_open
        )
    except ValueError:  # empty arrays
        inside = False
    if inside:
        return np.True_
    return (
        (mu >= 0) & (mu < 1) & (s >= 0) & (s <= 1) & (h >= 0) & (h <= 1)
        & (F >= 0) & (F < 1) & (nu >= 0) & (nu < 1)
    )


def _take(values, index):
    """``values`` restricted to ``index`` (``None`` = all elements, no copy)."""
    return values if index is None else [v[index] for v in values]


def _newton_in_bracket(evaluate, lo, hi, start, curvature):
    """Vectorised safeguarded Newton iteration for one root per element.

    ``evaluate(x, index)`` returns ``(G, dG/dx)`` for the elements ``index`` (``None`` for
    all); ``curvature(x, index)`` an estimate of |d²G/dx²|. The bracket ``[lo, hi]`` must
    hold G(lo) <= 0 <= G(hi) with G monotone inside it; a Newton step that leaves the
    bracket is replaced by bisection. A Newton step d leaves an error of about
    |G''| d² / (2|G'|); the iteration stops for an element once that is below one ulp,
    once the step is a few ulps, or once steps stop shrinking below sqrt(eps) x (the
    rounding floor of G at an ill-conditioned root: weak selection near q ~ 1).
    """
    x = np.where((start > lo) & (start < hi), start, 0.5 * (lo + hi))
    lo, hi = lo.copy(), hi.copy()
    previous = np.full(x.size, np.inf)
    active = None
    for _ in range(_MAX_ITERATIONS):
        if active is None:
            xa, la, ha, pa = x, lo, hi, previous
        elif active.size == 0:
            break
        else:
            xa, la, ha, pa = x[active], lo[active], hi[active], previous[active]
        value, slope = evaluate(xa, active)
        below = value < 0
        la = np.where(below, xa, la)
        ha = np.where(below, ha, xa)
        with np.errstate(invalid="ignore", divide="ignore"):
            candidate = xa - value / slope
            change = np.abs(candidate - xa)
            left_error = 0.5 * curvature(xa, active) * change * change / np.abs(slope)
        newton = (candidate >= la) & (candidate <= ha)  # False for NaN too
        candidate = np.where(newton, candidate, 0.5 * (la + ha))
        candidate = np.where(value == 0, xa, candidate)
        size = np.abs(candidate)
        converged = (
            (newton & (left_error <= 0.5 * _EPS * size))
            | (change <= 4.0 * _EPS * size)
            | (value == 0)
            | (ha - la <= 4.0 * _EPS * np.abs(ha))
            | ((change <= _SQRT_EPS * size) & (change > 0.25 * pa))
        )
        change = np.where(newton, change, np.inf)
        if active is None:
            x, lo, hi, previous = candidate, la, ha, change
            active = np.flatnonzero(~converged)
        else:
            x[active], lo[active], hi[active], previous[active] = candidate, la, ha, change
            active = active[~converged]
    return x


def _cubic_value(c0, c1, c2, c3, x):
    """c0 + c1 x + c2 x² + c3 x³ (Horner)."""
    return ((c3 * x + c2) * x + c1) * x + c0


def _cubic_sign_is_positive(coefficients, x, evaluate, index):
    """Whether G(x) > 0, from the coefficient form unless it is too close to call.

    Coefficients carry absolute errors of a few ulps of their size; only elements
    whose polynomial value lies within that margin are evaluated exactly.
    """
    c0, c1, c2, c3 = (c[index] for c in coefficients)
    value = _cubic_value(c0, c1, c2, c3, x)
    margin = 64.0 * _EPS * (np.abs(c0) + np.abs(c1) + np.abs(c2) + np.abs(c3))
    close = np.flatnonzero(np.abs(value) <= margin)
    if close.size:
        value[close] = evaluate(x[close], index[close])[0]
    return value > 0
