"""Exact posterior by quadrature on a grid, for studies with one or two free parameters.

The log posterior density in unconstrained coordinates z (``Model.log_posterior``) is
evaluated on a regular grid. A coarse pass over the prior's range finds where the
posterior mass lies; finer passes zoom into that box. Marginal densities are Riemann sums
over the other axis, marginal distribution functions their cumulative trapezoid
integrals, and quantiles are interpolated in z and mapped back to each parameter (the
maps are monotone, so quantiles carry over exactly).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from infer.core.stats import central_quantiles

__all__ = ["GridPosterior", "grid_posterior", "compare_with_draws"]

#: prior tail probability left outside the coarse grid
_TAIL = 1e-10
#: posterior log-density drop that bounds the box of the next pass
_DROP = 30.0


@dataclass
class GridPosterior:
    """Marginal posteriors computed by quadrature.

    Attributes
    ----------
    names : list of str
    axes : dict
        name -> grid of parameter values (constrained scale).
    marginal_density : dict
        name -> marginal posterior density at ``axes[name]`` (per unit of the parameter).
    quantiles : dict
        name -> {"median", "lower", "upper"} at the study's interval.
    points : int
        Number of posterior evaluations used.
    cdf : dict
        name -> marginal posterior distribution function at ``axes[name]``.
    """

    names: list[str]
    axes: dict[str, np.ndarray]
    marginal_density: dict[str, np.ndarray]
    quantiles: dict[str, dict[str, float]]
    points: int
    cdf: dict[str, np.ndarray] | None = None

    def cdf_at(self, name: str, value: float) -> float:
        """Marginal posterior probability that ``name`` is at most ``value``."""
        return float(np.interp(value, self.axes[name], self.cdf[name], left=0.0, right=1.0))


def _evaluate(model, mesh: np.ndarray, chunk: int = 40_000) -> np.ndarray:
    out = np.empty(len(mesh))
    for start in range(0, len(mesh), chunk):
        out[start:start + chunk] = model.log_posterior(mesh[start:start + chunk])
    return out


def _mesh(axes: list[np.ndarray]) -> np.ndarray:
    grids = np.meshgrid(*axes, indexing="ij")
    return np.column_stack([g.ravel() for g in grids])


def _box(axes: list[np.ndarray], lp: np.ndarray) -> list[tuple[float, float]]:
    """The z box holding every grid point within _DROP of the maximum, one step wider."""
    shape = tuple(len(a) for a in axes)
    keep = (lp >= lp.max() - _DROP).reshape(shape)
    box = []
    for j, axis in enumerate(axes):
        other = tuple(k for k in range(len(axes)) if k != j)
        rows = np.flatnonzero(keep.any(axis=other) if other else keep)
        lo, hi = max(rows[0] - 1, 0), min(rows[-1] + 1, len(axis) - 1)
        box.append((axis[lo], axis[hi]))
    return box


def grid_posterior(model, interval: float = 0.95, points: int | None = None) -> GridPosterior:
    """Posterior marginals of a one- or two-parameter model by quadrature.

    Parameters
    ----------
    model : infer.model.posterior.Model
        A model with one or two free parameters.
    interval : float
        Credible level of the reported central interval.
    points : int, optional
        Grid points per axis in each pass (default 4001 for one parameter, 301 for two).

    Returns
    -------
    GridPosterior
    """
    ndim = model.ndim
    if ndim not in (1, 2):
        raise ValueError("the grid posterior needs one or two free parameters")
    points = points or (4001 if ndim == 1 else 301)
    bounds = []
    for prior in model.priors:
        lo, hi = prior.quantile(np.array([_TAIL, 1.0 - _TAIL]))
        bounds.append(tuple(prior.to_unconstrained(np.array([lo, hi]))))
    evaluations = 0
    for _ in range(3):  # coarse pass, then two zooms
        axes = [np.linspace(lo, hi, points) for lo, hi in bounds]
        lp = _evaluate(model, _mesh(axes))
        evaluations += lp.size
        if not np.isfinite(lp).any():
            raise ValueError("the posterior has no mass on the grid")
        bounds = _box(axes, lp)
    axes = [np.linspace(lo, hi, points) for lo, hi in bounds]
    lp = _evaluate(model, _mesh(axes)).reshape(tuple(len(a) for a in axes))
    evaluations += lp.size
    weight = np.exp(lp - lp.max())
    result_axes, densities, quantiles, cdfs = {}, {}, {}, {}
    tail = (1.0 - interval) / 2.0
    for j, (name, prior) in enumerate(zip(model.free, model.priors, strict=True)):
        other = tuple(k for k in range(ndim) if k != j)
        marginal_z = weight.sum(axis=other) if other else weight
        z = axes[j]
        steps = (marginal_z[1:] + marginal_z[:-1]) / 2 * np.diff(z)
        cdf = np.concatenate([[0.0], np.cumsum(steps)])
        total = cdf[-1]
        cdf /= total
        marginal_z = marginal_z / total
        z_q = np.interp([0.5, tail, 1.0 - tail], cdf, z)
        x_q, _ = prior.from_unconstrained(z_q)
        x, log_jac = prior.from_unconstrained(z)
        result_axes[name] = np.asarray(x)
        densities[name] = marginal_z * np.exp(-log_jac)
        cdfs[name] = cdf
        quantiles[name] = {"median": float(x_q[0]), "lower": float(x_q[1]),
                           "upper": float(x_q[2])}
    return GridPosterior(list(model.free), result_axes, densities, quantiles, evaluations, cdfs)


def compare_with_draws(grid: GridPosterior, draws: dict[str, np.ndarray], interval: float,
                       median_tolerance: float = 0.02, end_tolerance: float = 0.05) -> dict:
    """Relative differences between sampled and exact medians and interval ends.

    Returns a dict ``{"agrees": bool, "parameters": {name: {"median": rel, "lower": rel,
    "upper": rel}}}``; a relative difference is taken against the exact value, or against
    the exact interval width where the exact value is zero.
    """
    report, agrees = {}, True
    for name in grid.names:
        sampled = dict(zip(("median", "lower", "upper"),
                           central_quantiles(draws[name], interval), strict=True))
        exact = grid.quantiles[name]
        width = exact["upper"] - exact["lower"]
        rel = {}
        for key in ("median", "lower", "upper"):
            scale = abs(exact[key]) if exact[key] != 0 else width
            rel[key] = float(abs(sampled[key] - exact[key]) / scale) if scale > 0 else 0.0
        agrees &= rel["median"] <= median_tolerance
        agrees &= rel["lower"] <= end_tolerance and rel["upper"] <= end_tolerance
        report[name] = rel
    return {"agrees": bool(agrees), "parameters": report}
