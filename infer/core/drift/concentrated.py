r"""Wright's stationary density where it is one narrow interior peak: the large-Ne limit.

With a = 4Ne·mu, b = 4Ne·nu, c = 2Ne·s (docs/model.md, 'Finite populations (drift)') the
density is φ ∝ exp(F(x)), F = (a-1) log x + (b-1) log(1-x) - c·S(x). Its mode solves the
cubic

    P(x) = x(1-x) F'(x) = (a-1)(1-x) - (b-1)x - 2c·x(1-x)(h + (1-2h)x) = 4Ne·M(x) - (1-2x),

M the diffusion's mean change, so as Ne grows the mode tends to the deterministic balance
M(x) = 0, and at the mode F'' = P'/(x(1-x)) = (4Ne·M' + 2)/(x(1-x)) ≈ 2M'/V with
V = x(1-x)/(2Ne): the density tends to the Gaussian of the linearised diffusion (the
Ornstein–Uhlenbeck, or linear-noise, limit), sd → sqrt(V(x̂)/(2|M'(x̂)|)) (Wright 1931,
1937; Kimura 1964, J. Appl. Prob. 1:177; Ewens 2004, Mathematical Population Genetics,
§4.5 and §5.7). The quadrature of :mod:`infer.core.drift.quadrature` works with F itself,
whose terms grow like Ne while the peak's width shrinks like Ne^(-1/2): its rounding,
eps·|F|, grows against the peak's own scale (sd off by 4e-7 relative at 2Ne·s = 1e9,
by 100 % at 1e12, a mean of 1 at Ne = 1e300), and its sd, from E[x²]/E[x] - E[x], loses
digits as the peak narrows (3e-7 relative for Beta(4e4, 4e3)).

Here the same integrals are taken around the mode x_m (a double) in t = x - x_m, with the
centred exponent

    ΔF(t) = (a-1)·λ(t/x_m) + (b-1)·λ(-t/(1-x_m)) - c(1-2h)t²,   λ(u) = log(1+u) - u,

which is F(x_m + t) - F(x_m) - F'(x_m)·t: every term is O(1) where the mass is, and λ is
summed as a series for |u| < 0.1, so nothing of size Ne is ever subtracted. Dropping the
linear term treats the rounded x_m as the exact mode: the density is shifted by the
rounding of x_m (a few ulps), its shape is unchanged, and so are sd and ratios of
integrals. Integrals ∫ g(t) e^(ΔF(t)) dt are taken by 48-point Gauss–Hermite in τ = t/σ,
σ = (-F''(x_m))^(-1/2), on e^(ΔF(στ) + τ²/2), which is 1 plus O(a^(-1/2)) terms; the
distribution function by Gauss–Legendre panels of width 1 in τ.

A row is taken here (``concentrated``) when all of these hold, else it stays with the
general quadrature: max(a, b, |c|) >= ``LIMIT``; a >= 100 and either b > 1 or h <= 1/2 (then
F - (b-1)log(1-x) is concave and falls beyond the peak, so the singular end at x = 1
holds at most e^(ΔF(edge))/b); with m = 50 + max(0, -log(σ√(2π))) + max(0, -log b), the
window ±r·σ, r = √(2m) + 2, lies in the middle half of (0, x_m) and (x_m, 1), ΔF has
fallen below -m at both its edges, and any other maximum of F lies more than m below the
largest. Then what is outside the window is below e^-50 of the peak's mass.
"""

from __future__ import annotations

import numpy as np
from scipy import special

__all__ = ["LIMIT", "Peak", "concentrated", "log_binomial", "log_expectation", "quantile",
           "summary"]

#: max(4Ne·mu, 4Ne·nu, 2Ne·|s|) from which the centred rule replaces the general quadrature
LIMIT = 1e4
#: a peak ±24σ wide inside (0, x_m) needs (x_m/σ)² ≈ a + O(a) >= 576: smaller a never passes
_MIN_A = 100.0
_WINDOW = 12.0
_RIVAL = 50.0
_GH_V, _GH_W = np.polynomial.hermite.hermgauss(48)
_GH_T = np.sqrt(2.0) * _GH_V          # nodes in τ for ∫ e^(-τ²/2) g(τ) dτ
_GH_W = np.sqrt(2.0) * _GH_W
_GL_T, _GL_W = np.polynomial.legendre.leggauss(10)
_SERIES = 1.0 / np.arange(2, 18)      # λ(u) = -Σ_(j≥2) (-u)^j / j, |u| < 0.1: 16 terms


