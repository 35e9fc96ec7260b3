"""Simulation-based calibration: the rank of the truth among posterior draws.

Talts, Betancourt, Simpson, Vehtari & Gelman (2018), arXiv:1804.06788: draw parameters
from the prior, simulate data of the study's shape, fit, and record where the truth
falls in its posterior.

For a correct posterior the rank of the truth among posterior draws — equivalently the
posterior distribution function at the truth, u = P(theta <= theta_true | data) — is
uniform, and every central interval covers the truth at its nominal rate. Each
observation draws its new data with its kind's ``simulate_table``, written from the
probability model of docs/model.md apart from the likelihood (fertility: two
Poisson counts, not the conditional binomial), so the check also tests the likelihoods.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from infer.model.balance_state import BalanceState
from infer.model.observations.kinds import parse_observation
from infer.model.posterior import Model

__all__ = ["draw_truth", "simulate_study", "posterior_cdf_at_truth", "coverage",
           "uniformity_p_value", "rank_band"]


def draw_truth(model: Model, rng: np.random.Generator, tries: int = 1000) -> dict:
    """One prior draw of the free parameters at which a stable balance exists.

    Where no equilibrium exists the likelihood is zero for any data, so the model's
    effective prior is the prior restricted to the region where one does: rejection
    sampling draws from exactly that.
    """
    for _ in range(tries):
        draw = {k: v[:1] for k, v in model.prior_draws(rng, 1).items()}
        params = model.complete(draw, 1)
        if bool(model.state(params).exists[0]):
            return {k: float(v[0]) for k, v in params.items()}
    raise RuntimeError("the prior puts (almost) no mass where a balance exists")


def _stationary_draw(truth: dict, rng: np.random.Generator) -> float:
    """One allele frequency from Wright's stationary density at the truth."""
    from infer.core.drift import stationary as drift

    return float(drift.sample_stationary(rng, truth["Ne"], truth["mu"], truth["s"],
                                         truth["h"], truth["nu"]))


def simulate_study(study, truth: dict, rng: np.random.Generator):
    """A copy of ``study`` whose observations are new data simulated at ``truth``."""
    model = Model(study)
    params = {k: np.array([v]) for k, v in truth.items()}
    if study.model == "drift":
        state = BalanceState.at_frequency(params, _stationary_draw(truth, rng))
    else:
        state = model.state(params)
    observations = []
    for i, obs in enumerate(study.observations):
        table = obs.simulate_table(state, rng)
        observations.append(parse_observation(table, field=f"observations[{i + 1}]",
                                              inheritance=study.inheritance))
    return dataclasses.replace(study, observations=observations)


def posterior_cdf_at_truth(draws: np.ndarray, truth: float) -> float:
    """Normalised rank of the truth among posterior draws (ties split evenly)."""
    flat = np.asarray(draws).ravel()
    return float((np.sum(flat < truth) + 0.5 * np.sum(flat == truth)) / flat.size)


def coverage(u: np.ndarray, level: float) -> float:
    """Share of replicates whose central ``level`` interval holds the truth."""
    u = np.asarray(u, dtype=float)
    tail = (1.0 - level) / 2.0
    return float(np.mean((u >= tail) & (u <= 1.0 - tail)))


def uniformity_p_value(u: np.ndarray, bins: int = 20) -> float:
    """Chi-square test of the ranks' histogram against the uniform (Talts et al. 2018)."""
    from scipy import stats

    counts, _ = np.histogram(u, bins=bins, range=(0.0, 1.0))
    return float(stats.chisquare(counts).pvalue)


def rank_band(n: int, bins: int, level: float = 0.99) -> tuple[float, float]:
    """Central ``level`` band of one bin's count under uniform ranks (binomial)."""
    from scipy import stats

    lo, hi = stats.binom.interval(level, n, 1.0 / bins)
    return float(lo), float(hi)
