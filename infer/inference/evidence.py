"""Marginal likelihoods (evidences) of a model, and what they say about competing models.

The evidence of a model M is Z = p(data | M) = ∫ prior(x) L(x) dx. ``Model.log_posterior``
of qhat is exactly log prior + log|dx/dz| + log L in unconstrained coordinates z (every
prior normalised, every likelihood term a true log-probability), so Z = ∫ exp(log_posterior(z)) dz.

Two estimators:

* :func:`quadrature_log_evidence`, for one to three free parameters: the nested
  quadrature of :mod:`infer.inference.exact` (its grids integrate the whole density, not
  only the marginals), refined by 1.5 x points per axis until log Z moves by less than
  ``tolerance``; its error is the last move.
* :func:`bridge_log_evidence`, for any number: bridge sampling (Meng & Wong 1996,
  "Simulating ratios of normalizing constants via a simple identity", Statistica Sinica
  6:831) with the optimal bridge function, iterated to its fixed point, a multivariate
  normal proposal fitted to half the posterior draws (as in Gronau et al. 2017, "A
  tutorial on bridge sampling", J. Math. Psychol. 81:80), and the Monte Carlo error of
  Frühwirth-Schnatter (2004, "Estimating marginal likelihoods for mixture and Markov
  switching models using bridge sampling techniques", Econometrics Journal 7:143), eq. (16):

      RE² = V_g(f1) / (N2 E_g(f1)²) + V_p(f2) / (N1_eff E_p(f2)²),
      f1 = p/(s1 p + s2 g),  f2 = g/(s1 p + s2 g),

  p the normalised posterior, g the proposal, N1_eff the effective size of the
  posterior draws; the standard error of log Z is RE (delta method).

:func:`model_probabilities` turns log evidences and prior odds into Bayes factors and
posterior model probabilities (Kass & Raftery 1995, "Bayes factors", JASA 90:773).

Pure maths: takes model-like objects (``ndim``, ``priors`` with ``quantile`` and
``to_unconstrained``, a vectorised ``log_posterior``) and arrays; never prints.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

from infer.inference.exact import (
    EVALUATION_CAP,
    MAX_DIMENSIONS,
    exact_posterior,
    largest_quantile_move,
    marginal_quantiles,
)
from infer.inference.exact_slices import WIDENINGS, level, locate, nodes

__all__ = [
    "EvidenceEstimate",
    "quadrature_log_evidence",
    "quadrature_fit",
    "QuadratureFit",
    "bridge_log_evidence",
    "model_probabilities",
    "strength",
    "QUADRATURE_TOLERANCE",
]

#: refinement stops once log Z moves by less than this between two levels
QUADRATURE_TOLERANCE = 1e-3
#: relative move of the fitted quantiles below which a fit's refinement may stop
FIT_QUANTILE_TOLERANCE = 1e-2
_START = {1: 64, 2: 32, 3: 24}
_GROWTH = 1.5
_T_FACTOR = 2.0


@dataclass(frozen=True)
class EvidenceEstimate:
    """One model's log evidence.

    Attributes
    ----------
    log_evidence : float
        Natural log of p(data | model).
    error : float
        Standard error (bridge sampling) or last refinement move (quadrature) of
        ``log_evidence``.
    method : str
        ``"quadrature"``, ``"bridge"`` or ``"fixed"`` (no free parameter: the likelihood).
    evaluations : int
        Log-density evaluations used.
    settled : bool
        Quadrature: the refinement met its tolerance; bridge: the iteration converged.
    """

    log_evidence: float
    error: float
    method: str
    evaluations: int
    settled: bool


def quadrature_log_evidence(model, tolerance: float = QUADRATURE_TOLERANCE,
                            max_evaluations: int = EVALUATION_CAP,
                            hint: np.ndarray | None = None) -> EvidenceEstimate:
    """Return log Z by nested quadrature, for one to three free parameters.

    Parameters
    ----------
    model : object
        ``ndim``, ``priors`` and a vectorised ``log_posterior`` (an
        :class:`infer.model.posterior.Model`, or any object with those).
    tolerance : float
        Stop once log Z moves by less than this between two refinement levels.
    max_evaluations : int
        Cap on log-density evaluations (deterministic: the same model, the same answer).
    hint : numpy.ndarray, optional
        Unconstrained rows where the posterior has mass (as in ``exact_posterior``).

    Returns
    -------
    EvidenceEstimate

    Raises
    ------
    ValueError
        Outside one to three free parameters, or with no mass on the grid.
    """
    return _nested_evidence(model, tolerance, max_evaluations, hint)[0]


@dataclass(frozen=True)
class QuadratureFit:
    """A model's evidence and the posterior quantiles of its free parameters.

    Attributes
    ----------
    evidence : EvidenceEstimate
    quantiles : dict
        Free parameter -> {"median", "lower", "upper"} at the interval asked for.
    """

    evidence: EvidenceEstimate
    quantiles: dict[str, dict[str, float]]


def quadrature_fit(model, interval: float, tolerance: float = QUADRATURE_TOLERANCE,
                   quantile_tolerance: float = FIT_QUANTILE_TOLERANCE,
                   max_evaluations: int = EVALUATION_CAP) -> QuadratureFit:
    """Evidence and posterior quantiles of a model with one to three free parameters.

    With one free parameter a single nested quadrature gives both: its refinement stops
    once log Z moves by less than ``tolerance`` and the quantiles by less than
    ``quantile_tolerance`` (relative) between two levels. With two or three, the
    quantiles of the inner parameters need their own nesting order: they come from
    :func:`infer.inference.exact.exact_posterior` refined to ``quantile_tolerance``.

    Raises
    ------
    ValueError
        Outside one to three free parameters, or with no mass on the grid.
    """
    evidence, first = _nested_evidence(model, tolerance, max_evaluations, None,
                                       interval=interval, quantile_tolerance=quantile_tolerance)
    if model.ndim == 1:
        return QuadratureFit(evidence, {model.free[0]: first})
    grid = exact_posterior(model, interval, tolerance=quantile_tolerance)
    return QuadratureFit(evidence, {name: dict(grid.quantiles[name]) for name in model.free})


def _nested_evidence(model, tolerance: float, max_evaluations: int, hint,
                     interval: float | None = None, quantile_tolerance: float = 0.0):
    """(EvidenceEstimate, quantiles of the first parameter or None) by nested quadrature.

    With ``interval`` the refinement also waits for the first parameter's quantiles to
    move by less than ``quantile_tolerance``.
    """
    ndim = model.ndim
    if not 1 <= ndim <= MAX_DIMENSIONS:
        raise ValueError(f"quadrature needs 1 to {MAX_DIMENSIONS} free parameters")
    box, coarse, plans, evaluations = locate(model, hint)
    # the parameter the others are nested under: the first, as in exact_posterior
    t_range, (order, middle, inner) = list(box[0]), plans[0]
    marginal, n = coarse[0], _START[ndim]
    previous, move, settled = None, math.inf, False
    previous_quantiles = quantiles = None
    while evaluations + int(round(_T_FACTOR * n)) * n ** (ndim - 1) <= max_evaluations:
        nt = int(round(_T_FACTOR * n))
        for _ in range(WIDENINGS):
            t = nodes(marginal, t_range[0], t_range[1], nt)
            marginal, middle, inner, cost, ends, clean = level(
                model, 0, order, t, middle, inner, n)
            evaluations += cost
            if not ends.any():
                break
            width = t_range[1] - t_range[0]
            t_range = [t_range[0] - 0.25 * width * ends[0], t_range[1] + 0.25 * width * ends[1]]
        current = float(marginal.log_total)
        if not math.isfinite(current):
            raise ValueError("the posterior has no mass on the grid")
        quantiles = (None if interval is None
                     else marginal_quantiles(model.priors[0], marginal, interval))
        if previous is not None:
            move = abs(current - previous)
            quantiles_moved = (quantiles is not None and previous_quantiles is not None
                               and largest_quantile_move(previous_quantiles, quantiles)
                               >= quantile_tolerance)
            if move < tolerance and not quantiles_moved and clean and not ends.any():
                settled = True
                break
        previous, previous_quantiles = current, quantiles
        n = int(round(n * _GROWTH))
    if previous is None:
        raise ValueError("the evaluation cap leaves no room for a refinement level")
    estimate = EvidenceEstimate(float(marginal.log_total), float(move), "quadrature",
                                int(evaluations), settled)
    return estimate, quantiles


def _fit_normal(z: np.ndarray):
    mean = z.mean(axis=0)
    cov = np.atleast_2d(np.cov(z, rowvar=False))
    # a ridge of relative size 1e-10 keeps a nearly singular fit invertible
    cov = cov + 1e-10 * np.diag(np.maximum(np.diag(cov), 1e-300))
    chol = np.linalg.cholesky(cov)
    log_det = 2.0 * float(np.log(np.diag(chol)).sum())
    return mean, chol, log_det


def _normal_log_density(z, mean, chol, log_det):
    u = np.linalg.solve(chol, (z - mean).T).T
    d = z.shape[1]
    return -0.5 * (u * u).sum(axis=1) - 0.5 * log_det - 0.5 * d * math.log(2 * math.pi)


def bridge_log_evidence(log_density, draws: np.ndarray, rng: np.random.Generator,
                        log_density_at_draws: np.ndarray | None = None,
                        effective_size: float | None = None,
                        tolerance: float = 1e-10, max_iterations: int = 1000) -> EvidenceEstimate:
    """Return log Z by bridge sampling (Meng & Wong 1996) with its Monte Carlo error.

    Parameters
    ----------
    log_density : callable
        Vectorised unnormalised log posterior, rows (n, d) -> (n,); its integral is Z.
    draws : numpy.ndarray, shape (n, d)
        Posterior draws (n >= 20); the first half (in a random split) fits the
        proposal, the second half enters the estimator.
    rng : numpy.random.Generator
        For the split and the proposal draws.
    log_density_at_draws : numpy.ndarray, optional
        ``log_density(draws)`` if already known (the sampler's log_prob).
    effective_size : float, optional
        Effective sample size of all the draws (default: as many as there are). The
        estimator's half counts for half of it.
    tolerance, max_iterations
        Stop the fixed-point iteration once log Z moves by less than ``tolerance``.

    Returns
    -------
    EvidenceEstimate
    """
    draws = np.asarray(draws, dtype=float)
    if draws.ndim == 1:
        draws = draws[:, None]
    n, d = draws.shape
    if n < 20:
        raise ValueError("bridge sampling needs at least 20 posterior draws")
    if log_density_at_draws is None:
        log_density_at_draws = log_density(draws)
    order = rng.permutation(n)
    fit, used = order[: n // 2], order[n // 2:]
    mean, chol, log_det = _fit_normal(draws[fit])
    n1 = used.size
    n2 = n1
    proposal = mean + rng.standard_normal((n2, d)) @ chol.T
    # l = log q - log g at the posterior draws (1) and the proposal draws (2)
    l1 = np.asarray(log_density_at_draws, dtype=float)[used] - _normal_log_density(
        draws[used], mean, chol, log_det)
    l2 = np.asarray(log_density(proposal), dtype=float) - _normal_log_density(
        proposal, mean, chol, log_det)
    l2 = np.where(np.isfinite(l2), l2, -np.inf)
    n1_eff = n1 if effective_size is None else max(2.0, min(n1, 0.5 * float(effective_size)))
    s1, s2 = n1_eff / (n1_eff + n2), n2 / (n1_eff + n2)
    log_s1, log_s2 = math.log(s1), math.log(s2)
    # start from the importance-sampling estimate with the proposal
    log_r = float(special.logsumexp(l2) - math.log(n2))
    if not np.isfinite(log_r):
        log_r = float(np.median(l1))
    settled = False
    for _ in range(max_iterations):
        # r = mean_2[e^l2 / (s1 e^l2 + s2 r)] / mean_1[1 / (s1 e^l1 + s2 r)], in logs
        top = special.logsumexp(l2 - np.logaddexp(log_s1 + l2, log_s2 + log_r))
        bottom = special.logsumexp(-np.logaddexp(log_s1 + l1, log_s2 + log_r))
        new = float(top - bottom + math.log(n1) - math.log(n2))
        if abs(new - log_r) < tolerance:
            log_r, settled = new, True
            break
        log_r = new
    # Frühwirth-Schnatter (2004), eq. (16), with p/g = e^(l - log r)
    ratio2 = np.exp(l2 - log_r)
    ratio1 = np.exp(l1 - log_r)
    f1 = ratio2 / (s1 * ratio2 + s2)
    f2 = 1.0 / (s1 * ratio1 + s2)
    re2 = f1.var() / (n2 * f1.mean() ** 2) + f2.var() / (n1_eff * f2.mean() ** 2)
    return EvidenceEstimate(log_r, float(math.sqrt(re2)), "bridge", int(n2), settled)


def model_probabilities(log_evidence: dict[str, float],
                        prior_odds: dict[str, float] | None = None) -> dict[str, dict]:
    """Bayes factors and posterior model probabilities.

    Parameters
    ----------
    log_evidence : dict
        Model name -> log p(data | model).
    prior_odds : dict, optional
        Model name -> prior weight (any positive scale; default equal weights).

    Returns
    -------
    dict
        Model name -> {"log10_bayes_factor" (against the most probable model a posteriori
        under equal weights, i.e. the largest evidence), "prior_probability",
        "posterior_probability"}.
    """
    names = list(log_evidence)
    weights = np.array([1.0 if prior_odds is None else float(prior_odds[n]) for n in names])
    log_z = np.array([log_evidence[n] for n in names], dtype=float)
    prior = weights / weights.sum()
    with np.errstate(divide="ignore"):
        log_post = log_z + np.log(prior)
    log_post = log_post - special.logsumexp(log_post)
    best = float(np.max(log_z))
    return {name: {"log10_bayes_factor": float((log_z[i] - best) / math.log(10)),
                   "prior_probability": float(prior[i]),
                   "posterior_probability": float(np.exp(log_post[i]))}
            for i, name in enumerate(names)}


def strength(log10_factor: float) -> str:
    """Kass & Raftery's (1995, JASA 90:773, section 3.2) words for a Bayes factor in favour.

    On log10 of the factor: below 0.5 "not worth more than a bare mention", 0.5-1
    "substantial", 1-2 "strong", above 2 "decisive".
    """
    if not math.isfinite(log10_factor):
        return "decisive"
    size = abs(log10_factor)
    if size < 0.5:
        return "not worth more than a bare mention"
    if size < 1:
        return "substantial"
    if size < 2:
        return "strong"
    return "decisive"
