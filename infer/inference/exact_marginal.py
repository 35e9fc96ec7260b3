"""A marginal density known at nodes, as a cubic Hermite interpolant.

Its integral is the distribution function and its inverse the quantiles.

The slopes are central differences (second order, :func:`numpy.gradient`), limited so
that each cubic piece stays non-negative; integrating the interpolant is the trapezoid
rule with its Euler-Maclaurin end correction, fourth order in the step (Davis &
Rabinowitz 1984, "Methods of Numerical Integration", section 2.9). Quantiles solve the
piecewise quartic by bisection.
"""

from __future__ import annotations

import numpy as np

__all__ = ["Marginal"]


class Marginal:
    """Marginal density of one z coordinate from its values at increasing nodes."""

    def __init__(self, z: np.ndarray, density: np.ndarray):
        z = np.asarray(z, dtype=float)
        f = np.maximum(np.asarray(density, dtype=float), 0.0)
        h = np.diff(z)
        d = np.gradient(f, z, edge_order=2) if len(z) > 2 else np.zeros_like(f)
        # slopes with d_i >= -3 f_i / h_right and d_i <= 3 f_i / h_left keep each cubic
        # piece non-negative (a sufficient condition for Hermite cubics)
        upper = np.concatenate([[np.inf], 3.0 * f[1:] / h])
        lower = np.concatenate([-3.0 * f[:-1] / h, [-np.inf]])
        d = np.clip(d, lower, upper)
        pieces = h * (f[:-1] + f[1:]) / 2 + h ** 2 * (d[:-1] - d[1:]) / 12
        cumulative = np.concatenate([[0.0], np.cumsum(np.maximum(pieces, 0.0))])
        total = cumulative[-1]
        if not total > 0:
            raise ValueError("the posterior has no mass on the grid")
        self.z, self.h = z, h
        self.f, self.d = f / total, d / total
        self.cumulative = cumulative / total

    def _piece(self, i: np.ndarray, s: np.ndarray) -> np.ndarray:
        """Integral of piece i from its left node to the fraction s of its width."""
        h, f0, f1 = self.h[i], self.f[i], self.f[i + 1]
        d0, d1 = self.d[i] * h, self.d[i + 1] * h
        s2, s3, s4 = s * s, s ** 3, s ** 4
        return h * (f0 * (s4 / 2 - s3 + s) + d0 * (s4 / 4 - 2 * s3 / 3 + s2 / 2)
                    + f1 * (s3 - s4 / 2) + d1 * (s4 / 4 - s3 / 3))

    def cdf(self, z) -> np.ndarray:
        """Distribution function at z (0 below the first node, 1 above the last)."""
        z = np.asarray(z, dtype=float)
        i = np.clip(np.searchsorted(self.z, z, side="right") - 1, 0, len(self.h) - 1)
        s = np.clip((z - self.z[i]) / self.h[i], 0.0, 1.0)
        out = self.cumulative[i] + self._piece(i, s)
        out = np.where(z <= self.z[0], 0.0, np.where(z >= self.z[-1], 1.0, out))
        return np.clip(out, 0.0, 1.0)

    def density(self, z) -> np.ndarray:
        """The (normalised) interpolated density at z, 0 outside the nodes."""
        z = np.asarray(z, dtype=float)
        i = np.clip(np.searchsorted(self.z, z, side="right") - 1, 0, len(self.h) - 1)
        h = self.h[i]
        s = np.clip((z - self.z[i]) / h, 0.0, 1.0)
        s2, s3 = s * s, s ** 3
        value = (self.f[i] * (2 * s3 - 3 * s2 + 1) + self.d[i] * h * (s3 - 2 * s2 + s)
                 + self.f[i + 1] * (3 * s2 - 2 * s3) + self.d[i + 1] * h * (s3 - s2))
        inside = (z >= self.z[0]) & (z <= self.z[-1])
        return np.where(inside, np.maximum(value, 0.0), 0.0)

    def quantile(self, p) -> np.ndarray:
        """The z at which the distribution function reaches p."""
        p = np.atleast_1d(np.asarray(p, dtype=float))
        i = np.clip(np.searchsorted(self.cumulative, p, side="right") - 1, 0, len(self.h) - 1)
        lo, hi = np.zeros_like(p), np.ones_like(p)
        target = p - self.cumulative[i]
        for _ in range(60):  # bisection on the (non-decreasing) quartic of each piece
            mid = (lo + hi) / 2
            below = self._piece(i, mid) < target
            lo, hi = np.where(below, mid, lo), np.where(below, hi, mid)
        return self.z[i] + (lo + hi) / 2 * self.h[i]

    def moments(self) -> tuple[float, float]:
        """Mean and standard deviation (trapezoid on the nodes)."""
        w = np.zeros_like(self.f)
        w[:-1] += self.h / 2
        w[1:] += self.h / 2
        w = w * self.f
        mean = float(w @ self.z / w.sum())
        return mean, float(np.sqrt(max(w @ (self.z - mean) ** 2 / w.sum(), 0.0)))