def _lambda(u):
    """λ(u) = log(1+u) - u without cancellation (series for |u| < 0.1).

    The series -Σ_(j≥2) (-u)^j/j is cut where |u|^(j-2) < 1e-17 for the largest |u|, so
    the common case (every |u| far below 0.1) takes a few terms and no masking.
    """
    u = np.asarray(u, dtype=float)
    top = float(np.max(np.abs(u))) if u.size else 0.0
    if not top < 0.1:  # some |u| >= 0.1 (or NaN): direct formula there
        out = np.empty_like(u)
        small = np.abs(u) < 0.1
        with np.errstate(invalid="ignore", divide="ignore"):
            out[~small] = np.log1p(u[~small]) - u[~small]
        out[small] = _lambda(u[small])
        return out
    terms = _SERIES.size if top == 0 else min(_SERIES.size, int(17 / -np.log10(top)) + 2)
    us = -u
    acc = np.full_like(u, _SERIES[terms - 1])
    for inv in _SERIES[terms - 2 :: -1]:
        acc *= us
        acc += inv
    acc *= us
    acc *= us
    return np.negative(acc, out=acc)


def _d_lambda(u):
    """λ'(u) = -u/(1+u)."""
    return -u / (1.0 + u)


class Peak:
    """Rows of (a, b, c, h) with their mode x_m, scale σ and the centred exponent."""

    def __init__(self, a, b, c, h, x):
        self.a1, self.b1, self.c, self.h = a - 1.0, b - 1.0, c, h
        self.x, self.z = x, 1.0 - x
        with np.errstate(invalid="ignore", divide="ignore"):
            curvature = (self.a1 / x**2 + self.b1 / self.z**2 + 2.0 * c * (1.0 - 2.0 * h))
            self.sigma = 1.0 / np.sqrt(curvature)

    def delta(self, t):
        """ΔF(t), t of shape (rows,) or (rows, m)."""
        col = (lambda v: v[:, None]) if t.ndim == 2 else (lambda v: v)  # noqa: E731
        return (col(self.a1) * _lambda(t / col(self.x)) + col(self.b1) * _lambda(-t / col(self.z))
                - col(self.c) * (1.0 - 2.0 * col(self.h)) * t * t)

    def slopes(self, t):
        """ΔF'(t) and ΔF''(t), elementwise on rows."""
        u, w = t / self.x, -t / self.z
        d1 = (self.a1 / self.x * _d_lambda(u) - self.b1 / self.z * _d_lambda(w)
              - 2.0 * self.c * (1.0 - 2.0 * self.h) * t)
        d2 = (-self.a1 / (self.x * (1 + u)) ** 2 - self.b1 / (self.z * (1 + w)) ** 2
              - 2.0 * self.c * (1.0 - 2.0 * self.h))
        return d1, d2

    def log_f(self, x):
        """F(x) itself (absolute rounding eps·|F|: only to compare separate maxima)."""
        with np.errstate(invalid="ignore", divide="ignore"):
            return (self.a1 * np.log(x) + self.b1 * np.log1p(-x)
                    - self.c * x * (2.0 * self.h + (1.0 - 2.0 * self.h) * x))

    def log_mass(self):
        """Log ∫ e^(ΔF(t)) dt (Gauss–Hermite in τ)."""
        tau = _GH_T[None, :]
        g = self.delta(self.sigma[:, None] * tau) + 0.5 * tau * tau
        return np.log(self.sigma) + special.logsumexp(g, b=_GH_W, axis=1)


# ---------------------------------------------------------------- the mode
def _cubic(a, b, c, h):
    """Coefficients p0..p3 of P(x) = p0 + p1 x + p2 x² + p3 x³ (used for the bracket only)."""
    return a - 1.0, -(a - 1.0) - (b - 1.0) - 2.0 * c * h, -2.0 * c * (1.0 - 3.0 * h), \
        2.0 * c * (1.0 - 2.0 * h)


def _p(x, a, b, c, h):
    """P(x) in the factored form (accurate near the small roots) and P'(x)."""
    one = 1.0 - x
    value = (a - 1.0) * one - (b - 1.0) * x - 2.0 * c * x * one * (h + (1.0 - 2.0 * h) * x)
    p0, p1, p2, p3 = _cubic(a, b, c, h)
    return value, p1 + (2.0 * p2 + 3.0 * p3 * x) * x


