"""Per-locus posterior summaries for ``qhat batch``: quantiles, mean, expected count, flags."""

from __future__ import annotations

import math

import numpy as np

from infer.jobs.batch.likelihood import _log_binomial_lattice
from infer.jobs.batch.prior import SHetPrior, trapezoid_weights
from infer.core.stats import Z975

__all__ = ["posterior_summary", "FLAGS", "H_HALF_NOTE", "RECESSIVE_FLAG"]

FLAGS = {
    1: ("zero-observed", "zero observed: only a lower bound on s_het"),
    2: ("frequency-too-high", "frequency too high for balance at s_low: the data ask for "
        "weaker selection than the prior allows"),
    4: ("at-prior-bound", "interval reaches the prior bound"),
    8: ("narrower-than-grid", "posterior narrower than two grid steps: raise --grid-points"),
    16: ("no-likelihood", "no grid point gives the data a positive probability"),
    32: ("median-from-s-high", "zero observed and the likelihood is flat at the median (within "
         "a factor 2 of its value at --s-high): the posterior median is set by the prior's "
         "upper end, not by the data; read the lower bound"),
    64: ("sample-exceeds-2Ne", "drift model: more allele copies sampled than the 2Ne "
         "genes of the population; the binomial sample of a stationary frequency no "
         "longer holds (sampling is effectively the whole population, or Ne is too low)"),
    128: ("recessive-locus", "the loci file gives mode = recessive: s_het assumes selection "
          "on heterozygotes (h = 1/2); a recessive disorder's heterozygotes are barely "
          "selected (q ~ sqrt(mu/s)), so this s_het is not its selection coefficient"),
}
#: the flag of a locus whose disorder the loci file says is recessive
RECESSIVE_FLAG = 128
#: what every s_het in a batch assumes (docs/model.md): the balance q ~ mu/s_het holds for
#: h = 1/2 (s_het = h·s the heterozygote's selection); for a recessive disorder (h ~ 0)
#: it does not apply
H_HALF_NOTE = ("s_het assumes selection on heterozygotes, q ~ mu/s_het with s = 2 s_het and "
               "h = 1/2; for loci whose disorder is recessive (h ~ 0) heterozygotes are "
               "barely selected, the balance is q ~ sqrt(mu/s), and these s_het values do "
               "not apply")


def _quantiles(density, settings, probabilities):
    """Quantiles in u of the piecewise-linear density on the grid (rows unnormalised)."""
    step, u = settings.step, settings.log_s
    cell = 0.5 * step * (density[:, 1:] + density[:, :-1])
    cdf = np.concatenate([np.zeros((density.shape[0], 1)), np.cumsum(cell, axis=1)], axis=1)
    rows = np.arange(density.shape[0])
    out = []
    for p in probabilities:
        target = p * cdf[:, -1]
        i = np.clip(np.sum(cdf[:, 1:] < target[:, None], axis=1), 0, density.shape[1] - 2)
        f0, f1 = density[rows, i], density[rows, i + 1]
        need = (target - cdf[rows, i]) / step
        # f0·t + (f1 - f0)·t²/2 = need, solved without cancellation
        root = f0 + np.sqrt(np.maximum(f0 * f0 + 2.0 * (f1 - f0) * need, 0.0))
        t = np.where(root > 0.0, 2.0 * need / np.where(root > 0.0, root, 1.0), 0.0)
        out.append(u[i] + np.clip(t, 0.0, 1.0) * step)
    return out


def _predictive_weights(log_q, mu, mu_sigma, prior, settings):
    """Prior of ln q implied by the s_het prior and the density of ln mu' (analytic)."""
    from scipy import special

    u0, u1 = math.log(settings.s_low), math.log(settings.s_high)
    t_c = np.log(mu / (1.0 + mu))[:, None]
    sigma = mu_sigma[:, None]
    target = t_c - log_q          # value of u at which t = t_c
    if prior.family == "log-uniform":
        safe = np.where(sigma > 0, sigma, 1.0)
        spread = (special.ndtr((log_q + u1 - t_c) / safe) - special.ndtr((log_q + u0 - t_c) / safe))
        point = ((target >= u0) & (target <= u1)).astype(float)
        return np.where(sigma > 0, spread, point)
    m, tau = math.log(prior.median), prior.sigma
    total = np.sqrt(tau * tau + sigma * sigma)
    centre = (m * sigma * sigma + target * tau * tau) / (total * total)
    width = tau * sigma / total
    safe = np.where(width > 0, width, 1.0)
    spread = special.ndtr((u1 - centre) / safe) - special.ndtr((u0 - centre) / safe)
    inside = np.where(width > 0, spread,
                      ((target >= u0) & (target <= u1)).astype(float))
    z = (target - m) / total
    return np.exp(-0.5 * z * z) / total * inside


