"""Exact posterior by nested quadrature, for studies with one to three free parameters.

The log posterior density in unconstrained coordinates z (``Model.log_posterior``) is
integrated on nested grids:

1. **Locate.** Axis-aligned coarse passes over the prior's range (its 1e-10 and
   1 - 1e-10 quantiles, extended, given the sampler's draws, to their range widened by
   its own width on each side, which may reach into the prior's far tail) zoom onto the
   box outside which each axis' coarse marginal
   leaves less than 1e-9 of the mass on either side (a box by density drop would be
   far too wide for the exponential tails of a prior-dominated direction).
2. **Inner axis.** The parameter whose marginal is wanted is the inner axis; given
   the others it is often pinned down, such as log mu when counts fix mu/(hs).
3. **Integrate.** The other axes ("outer") get a grid over the box, half its nodes
   placed by the coarse marginals and half evenly. For every
   outer point the inner axis is scanned over the whole box, and then integrated on a
   fine grid of its own spanning the scanned points within e^-30 of that row's maximum.
   A thin curved ridge, or a sheet z_k = f(others), is resolved row by row, where one
   regular grid would need points finer than its thickness everywhere.
4. **Refine.** Each parameter is integrated innermost in a pass of its own (its own
   quantiles converge fastest there). Points per axis grow by 1.5 per level until each
   of its quantiles (median and interval ends) moves by less than ``tolerance``
   (relative to its value, or to the interval width where the value is 0) between two
   levels, or holds its probability to within ``probability_tolerance``, or an
   evaluation cap is reached (the posterior is then "not settled").

Marginal distribution functions: trapezoid sums over the outer grid for outer axes; for
the inner axis, the weighted sum over rows of each row's own distribution function,
interpolated to a common axis. Quantiles are interpolated in z and mapped back to each
parameter (the maps are monotone, so quantiles carry over exactly).

Sampled draws are checked against this posterior in probability: for a sampled quantile
q_p the exact distribution function F(q_p) should lie within Monte Carlo error of p, with
standard deviation sqrt(p (1 - p) / ESS) of an empirical distribution function
(ESS of the indicator 1[x <= exact quantile]).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from infer.core.stats import central_quantiles

__all__ = ["ExactPosterior", "exact_posterior", "verify_draws", "MAX_DIMENSIONS"]

#: free parameters up to which the nested quadrature is run
MAX_DIMENSIONS = 3
#: prior tail probability left outside the coarse grid
_TAIL = 1e-10
#: posterior mass left outside the box on each side of each axis (coarse estimate)
_BOX_TAIL = 1e-9
#: posterior log-density drop that bounds an inner range
_DROP = 30.0
#: evaluation caps of the refinement (deterministic: same study, same answer)
EVALUATION_CAP = 6_000_000
DRIFT_EVALUATION_CAP = 600_000
#: starting points per axis (outer, inner scan, inner fine) by number of free parameters
_START = {1: (0, 0, 2001), 2: (48, 48, 96), 3: (24, 32, 48)}
_COARSE = {1: 2001, 2: 121, 3: 36}


@dataclass
class ExactPosterior:
    """Marginal posteriors computed by quadrature.

    Attributes
    ----------
    names : list of str
    axes : dict
        name -> axis of parameter values (constrained scale), increasing in z.
    marginal_density : dict
        name -> marginal posterior density at ``axes[name]`` (per unit of the parameter).
    cdf : dict
        name -> marginal posterior distribution function at ``axes[name]``.
    quantiles : dict
        name -> {"median", "lower", "upper"} at the study's interval.
    points : int
        Posterior evaluations used in all.
    settled : bool
        True when the last refinement moved every quantile by less than the tolerance.
    change : float
        Largest relative move of a quantile at the last refinement.
    levels : list
        (points per axis, quantiles) of each refinement level.
    """

    names: list[str]
    axes: dict[str, np.ndarray]
    marginal_density: dict[str, np.ndarray]
    cdf: dict[str, np.ndarray]
    quantiles: dict[str, dict[str, float]]
    points: int
    settled: bool
    change: float
    levels: list = field(default_factory=list)
    z_axes: dict[str, np.ndarray] | None = None
    priors: dict | None = None

    def cdf_at(self, name: str, value: float) -> float:
        """Marginal posterior probability that ``name`` is at most ``value``."""
        z = float(np.asarray(self.priors[name].to_unconstrained(np.array([value])))[0])
        return float(np.interp(z, self.z_axes[name], self.cdf[name], left=0.0, right=1.0))


def _evaluate(model, mesh: np.ndarray, chunk: int = 50_000) -> np.ndarray:
    out = np.empty(len(mesh))
    for start in range(0, len(mesh), chunk):
        out[start:start + chunk] = model.log_posterior(mesh[start:start + chunk])
    return np.where(np.isfinite(out), out, -np.inf)


def _mesh(axes: list[np.ndarray]) -> np.ndarray:
    grids = np.meshgrid(*axes, indexing="ij")
    return np.column_stack([g.ravel() for g in grids])


def _node_weights(axis: np.ndarray) -> np.ndarray:
    """Trapezoid quadrature weights of a (possibly uneven) increasing axis."""
    step = np.diff(axis)
    weights = np.zeros_like(axis)
    weights[:-1] += step / 2
    weights[1:] += step / 2
    return weights


def _placed_nodes(axis: np.ndarray, cdf: np.ndarray, lo: float, hi: float, n: int):
    """Nodes (n of them) on [lo, hi], half placed by the coarse marginal cdf, half evenly.

    Nodes are z = G^-1(i / (n - 1)) with G = (F + (z - lo) / (hi - lo)) / 2: dense where
    the mass is, never sparse elsewhere (G is strictly increasing).
    """
    z = np.linspace(lo, hi, 4 * n + 1)
    f = np.interp(z, axis, cdf, left=0.0, right=1.0)
    g = 0.5 * (f - f[0]) / max(f[-1] - f[0], 1e-300) + 0.5 * (z - lo) / (hi - lo)
    return np.interp(np.linspace(0.0, 1.0, n), g, z)


def _sinh_nodes(scan, lp_scan, row_max, alive, lo, hi, n: int) -> np.ndarray:
    """Per-row inner nodes z = c + a sinh(u), u even, spanning [lo, hi] of each row.

    c is the row's scanned mean and a a third of its scanned sd: nodes are dense where
    the row's mass is and spread out exponentially into its tails, where the trapezoid
    rule in u stays accurate for exponentially decaying densities (the sinh
    transformation; Takahasi & Mori 1974, Publ. RIMS Kyoto Univ. 9:721).
    """
    rows = len(scan)
    weight = np.exp(lp_scan - np.where(alive, row_max, 0.0)[:, None])
    weight = np.where(alive[:, None] & np.isfinite(weight), weight, 0.0)
    total = np.maximum(weight.sum(axis=1), 1e-300)
    centre = (weight * scan).sum(axis=1) / total
    spread = np.sqrt(np.maximum((weight * (scan - centre[:, None]) ** 2).sum(axis=1) / total,
                                0.0))
    step = np.abs(scan[:, 1] - scan[:, 0]) if scan.shape[1] > 1 else np.ones(rows)
    scale = np.maximum(spread / 3.0, step / 20.0)
    centre = np.clip(centre, lo, hi)
    u_lo = np.arcsinh((lo - centre) / scale)
    u_hi = np.arcsinh((hi - centre) / scale)
    u = u_lo[:, None] + (u_hi - u_lo)[:, None] * np.linspace(0.0, 1.0, n)[None, :]
    slope = scale[:, None] * np.cosh(u) * ((u_hi - u_lo) / (n - 1))[:, None]  # dz / d index
    return centre[:, None] + scale[:, None] * np.sinh(u), slope


def _cumulative_integral(density: np.ndarray, slope: np.ndarray) -> np.ndarray:
    """Cumulative integral of density dz along each row, nodes z(i) with dz/di = slope.

    The trapezoid rule in the node index i with the Euler–Maclaurin end correction
    -(g'(i) - g'(0)) / 12, g = density * slope (fourth order for smooth g;
    Abramowitz & Stegun 1964, 25.4.7).
    """
    g = density * slope
    steps = (g[:, 1:] + g[:, :-1]) / 2
    cumulative = np.concatenate([np.zeros((len(g), 1)), np.cumsum(steps, axis=1)], axis=1)
    if g.shape[1] >= 3:
        derivative = np.gradient(g, axis=1)
        cumulative -= (derivative - derivative[:, :1]) / 12.0
    return np.maximum.accumulate(np.maximum(cumulative, 0.0), axis=1)


def _hermite(x: np.ndarray, nodes: np.ndarray, values: np.ndarray,
             slopes: np.ndarray) -> np.ndarray:
    """Cubic Hermite interpolation of a distribution function (values, derivatives).

    Outside the nodes: 0 below, the last value above.
    """
    index = np.clip(np.searchsorted(nodes, x) - 1, 0, len(nodes) - 2)
    x0, x1 = nodes[index], nodes[index + 1]
    h = x1 - x0
    t = np.where(h > 0, (x - x0) / np.where(h > 0, h, 1.0), 0.0)
    h00 = (1 + 2 * t) * (1 - t) ** 2
    h10 = t * (1 - t) ** 2
    h01 = t**2 * (3 - 2 * t)
    h11 = t**2 * (t - 1)
    out = (h00 * values[index] + h10 * h * slopes[index] + h01 * values[index + 1]
           + h11 * h * slopes[index + 1])
    out = np.clip(out, values[index], values[index + 1])
    out = np.where(x < nodes[0], 0.0, out)
    return np.where(x > nodes[-1], values[-1], out)


def _marginal_cdfs(axes: list[np.ndarray], weight: np.ndarray) -> list[np.ndarray]:
    """Marginal distribution function on each axis of a density on the mesh of axes."""
    ndim = len(axes)
    node = [_node_weights(a) for a in axes]
    out = []
    for j, axis in enumerate(axes):
        marginal = weight
        for k in reversed(range(ndim)):
            if k != j:
                marginal = np.tensordot(marginal, node[k], axes=([k], [0]))
        cdf = _trapezoid_cdf(marginal, axis)
        out.append(cdf / cdf[-1])
    return out


def _locate(model, hint=None):
    """Coarse passes: (axes, their cdfs, coarse mesh, its log densities, evaluations).

    The first pass spans the prior's range evenly; each later pass spans the box outside
    which the previous pass's marginals leave less than ``_BOX_TAIL`` on either side,
    with nodes placed by those marginals.
    """
    ndim = model.ndim
    points = _COARSE[ndim]
    axes = []
    for j, prior in enumerate(model.priors):
        lo, hi = prior.quantile(np.array([_TAIL, 1.0 - _TAIL]))
        lo, hi = (float(v) for v in prior.to_unconstrained(np.array([lo, hi])))
        if hint is not None:
            # reach past the prior's quantiles to the sampled range widened by its own
            # width on each side: data can put the posterior in the prior's far tail
            # (a log-normal prior's 1 - 1e-10 quantile is only 6.4 sd out)
            a, b = float(np.min(hint[:, j])), float(np.max(hint[:, j]))
            lo, hi = min(lo, a - (b - a)), max(hi, b + (b - a))
        axes.append(np.linspace(lo, hi, points))
    evaluations = 0
    for _ in range(4):
        mesh = _mesh(axes)
        lp = _evaluate(model, mesh)
        evaluations += lp.size
        if not np.isfinite(lp).any():
            raise ValueError("the posterior has no mass on the grid")
        weight = np.exp(lp - lp.max()).reshape([points] * ndim)
        cdfs = _marginal_cdfs(axes, weight)
        new = []
        for axis, cdf in zip(axes, cdfs, strict=True):
            first = int(np.searchsorted(cdf, _BOX_TAIL))
            last = int(np.searchsorted(cdf, 1.0 - _BOX_TAIL))
            lo, hi = axis[max(first - 1, 0)], axis[min(last + 1, points - 1)]
            new.append(_placed_nodes(axis, cdf, lo, hi, points))
        previous = axes, cdfs
        axes = new
    return previous[0], previous[1], mesh, lp, evaluations


def _trapezoid_cdf(density: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Unnormalised cumulative trapezoid integral along the last axis."""
    steps = (density[..., 1:] + density[..., :-1]) / 2 * np.diff(z, axis=-1)
    zero = np.zeros(density.shape[:-1] + (1,))
    return np.concatenate([zero, np.cumsum(steps, axis=-1)], axis=-1)