def _root(lo, hi, a, b, c, h, start):
    """The root of P in [lo, hi] where P falls from > 0 to < 0 (safeguarded Newton)."""
    x = np.where((start > lo) & (start < hi), start, 0.5 * (lo + hi))
    lo, hi = lo.copy(), hi.copy()
    for _ in range(200):
        value, slope = _p(x, a, b, c, h)
        positive = value > 0
        lo, hi = np.where(positive, x, lo), np.where(positive, hi, x)
        with np.errstate(invalid="ignore", divide="ignore"):
            step = x - value / slope
        mid = np.where((lo > 0) & (hi > 4 * lo), np.sqrt(lo * hi), 0.5 * (lo + hi))
        new = np.where((step > lo) & (step < hi), step, mid)
        done = (np.abs(new - x) <= 2e-16 * np.abs(x)) | (value == 0) | (hi - lo <= 2e-16 * hi)
        x = np.where(value == 0, x, new)
        if np.all(done):
            break
    return x


def _maxima(a, b, c, h):
    """Up to two interior maxima of F per row (NaN where absent): P's + to - crossings.

    P(0) = a - 1 > 0 and P(1) = 1 - b < 0, so P has one or three roots in (0, 1); the
    critical points of P (roots of P') split [0, 1] into pieces on which P is monotone.
    """
    p0, p1, p2, p3 = _cubic(a, b, c, h)
    with np.errstate(invalid="ignore", divide="ignore"):
        disc = p2 * p2 - 3.0 * p1 * p3
        root = np.sqrt(disc)
        q = -(p2 + np.copysign(root, p2))
        r1, r2 = q / (3.0 * p3), p1 / q
    inside = lambda r: np.where((disc > 0) & (r > 0) & (r < 1), r, np.nan)  # noqa: E731
    t1 = np.fmin(inside(r1), inside(r2))
    t2 = np.fmax(inside(r1), inside(r2))
    t2 = np.where(t2 > t1, t2, np.nan)
    edges = [np.zeros_like(a), np.nan_to_num(t1, nan=1.0), np.nan_to_num(t2, nan=1.0),
             np.ones_like(a)]
    found = []
    for lo, hi in zip(edges[:-1], edges[1:], strict=True):
        value_lo, _ = _p(lo, a, b, c, h)
        value_hi, _ = _p(hi, a, b, c, h)
        falling = (hi > lo) & (value_lo > 0) & (value_hi < 0)
        start = np.where(lo == 0, (a - 1.0) / (a + b - 2.0 + 2.0 * c * h), 0.5 * (lo + hi))
        x = _root(lo, hi, a, b, c, h, start) if np.any(falling) else lo
        found.append(np.where(falling, x, np.nan))
    first = found[0]
    second = np.where(np.isnan(found[1]), found[2], found[1])
    return first, second


def concentrated(a, b, c, h):
    """Which rows the centred rule takes, and their :class:`Peak` (see module docstring).

    Returns
    -------
    mask : numpy.ndarray of bool
        Rows taken here.
    peak : Peak or None
        The peaks of the rows in ``mask`` (None when there are none).
    """
    big = (a >= _MIN_A) & (b > 0) & ((b > 1) | (h <= 0.5))
    big &= np.maximum(np.maximum(a, b), np.abs(c)) >= LIMIT
    if not np.any(big):
        return big, None
    index = np.flatnonzero(big)
    args = [v[index] for v in (a, b, c, h)]
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        first, second = _maxima(*args)
        probe = Peak(*args, np.where(np.isnan(first), 0.5, first))
        value_1 = probe.log_f(first)
        value_2 = probe.log_f(second)
        take_second = np.isfinite(value_2) & ~(value_2 <= value_1)
        x = np.where(take_second, second, first)
        other = np.where(take_second, value_1, value_2)
        peak = Peak(*args, x)
        sigma = peak.sigma
        # what lies outside the window, at most e^(edge value)·(1/b), must be e^-RIVAL of
        # the peak's mass σ√(2π)
        margin = (_RIVAL + np.maximum(0.0, -np.log(np.sqrt(2 * np.pi) * sigma))
                  + np.maximum(0.0, -np.log(args[1])))
        reach = np.sqrt(2.0 * margin) + 2.0
        top = peak.log_f(x)
        width = reach * sigma
        ok = np.isfinite(x) & np.isfinite(sigma) & (sigma > 0)
        ok &= width < 0.5 * np.minimum(x, 1.0 - x)
        ok &= ~(other > top - margin - 1e-12 * np.abs(top))
        edges = peak.delta(np.stack((-width, width), axis=1))
        ok &= np.all(edges <= -margin[:, None], axis=1)
    mask = np.zeros(a.shape, dtype=bool)
    mask[index[ok]] = True
    if not np.any(ok):
        return mask, None
    return mask, Peak(*(v[ok] for v in args), x[ok])


