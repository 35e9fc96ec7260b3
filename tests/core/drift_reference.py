"""High-precision mpmath reference for Z(A, B) = ∫_0^1 x^(A-1)(1-x)^(B-1) e^(-c S(x)) dx.

Independent of infer.core.drift.stationary: mpmath's adaptive tanh-sinh quadrature at 30+ digits on
pieces chosen here. Derived decomposition:

- Ends: on [0, x1], with x = x1·e^(-t), ∫ x^(A-1) g(x) dx = x1^A [1/A + ∫_0^∞ e^(-At)
  (g(x1 e^(-t)) - 1) dt] where g = (1-x)^(B-1) e^(-cS), g(0) = 1; the bracketed integrand
  decays like e^(-t), so the singularity x^(A-1) is integrated exactly. The end [1-z1, 1]
  is the same after x = 1 - z.
- Middle: in y = logit x, the integrand x^A (1-x)^B e^(-cS), with break points at the
  mode of that function (found by bisection at high precision) and at multiples of its
  curvature scale, and every 1 in y.
"""

from __future__ import annotations

import math

import mpmath as mp

DIGITS = 20


def _S(x, h):
    return 2 * h * x + (1 - 2 * h) * x**2


def log_z(A, B, c, h):
    """log Z(A, B) with c = 2Ne·s and S(x) = 2hx + (1-2h)x², as an mpmath number."""
    with mp.workdps(DIGITS):
        A, B, c, h = (mp.mpf(v) for v in (A, B, c, h))
        scale = A + B + abs(c) + 1
        x1 = mp.mpf("1e-3") / scale

        def end(A, B, c, h, x1):
            def remainder(t):
                x = x1 * mp.e ** (-t)
                return mp.e ** (-A * t) * mp.expm1((B - 1) * mp.log1p(-x) - c * _S(x, h))

            pts = [0, 1, 2, 4, 8, 16, 32, 64, 128, mp.inf]
            return x1**A * (1 / A + mp.quad(remainder, pts))

        left = end(A, B, c, h, x1)
        right = mp.e ** (-c) * end(B, A, -c, 1 - h, x1)

        def log_f(y):
            x = 1 / (1 + mp.e ** (-y))
            return A * mp.log(x) + B * mp.log(1 - x) - c * _S(x, h)

        def slope(y):
            x = 1 / (1 + mp.e ** (-y))
            return A * (1 - x) - B * x - c * (2 * h + 2 * (1 - 2 * h) * x) * x * (1 - x)

        y_lo, y_hi = mp.log(x1 / (1 - x1)), mp.log((1 - x1) / x1)
        lo, hi = y_lo, y_hi
        if slope(lo) <= 0:
            mode = lo
        elif slope(hi) >= 0:
            mode = hi
        else:
            for _ in range(200):
                mid = (lo + hi) / 2
                lo, hi = (mid, hi) if slope(mid) > 0 else (lo, mid)
            mode = (lo + hi) / 2
        eps = mp.mpf("1e-6")
        curv = (log_f(mode + eps) - 2 * log_f(mode) + log_f(mode - eps)) / eps**2
        sigma = min(mp.mpf(1), 1 / mp.sqrt(abs(curv) + mp.mpf("1e-30")))
        top = log_f(mode)
        pts = {y_lo, y_hi}
        k = mp.ceil(y_lo)
        while k < y_hi:
            pts.add(k)
            k += 1
        for m in (0, 0.5, 1, 1.5, 2, 3, 4, 5, 6, 8, 10, 12, 16, 24, 32):
            for sign in (-1, 1):
                p = mode + sign * m * sigma
                if y_lo < p < y_hi:
                    pts.add(p)
        pts = sorted(pts)
        middle = mp.quad(lambda y: mp.e ** (log_f(y) - top), pts)
        return mp.log(left + right + middle * mp.e**top)


def log_z_drift(Ne, mu, s, h, nu, k=0, n=0):
    """log Z for the drift parameters, exponents shifted by a sample (k of n)."""
    Ne, mu, s, nu = (mp.mpf(v) for v in (Ne, mu, s, nu))
    return log_z(4 * Ne * mu + k, 4 * Ne * nu + (n - k), 2 * Ne * s, h)


def log_binomial(k, n, Ne, mu, s, h, nu):
    """log C(n,k) Z(a+k, b+n-k)/Z(a, b) at high precision."""
    with mp.workdps(DIGITS):
        return (
            mp.log(mp.binomial(n, k))
            + log_z_drift(Ne, mu, s, h, nu, k, n)
            - log_z_drift(Ne, mu, s, h, nu)
        )


