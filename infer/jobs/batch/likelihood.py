"""Per-locus likelihood grids of ``qhat batch`` (maths of infer/jobs/batch/run.py's docstring).

The deterministic model's lattice rule (mu integrated as a correlation on the grid
spacing) and the drift model's spline shortcuts. ``settings`` is an
``infer.jobs.batch.run.BatchSettings``.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["likelihood_grid", "drift_coarse_log_likelihood", "z_points", "TAILS"]

TAILS = 6.0              # kernel cut, in sigmas of ln mu
_DRIFT_U_SPACING = 0.33  # drift model: log L computed on grid nodes about this far apart in u
_DRIFT_BLOCK = 32        # drift model: rows per block of the mu integral
_DRIFT_Z_NODES = 9       # drift model: nodes of ln mu (z = -6..6) where log L is computed


def _kernel(mu, mu_sigma, settings, offsets):
    """Weights w (loci, len(offsets)) of t = ln mu' at t_c + offsets·Δ, each row sums to 1.

    Nodes with t >= 0 (mu' >= 1, i.e. mu infinite) have no density: weight 0.
    """
    step = settings.step
    t_c = np.log(mu / (1.0 + mu))
    t = t_c[:, None] + offsets[None, :] * step
    finite = t < 0.0
    t = np.where(finite, t, -1.0)
    log_mu = t - np.log1p(-np.exp(t))
    sigma = mu_sigma[:, None]
    exact = sigma == 0.0
    safe = np.where(exact, 1.0, sigma)
    z = (log_mu - np.log(mu)[:, None]) / safe
    w = np.exp(-0.5 * z * z) / (-np.expm1(t))
    w = np.where(finite & (np.abs(offsets)[None, :] * step <= TAILS * sigma), w, 0.0)
    w = np.where(exact, (offsets == 0)[None, :].astype(float), w)
    return w / np.sum(w, axis=1, keepdims=True)


def _log1m_exp(log_q):
    """log(1 - q) from log q < 0, without a log1p for every element.

    The series -q(1 + q/2 + q²/3 + q³/4 + q⁴/5) below q = 1e-3 (truncation < q^6/6,
    under a rounding error), log1p elsewhere.
    """
    q = np.exp(log_q)
    out = -q * (1.0 + q * (0.5 + q * (1.0 / 3.0 + q * (0.25 + q * 0.2))))
    large = q >= 1e-3
    out[large] = np.log1p(-q[large])
    return out


def _log_binomial_peak(k, n):
    """Maximum over q of log C(n,k) q^k (1-q)^(n-k), attained at q = k/n."""
    from infer.core.stats import log_binomial, log_choose

    return log_binomial(k, n, k / n), log_choose(n, k)


def _log_binomial_lattice(k, n, mu, r, settings):
    """Log q and log B(k; n, q) − log max_q B at the ln q lattice points ``r``.

    Lattice point r is ln q = ln mu'_c − u_0 + (J − r)·Δ (decreasing in r). Where
    q ≥ 1 (no interior balance) only k = n has probability (log B − peak = 0).
    Returns ``log_q``, ``log_b`` (loci, r.size) and the peak log B (loci,).
    """
    u0 = math.log(settings.s_low)
    log_q = (np.log(mu / (1.0 + mu))[:, None] - u0
             + (settings.half_width - r)[None, :] * settings.step)
    peak, log_choose = _log_binomial_peak(k, n)
    interior = log_q < 0.0
    inside = np.where(interior, log_q, -1.0)
    log_b = np.where(interior, log_choose[:, None] + k[:, None] * inside
                     + (n - k)[:, None] * _log1m_exp(inside) - peak[:, None],
                     np.where((k == n)[:, None], 0.0, -np.inf))
    return log_q, log_b, peak


def _deterministic_grid(k, n, mu, mu_sigma, settings):
    """Scaled likelihood (loci, S) and its log scale (loci,), module docstring rule."""
    S, J, step = settings.grid_points, settings.half_width, settings.step
    r = np.arange(S + 2 * J)
    _, log_b, peak = _log_binomial_lattice(k, n, mu, r, settings)
    # keep only the lattice points this locus's kernel can reach (the others meet zero
    # weights, and exp() of them could overflow: inf·0 = NaN), rescaled by their largest
    # value so no row underflows
    reach = np.sum(np.arange(J + 1)[None, :] * step <= TAILS * mu_sigma[:, None], axis=1) - 1
    reachable = (r[None, :] >= (J - reach)[:, None]) & (r[None, :] <= (S - 1 + J + reach)[:, None])
    log_b = np.where(reachable, log_b, -np.inf)
    top = np.max(log_b, axis=1)
    top = np.where(np.isfinite(top), top, 0.0)
    b = np.exp(log_b - top[:, None])
    peak = peak + top
    w = _kernel(mu, mu_sigma, settings, np.arange(-J, J + 1))
    # L_i = Σ_a w_a b_(i + 2J - a): a dot product of each row's reversed kernel with a
    # sliding window of its lattice (einsum's own loop, the same for every row)
    windows = np.lib.stride_tricks.sliding_window_view(b, 2 * J + 1, axis=1)
    likelihood = np.einsum("lsk,lk->ls", windows, np.ascontiguousarray(w[:, ::-1]))
    return likelihood, peak


def drift_coarse_log_likelihood(k, n, mu, mu_sigma, settings):
    """Drift-model log L (loci, nodes) on the coarse nodes ``_drift_nodes(settings)``.

    log L is smooth in u and in ln mu, so it is computed on grid nodes ~0.33 apart and,
    for uncertain mu, at 9 nodes z = -6..6 (ln mu = ln mu_c + sigma·z); cubic splines
    of log L carry it to the full grid and to a fine rule of ``z_points(mu_sigma, k)``
    points in z (each locus's own, at most ``settings.z_points``), where the log-normal
    weights integrate mu out (Simpson's rule, :func:`_simpson`). Interpolating the
    logarithm, not L, keeps likelihoods much narrower than sigma accurate (log L is
    near-quadratic). The normaliser of Wright's density, the same for every locus at a
    given (mu, s_het), is interpolated from a table along mu
    (:mod:`infer.core.drift.normaliser_table`), so each (locus, node) costs one
    quadrature, the sample's; and the 9 rates of a (locus, s_het node) share that
    quadrature's layout and integrand, re-weighted by x^δ for each rate
    (:func:`~infer.core.drift.stationary.log_binomial_probability_along_mu`).
    """
    from scipy.interpolate import CubicSpline

    from infer.core.drift.normaliser_table import tabulated_log_normaliser
    from infer.core.drift.stationary import (log_binomial_probability,
                                             log_binomial_probability_along_mu)

    k, n = np.asarray(k, dtype=float), np.asarray(n, dtype=float)
    mu, mu_sigma = np.asarray(mu, dtype=float), np.asarray(mu_sigma, dtype=float)
    u = settings.log_s
    coarse = _drift_nodes(settings)
    two_s = 2.0 * np.exp(u[coarse])
    log_l = np.empty((k.size, coarse.size))
    exact = mu_sigma == 0.0
    z = np.linspace(-TAILS, TAILS, _DRIFT_Z_NODES)
    nodes = mu[:, None] * np.exp(np.where(exact, 0.0, mu_sigma)[:, None] * z[None, :])
    nodes[exact, 1:] = nodes[exact, :1]
    log_z = tabulated_log_normaliser(settings.Ne, np.where(exact[:, None], nodes[:, :1], nodes),
                                     two_s, 0.5, settings.nu)       # (loci, z, coarse)
    if np.any(exact):
        log_l[exact] = log_binomial_probability(k[exact, None], n[exact, None], settings.Ne,
                                                mu[exact, None], two_s[None, :], 0.5, settings.nu,
                                                log_z=log_z[exact, 0])
    sizes = np.minimum(z_points(mu_sigma, k), settings.z_points)
    rows = np.flatnonzero(~exact)
    for size in np.unique(sizes[rows]):
        fine = np.linspace(-TAILS, TAILS, size)
        weights = np.exp(-0.5 * fine * fine) * _simpson(size)
        weights /= weights.sum()
        # the not-a-knot spline is linear in its data: values at ``fine`` = data @ spline
        spline = CubicSpline(z, np.eye(z.size), axis=0)(fine).T      # (z nodes, size)
        same = rows[sizes[rows] == size]   # blocks of loci with one rule size
        for start in range(0, same.size, _DRIFT_BLOCK):   # blocks of rows bound the memory
            block = same[start:start + _DRIFT_BLOCK]
            at_nodes = log_binomial_probability_along_mu(
                k[block, None, None], n[block, None, None], settings.Ne,
                nodes[block, None, :], two_s[None, :, None], 0.5, settings.nu,
                log_z=np.swapaxes(log_z[block], 1, 2))
            between = at_nodes @ spline
            top = np.max(between, axis=2)
            top = np.where(np.isfinite(top), top, 0.0)
            between -= top[:, :, None]
            with np.errstate(divide="ignore"):
                log_l[block] = np.log(np.exp(between, out=between) @ weights) + top
    return log_l


def z_points(mu_sigma, observed):
    """Points of each locus's fine z rule (rounded up to 128·2^j + 1, or 1201).

    The spacing in ln mu stays below half the width of the locus's likelihood,
    1/sqrt(k + 1): 129, 257, 513, 1025 or at most 1201 points. The rounding makes a
    locus's rule depend on its own sigma and count only; every size puts an even
    number of intervals between the 9 spline nodes (Simpson's rule).
    """
    spacing = 0.5 / np.maximum(np.asarray(mu_sigma, dtype=float)
                               * np.sqrt(np.asarray(observed, dtype=float) + 1.0), 1e-12)
    need = np.ceil(2 * TAILS / spacing) + 1
    sizes = np.full(need.shape, 1201)
    for size in (1025, 513, 257, 129):
        sizes = np.where(need <= size, size, sizes)
    return sizes


def _simpson(size):
    """Composite Simpson weights (up to the common factor) of ``size`` equally spaced points.

    The spline of log L is a cubic between its nodes and every node is a grid point
    with an even number of intervals between nodes, so each Simpson panel lies inside
    one spline piece, where exp(spline) times the normal weight is smooth.
    """
    weights = np.ones(size)
    weights[1:-1:2] = 4.0
    weights[2:-1:2] = 2.0
    return weights


def _drift_nodes(settings):
    stride = max(1, int(_DRIFT_U_SPACING / settings.step))
    return np.unique(np.r_[np.arange(0, settings.grid_points, stride), settings.grid_points - 1])


def _drift_grid(coarse_log_l, settings):
    """Full-grid drift likelihood (scaled) and log scale from the coarse log L."""
    from scipy.interpolate import CubicSpline

    u = settings.log_s
    full = CubicSpline(u[_drift_nodes(settings)], coarse_log_l, axis=1)(u)
    scale = np.max(full, axis=1)
    return np.exp(full - scale[:, None]), scale


def likelihood_grid(observed, sampled, mu, mu_sigma, settings, *,
                    coarse_log_l=None):
    """Per-locus likelihood of the grid of s_het, mu integrated out.

    Parameters
    ----------
    observed, sampled, mu, mu_sigma : ndarray, shape (loci,)
        Allele copies k, alleles sampled n, median mutation rate, sigma of ln mu
        (0 = known exactly).
    settings : BatchSettings
    coarse_log_l : ndarray, optional
        Drift model: ``drift_coarse_log_likelihood`` already computed for these loci.

    Returns
    -------
    likelihood : ndarray, shape (loci, S)
        L_i / max_i L_i (each row's maximum is 1, or the row is 0).
    log_scale : ndarray, shape (loci,)
        log max_i L_i, so that log L_i = log(likelihood) + log_scale.
    """
    k = np.asarray(observed, dtype=float)
    n = np.asarray(sampled, dtype=float)
    mu = np.asarray(mu, dtype=float)
    mu_sigma = np.asarray(mu_sigma, dtype=float)
    if settings.model == "drift":
        if coarse_log_l is None:
            coarse_log_l = drift_coarse_log_likelihood(k, n, mu, mu_sigma, settings)
        likelihood, scale = _drift_grid(coarse_log_l, settings)
    else:
        likelihood, scale = _deterministic_grid(k, n, mu, mu_sigma, settings)
    row_max = np.max(likelihood, axis=1)
    positive = row_max > 0.0
    likelihood = likelihood / np.where(positive, row_max, 1.0)[:, None]
    with np.errstate(divide="ignore"):
        log_scale = np.where(positive, scale + np.log(np.where(positive, row_max, 1.0)), -np.inf)
    return likelihood, log_scale