def _expected_count(k, n, mu, mu_sigma, prior, settings):
    """Expected count: n × the posterior median of q_hat (deterministic model).

    The joint posterior of (u, t) ∝ π(u)·p(t)·B(t − u) puts mass ∝ B(v)·C(v) on
    v = ln q = t − u, with C(v) = ∫ π(u) p(v + u) du in closed form
    (``_predictive_weights``). Evaluated on every second lattice point, the cumulative
    mass interpolated linearly.
    """
    r = np.arange(settings.grid_points + 2 * settings.half_width - 1, -1, -2)
    log_q, log_b, _ = _log_binomial_lattice(k, n, mu, r, settings)   # log_q increasing
    with np.errstate(divide="ignore"):
        log_post = log_b + np.log(_predictive_weights(log_q, mu, mu_sigma, prior, settings))
    log_post -= np.max(log_post, axis=1, keepdims=True)
    mass = np.cumsum(np.exp(log_post), axis=1)
    mass /= mass[:, -1:]
    rows = np.arange(k.size)
    i = np.clip(np.sum(mass < 0.5, axis=1), 1, mass.shape[1] - 1)
    m0, m1 = mass[rows, i - 1], mass[rows, i]
    fraction = np.clip((0.5 - m0) / np.where(m1 > m0, m1 - m0, 1.0), 0.0, 1.0)
    median_log_q = log_q[rows, i - 1] + fraction * (log_q[rows, i] - log_q[rows, i - 1])
    return n * np.exp(np.minimum(median_log_q, 0.0))


def _drift_expected(k, n, mu, s_median, settings):
    """Expected count: n × E[x] under Wright's density at the posterior median of s_het.

    E[x] = P(one sampled gene carries the allele) = exp(log_binomial_probability(1, 1, ...)).
    """
    from infer.core.drift.stationary import log_binomial_probability

    s = np.where(np.isfinite(s_median), s_median, settings.s_low)
    log_mean = log_binomial_probability(1.0, 1.0, settings.Ne, mu, 2.0 * s, 0.5, settings.nu)
    return n * np.exp(log_mean)


def posterior_summary(likelihood, log_scale, prior: SHetPrior, settings,
                      observed, sampled, mu, mu_sigma) -> dict:
    """Per-locus posterior summaries of s_het under ``prior``.

    Returns a dict of (loci,) arrays: ``median``, ``lower``, ``upper`` (central interval
    at ``settings.interval``), ``mean`` (of s_het), ``sd_log`` (sd of ln s_het),
    ``expected`` (posterior predictive median of the count), ``log_marginal`` and
    ``flags`` (bits of ``FLAGS``).
    """
    k, n = np.asarray(observed, dtype=float), np.asarray(sampled, dtype=float)
    mu, mu_sigma = np.asarray(mu, dtype=float), np.asarray(mu_sigma, dtype=float)
    u, step = settings.log_s, settings.step
    log_prior = prior.log_density(u)
    prior_density = np.exp(log_prior - np.max(log_prior))
    weights = trapezoid_weights(settings)
    prior_mass = np.sum(weights * prior_density)
    density = likelihood * prior_density[None, :]
    mass = density * weights[None, :]
    evidence = np.sum(mass, axis=1)
    ok = evidence > 0.0
    # rows without likelihood get a flat density (masked to NaN below)
    density = np.where(ok[:, None], density, 1.0)
    mass = np.where(ok[:, None], mass, weights[None, :])
    norm = np.where(ok, evidence, np.sum(weights))
    tail = 0.5 * (1.0 - settings.interval)
    lower, median, upper = _quantiles(density, settings, (tail, 0.5, 1.0 - tail))
    mean_u = np.sum(mass * u, axis=1) / norm
    sd_log = np.sqrt(np.maximum(np.sum(mass * u * u, axis=1) / norm - mean_u ** 2, 0))
    mean = np.sum(mass * np.exp(u), axis=1) / norm
    with np.errstate(divide="ignore"):
        log_marginal = log_scale + np.log(np.where(ok, evidence, 0.0)) - math.log(prior_mass)
    if settings.model == "drift":
        expected = _drift_expected(k, n, mu, np.exp(median), settings)
    else:
        expected = _expected_count(k, n, mu, mu_sigma, prior, settings)
    mu_upper = mu * np.exp(Z975 * mu_sigma)   # mu's upper 97.5 % point (flag 2)
    flags = np.zeros(k.shape, dtype=np.int64)
    flags |= np.where(k == 0, 1, 0)
    flags |= np.where(k / n > mu_upper / (1.0 + mu_upper) / settings.s_low, 2, 0)
    flags |= np.where((lower <= u[0] + step) | (upper >= u[-1] - step), 4, 0)
    flags |= np.where(sd_log < 2.0 * step, 8, 0)
    flags |= np.where(ok, 0, 16)
    # zero observed: the likelihood rises with s_het and flattens; a median where it is
    # already within a factor 2 of its top-end value is set by where the prior stops
    at_median = np.clip(np.searchsorted(u, median), 0, u.size - 1)
    flat = likelihood[np.arange(k.size), at_median] >= 0.5 * likelihood[:, -1]
    flags |= np.where((k == 0) & flat & ok, 32, 0)
    if settings.model == "drift":
        flags |= np.where(n > 2.0 * settings.Ne, 64, 0)
    nan = np.where(ok, 1.0, np.nan)
    return {"median": np.exp(median) * nan, "lower": np.exp(lower) * nan,
            "upper": np.exp(upper) * nan, "mean": mean * nan, "sd_log": sd_log * nan,
            "expected": expected * nan, "log_marginal": log_marginal, "flags": flags}
