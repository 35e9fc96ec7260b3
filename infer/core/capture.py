"""Two-source capture–recapture: how complete a count of affected births is.

Each affected birth is found by source 1 with probability p1 and by source 2 with
probability p2, independently. Of the n cases found, n10 are in source 1 only, n01 in
source 2 only and n11 in both; the completeness of the union is c = 1 − (1 − p1)(1 − p2).
Given the number found, the cells are multinomial with probabilities

    p1 (1 − p2) / c,   (1 − p1) p2 / c,   p1 p2 / c.

The completeness is what the rest of the model needs, so the split of c between the two
sources is integrated out, uniform over the unit square of (p1, p2) given c (derived:
along the curve (1 − p1)(1 − p2) = 1 − c the density of p1 is 1 / ((1 − p1)·(−ln(1 − c)))
on (0, c)). With p1 = c·t the likelihood of c is

    L(c) = M · (1 − c)^n10 · c^(n11 + 1) / (−ln(1 − c))
           · ∫_0^1 t^n1 (1 − t)^n2 (1 − c t)^−(n1 + 1) dt

(M the multinomial coefficient, n1 = n10 + n11 and n2 = n01 + n11 the two sources'
totals); the integral is Euler's B(n1 + 1, n2 + 1) · 2F1(n1 + 1, n1 + 1; n1 + n2 + 2; c).
In the large-sample limit L peaks at n / N̂ with N̂ = n1·n2 / n11 the Lincoln–Petersen
estimate of all cases (Chapman 1951, "Some properties of the hypergeometric distribution
with applications to zoological sample censuses", Univ. Calif. Publ. Stat. 1:131, gives
its nearly unbiased form (n1 + 1)(n2 + 1)/(n11 + 1) − 1).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

__all__ = ["chapman_total", "two_source_log_likelihood", "TwoSourceLikelihood", "split_draws",
           "prior_split_draws"]

#: logit(c) beyond which the completeness is treated as 0 or 1
LOGIT_LIMIT = 25.0


def chapman_total(n10: int, n01: int, n11: int) -> float:
    """Chapman's (1951) estimate of all cases, (n1 + 1)(n2 + 1)/(n11 + 1) − 1."""
    n1, n2 = n10 + n11, n01 + n11
    return (n1 + 1) * (n2 + 1) / (n11 + 1) - 1


