"""Shared prior on s_het for ``qhat batch``: families and the empirical-Bayes fit.

See :mod:`infer.jobs.batch.run`'s docstring for the hierarchical model; ``settings`` is an
``infer.jobs.batch.run.BatchSettings``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

__all__ = ["SHetPrior", "FittedPrior", "trapezoid_weights", "hyper_grid",
           "log_marginal_surface", "fit_log_normal_prior"]

_HYPER_POINTS = (41, 29)  # θ grid of the empirical-Bayes fit: ln median × sigma


@dataclass(frozen=True)
class SHetPrior:
    """Shared prior on s_het over the grid bounds.

    ``family`` is ``"log-uniform"`` or ``"log-normal"``; for the latter ``median`` and
    ``sigma`` (sd of ln s_het) are given, the density being truncated to the grid.
    """

    family: str = "log-uniform"
    median: float | None = None
    sigma: float | None = None

    def log_density(self, log_s: np.ndarray) -> np.ndarray:
        """Unnormalised log density in u = ln s_het (0 for log-uniform)."""
        log_s = np.asarray(log_s, dtype=float)
        if self.family == "log-uniform":
            return np.zeros_like(log_s)
        z = (log_s - math.log(self.median)) / self.sigma
        return -0.5 * z * z - math.log(self.sigma)

    def describe(self) -> str:
        """One line for reports."""
        if self.family == "log-uniform":
            return "log-uniform on the grid bounds"
        return f"log-normal, median {self.median:.4g}, sigma of ln {self.sigma:.4g} (truncated)"


@dataclass(frozen=True)
class FittedPrior:
    """Result of the empirical-Bayes fit of a log-normal prior."""

    prior: SHetPrior
    log_marginal: float          # summed log marginal likelihood at the fit
    log_marginal_uniform: float  # the same under the log-uniform prior
    se_log_median: float         # from the curvature of the interpolated surface
    se_log_sigma: float
    at_search_edge: bool
    search: dict = field(default_factory=dict)

    @property
    def log_bayes_factor(self) -> float:
        """Log Bayes factor of the fitted log-normal against the log-uniform prior."""
        return self.log_marginal - self.log_marginal_uniform


def trapezoid_weights(settings):
    """Trapezoid weights of the s_het grid in u = ln s_het, shape (S,)."""
    weights = np.full(settings.grid_points, settings.step)
    weights[[0, -1]] *= 0.5
    return weights


def hyper_grid(settings):
    """The θ = (ln median, sigma) grid on which the summed log marginal is tabulated.

    ln median: 41 points over the grid range; sigma: 29 log-spaced points from
    max(2Δ, 0.05) to half the grid range.
    """
    u = settings.log_s
    log_median = np.linspace(u[0], u[-1], _HYPER_POINTS[0])
    sigma = np.geomspace(max(2.0 * settings.step, 0.05), 0.5 * (u[-1] - u[0]), _HYPER_POINTS[1])
    return log_median, sigma


def _prior_matrix(settings):
    """Prior masses on the s grid for every θ: (S, 1 + 41·29); column 0 log-uniform."""
    u, weights = settings.log_s, trapezoid_weights(settings)
    log_median, sigma = hyper_grid(settings)
    z = (u[:, None, None] - log_median[None, :, None]) / sigma[None, None, :]
    dens = np.exp(-0.5 * z * z).reshape(u.size, -1) * weights[:, None]
    columns = np.concatenate([weights[:, None], dens], axis=1)
    return columns / np.sum(columns, axis=0, keepdims=True)


def log_marginal_surface(likelihood, log_scale, settings) -> np.ndarray:
    """Sum over the chunk's loci of the log marginal likelihood at every θ.

    Returns shape (1 + 41·29,): column 0 the log-uniform prior, then the log-normal
    θ grid of ``hyper_grid`` (ln median major). Loci without likelihood are left out.
    """
    ok = np.isfinite(log_scale)
    with np.errstate(divide="ignore"):
        per_locus = np.log(likelihood[ok] @ _prior_matrix(settings)) + log_scale[ok, None]
    return np.sum(per_locus, axis=0)


def fit_log_normal_prior(surface, settings) -> FittedPrior:
    """Maximise the summed log marginal over θ (spline of the tabulated surface)."""
    from scipy import interpolate, optimize

    log_median, sigma = hyper_grid(settings)
    table = np.asarray(surface[1:], dtype=float).reshape(log_median.size, sigma.size)
    table = np.where(np.isfinite(table), table, np.min(table[np.isfinite(table)]) - 1e6)
    x, y = log_median, np.log(sigma)
    spline = interpolate.RectBivariateSpline(x, y, table, kx=3, ky=3)
    i, j = np.unravel_index(np.argmax(table), table.shape)

    def negative(p):
        return -float(spline(p[0], p[1])[0, 0])

    def gradient(p):
        return -np.array([spline(p[0], p[1], dx=1)[0, 0], spline(p[0], p[1], dy=1)[0, 0]])

    best = optimize.minimize(negative, [x[i], y[j]], jac=gradient, method="L-BFGS-B",
                             bounds=[(x[0], x[-1]), (y[0], y[-1])])
    m, log_tau = best.x
    hessian = -np.array([[spline(m, log_tau, dx=2)[0, 0], spline(m, log_tau, dx=1, dy=1)[0, 0]],
                         [spline(m, log_tau, dx=1, dy=1)[0, 0], spline(m, log_tau, dy=2)[0, 0]]])
    try:
        cov = np.linalg.inv(hessian)
        se = np.sqrt(np.maximum(np.diag(cov), 0.0))
    except np.linalg.LinAlgError:
        se = np.array([np.nan, np.nan])
    edge = (i in (0, x.size - 1)) or (j in (0, y.size - 1))
    prior = SHetPrior("log-normal", median=float(f"{math.exp(m):.10g}"),
                      sigma=float(f"{math.exp(log_tau):.10g}"))
    return FittedPrior(prior=prior, log_marginal=float(f"{-best.fun:.12g}"),
                       log_marginal_uniform=float(f"{surface[0]:.12g}"),
                       se_log_median=float(se[0]), se_log_sigma=float(se[1]),
                       at_search_edge=bool(edge),
                       search={"log_median": [float(x[0]), float(x[-1])],
                               "sigma": [float(sigma[0]), float(sigma[-1])]})
