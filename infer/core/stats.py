"""Statistical pieces every layer shares: binomial terms, central intervals, p-values.

Pure numpy and :mod:`scipy.special` (``scipy.stats`` costs ~0.4 s to import and is
not needed): the exact log-binomial and multinomial terms, the equal-tailed (central)
interval of a set of draws, the spread implied by a published central interval, and
the two-sided posterior predictive p-value.
"""

from __future__ import annotations

import functools
import math

import numpy as np
from scipy import special

__all__ = [
    "Z975",
    "central_z",
    "log_choose",
    "log_binomial",
    "log_multinomial_coefficient",
    "central_tails",
    "central_quantiles",
    "clopper_pearson",
    "sigma_of_log",
    "sd_of_interval",
    "two_sided_p_value",
]

#: the standard normal 97.5 % quantile, ``ndtri(0.975)``: half-width of a 95 % interval in sds
Z975 = 1.959963984540054


def central_z(level: float) -> float:
    """Half-width, in standard deviations, of the central normal interval at ``level``.

    ``sqrt(2) erfinv(level)``, which avoids forming ``0.5 + level / 2`` and so keeps
    full precision for levels close to 1.

    Parameters
    ----------
    level : float
        Coverage of the central interval, in (0, 1).

    Returns
    -------
    float
        ``z`` with ``P(|Z| <= z) = level`` for a standard normal ``Z``.
    """
    return float(math.sqrt(2.0) * special.erfinv(level))


def log_choose(n, k):
    """Log of the binomial coefficient C(n, k), through ``gammaln``, vectorised.

    Parameters
    ----------
    n, k : array_like
        Totals and counts, ``0 <= k <= n`` (whole numbers, as floats or integers).

    Returns
    -------
    numpy.ndarray or numpy.float64
        ``ln n! - ln k! - ln (n-k)!``.
    """
    n = np.asarray(n, dtype=float)
    k = np.asarray(k, dtype=float)
    return special.gammaln(n + 1.0) - special.gammaln(k + 1.0) - special.gammaln(n - k + 1.0)


@functools.lru_cache(maxsize=1024)
def _scalar_log_choose(n: float, k: float) -> float:
    return float(log_choose(n, k))


def log_binomial(k, n, p):
    """Log of C(n, k) p^k (1-p)^(n-k), vectorised; -inf where p is NaN or outside [0, 1].

    The edge cases follow the limits: ``p = 0`` gives 0 for ``k = 0`` and -inf otherwise,
    ``p = 1`` gives 0 for ``k = n`` and -inf otherwise (a count of 0 takes ``0 log 0 = 0``).

    Parameters
    ----------
    k, n : array_like
        Counts and totals, ``0 <= k <= n``.
    p : array_like
        Success probabilities; broadcast against ``k`` and ``n``.

    Returns
    -------
    numpy.ndarray
        The log probability of ``k`` successes in ``n`` trials.
    """
    p = np.asarray(p, dtype=float)
    if np.ndim(k) == 0 and np.ndim(n) == 0:   # one observation's constant, reused per call
        constant = _scalar_log_choose(float(n), float(k))
    else:
        constant = log_choose(n, k)
    # constant + k·log p + (n-k)·log1p(-p), with 0·log 0 = 0 where a count is 0 (numpy's
    # log is several times faster than scipy's xlogy and gives the same values elsewhere)
    with np.errstate(divide="ignore", invalid="ignore"):
        if np.ndim(k) == 0 and np.ndim(n) == 0 and 0 < k < n:
            # both logs weigh: p < 0, p > 1 and NaN already give NaN
            value = constant + k * np.log(p) + (n - k) * np.log1p(-p)
            return np.where(np.isnan(value), -np.inf, value)
        k = np.asarray(k, dtype=float)
        rest = np.asarray(n, dtype=float) - k
        value = np.where(k == 0, 0.0, k * np.log(p))
        other = np.where(rest == 0, 0.0, rest * np.log1p(-p))
        value = constant + value + other
        good = (p >= 0) & (p <= 1)  # False for NaN
    return np.where(good & ~np.isnan(value), value, -np.inf)


def log_multinomial_coefficient(counts) -> float:
    """Log of the multinomial coefficient (sum counts)! / prod(counts!).

    Parameters
    ----------
    counts : sequence of int
        The category counts (whole numbers >= 0).

    Returns
    -------
    float
    """
    total = sum(counts)
    return float(special.gammaln(total + 1.0) - sum(special.gammaln(c + 1.0) for c in counts))


