"""Log Z(A, B) = log ∫_0^1 x^(A-1)(1-x)^(B-1) exp(-c·S(x)) dx for arrays of rows.

The quadrature behind :mod:`infer.core.drift.stationary` (its docstring gives the
method): the analytic end pieces, the peak and range of the interior integrand in y = logit x, its
Gauss–Legendre panels, and their sum. Rows are flat arrays of (A, B, c, h); nothing here
validates input.
"""

from __future__ import annotations

import numpy as np
from scipy import special

_GL_T, _GL_W = np.polynomial.legendre.leggauss(10)
_PEAK_TEMPLATE = np.array([-10, -6, -3, -1.5, 0, 1.5, 3, 6, 10.0])
_MAX_PEAK_SCALE = 0.5
_NEGLIGIBLE = 40.0
_NEGLIGIBLE_END = 50.0  # end pieces this far (in log) below the interior are left out
_CHUNK_NODES = 1 << 16
_COARSE_WIDTH = 2.0
_END_EPS = 0.1
_SERIES_TERMS = 12
_PROBES = 32
_NEWTON_STEPS = 40
_PROBE_T = np.linspace(0, 1, _PROBES)
_SERIES_J = np.arange(_SERIES_TERMS + 1.0)[:, None]
# m_(k+1) = Σ weights·(m_(k-2), m_(k-1), m_k) for k = 1 .. terms-1 (see _end_series_sum)
_SERIES_INV = 1 / (_SERIES_J[1:-1, :, None] + 1)
_SERIES_K_INV = _SERIES_J[1:-1] * _SERIES_INV[:, :, 0]


# ---------------------------------------------------------------- end pieces
def _end_width(B, c, h):
    """x0 of the analytic end piece: keeps |ℓ(x)| ≤ ~_END_EPS on [0, x0]."""
    return _END_EPS / (np.abs(B - 1) + np.abs(c) * (2 * np.abs(h) + np.abs(1 - 2 * h)) + 1)