def mean(Ne, mu, s, h, nu):
    """E[x] = Z(a+1, b)/Z(a, b) at high precision."""
    with mp.workdps(DIGITS):
        Ne_, mu_, s_, nu_ = (mp.mpf(v) for v in (Ne, mu, s, nu))
        a, b, c = 4 * Ne_ * mu_, 4 * Ne_ * nu_, 2 * Ne_ * s_
        return mp.e ** (log_z(a + 1, b, c, h) - log_z(a, b, c, h))


def _mode(A, B, c, h):
    """Mode of x^(A-1)(1-x)^(B-1)e^(-cS): the root in (0, 1) of x(1-x)·d/dx log, by
    bisection at the working precision (A, B > 1: the polynomial is > 0 at 0, < 0 at 1)."""
    def p(x):
        return (A - 1) * (1 - x) - (B - 1) * x - 2 * c * x * (1 - x) * (h + (1 - 2 * h) * x)

    lo, hi = mp.mpf(0), mp.mpf(1)
    for _ in range(mp.mp.prec + 20):
        mid = (lo + hi) / 2
        lo, hi = (mid, hi) if p(mid) > 0 else (lo, mid)
    return (lo + hi) / 2


def concentrated_moments(Ne, mu, s, h, nu, k=0, n=0):
    """Mean, sd and log P(k of n) of Wright's density by mpmath.quad on the raw integrand.

    For large Ne (a, b > 1, one interior peak). The working precision grows with log10 Ne
    (F(x) ~ Ne is resolved to 30 digits); the integrand is exp(F(x) - F(mode)) on [0, 1],
    split at the mode ± m·sd for m up to 60 (the sd from the curvature at the mode) and
    the same around the mode of the sample-weighted integrand.
    """
    digits = 40 + int(mp.log10(mp.mpf(Ne)))
    with mp.workdps(digits):
        Ne, mu, s, nu, h = (mp.mpf(v) for v in (Ne, mu, s, nu, h))
        a, b, c = 4 * Ne * mu, 4 * Ne * nu, 2 * Ne * s

        def log_f(x, A, B):
            return (A - 1) * mp.log(x) + (B - 1) * mp.log(1 - x) - c * _S(x, h)

        def pieces(A, B):
            mode = _mode(A, B, c, h)
            curv = (A - 1) / mode**2 + (B - 1) / (1 - mode) ** 2 + 2 * c * (1 - 2 * h)
            return mode, 1 / mp.sqrt(curv)

        m0, s0 = pieces(a, b)
        m1, s1 = pieces(a + k, b + (n - k))
        pts = {mp.mpf(0), mp.mpf(1)}
        for centre, sd in ((m0, s0), (m1, s1)):
            for m in (0, 0.5, 1, 2, 3, 4, 6, 8, 12, 16, 24, 32, 45, 60):
                for sign in (-1, 1):
                    p = centre + sign * m * sd
                    if 0 < p < 1:
                        pts.add(p)
        pts = sorted(pts)
        top = log_f(m0, a, b)

        def integral(g, A=a, B=b):
            return mp.quad(lambda x: g(x) * mp.e ** (log_f(x, A, B) - top), pts)

        total = integral(lambda x: 1)
        mean = integral(lambda x: x) / total
        var = integral(lambda x: (x - mean) ** 2) / total
        log_p = (mp.log(mp.binomial(n, k)) + mp.log(integral(lambda x: 1, a + k, b + (n - k)))
                 - mp.log(total))
        return mean, mp.sqrt(var), log_p


def diffusion_balance(Ne, mu, s, h, nu):
    """Mode of Wright's density: the root of 4Ne·M(x) = 1 - 2x with M(x) = mu(1-x) - nu·x -
    s·x(1-x)(h + (1-2h)x) the diffusion's mean change (derived: x(1-x)·d/dx log φ), by
    scipy.optimize.brentq on M(x)/mu - (1-2x)/(4Ne·mu) (scaled so the tolerance is relative)."""
    from scipy.optimize import brentq

    def g(x):
        m = mu * (1 - x) - nu * x - s * x * (1 - x) * (h + (1 - 2 * h) * x)
        return m / mu - (1 - 2 * x) / (4 * Ne * mu)

    return brentq(g, 1e-300, 0.5, xtol=1e-300, rtol=1e-15, maxiter=500)