def central_tails(interval: float) -> tuple[float, float]:
    """The lower and upper probabilities of the central (equal-tailed) ``interval``.

    Parameters
    ----------
    interval : float
        Coverage in (0, 1), such as 0.95.

    Returns
    -------
    tuple of float
        ``((1 - interval) / 2, 1 - (1 - interval) / 2)``.
    """
    tail = (1.0 - interval) / 2.0
    return tail, 1.0 - tail


def central_quantiles(draws, interval: float) -> tuple[float, float, float]:
    """Median and central ``interval`` of the finite draws: (median, lower, upper).

    Parameters
    ----------
    draws : array_like
        Any shape; NaN and infinite values are left out.
    interval : float
        Coverage of the equal-tailed interval, in (0, 1).

    Returns
    -------
    tuple of float
        ``(median, lower, upper)`` (``numpy.quantile``, linear interpolation); NaN
        three times when no draw is finite.
    """
    flat = np.asarray(draws, dtype=float).ravel()
    flat = flat[np.isfinite(flat)]
    if flat.size == 0:
        return (float("nan"),) * 3
    low, high = central_tails(interval)
    med, lo, hi = np.quantile(flat, [0.5, low, high])
    return float(med), float(lo), float(hi)


def clopper_pearson(k, n, level: float = 0.95) -> tuple[float, float]:
    """Exact central binomial interval for k successes in n trials.

    The beta quantiles of Clopper & Pearson (1934, Biometrika 26: 404-413): lower end
    ``B^-1(tail; k, n - k + 1)`` (0 when k = 0), upper end ``B^-1(1 - tail; k + 1, n - k)``
    (1 when k = n), ``tail = (1 - level) / 2``.

    Parameters
    ----------
    k, n : int
        Successes and trials, ``0 <= k <= n``, ``n >= 1``.
    level : float, optional
        Coverage, default 0.95.

    Returns
    -------
    tuple of float
        ``(lower, upper)``.
    """
    low, high = central_tails(level)
    lower = float(special.betaincinv(k, n - k + 1, low)) if k > 0 else 0.0
    upper = float(special.betaincinv(k + 1, n - k, high)) if k < n else 1.0
    return lower, upper


def sigma_of_log(lower, upper, *, z: float = Z975):
    """Sigma of ln X from a central interval (lower, upper) of a log-normal X.

    ``(ln upper - ln lower) / (2 z)``; the default ``z`` reads the interval as 95 %
    (use :func:`central_z` for another level).

    Parameters
    ----------
    lower, upper : array_like
        Positive interval ends.
    z : float, optional
        Half-width of the interval in standard deviations.

    Returns
    -------
    numpy.ndarray or numpy.float64
    """
    lower = np.asarray(lower, dtype=float)
    upper = np.asarray(upper, dtype=float)
    return (np.log(upper) - np.log(lower)) / (2.0 * z)


def sd_of_interval(lower, upper, *, z: float = Z975):
    """Standard deviation of a normal X from a central interval (lower, upper).

    ``(upper - lower) / (2 z)``; the default ``z`` reads the interval as 95 %.

    Parameters
    ----------
    lower, upper : array_like
        Interval ends.
    z : float, optional
        Half-width of the interval in standard deviations.

    Returns
    -------
    numpy.ndarray or numpy.float64
    """
    return (np.asarray(upper, dtype=float) - np.asarray(lower, dtype=float)) / (2.0 * z)


def two_sided_p_value(replicated, observed: float) -> float:
    """Two-sided posterior predictive p-value, ``min(1, 2 min(P(T >= t), P(T <= t)))``.

    Counting ties on both sides keeps a discrete statistic's p-value conservative
    (Gelman, Meng & Stern 1996, Statistica Sinica 6:733, for the posterior predictive
    p-value; the two-sided form is common practice).

    Parameters
    ----------
    replicated : array_like
        Replicated statistics T; NaN and infinite values are left out.
    observed : float
        The observed statistic t.

    Returns
    -------
    float
        The p-value, NaN when no replicate is finite.
    """
    rep = np.asarray(replicated, dtype=float).ravel()
    rep = rep[np.isfinite(rep)]
    if rep.size == 0:
        return float("nan")
    upper = np.mean(rep >= observed)
    lower = np.mean(rep <= observed)
    return float(min(1.0, 2.0 * min(upper, lower)))