# ---------------------------------------------------------------- quantities
def log_z(peak):
    """Log Z(a, b) = F(x_m) + log ∫ e^(ΔF) dt (absolute rounding eps·|F(x_m)|)."""
    return peak.log_f(peak.x) + peak.log_mass()


def summary(peak):
    """Mean and sd: x_m + σ·E[τ] and σ·sd(τ), by Gauss–Hermite (no subtraction of moments)."""
    tau = _GH_T[None, :]
    g = peak.delta(peak.sigma[:, None] * tau) + 0.5 * tau * tau
    weights = _GH_W * np.exp(g - g.max(axis=1, keepdims=True))
    total = weights.sum(axis=1)
    shift = (weights * tau).sum(axis=1) / total
    spread = (weights * (tau - shift[:, None]) ** 2).sum(axis=1) / total
    return peak.x + peak.sigma * shift, peak.sigma * np.sqrt(spread)


def _cdf_pieces(peak, lower, upper):
    """Log ∫_(lower)^(upper) e^(ΔF(στ)) dτ per row, 2·_WINDOW Gauss–Legendre panels."""
    panels = int(2 * _WINDOW)
    edges = lower[:, None] + (upper - lower)[:, None] * np.linspace(0, 1, panels + 1)
    mid, half = 0.5 * (edges[:, 1:] + edges[:, :-1]), 0.5 * (edges[:, 1:] - edges[:, :-1])
    tau = (mid[:, :, None] + half[:, :, None] * _GL_T).reshape(len(lower), -1)
    weights = (half[:, :, None] * _GL_W).reshape(len(lower), -1)
    values = peak.delta(peak.sigma[:, None] * tau)
    with np.errstate(divide="ignore"):
        return special.logsumexp(values, b=weights, axis=1)


def quantile(peak, p):
    """X with P(X ≤ x) = p (rows of ``peak``; p broadcasts): Newton in τ on the cdf."""
    p = np.broadcast_to(np.asarray(p, dtype=float), peak.x.shape)
    reach = max(_WINDOW, float(np.max(np.abs(special.ndtri(np.minimum(p, 1 - p))))) + 6.0)
    low = np.full(peak.x.shape, -reach)
    high = -low
    log_total = _cdf_pieces(peak, low, high)
    tau = np.clip(special.ndtri(p), -reach, reach)
    lo, hi = low.copy(), high.copy()
    for _ in range(60):
        cdf = np.exp(_cdf_pieces(peak, low, tau) - log_total)
        gap = cdf - p
        lo, hi = np.where(gap < 0, tau, lo), np.where(gap < 0, hi, tau)
        density = np.exp(peak.delta(peak.sigma * tau) - log_total)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            step = tau - gap / density
        new = np.where((step >= lo) & (step <= hi), step, 0.5 * (lo + hi))
        new = np.where(gap == 0, tau, new)
        done = np.all(np.abs(new - tau) <= 1e-13 * (1 + np.abs(tau)))
        tau = new
        if done:
            break
    return peak.x + peak.sigma * tau


def log_density(peak, x):
    """Log φ(x) of the centred density (x of the rows' shape)."""
    return peak.delta(x - peak.x) - peak.log_mass()