def _t_nodes(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes t and log weights of the trapezoid rule in u = logit(t) (dt = t(1 − t) du).

    The trapezoid rule on the whole line is spectrally accurate for smooth integrands
    (error about exp(−2π²σ²/step²) for a peak of width σ): the integrand's width in u is
    about 1/sqrt(n t (1 − t)) ≥ 2/sqrt(n), so a step of 1/sqrt(n + 1) leaves it below
    1e-30.
    """
    step = min(0.1, 1.0 / math.sqrt(n + 1.0))
    u = np.arange(-32.0, 32.0 + step / 2, step)
    log_t, log_1mt = -np.logaddexp(0.0, -u), -np.logaddexp(0.0, u)
    return u, np.log(step) + log_t + log_1mt


def two_source_log_likelihood(c, n10: int, n01: int, n11: int) -> np.ndarray:
    """Log L(c) of the module docstring, computed by quadrature for each value of ``c``.

    ``c`` outside (0, 1) gives -inf; the cost is one quadrature (a few thousand nodes)
    per value, so models call :class:`TwoSourceLikelihood`, which tabulates this once.
    """
    c = np.atleast_1d(np.asarray(c, dtype=float))
    n1, n2, n = n10 + n11, n01 + n11, n10 + n01 + n11
    u, log_w = _t_nodes(n)
    log_t, log_1mt = -np.logaddexp(0.0, -u), -np.logaddexp(0.0, u)
    coefficient = (special.gammaln(n + 1) - special.gammaln(n10 + 1)
                   - special.gammaln(n01 + 1) - special.gammaln(n11 + 1))
    out = np.full(c.shape, -np.inf)
    inside = np.flatnonzero((c > 0) & (c < 1))
    for chunk in np.array_split(inside, max(1, inside.size // 64)):
        if chunk.size == 0:
            continue
        cc = c[chunk][:, None]
        log_integrand = (log_w + n1 * log_t + n2 * log_1mt
                         - (n1 + 1) * np.log1p(-cc * np.exp(log_t)))
        integral = special.logsumexp(log_integrand, axis=1)
        cc = cc[:, 0]
        out[chunk] = (coefficient + n10 * np.log1p(-cc) + (n11 + 1) * np.log(cc)
                      - np.log(-np.log1p(-cc)) + integral)
    return out


class TwoSourceLikelihood:
    """log L(c) tabulated once on the logit scale, then interpolated for many rows.

    A coarse table over logit(c) in [-25, 25] (linear interpolation) and a fine one where
    log L is within 60 of its maximum (a cubic spline), both in logit(c). Values of c at
    or beyond the table's ends take the end values (c = 1 is the limit c -> 1).

    Parameters
    ----------
    n10, n01, n11 : int
        Cases found by source 1 only, source 2 only, and both.
    """

    def __init__(self, n10: int, n01: int, n11: int):
        from scipy.interpolate import CubicSpline

        self.counts = (int(n10), int(n01), int(n11))
        coarse = np.linspace(-LOGIT_LIMIT, LOGIT_LIMIT, 201)
        coarse_values = two_source_log_likelihood(special.expit(coarse), *self.counts)
        kept = np.flatnonzero(coarse_values > np.nanmax(coarse_values) - 60.0)
        low = coarse[max(kept[0] - 1, 0)]
        high = coarse[min(kept[-1] + 1, coarse.size - 1)]
        fine = np.linspace(low, high, 301)
        fine_values = two_source_log_likelihood(special.expit(fine), *self.counts)
        self._coarse, self._coarse_values = coarse, coarse_values
        self._range = (low, high)
        self._spline = CubicSpline(fine, fine_values)
        self._mode = float(special.expit(fine[int(np.argmax(fine_values))]))

    def __call__(self, c) -> np.ndarray:
        """Log L at each completeness ``c`` (-inf at c <= 0)."""
        c = np.asarray(c, dtype=float)
        with np.errstate(divide="ignore"):
            z = np.clip(special.logit(np.clip(c, 0.0, 1.0)), -LOGIT_LIMIT, LOGIT_LIMIT)
        low, high = self._range
        inside = (z >= low) & (z <= high)
        out = np.where(inside, self._spline(np.clip(z, low, high)),
                       np.interp(z, self._coarse, self._coarse_values))
        return np.where(c > 0, out, -np.inf)

    @property
    def mode(self) -> float:
        """The completeness at the fine table's maximum."""
        return self._mode


def split_draws(c, counts: tuple[int, int, int], rng: np.random.Generator):
    """Draws of (p1, p2) given completeness ``c`` and the cells ``counts`` (one per row).

    p1 = c·t with t drawn from its exact conditional posterior on the trapezoid nodes of
    :func:`two_source_log_likelihood` (density ∝ the integrand there); p2 follows from
    (1 − p1)(1 − p2) = 1 − c. Rows with c outside (0, 1) give NaN.
    """
    c = np.atleast_1d(np.asarray(c, dtype=float))
    n10, n01, n11 = counts
    n1, n2 = n10 + n11, n01 + n11
    u, log_w = _t_nodes(n10 + n01 + n11)
    log_t, log_1mt = -np.logaddexp(0.0, -u), -np.logaddexp(0.0, u)
    t = np.exp(log_t)
    p1 = np.full(c.shape, np.nan)
    inside = np.flatnonzero((c > 0) & (c < 1))
    for chunk in np.array_split(inside, max(1, inside.size // 64)):
        if chunk.size == 0:
            continue
        cc = c[chunk][:, None]
        log_density = log_w + n1 * log_t + n2 * log_1mt - (n1 + 1) * np.log1p(-cc * t)
        weights = np.exp(log_density - log_density.max(axis=1, keepdims=True))
        cumulative = np.cumsum(weights, axis=1)
        pick = rng.random(chunk.size) * cumulative[:, -1]
        index = np.minimum((cumulative < pick[:, None]).sum(axis=1), t.size - 1)
        p1[chunk] = c[chunk] * t[index]
    with np.errstate(invalid="ignore", divide="ignore"):
        p2 = 1.0 - (1.0 - c) / (1.0 - p1)
    return p1, p2


def prior_split_draws(c, rng: np.random.Generator):
    """(p1, p2) given c from the split's prior (uniform over the unit square given c).

    The conditional cdf of p1 is ln(1 − p1) / ln(1 − c) on (0, c), so p1 = 1 − (1 − c)^U.
    """
    c = np.asarray(c, dtype=float)
    p1 = 1.0 - (1.0 - c) ** rng.random(c.shape)
    with np.errstate(invalid="ignore", divide="ignore"):
        p2 = 1.0 - (1.0 - c) / (1.0 - p1)
    return p1, p2
