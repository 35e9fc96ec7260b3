"""Simulation-based calibration: the rank of the truth among posterior draws.

Talts, Betancourt, Simpson, Vehtari & Gelman (2018), arXiv:1804.06788: draw parameters
from the prior, simulate data of the study's shape, fit, and record where the truth
falls in its posterior.

For a correct posterior the rank of the truth among posterior draws — equivalently the
posterior distribution function at the truth, u = P(theta <= theta_true | data) — is
uniform, and every central interval covers the truth at its nominal rate. The data are
simulated here from the probability models of DESIGN.md section 3 directly (not with the
observation classes' predictive draws), so the check also tests the likelihoods.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from infer.core import balance
from infer.model.observations.kinds import parse_observation, x_linked_daughter_genotypes
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


def _frequencies(state, inheritance):
    if inheritance == "x-linked":
        return {"all": state.q[0], "male": state.q_male[0], "female": state.q_female[0]}
    return {"all": state.q[0]}


def _simulate_table(observation, truth: dict, state, inheritance: str,
                    rng: np.random.Generator, x: float | None) -> dict:
    """New data of the same shape (same totals) as ``observation``, at the truth."""
    table = observation.as_table()
    kind = observation.kind
    freqs = _frequencies(state, inheritance)
    q = x if x is not None else freqs["all"]
    F = truth["F"]
    if kind == "allele-count":
        p = q if inheritance == "autosomal" else freqs[observation.sex]
        table["observed"] = int(rng.binomial(observation.sampled, p))
    elif kind == "genotype-count":
        if inheritance == "x-linked":
            g = np.ravel(x_linked_daughter_genotypes(freqs["male"], freqs["female"], F))
        else:
            g = np.ravel(balance.genotype_frequencies(q, F))
        total = observation.AA + observation.Aa + observation.aa
        table["AA"], table["Aa"], table["aa"] = (int(c) for c in rng.multinomial(total, g))
    elif kind == "affected":
        base = freqs["male"] if observation.mode == "x-linked-male" else q
        frac = balance.affected_fraction(observation.mode, base,
                                         0.0 if observation.mode == "x-linked-male" else F,
                                         observation.penetrance)
        table["affected"] = int(rng.binomial(observation.total, float(np.ravel(frac)[0])))
    elif kind == "sporadic":
        rate = float(np.ravel(observation.rate({k: np.array([v]) for k, v in truth.items()}))[0])
        table["cases"] = int(rng.binomial(observation.births, rate))
    elif kind == "fertility":
        w = float(np.ravel(observation.relative_fitness(
            {k: np.array([v]) for k, v in truth.items()}))[0])
        baseline = observation.reference_children / observation.reference_people
        table["affected_children"] = int(rng.poisson(observation.affected_people * w * baseline))
        table["reference_children"] = int(rng.poisson(observation.reference_people * baseline))
    elif kind == "estimate":
        sigma = observation.sigma
        median = truth[observation.parameter] * np.exp(sigma * rng.normal())
        table["median"] = float(median)
        table["lower"] = float(median * np.exp(-1.959964 * sigma))
        table["upper"] = float(median * np.exp(1.959964 * sigma))
    else:  # pragma: no cover - every kind is listed above
        raise ValueError(kind)
    return table


def _stationary_draw(truth: dict, rng: np.random.Generator) -> float:
    """One allele frequency from Wright's stationary density at the truth."""
    from infer.core.drift import stationary as drift

    return float(drift.sample_stationary(rng, truth["Ne"], truth["mu"], truth["s"],
                                         truth["h"], truth["nu"]))


def simulate_study(study, truth: dict, rng: np.random.Generator):
    """A copy of ``study`` whose observations are new data simulated at ``truth``."""
    model = Model(study)
    params = {k: np.array([v]) for k, v in truth.items()}
    state = model.state(params)
    x = _stationary_draw(truth, rng) if study.model == "drift" else None
    observations = []
    for i, obs in enumerate(study.observations):
        table = _simulate_table(obs, truth, state, study.inheritance, rng,
                                x if obs.depends_on_frequency else None)
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
