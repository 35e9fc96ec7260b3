"""Identifiability judged by width and location (issue 13, item 3).

The prior of mu is log-normal(median 1e-5, sigma 1 on the natural-log scale). Posteriors
are log-normal too, so every reference value below is a closed form of the normal
distribution, computed with scipy.stats as the independent reference: the prior
quantile of the posterior median is Phi(ln(ratio) / sigma_prior), the contraction is
1 - sigma_post / sigma_prior (on any log scale).
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest
from scipy import stats

from infer.jobs.estimate.results import contraction, identifiability, location

PRIOR_MEDIAN, PRIOR_SIGMA = 1e-5, 1.0
N = 40_000


def _draws(median: float, sigma: float, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return median * np.exp(sigma * rng.standard_normal(N))


def _summary(posterior: np.ndarray, prior: np.ndarray) -> dict:
    return {"contraction": contraction(np.log10(posterior), np.log10(prior)),
            "scale": "log10"}


def _statements(ratio: float, sigma_post: float) -> tuple[list[str], dict]:
    prior = _draws(PRIOR_MEDIAN, PRIOR_SIGMA, 1)
    posterior = _draws(ratio * PRIOR_MEDIAN, sigma_post, 2)
    entry = _summary(posterior, prior)
    text = identifiability(["mu"], {"mu": posterior}, {"mu": prior}, {"mu": entry},
                           frequency_only=False, inheritance="autosomal")
    return text, entry


@pytest.mark.parametrize("ratio", [2.5, 6.5])
def test_moved_but_not_narrowed_is_not_the_prior_deciding(ratio):
    text, entry = _statements(ratio, 0.97 * PRIOR_SIGMA)
    joined = " ".join(text)
    # closed form: contraction 1 - 0.97 = 0.03, below every narrowing threshold
    assert entry["contraction"] < 0.1, f"expected little narrowing, got {entry['contraction']}"
    assert "prior, not the data, decides mu" not in joined, (
        f"a posterior median moved {ratio}x from the prior's must not read as the prior "
        f"deciding: {joined!r}")
    assert "move but do not narrow" in joined and "mu" in joined, (
        f"expected the 'data move but do not narrow' case for a {ratio}x move: {joined!r}")
    factor = re.search(r"median ([0-9.]+)× the prior's", joined)
    assert factor and float(factor.group(1)) == pytest.approx(ratio, rel=0.05), (
        f"the statement should give the {ratio}x move (Monte Carlo error of a median of "
        f"{N} draws is below 2 %): {joined!r}")


@pytest.mark.parametrize("ratio", [2.5, 6.5])
def test_location_matches_the_normal_closed_form(ratio):
    prior = _draws(PRIOR_MEDIAN, PRIOR_SIGMA, 3)
    posterior = _draws(ratio * PRIOR_MEDIAN, PRIOR_SIGMA, 4)
    where = location(np.log10(posterior), np.log10(prior), 0.95)
    # closed form (normal cdf, scipy.stats): P_prior(X < posterior median)
    expected = stats.norm.cdf(math.log(ratio) / PRIOR_SIGMA)
    assert where["prior_quantile"] == pytest.approx(expected, abs=0.01), (
        f"prior quantile of the posterior median: expected Phi(ln {ratio}) = {expected:.3f}")
    # closed form: both central 95 % intervals have half-width 1.96 sigma on the ln scale;
    # the posterior's is shifted by ln(ratio), so the share inside is 1 - ln(ratio)/(3.92)
    share = 1 - math.log(ratio) / (2 * stats.norm.ppf(0.975) * PRIOR_SIGMA)
    assert where["overlap"] == pytest.approx(share, abs=0.02), (
        f"share of the posterior interval inside the prior's: expected {share:.3f}")
    assert 10 ** where["shift"] == pytest.approx(ratio, rel=0.03), (
        f"median shift: expected a factor {ratio}")
    assert where["moved"]


def test_unmoved_and_unnarrowed_is_the_prior_deciding():
    text, _ = _statements(1.0, 0.98 * PRIOR_SIGMA)
    joined = " ".join(text)
    assert "prior, not the data, decides mu" in joined, (
        f"a posterior equal to the prior must read as the prior deciding: {joined!r}")


def test_narrowed_is_the_data_deciding():
    text, entry = _statements(2.5, 0.3 * PRIOR_SIGMA)
    joined = " ".join(text)
    # closed form: contraction 1 - 0.3 = 0.7
    assert entry["contraction"] == pytest.approx(0.7, abs=0.02)
    assert "The data decide mu" in joined, f"contraction 0.7 must read as data deciding: {joined!r}"


def test_three_cases_have_distinct_wording():
    cases = [_statements(1.0, 0.3)[0], _statements(6.5, 0.97)[0], _statements(1.0, 0.98)[0]]
    firsts = [c[0] for c in cases]
    assert len(set(firsts)) == 3, f"the three cases must be worded differently: {firsts}"