def _end_series_sum(A, B, c, h, x0):
    """Σ_j m_j/(A+j), so that ∫_0^x0 x^(A-1)(1-x)^(B-1)e^(-cS) dx = x0^A · sum.

    m(u) = Σ_j m_j u^j = exp(ℓ(x0·u)) solves (1 - x0·u)·m' = (q0 + q1·u + q2·u²)·m, since
    (1-x)·ℓ'(x) = -(B-1) - (1-x)·c·S'(x) is quadratic: q0 = -x0(B-1+2hc),
    q1 = (6h-2)c·x0², q2 = 2(1-2h)c·x0³. Comparing coefficients of u^k,
    m_(k+1) = [q2·m_(k-2) + q1·m_(k-1) + (k·x0 + q0)·m_k]/(k+1), m_0 = 1.
    """
    size = A.size
    chunk = max(1, _CHUNK_NODES // (3 * _SERIES_TERMS))
    if size > chunk:  # in row chunks that stay in cache
        out = np.empty(size)
        for start in range(0, size, chunk):
            r = slice(start, start + chunk)
            out[r] = _end_series_sum(A[r], B[r], c[r], h[r], x0[r])
        return out
    cx2 = c * x0 * x0
    q = np.empty((3, size))
    np.multiply(2 * (1 - 2 * h) * x0, cx2, out=q[0])
    np.multiply(6 * h - 2, cx2, out=q[1])
    np.multiply(-x0, B - 1 + 2 * h * c, out=q[2])
    weights = q * _SERIES_INV
    weights[:, 2] += _SERIES_K_INV * x0
    m = np.empty((_SERIES_TERMS + 2, size))  # m[j + 1] = m_j, m[0] = m_(-1) = 0
    m[0] = 0.0
    m[1] = 1.0
    m[2] = q[2]
    for k in range(1, _SERIES_TERMS):
        np.multiply(weights[k - 1], m[k - 1 : k + 2], out=q)
        np.add.reduce(q, axis=0, out=m[k + 2])
    terms = m[1:]
    terms /= A + _SERIES_J
    return np.add.reduce(terms, axis=0)


# ---------------------------------------------------------------- interior
def _coefficients(A, B, c, h):
    """Per-row constants of L and its slopes: (A, -B, A+B, 1-2h, 2h, c)."""
    return A, -B, A + B, 1 - 2 * h, 2 * h, c


def _log_f_rows(y, coefficients):
    """L(y) = log of the integrand in y = logit x (dx = x(1-x) dy), broadcast against y.

    ``coefficients``: those of :func:`_coefficients` or of :func:`_value_coefficients`.

    With t = log(1 + e^(-|y|)): log x = min(y, 0) - t, log(1-x) = min(-y, 0) - t, and
    min(-y, 0) = min(y, 0) - y exactly, so no large term is ever cancelled; x itself is
    exp(log x) (one exp in place of a logistic function, the dearest step).
    """
    A, minus_B, A_plus_B, k1, h2, c = coefficients
    t = np.abs(y)
    np.negative(t, out=t)
    np.exp(t, out=t)
    np.log1p(t, out=t)
    low = np.minimum(y, 0.0)
    x = np.subtract(low, t)
    np.exp(x, out=x)
    out = A * low
    low -= y
    low *= minus_B
    out -= low
    t *= A_plus_B
    out -= t
    if k1 is not None:
        s = k1 * x
        s += h2
        s *= x
        s *= c
    else:  # h = 1/2 on every row: c·S(x) = (c·2h)·x, h2 holding c·2h
        s = np.multiply(h2, x, out=x)
    out -= s
    return out


class _Slopes:
    """L'(y) and L''(y) of fixed rows, from the constants of :func:`_coefficients`."""

    def __init__(self, coefficients):
        self.A, minus_B, A_plus_B, k1, self.h2, self.c = coefficients
        self.B, self.k2, self.minus_ab = -minus_B, 2 * k1, -A_plus_B

    def subset(self, keep):
        """The slopes of the rows ``keep`` (a boolean mask) only."""
        out = _Slopes.__new__(_Slopes)
        for name in ("A", "B", "h2", "c", "k2", "minus_ab"):
            value = getattr(self, name)
            setattr(out, name, value[keep] if np.ndim(value) else value)
        return out

    def __call__(self, y):
        x, x1 = special.expit(y), special.expit(-y)
        v = x * x1
        dS = self.h2 + self.k2 * x
        d1 = self.A * x1 - self.B * x - self.c * dS * v
        d2 = self.minus_ab * v - self.c * (self.k2 * v**2 + dS * v * (x1 - x))
        return d1, d2


def _peak(y_lo, y_hi, coefficients):
    """Per-row maximiser of L on [y_lo, y_hi], its scale, and the range that matters.

    The range [t_lo, t_hi] is bounded by the outermost probes within _NEGLIGIBLE of the
    maximum (plus one probe spacing); outside it the integrand is below e^-40 of its peak.
    Call with division warnings silenced (Newton steps where L'' = 0 are discarded).
    Also returns the largest L seen (at the probes and the peak), the row's scale.
    """
    rows = y_lo.size
    probes = np.multiply.outer(_PROBE_T, y_hi - y_lo)  # (probes, rows)
    probes += y_lo
    chunk = max(1, _CHUNK_NODES // _PROBES)
    values_of = _value_coefficients(coefficients)
    if rows <= chunk:
        values = _log_f_rows(probes, values_of)
    else:  # in row chunks that stay in cache
        values = np.empty_like(probes)
        for start in range(0, rows, chunk):
            r = slice(start, start + chunk)
            values[:, r] = _log_f_rows(probes[:, r],
                                       [v[r] if np.ndim(v) else v for v in values_of])
    flat, base = probes.ravel(), np.arange(rows)
    best = values.argmax(axis=0)
    at = best * rows + base
    lo = flat[at - rows * (best > 0)]
    hi = flat[at + rows * (best < _PROBES - 1)]
    y = flat[at]
    slopes = _Slopes(coefficients)
    # Newton on the rows not yet converged only (each row stops at its own first
    # converged step); the results are written back as rows finish
    index, active = np.arange(rows), slopes
    ya, loa, hia = y.copy(), lo.copy(), hi.copy()
    for _ in range(_NEWTON_STEPS):
        # the template only needs y* to a small fraction of the peak's scale
        d1, d2 = active(ya)
        tolerance = 0.01 * np.minimum(1 / np.sqrt(np.abs(d2) + 1e-300), _MAX_PEAK_SCALE)
        rising = d1 > 0
        loa = np.where(rising, ya, loa)
        hia = np.where(rising, hia, ya)
        step = ya - d1 / d2
        ok = (d2 < 0) & (step > loa) & (step < hia)
        y_new = np.where(ok, step, 0.5 * (loa + hia))
        done = (np.abs(y_new - ya) <= tolerance) | (hia - loa <= tolerance)
        ya = y_new
        if done.all():
            break
        if done.any():
            finished = index[done]
            y[finished], lo[finished], hi[finished] = ya[done], loa[done], hia[done]
            keep = ~done
            index, ya, loa, hia = index[keep], ya[keep], loa[keep], hia[keep]
            active = active.subset(keep)
    y[index], lo[index], hi[index] = ya, loa, hia
    d1, d2 = slopes(y)
    scale = 1 / np.sqrt(np.maximum(-d2, 0) + d1**2 + 1e-300)
    top = np.maximum(_log_f_rows(y, values_of), np.maximum.reduce(values, axis=0))
    keep = values >= top - _NEGLIGIBLE
    first = keep.argmax(axis=0)
    last = _PROBES - 1 - keep[::-1].argmax(axis=0)
    t_lo = np.minimum(flat[(first - (first > 0)) * rows + base], lo)
    t_hi = np.maximum(flat[(last + (last < _PROBES - 1)) * rows + base], hi)
    return y, np.minimum(scale, _MAX_PEAK_SCALE), t_lo, t_hi, top


_UNIT_STEPS = {}


def _panels(y_lo, y_hi, y_peak, width):
    """Panels (left, right), each (rows, P): coarse | peak template | coarse.

    Panels of zero width (template clipped at the range ends) are dropped and each row
    is padded at its end with zero-width panels at y_hi, so P is the largest useful count.
    """
    rows, size = y_lo.size, _PEAK_TEMPLATE.size
    template = width[:, None] * _PEAK_TEMPLATE
    template += y_peak[:, None]
    np.maximum(template, y_lo[:, None], out=template)
    np.minimum(template, y_hi[:, None], out=template)
    p_lo, p_hi = template[:, 0], template[:, -1]
    left_span, right_span = p_lo - y_lo, y_hi - p_hi
    span = max(np.maximum.reduce(left_span, initial=0), np.maximum.reduce(right_span, initial=0))
    n = max(1, int(np.ceil(span / _COARSE_WIDTH)))
    if n not in _UNIT_STEPS:
        _UNIT_STEPS[n] = np.linspace(0, 1, n + 1)
    t = _UNIT_STEPS[n]
    edges = np.empty((rows, 2 * n + size))
    left, right = edges[:, :n], edges[:, n + size :]
    np.multiply(left_span[:, None], t[:-1], out=left)
    left += y_lo[:, None]
    edges[:, n : n + size] = template
    np.multiply(right_span[:, None], t[1:], out=right)
    right += p_hi[:, None]
    lo, hi = edges[:, :-1], edges[:, 1:]
    wide = hi > lo
    counts = np.add.reduce(wide, axis=1)
    used = max(1, int(np.maximum.reduce(counts, initial=0)))
    if used == lo.shape[1]:
        return lo, hi
    # each row's panels of nonzero width, in order, then the zero-width padding
    starts = counts.cumsum() - counts
    offsets = np.arange(0, rows * used, used) - starts
    slots = np.arange(counts.sum()) + offsets.repeat(counts)
    new_lo = y_hi[:, None].repeat(used, axis=1)
    new_hi = new_lo.copy()
    new_lo.ravel()[slots] = lo[wide]
    new_hi.ravel()[slots] = hi[wide]
    return new_lo, new_hi


def _nodes(panels):
    """Gauss–Legendre nodes and weights (rows, n·P) of the panels (left, right)."""
    lo, hi = panels
    mid, half = 0.5 * (hi + lo), 0.5 * (hi - lo)
    nodes = mid[:, :, None] + half[:, :, None] * _GL_T
    weights = half[:, :, None] * _GL_W
    return nodes.reshape(len(lo), -1), weights.reshape(len(lo), -1)


def _log_sum(log_values, weights):
    """Log Σ w·exp(v) along axis 1, stable."""
    top = np.max(log_values, axis=1)
    top = np.where(np.isfinite(top), top, 0.0)
    with np.errstate(divide="ignore"):
        return top + np.log(np.sum(weights * np.exp(log_values - top[:, None]), axis=1))


def _log_f_one_side(y, slope, left_side, coefficients):
    """:func:`_log_f_rows` of panels that each lie on one side of y = 0 (the same numbers).

    There min(y, 0) is y or 0, so A·min(y, 0) + B·min(-y, 0) = slope·y with slope = A
    (``left_side``) or -B, and log x = y - t or -t.
    """
    A, minus_B, A_plus_B, k1, h2, c = coefficients
    t = np.abs(y)
    np.negative(t, out=t)
    np.exp(t, out=t)
    np.log1p(t, out=t)
    x = np.multiply(y, left_side)
    x -= t
    np.exp(x, out=x)
    out = slope * y
    t *= A_plus_B
    out -= t
    if k1 is not None:
        s = k1 * x
        s += h2
        s *= x
        s *= c
    else:
        s = np.multiply(h2, x, out=x)
    out -= s
    return out


def _value_coefficients(coefficients):
    """The constants of :func:`_log_f_rows` (k1 = None and h2 = c·2h when every h is 1/2)."""
    A, minus_B, A_plus_B, k1, h2, c = coefficients
    if np.ndim(k1) and not np.any(k1):
        return A, minus_B, A_plus_B, None, h2 * c, None
    return coefficients


def _gathered_panels(panels, coefficients):
    """Each row's panels of nonzero width, gathered in row order, with their coefficients.

    Returns the per-row panel counts, the panels' left and right ends and half-widths,
    and the value coefficients repeated per panel.
    """
    lo, hi = panels
    wide = hi > lo
    counts = np.add.reduce(wide, axis=1)
    left, right = lo[wide], hi[wide]
    per_panel = [v.repeat(counts) if np.ndim(v) else v
                 for v in _value_coefficients(coefficients)]
    return counts, left, right, 0.5 * (right - left), per_panel


def _row_chunks(counts):
    """Chunks of whole rows whose gathered panels stay in cache.

    Yields ``(r0, r1, part, some, starts)``: rows r0..r1, their panels' slice ``part`` of
    the gathered arrays, which of those rows have panels, and where each such row's
    panels start within the chunk (for ``reduceat``).
    """
    if not counts.any():
        return
    ends = np.cumsum(counts)
    firsts = ends - counts
    # chunk j takes the rows whose first panel lies in [j·size, (j+1)·size)
    size = max(1, _CHUNK_NODES // _GL_T.size)
    cuts = np.flatnonzero(np.diff(firsts // size)) + 1
    for r0, r1 in zip(np.r_[0, cuts], np.r_[cuts, counts.size], strict=True):
        p0, p1 = firsts[r0], ends[r1 - 1]
        if p1 == p0:
            continue
        some = counts[r0:r1] > 0
        yield r0, r1, slice(p0, p1), some, firsts[r0:r1][some] - p0


def _integrate(panels, coefficients, tops=None):
    """Log ∫ exp(L(y)) dy over the panels (left, right), in chunks that stay in cache.

    Only panels of nonzero width are integrated (rows differ in their panel counts, and
    a CDF's clipped panels are mostly empty): they are gathered once, each row's panels
    consecutive, with their per-panel coefficients, and cut into chunks of whole rows.
    Their nodes are laid out (n, panels), node i of every panel in one contiguous row,
    so each operation runs over all the panels of a chunk; the weights half-width × w_i
    are applied as one matrix-vector product and never stored. ``tops``, when given, is
    a per-row bound near the maximum of L over the panels (the peak search's), taken as
    the row's scale instead of the maximum over the nodes. A row without a wide panel
    gives -inf.
    """
    rows = panels[0].shape[0]
    counts, left, right, half, per_panel = _gathered_panels(panels, coefficients)
    out = np.zeros(rows)
    shift = np.zeros(rows) if tops is None else np.where(np.isfinite(tops), tops, 0.0)
    # one side of y = 0: L = slope·y - (A+B)·t - c·S(x), slope A (y <= 0) or -B (y >= 0)
    left_side = right <= 0.0
    one_side = left_side | (left >= 0.0)
    slope = np.where(left_side, per_panel[0], per_panel[1])
    for r0, r1, part, some, starts in _row_chunks(counts):
        nodes = np.multiply.outer(_GL_T, half[part])
        nodes += 0.5 * (right[part] + left[part])
        coefficients_part = [v[part] if np.ndim(v) else v for v in per_panel]
        if one_side[part].all():
            values = _log_f_one_side(nodes, slope[part], left_side[part],
                                     coefficients_part)
        else:
            values = _log_f_rows(nodes, coefficients_part)
        if tops is None:
            top = np.maximum.reduceat(np.maximum.reduce(values, axis=0), starts)
            top[~np.isfinite(top)] = 0.0
            shift[np.flatnonzero(some) + r0] = top
        else:
            top = shift[r0:r1][some]
        values -= top.repeat(counts[r0:r1][some])
        np.exp(values, out=values)
        sums = _GL_W @ values
        sums *= half[part]
        out[np.flatnonzero(some) + r0] = np.add.reduceat(sums, starts)
    with np.errstate(divide="ignore"):
        np.log(out, out=out)
    out += shift
    return out


class _Layout:
    """The pieces of Z(A, B) for a set of rows: end widths, peak, interior panels.

    ``ends=False`` leaves the end pieces to :meth:`log_total`, which takes the series only
    where they can matter (:func:`_log_z`); otherwise ``log_left`` and ``log_right`` are
    exact on every row.
    """

    def __init__(self, A, B, c, h, ends=True):
        self.A, self.B, self.c, self.h = A, B, c, h
        rows = A.size
        # left end (rows 0) and, by x = 1 - z, right end (rows 1) in one pass
        AB = np.concatenate((A, B)).reshape(2, rows)
        cc = np.concatenate((c, -c)).reshape(2, rows)
        hh = np.concatenate((h, 1 - h)).reshape(2, rows)
        widths = _end_width(AB[::-1], cc, hh)
        log_w, log_1w = np.log(widths), np.log1p(-widths)
        self.x0, self.z0 = widths
        self.y_lo, self.y_hi = log_w[0] - log_1w[0], log_1w[1] - log_w[1]
        self.coefficients = _coefficients(A, B, c, h)
        with np.errstate(divide="ignore", invalid="ignore"):
            y_peak, width, t_lo, t_hi, self.top = _peak(self.y_lo, self.y_hi,
                                                        self.coefficients)
            self.panels = _panels(t_lo, t_hi, y_peak, width)
        self.y_peak, self.width = y_peak, width
        self._ends = AB, cc, hh, widths, log_w
        self.log_left = self.log_right = None
        if ends:
            self.log_left, self.log_right = self._log_ends(np.ones((2, rows), dtype=bool))

    def _log_ends(self, need):
        """Log of the end pieces (2, rows) where ``need`` (2, rows) holds, else -inf."""
        AB, cc, hh, widths, log_w = self._ends
        ends = np.full(AB.shape, -np.inf)
        if need.any():
            BA = AB[::-1]
            with np.errstate(divide="ignore", invalid="ignore"):
                sums = _end_series_sum(AB[need], BA[need], cc[need], hh[need], widths[need])
                ends[need] = AB[need] * log_w[need] + np.log(sums)
        return ends[0], ends[1] - self.c

    def log_interior(self, upper=None):
        """Log ∫ over [y_lo, min(upper, y_hi)] (all of the interior when upper is None)."""
        if upper is None:  # the peak's maximum scales every row
            return _integrate(self.panels, self.coefficients, self.top)
        panels = tuple(np.minimum(p, upper[:, None]) for p in self.panels)
        return _integrate(panels, self.coefficients)

    def log_total(self):
        interior = self.log_interior()
        if self.log_left is None:
            # x0^A·Σ m_j/(A+j) <= x0^A·e^(max|ℓ|)/A with |ℓ| <= 0.11 on [0, x0]
            # (_end_width), so an end whose bound is e^-50 below the interior changes
            # log Z by < 2e-22 and is left out (end pieces of samples with k, n - k >> 1)
            AB, cc, hh, widths, log_w = self._ends
            with np.errstate(divide="ignore", invalid="ignore"):
                bound = AB * log_w - np.log(AB) + 1.0
            bound[1] -= self.c
            need = ~(bound < interior - _NEGLIGIBLE_END)
            self.log_left, self.log_right = self._log_ends(need)
        return np.logaddexp(np.logaddexp(self.log_left, interior), self.log_right)


def _log_z(A, B, c, h):
    """Log Z(A, B) = log ∫_0^1 x^(A-1)(1-x)^(B-1) exp(-c·S(x)) dx for flat rows."""
    return _Layout(A, B, c, h, ends=False).log_total()


# ---------------------------------------------------------------- tilted rows
#: largest change of log x^δ, relative to its value at the peak, across a row's range
#: (y_lo .. y_hi) for which that row's layout is reused for exponent A + δ
_TILT_SPAN = 10.0


def _log_x(y):
    """Log x at y = logit x, without cancellation: min(y, 0) - log(1 + e^(-|y|))."""
    return np.minimum(y, 0.0) - np.log1p(np.exp(-np.abs(y)))


def _log_z_tilted(A, B, c, h, deltas):
    """Log Z(A + δ_j, B) for rows (A, B, c, h) and shifts ``deltas`` (rows, m).

    Z(A + δ) integrates the row's own integrand times x^δ. Where that factor is nearly
    constant on the row's scale, the row's layout (peak, range, panels) serves every δ:
    the integrand is evaluated once at the panels' nodes and re-weighted by e^(δ·log x)
    for each δ, and the left end piece (whose width does not depend on A) is summed
    again with exponent A + δ. A shift qualifies when the right end piece is negligible
    (its width depends on A), when |δ|·|log x - log x*| ≤ :data:`_TILT_SPAN` over the
    row's whole range (x* the peak: cut-off regions stay below e^-30 of it, and each
    panel's factor is analytic with bounded growth) and when |δ|·w ≤ 1 (the peak moves by
    at most δ·w², less than its scale w, so the template still resolves it). Other
    shifts get their own quadrature (:func:`_log_z`).
    """
    deltas = np.asarray(deltas, dtype=float)
    rows, m = deltas.shape
    layout = _Layout(A, B, c, h, ends=False)
    interior = layout.log_interior()
    AB, cc, hh, widths, log_w = layout._ends
    with np.errstate(divide="ignore", invalid="ignore"):
        right_bound = B * log_w[1] - np.log(B) + 1.0 - c
    right_negligible = right_bound < interior - _NEGLIGIBLE_END
    log_x_peak = _log_x(layout.y_peak)
    span = np.maximum(np.abs(_log_x(layout.y_lo) - log_x_peak),
                      np.abs(_log_x(layout.y_hi) - log_x_peak))
    usable = (right_negligible[:, None] & (np.abs(deltas) * span[:, None] <= _TILT_SPAN)
              & (np.abs(deltas) * layout.width[:, None] <= 1.0) & (A[:, None] + deltas > 0))
    out = np.empty((rows, m))
    if usable.any():
        tilted = _integrate_tilted(layout.panels, layout.coefficients, layout.top,
                                   np.where(usable, deltas, 0.0), log_x_peak)
        shifted = A[:, None] + deltas
        with np.errstate(divide="ignore", invalid="ignore"):
            bound = shifted * log_w[0][:, None] - np.log(shifted) + 1.0
        need = usable & ~(bound < tilted - _NEGLIGIBLE_END)
        left = np.full((rows, m), -np.inf)
        if need.any():
            where = np.nonzero(need)
            with np.errstate(divide="ignore", invalid="ignore"):
                sums = _end_series_sum(shifted[need], B[where[0]], c[where[0]], h[where[0]],
                                       widths[0][where[0]])
                left[need] = shifted[need] * log_w[0][where[0]] + np.log(sums)
        out[usable] = np.logaddexp(left, tilted)[usable]
    other = ~usable
    if other.any():
        where = np.nonzero(other)
        out[other] = _log_z(A[where[0]] + deltas[other], B[where[0]], c[where[0]], h[where[0]])
    return out


def _integrate_tilted(panels, coefficients, tops, deltas, log_x_peak):
    """Log ∫ exp(L(y) + δ_j·log x) dy over the panels, for every row and column δ_j.

    As :func:`_integrate` (the integrand evaluated once per node, in chunks of whole
    rows), each row scaled by its peak value ``tops`` + δ_j·``log_x_peak``.
    """
    rows, m = deltas.shape
    counts, left, right, half, per_panel = _gathered_panels(panels, coefficients)
    out = np.zeros((rows, m))
    shift = np.where(np.isfinite(tops), tops, 0.0)
    panel_deltas = deltas.repeat(counts, axis=0)                    # (panels, m)
    panel_base = shift.repeat(counts)
    panel_peak = log_x_peak.repeat(counts)
    for r0, _, part, some, starts in _row_chunks(counts):
        nodes = np.multiply.outer(_GL_T, half[part])
        nodes += 0.5 * (right[part] + left[part])
        values = _log_f_rows(nodes, [v[part] if np.ndim(v) else v for v in per_panel])
        values -= panel_base[part]
        log_x = _log_x(nodes)
        log_x -= panel_peak[part]
        target = np.flatnonzero(some) + r0
        for j in range(m):
            tilted = log_x * panel_deltas[part, j]
            tilted += values
            np.exp(tilted, out=tilted)
            sums = _GL_W @ tilted
            sums *= half[part]
            out[target, j] = np.add.reduceat(sums, starts)
    with np.errstate(divide="ignore"):
        np.log(out, out=out)
    out += shift[:, None] + deltas * log_x_peak[:, None]
    return out
