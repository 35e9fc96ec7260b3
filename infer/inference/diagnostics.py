"""Convergence diagnostics on raw (chain, draw) arrays.

Rank-normalised split R-hat and bulk / tail effective sample size. The estimators are
those of Vehtari, Gelman, Simpson, Carpenter & Bürkner (2021),
"Rank-normalization, folding, and localization: an improved R-hat for assessing
convergence of MCMC", Bayesian Analysis 16:667, with the autocorrelation sum truncated by
Geyer's initial monotone sequence (Geyer 1992, Statistical Science 7:473). They are
written here in numpy because importing arviz costs several seconds, which a command
that only needs two numbers should not pay; tests check them against arviz.
"""

from __future__ import annotations

import numpy as np
from scipy.special import ndtri

__all__ = ["ess_bulk", "ess_tail", "ess_indicator", "r_hat"]


def _split(x: np.ndarray) -> np.ndarray:
    """Split each chain in half (dropping the middle draw of an odd length)."""
    x = np.atleast_2d(np.asarray(x, dtype=float))
    half = x.shape[1] // 2
    return np.concatenate([x[:, :half], x[:, -half:]], axis=0)


def _average_ranks(values: np.ndarray) -> np.ndarray:
    """Ranks 1..n of the flattened values, ties given their average rank."""
    flat = values.ravel()
    order = np.argsort(flat, kind="mergesort")
    sorted_values = flat[order]
    _, first, counts = np.unique(sorted_values, return_index=True, return_counts=True)
    average = first + (counts + 1) / 2.0
    ranks = np.empty(flat.size)
    ranks[order] = np.repeat(average, counts)
    return ranks.reshape(values.shape)


def _rank_normalise(x: np.ndarray) -> np.ndarray:
    """Normal scores of the pooled ranks (Blom's offset 3/8, as in Vehtari et al.)."""
    ranks = _average_ranks(x)
    return ndtri((ranks - 3.0 / 8.0) / (x.size + 1.0 / 4.0))


def _autocovariance(x: np.ndarray) -> np.ndarray:
    """Autocovariance of each row at every lag (biased estimator, via FFT)."""
    n = x.shape[1]
    centred = x - x.mean(axis=1, keepdims=True)
    size = 1 << (2 * n - 1).bit_length()
    spectrum = np.fft.rfft(centred, n=size, axis=1)
    return np.fft.irfft(spectrum * np.conj(spectrum), n=size, axis=1)[:, :n] / n


def _ess(x: np.ndarray) -> float:
    """Effective sample size of (chains, draws) by Geyer's initial monotone sequence."""
    chains, n = x.shape
    if n < 4 or not np.all(np.isfinite(x)):
        return float("nan")
    acov = _autocovariance(x)
    chain_mean = x.mean(axis=1)
    mean_var = acov[:, 0].mean() * n / (n - 1.0)
    var_plus = mean_var * (n - 1.0) / n
    if chains > 1:
        var_plus += chain_mean.var(ddof=1)
    if var_plus <= 0:
        return float("nan")
    rho = 1.0 - (mean_var - acov.mean(axis=0)) / var_plus
    rho[0] = 1.0
    pairs = rho[: 2 * (n // 2)].reshape(-1, 2).sum(axis=1)  # Gamma_t = rho_2t + rho_2t+1
    positive = np.flatnonzero(pairs <= 0)
    stop = positive[0] if positive.size else pairs.size
    pairs = np.minimum.accumulate(pairs[:stop])  # initial monotone sequence
    tau = -1.0 + 2.0 * pairs.sum()
    tau = max(tau, 1.0 / np.log10(chains * n))
    return float(chains * n / tau)


def ess_bulk(x) -> float:
    """Bulk effective sample size of a (chain, draw) array (rank-normalised, split)."""
    return _ess(_rank_normalise(_split(x)))


def ess_tail(x, prob: tuple[float, float] = (0.05, 0.95)) -> float:
    """Tail effective sample size: the smaller ESS of the two quantile indicators."""
    split = _split(x)
    values = []
    for p in prob:
        indicator = (split <= np.quantile(split, p)).astype(float)
        values.append(_ess(indicator))
    return float(min(values))


def ess_indicator(x, threshold: float) -> float:
    """Effective sample size of the indicator ``x <= threshold`` (split chains).

    The Monte Carlo sd of the empirical distribution function at ``threshold`` is
    ``sqrt(p (1 - p) / ess_indicator)`` (Vehtari et al. 2021, section 4.3).
    """
    return _ess((_split(x) <= threshold).astype(float))


def _rhat(x: np.ndarray) -> float:
    chains, n = x.shape
    within = x.var(axis=1, ddof=1).mean()
    between = n * x.mean(axis=1).var(ddof=1)
    return float(np.sqrt(((n - 1.0) / n * within + between / n) / within))


def r_hat(x) -> float:
    """Rank-normalised split R-hat: the larger of the bulk and the folded version."""
    split = _split(x)
    bulk = _rhat(_rank_normalise(split))
    folded = _rhat(_rank_normalise(np.abs(split - np.median(split))))
    return max(bulk, folded)