def _combined_peak(peak, k, n):
    """Mode t' of H(t) = ΔF(t) + k log(x_m + t) + (n-k) log(1 - x_m - t), and H''(t')."""
    x, z = peak.x, peak.z

    def slopes(t):
        d1, d2 = peak.slopes(t)
        return (d1 + k / (x + t) - (n - k) / (z - t),
                d2 - k / (x + t) ** 2 - (n - k) / (z - t) ** 2)

    d1, d2 = slopes(np.zeros_like(x))
    t = -d1 / d2
    lo, hi = -x, z.copy()
    t = np.where((t > lo) & (t < hi), t, 0.0)
    for _ in range(100):
        d1, d2 = slopes(t)
        rising = d1 > 0
        lo, hi = np.where(rising, t, lo), np.where(rising, hi, t)
        step = t - d1 / d2
        new = np.where((step >= lo) & (step <= hi) & (d2 < 0), step, 0.5 * (lo + hi))
        new = np.where(d1 == 0, t, new)
        done = np.all(np.abs(new - t) <= 1e-15 * np.maximum(np.abs(t), peak.sigma))
        t = new
        if done:
            break
    return t, slopes(t)[1]


def log_binomial(peak, k, n):
    """Log ∫ x^k (1-x)^(n-k) φ(x) dx (without C(n, k)), and whether it is resolved.

    The integrand is e^(H(t)) up to the normaliser; H's own peak t' (which the data may
    pull many σ from 0) is integrated by Gauss–Hermite on its scale σ' = (-H''(t'))^(-1/2).
    """
    k = np.broadcast_to(np.asarray(k, dtype=float), peak.x.shape)
    n = np.broadcast_to(np.asarray(n, dtype=float), peak.x.shape)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        t0, d2 = _combined_peak(peak, k, n)
        scale = 1.0 / np.sqrt(-d2)
        t = t0[:, None] + scale[:, None] * _GH_T[None, :]
        x, z = peak.x[:, None], peak.z[:, None]
        ell = k[:, None] * np.log1p(t / x) + (n - k)[:, None] * np.log1p(-t / z)
        h_values = peak.delta(t) + ell
        g = h_values + 0.5 * _GH_T[None, :] ** 2
        log_i = np.log(scale) + special.logsumexp(g, b=_GH_W, axis=1)
        ok = np.isfinite(log_i) & (np.abs(t0) + _WINDOW * scale < 0.5 * np.minimum(peak.x, peak.z))
    base = k * np.log(peak.x) + (n - k) * np.log1p(-peak.x)
    return base + log_i - peak.log_mass(), ok


def log_expectation(peak, log_p):
    """Log ∫ P(data | x) φ(x) dx for a callable log P of x (rows, m), and whether resolved.

    The peak of ΔF(στ) + log P is located on a probe grid τ ∈ [-_WINDOW, _WINDOW] and by
    parabola fits; Gauss–Hermite on its scale integrates it. P must be smooth on the scale
    of that peak, as in :func:`infer.core.drift.stationary.log_expectation`.
    """
    sigma = peak.sigma[:, None]
    probes = np.linspace(-_WINDOW, _WINDOW, 97)[None, :].repeat(len(peak.x), axis=0)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        values = peak.delta(sigma * probes) + log_p(peak.x[:, None] + sigma * probes)
        best = np.argmax(np.where(np.isnan(values), -np.inf, values), axis=1)
        rows = np.arange(len(peak.x))
        centre, width = probes[rows, best], np.full(len(peak.x), 1.0)
        step = probes[0, 1] - probes[0, 0]
        for _ in range(6):
            pts = centre[:, None] + step * np.array([-1.0, 0.0, 1.0])
            f = peak.delta(sigma * pts) + log_p(peak.x[:, None] + sigma * pts)
            curve = (f[:, 0] - 2 * f[:, 1] + f[:, 2]) / step**2
            good = np.isfinite(curve) & (curve < 0)
            shift = np.where(good, (f[:, 0] - f[:, 2]) / (2 * step * curve), 0.0)
            centre = np.where(good & (np.abs(shift) <= step), centre + shift, centre)
            width = np.where(good, np.clip(1 / np.sqrt(-curve), 1e-6, 1.0), width)
            step = max(float(np.min(width)) / 4, 1e-6)
        tau = centre[:, None] + width[:, None] * _GH_T[None, :]
        g = (peak.delta(sigma * tau) + log_p(peak.x[:, None] + sigma * tau)
             + 0.5 * _GH_T[None, :] ** 2)
        log_i = np.log(peak.sigma * width) + special.logsumexp(g, b=_GH_W, axis=1)
        ok = np.isfinite(log_i) & (np.abs(centre) < _WINDOW - 1)
    return log_i - peak.log_mass(), ok