def linear_noise_sd(Ne, mu, s, h, nu):
    """sd of the Gaussian (linear-noise / Ornstein–Uhlenbeck) limit: linearise M around its
    root x̂, dx = M'(x̂)(x - x̂)dt + √V(x̂) dW, stationary variance V(x̂)/(2|M'(x̂)|) with
    V(x) = x(1-x)/(2Ne) (Kimura 1964, J. Appl. Prob. 1:177; Ewens 2004, Mathematical
    Population Genetics, §4.5). M' = -mu - nu - s[(1-2x)(h + (1-2h)x) + x(1-x)(1-2h)]."""
    from scipy.optimize import brentq

    def m(x):
        return mu * (1 - x) - nu * x - s * x * (1 - x) * (h + (1 - 2 * h) * x)

    x = brentq(lambda x: m(x) / mu, 1e-300, 0.5, xtol=1e-300, rtol=1e-15, maxiter=500)
    slope = -mu - nu - s * ((1 - 2 * x) * (h + (1 - 2 * h) * x) + x * (1 - x) * (1 - 2 * h))
    return math.sqrt(x * (1 - x) / (2 * Ne) / (2 * abs(slope)))


def log_expectation(probability, Ne, mu, s, h, nu, scale=1):
    """log ∫ P(x) φ(x) dx for an mpmath function ``probability`` = P(data | x), P ≥ 0.

    The pieces of :func:`log_z` with P folded in (derived, as there): on the ends
    [0, x1] and [1 - x1, 1], x1 = 1e-3/(a + b + |c| + scale + 1) (``scale``: the
    largest count in P, so that P is smooth across the ends), ∫ x^(a-1) G(x) dx =
    x1^a [G(0)/a + ∫_0^∞ e^(-at) (G(x1 e^(-t)) - G(0)) dt] with G = (1-x)^(b-1) e^(-cS) P
    (and the mirror image at x = 1); in between, in y = logit x, break points every 1/2
    in y and at the mode of the whole integrand (a 600-point scan, then golden-section
    search at the working precision) ± multiples of its curvature scale.
    """
    with mp.workdps(DIGITS):
        Ne, mu, s, nu, h = (mp.mpf(v) for v in (Ne, mu, s, nu, h))
        A, B, c = 4 * Ne * mu, 4 * Ne * nu, 2 * Ne * s
        x1 = mp.mpf("1e-3") / (A + B + abs(c) + scale + 1)

        def end(A, G):
            g0 = G(mp.mpf(0))

            def remainder(t):
                return mp.e ** (-A * t) * (G(x1 * mp.e ** (-t)) - g0)

            pts = [0, 1, 2, 4, 8, 16, 32, 64, 128, mp.inf]
            return x1**A * (g0 / A + mp.quad(remainder, pts))

        left = end(A, lambda x: (1 - x) ** (B - 1) * mp.e ** (-c * _S(x, h)) * probability(x))
        right = end(B, lambda z: (1 - z) ** (A - 1) * mp.e ** (-c * _S(1 - z, h))
                    * probability(1 - z))

        def log_f(y):
            x = 1 / (1 + mp.e ** (-y))
            p = probability(x)
            if p <= 0:
                return mp.ninf
            return A * mp.log(x) + B * mp.log(1 - x) - c * _S(x, h) + mp.log(p)

        y_lo, y_hi = mp.log(x1 / (1 - x1)), mp.log((1 - x1) / x1)
        grid = [y_lo + (y_hi - y_lo) * i / 600 for i in range(601)]
        values = [log_f(y) for y in grid]
        best = max(range(601), key=lambda i: values[i])
        lo, hi = grid[max(best - 1, 0)], grid[min(best + 1, 600)]
        ratio = (mp.sqrt(5) - 1) / 2
        for _ in range(120):  # golden-section search for the maximum on [lo, hi]
            u, v = hi - ratio * (hi - lo), lo + ratio * (hi - lo)
            lo, hi = (lo, v) if log_f(u) > log_f(v) else (u, hi)
        mode = (lo + hi) / 2
        top = log_f(mode)
        eps = mp.mpf("1e-6")
        curv = (log_f(mode + eps) - 2 * top + log_f(mode - eps)) / eps**2
        sigma = min(mp.mpf(1), 1 / mp.sqrt(abs(curv) + mp.mpf("1e-30")))
        pts = {y_lo, y_hi}
        k = mp.ceil(2 * y_lo) / 2
        while k < y_hi:
            pts.add(k)
            k += mp.mpf(1) / 2
        for m in (0, 0.5, 1, 1.5, 2, 3, 4, 5, 6, 8, 10, 12, 16, 24, 32):
            for sign in (-1, 1):
                p = mode + sign * m * sigma
                if y_lo < p < y_hi:
                    pts.add(p)
        middle = mp.quad(lambda y: mp.e ** (log_f(y) - top), sorted(pts))
        return mp.log(left + right + middle * mp.e**top) - log_z(A, B, c, h)
