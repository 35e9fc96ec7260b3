"""Convergence diagnostics on raw (chain, draw) arrays.

Rank-normalised split R-hat and bulk / tail effective sample size. The estimators are
those of Vehtari, Gelman, Simpson, Carpenter & Bürkner (2021),
"Rank-normalization, folding, and localization: an improved R-hat for assessing
convergence of MCMC", Bayesian Analysis 16:667, with the autocorrelation sum truncated by
Geyer's initial positive and initial monotone sequences (Geyer 1992, Statistical Science
7:473). They are written here in numpy because importing arviz costs several seconds,
which a command that only needs a few numbers should not pay. The definitions follow
arviz-stats 1.x step for step (the truncation keeps, as there, the even-lag term of the
first non-positive pair once), so that the numbers in summary.json are arviz's own on the
draws stored in posterior.nc; tests/inference/test_diagnostics.py checks equality to
1e-10.
"""

from __future__ import annotations

import numpy as np
from scipy.special import ndtri

__all__ = ["ess_bulk", "ess_tail", "ess_indicator", "r_hat"]

#: fewest draws per chain for which a diagnostic is defined (as in arviz-stats)
MIN_DRAWS = 4


def _invalid(x: np.ndarray, min_chains: int) -> bool:
    """True when the diagnostic is undefined: non-finite values, or too few draws or chains."""
    return (x.shape[0] < min_chains or x.shape[1] < MIN_DRAWS
            or not bool(np.all(np.isfinite(x))))


def _as_chains(x) -> np.ndarray:
    return np.atleast_2d(np.asarray(x, dtype=float))


def _split(x: np.ndarray) -> np.ndarray:
    """Split each chain in half (dropping the middle draw of an odd length)."""
    half = x.shape[1] // 2
    return np.concatenate([x[:, :half], x[:, -half:]], axis=0)


def _average_ranks(values: np.ndarray) -> np.ndarray:
    """Ranks 1..n of the flattened values, ties given their average rank."""
    flat = values.ravel()
    order = np.argsort(flat)  # ties get their average rank: their order does not matter
    sorted_values = flat[order]
    # runs of equal values in the sorted order (np.unique would sort them again)
    first = np.flatnonzero(np.concatenate([[True], sorted_values[1:] != sorted_values[:-1]]))
    counts = np.diff(np.append(first, flat.size))
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
    """Effective sample size of (chains, draws) by Geyer's initial monotone sequence.

    With rho_t the combined-chain autocorrelation (Vehtari et al. 2021, eq. 10) and
    P_k = rho_2k + rho_2k+1, the pairs are summed up to the first k with P_k <= 0
    (initial positive sequence, at most up to lag n - 3), made non-increasing (initial
    monotone sequence), and the even term rho_2k of the last pair examined is added once
    when positive: tau = -1 + 2 sum_{j<k} P_j + rho_2k; ESS = chains n / tau, with tau
    at least 1 / log10(chains n).
    """
    chains, n = x.shape
    if np.max(x) - np.min(x) < np.finfo(float).resolution:
        return float(x.size)  # a constant sequence: every draw counts (as arviz-stats)
    acov = _autocovariance(x)
    chain_mean = x.mean(axis=1)
    mean_var = acov[:, 0].mean() * n / (n - 1.0)
    var_plus = mean_var * (n - 1.0) / n
    if chains > 1:
        var_plus += chain_mean.var(ddof=1)
    rho = 1.0 - (mean_var - acov.mean(axis=0)) / var_plus
    rho[0] = 1.0
    # pairs P_0..P_K, P_k examined while 2k - 1 < n - 3
    last_pair = max((n - 3) // 2, 0)
    count = last_pair + 1
    pairs = rho[0: 2 * count: 2] + rho[1: 2 * count: 2]
    if pairs[0] <= 0:
        stop = 0
    else:
        nonpositive = np.flatnonzero(pairs[1:] <= 0)
        stop = int(nonpositive[0]) + 1 if nonpositive.size else last_pair
    even = rho[2 * stop]
    tail = even if (even > 0 or (stop >= 1 and pairs[stop] >= 0)) else 0.0
    monotone = np.minimum.accumulate(pairs[:stop])
    if np.isnan(rho[: 2 * stop + 2]).any():
        return float("nan")
    tau = -1.0 + 2.0 * monotone.sum() + tail
    tau = max(tau, 1.0 / np.log10(chains * n))
    return float(chains * n / tau)


def ess_bulk(x) -> float:
    """Bulk effective sample size of a (chain, draw) array (rank-normalised, split)."""
    x = _as_chains(x)
    if _invalid(x, 1):
        return float("nan")
    return _ess(_rank_normalise(_split(x)))


def ess_tail(x, prob: tuple[float, float] = (0.05, 0.95)) -> float:
    """Tail effective sample size: the smaller ESS of the two quantile indicators.

    The quantiles are those of all draws (numpy's linear interpolation), the indicators
    ``x <= quantile`` are then split (Vehtari et al. 2021, section 4.3).
    """
    x = _as_chains(x)
    if _invalid(x, 1):
        return float("nan")
    return float(min(ess_indicator(x, float(np.quantile(x, p))) for p in prob))


def ess_indicator(x, threshold: float) -> float:
    """Effective sample size of the indicator ``x <= threshold`` (split chains).

    The Monte Carlo sd of the empirical distribution function at ``threshold`` is
    ``sqrt(p (1 - p) / ess_indicator)`` (Vehtari et al. 2021, section 4.3).
    """
    x = _as_chains(x)
    if _invalid(x, 1):
        return float("nan")
    return _ess(_split((x <= threshold).astype(float)))


def _rhat(x: np.ndarray) -> float:
    chains, n = x.shape
    within = x.var(axis=1, ddof=1).mean()
    between = n * x.mean(axis=1).var(ddof=1)
    return float(np.sqrt((between / within + n - 1.0) / n))


def r_hat(x) -> float:
    """Rank-normalised split R-hat: the larger of the bulk and the folded version.

    NaN with fewer than two chains or four draws, or non-finite values (as arviz-stats).
    """
    x = _as_chains(x)
    if _invalid(x, 2):
        return float("nan")
    split = _split(x)
    bulk = _rhat(_rank_normalise(split))
    folded = _rhat(_rank_normalise(np.abs(split - np.median(split))))
    return max(bulk, folded)