def _scan_range(scan_axis: np.ndarray, lp_scan: np.ndarray):
    """Per row of a scan: (max, alive, lo, hi) of the range within e^-30 of its maximum."""
    row_max = lp_scan.max(axis=1)
    alive = np.isfinite(row_max)
    top = row_max[alive].max() if alive.any() else -np.inf
    # rows far below the overall maximum carry no mass worth a fine pass
    alive &= row_max >= top - _DROP - 10.0
    n = len(scan_axis)
    near = lp_scan >= row_max[:, None] - _DROP
    first = np.where(alive, np.argmax(near, axis=1), 0)
    last = np.where(alive, n - 1 - np.argmax(near[:, ::-1], axis=1), 1)
    lo = scan_axis[np.maximum(first - 1, 0)]
    hi = scan_axis[np.minimum(last + 1, n - 1)]
    return row_max, alive, lo, hi


def _nested_rows(model, outer: list[int], inner: int, nodes, outer_nodes, points: int,
                 scan_points: int):
    """Rows (a, b) of a three-parameter pass and their quadrature weights.

    The outermost axis a gets sinh nodes from its coarse marginal; for each of them the
    middle axis b gets sinh
    nodes of its own, from a scan over (b, inner) whose log-sum over the inner axis is the
    profile of b. Returns (rows (n, 2) of (a, b) values, weights (n,), evaluations).
    """
    a_axis, a_weight = outer_nodes(outer[0], points)
    b_scan = nodes(outer[1], scan_points)
    c_scan = nodes(inner, scan_points)
    mesh = np.empty((points, scan_points, scan_points, 3))
    mesh[..., outer[0]] = a_axis[:, None, None]
    mesh[..., outer[1]] = b_scan[None, :, None]
    mesh[..., inner] = c_scan[None, None, :]
    lp = _evaluate(model, mesh.reshape(-1, 3)).reshape(points, scan_points, scan_points)
    top = np.max(lp, axis=2, keepdims=True)
    safe = np.where(np.isfinite(top), top, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        profile = np.log(np.exp(lp - safe).sum(axis=2)) + safe[..., 0]
    profile = np.where(np.isfinite(profile), profile, -np.inf)
    row_max, alive, lo, hi = _scan_range(b_scan, profile)
    b_scan_rows = np.broadcast_to(b_scan, (points, scan_points))
    b_nodes, b_slope = _sinh_nodes(b_scan_rows, profile, row_max, alive, lo, hi, points)
    # trapezoid in the node index (ends halved): spectrally accurate for the full integral
    ends = np.ones(points)
    ends[[0, -1]] = 0.5
    weight = a_weight[:, None] * b_slope * ends[None, :]
    weight = np.where(alive[:, None], weight, 0.0)
    rows = np.column_stack([np.repeat(a_axis, points), b_nodes.ravel()])
    keep = weight.ravel() > 0
    return rows[keep], weight.ravel()[keep], lp.size


def _level(model, coarse, inner: int, outer_points: int, scan_points: int, fine_points: int):
    """One quadrature level for one axis: (its z axis, its marginal cdf, evaluations)."""
    ndim = model.ndim
    coarse_axes, coarse_cdfs = coarse
    outer = [j for j in range(ndim) if j != inner]
    lo_in, hi_in = coarse_axes[inner][0], coarse_axes[inner][-1]

    def nodes(j, n):
        axis = coarse_axes[j]
        return _placed_nodes(axis, coarse_cdfs[j], axis[0], axis[-1], n)

    def outer_nodes(j, n):
        """Sinh nodes on axis j from its coarse marginal, and their quadrature weights."""
        axis = coarse_axes[j]
        with np.errstate(divide="ignore"):
            log_density = np.log(np.maximum(np.gradient(coarse_cdfs[j], axis), 0.0))
        row = log_density[None, :]
        z, slope = _sinh_nodes(axis[None, :], row, row.max(axis=1), np.ones(1, dtype=bool),
                               axis[:1], axis[-1:], n)
        ends = np.ones(n)
        ends[[0, -1]] = 0.5
        return z[0], slope[0] * ends

    evaluations = 0
    if len(outer) == 2:
        outer_mesh, cell, evaluations = _nested_rows(model, outer, inner, nodes, outer_nodes,
                                                     outer_points, scan_points)
    elif outer:
        axis, cell = outer_nodes(outer[0], outer_points)
        outer_mesh = axis[:, None]
    else:
        outer_mesh, cell = np.zeros((1, 0)), np.ones(1)
    rows = len(outer_mesh)

    def rows_at(inner_values: np.ndarray) -> np.ndarray:
        """Points (rows * k, ndim) with each row's inner values (rows, k)."""
        k = inner_values.shape[1]
        points = np.empty((rows, k, ndim))
        points[..., inner] = inner_values
        for position, j in enumerate(outer):
            points[..., j] = outer_mesh[:, position][:, None]
        return points.reshape(-1, ndim)

    if outer:
        scan_axis = nodes(inner, scan_points)
        scan = np.broadcast_to(scan_axis, (rows, scan_points))
        lp_scan = _evaluate(model, rows_at(scan)).reshape(rows, scan_points)
        evaluations += lp_scan.size
        row_max, alive, lo, hi = _scan_range(scan_axis, lp_scan)
    else:
        alive = np.ones(1, dtype=bool)
        lo, hi = np.array([lo_in]), np.array([hi_in])
    if outer:
        z_inner, slope = _sinh_nodes(scan, lp_scan, row_max, alive, lo, hi, fine_points)
    else:
        fraction = np.linspace(0.0, 1.0, fine_points)
        z_inner = lo[:, None] + (hi - lo)[:, None] * fraction[None, :]  # (rows, fine)
        slope = np.broadcast_to(((hi - lo) / (fine_points - 1))[:, None], z_inner.shape)
    lp = np.full((rows, fine_points), -np.inf)
    live = np.flatnonzero(alive)
    if live.size:
        sub = z_inner[live]
        points = np.empty((live.size, fine_points, ndim))
        points[..., inner] = sub
        for position, j in enumerate(outer):
            points[..., j] = outer_mesh[live, position][:, None]
        lp[live] = _evaluate(model, points.reshape(-1, ndim)).reshape(live.size, fine_points)
        evaluations += live.size * fine_points
    if not np.isfinite(lp).any():
        raise ValueError("the posterior has no mass on the grid")
    weight = np.exp(lp - lp.max())
    row_cdf = _cumulative_integral(weight, slope)  # (rows, fine), unnormalised
    row_mass = row_cdf[:, -1]

    if not outer:
        common = np.linspace(lo_in, hi_in, 4001)
        return common, _hermite(common, z_inner[0], row_cdf[0], weight[0]) / row_mass[0], \
            evaluations
    # each row's cdf on a common axis, weighted by the row's outer cell
    common = nodes(inner, 4001)
    total = np.zeros_like(common)
    for r in np.flatnonzero(row_mass > 0):
        total += cell[r] * _hermite(common, z_inner[r], row_cdf[r], weight[r])
    return common, total / total[-1], evaluations


def _quantiles(prior, z: np.ndarray, cdf: np.ndarray, interval: float) -> dict:
    tail = (1.0 - interval) / 2.0
    # np.interp needs increasing x: drop flat stretches of the cdf
    keep = np.concatenate([[True], np.diff(cdf) > 0])
    z_q = np.interp([0.5, tail, 1.0 - tail], cdf[keep], z[keep])
    x_q, _ = prior.from_unconstrained(z_q)
    return {"median": float(x_q[0]), "lower": float(x_q[1]), "upper": float(x_q[2])}


def _moves(prior, old: dict, new: dict, z: np.ndarray, cdf: np.ndarray,
           interval: float) -> tuple[float, float]:
    """Largest relative move of a quantile, and largest move in probability.

    The relative move is taken against the quantile's value (the interval width where it
    is 0); the move in probability is |F_new(old quantile) - p|.
    """
    tail = (1.0 - interval) / 2.0
    width = abs(new["upper"] - new["lower"])
    relative, probability = 0.0, 0.0
    for key, p in (("median", 0.5), ("lower", tail), ("upper", 1.0 - tail)):
        scale = abs(new[key]) if new[key] != 0 else width
        if scale > 0:
            relative = max(relative, abs(new[key] - old[key]) / scale)
        z_old = float(np.asarray(prior.to_unconstrained(np.array([old[key]])))[0])
        probability = max(probability, abs(float(np.interp(z_old, z, cdf)) - p))
    return relative, probability


def exact_posterior(model, interval: float = 0.95, tolerance: float = 1e-3,
                    probability_tolerance: float = 2.5e-4,
                    max_evaluations: int | None = None, hint=None) -> ExactPosterior:
    """Posterior marginals of a model with one to three free parameters, by quadrature.

    Parameters
    ----------
    model : infer.model.posterior.Model
    interval : float
        Credible level of the reported central interval.
    tolerance, probability_tolerance : float
        Refinement of a parameter stops when none of its quantiles moves by more than
        ``tolerance`` (relative to its value) between levels, or when the new
        distribution function at every old quantile is within ``probability_tolerance``
        of its level (where the density is so flat that 0.1 % of the value holds less
        probability than that; 2.5e-4 is over 6 times below the Monte Carlo sd of any
        central quantile from 10,000 effective draws, 0.0016 at 2.5 %).
    max_evaluations : int, optional
        Cap on posterior evaluations (default :data:`EVALUATION_CAP`, or
        :data:`DRIFT_EVALUATION_CAP` under the drift model).
    hint : ndarray (n, ndim), optional
        Draws in unconstrained coordinates (the sampler's): the coarse search box is
        extended to their range widened by its own width on each side, so a posterior
        in the prior's far tail is not cut off. The integration never uses them.

    Returns
    -------
    ExactPosterior
    """
    ndim = model.ndim
    if not 1 <= ndim <= MAX_DIMENSIONS:
        raise ValueError(f"the exact posterior needs 1 to {MAX_DIMENSIONS} free parameters")
    if max_evaluations is None:
        drift = getattr(model, "drift", False)
        max_evaluations = DRIFT_EVALUATION_CAP if drift else EVALUATION_CAP
    coarse_axes, coarse_cdfs, _, _, evaluations = _locate(
        model, None if hint is None else np.asarray(hint, dtype=float).reshape(-1, ndim))
    budget = (max_evaluations - evaluations) / ndim
    names = list(model.free)
    axes, densities, cdfs, z_out, priors, quantiles = {}, {}, {}, {}, {}, {}
    levels, settled, change = [], True, 0.0
    for j, (name, prior) in enumerate(zip(names, model.priors, strict=True)):
        # each parameter is integrated innermost, where a thin ridge costs nothing
        points = _START[ndim]
        used, previous, moved, done = 0, None, float("inf"), False
        while True:
            z, cdf, cost = _level(model, (coarse_axes, coarse_cdfs), j, *points)
            used += cost
            q = _quantiles(prior, z, cdf, interval)
            levels.append((name, points, q))
            if previous is not None:
                moved, in_probability = _moves(prior, previous, q, z, cdf, interval)
                if moved < tolerance or in_probability < probability_tolerance:
                    done = True
                    break
            previous = q
            points = tuple(int(round(p * 1.5)) for p in points)
            if used + 3.4 * cost > budget:  # the next level costs about 1.5^3 this one
                break
        evaluations += used
        settled &= done
        change = max(change, moved)
        x, log_jac = prior.from_unconstrained(z)
        axes[name] = np.asarray(x, dtype=float)
        densities[name] = np.gradient(cdf, z) * np.exp(-np.asarray(log_jac, dtype=float))
        cdfs[name], z_out[name], priors[name] = cdf, z, prior
        quantiles[name] = q
    return ExactPosterior(names, axes, densities, cdfs, quantiles, evaluations, settled,
                          change, levels, z_out, priors)


def verify_draws(exact: ExactPosterior, draws: dict[str, np.ndarray], interval: float,
                 z: float = 4.0, allowance: float = 0.002) -> dict:
    """Judge whether sampled quantiles agree with the exact posterior (Monte Carlo error).

    Parameters
    ----------
    exact : ExactPosterior
    draws : dict
        name -> posterior draws shaped (chains, draws).
    interval : float
    z : float
        Agreement allows ``z`` Monte Carlo standard deviations.
    allowance : float
        Added to the allowed difference in probability, for the quadrature's own error.

    Returns
    -------
    dict
        ``verified`` (True, False, or None when the quadrature did not settle),
        ``parameters`` (per parameter and quantile: sampled, exact, exact probability
        below the sampled value, Monte Carlo sd, relative difference) and ``messages``.
    """
    from infer.inference.diagnostics import ess_indicator

    tail = (1.0 - interval) / 2.0
    probabilities = {"median": 0.5, "lower": tail, "upper": 1.0 - tail}
    report, messages, agrees = {}, [], True
    for name in exact.names:
        x = np.atleast_2d(np.asarray(draws[name], dtype=float))
        sampled = dict(zip(("median", "lower", "upper"), central_quantiles(x, interval),
                           strict=True))
        exact_q = exact.quantiles[name]
        width = exact_q["upper"] - exact_q["lower"]
        entry = {}
        for key, p in probabilities.items():
            at = exact.cdf_at(name, sampled[key])
            ess = ess_indicator(x, exact_q[key])
            if not (np.isfinite(ess) and ess > 0):
                # every draw on one side of the exact quantile: no autocorrelation to
                # estimate, and the draws miss that side entirely
                ess = float(x.size)
            sd = float(np.sqrt(p * (1 - p) / ess))
            scale = abs(exact_q[key]) if exact_q[key] != 0 else width
            relative = float(abs(sampled[key] - exact_q[key]) / scale) if scale > 0 else 0.0
            ok = abs(at - p) <= z * sd + allowance
            entry[key] = {"sampled": sampled[key], "exact": exact_q[key],
                          "exact_probability_below_sampled": at, "monte_carlo_sd": sd,
                          "relative_difference": relative, "agrees": bool(ok)}
            if not ok:
                agrees = False
                messages.append(
                    f"the sampled {100 * p:g} % point of {name} is {sampled[key]:.3g} where "
                    f"the exact posterior puts it at {exact_q[key]:.3g} (exact probability "
                    f"below the sampled value {at:.4f}, Monte Carlo sd {sd:.4f})")
        report[name] = entry
    if not exact.settled:
        return {"verified": None, "parameters": report, "messages": [
            f"the exact posterior did not settle within {exact.points:,} evaluations "
            f"(its quantiles still moved by {100 * exact.change:.2f} %), so the sampler "
            "is not verified"]}
    return {"verified": bool(agrees), "parameters": report, "messages": messages}
