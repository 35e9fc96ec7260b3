"""The general drift integral (infer.core.drift.stationary.log_expectation) on the
likelihood of affected births, against mpmath.

P(k affected of n births | x) is the binomial of the counted share
p = c·(P·g(x) + φ), g = 1 - (1-x)² (dominant) or x² (recessive) under Hardy–Weinberg
(common practice), which no shift of the Beta exponents reproduces: it is integrated by
the general rule. The reference is mpmath.quad at 20 digits on pieces chosen
independently (tests/core/drift_reference.py, ``log_expectation``), checked there against
its own binomial integral.
"""

from __future__ import annotations

import drift_reference as reference
import mpmath as mp
import numpy as np
import pytest

from infer.core.drift import stationary as drift
from infer.model.observations.kinds import parse_observation


def _draw(rng, rows):
    """Rows from the documented ranges (docs/model.md): 4Ne·mu in [1e-6, 10], 4Ne·s in
    [0, 1e4] (capped at 4Ne, a tenth of them neutral), h in [0, 1], 4Ne·nu in [1e-6, 1]."""
    Ne = 10 ** rng.uniform(1, 4, rows)
    a = 10 ** rng.uniform(-6, 1, rows)
    four_ne_s = np.minimum(10 ** rng.uniform(-1, 4, rows), 4 * Ne)
    four_ne_s[rng.uniform(size=rows) < 0.1] = 0.0
    b = 10 ** rng.uniform(-6, 0, rows)
    return Ne, a / (4 * Ne), four_ne_s / (4 * Ne), rng.uniform(0, 1, rows), b / (4 * Ne)


def _study_observation(rng):
    """An affected-births observation a registry might hold, with its ascertainment."""
    total = int(10 ** rng.uniform(2, 6))
    table = {"kind": "affected", "affected": int(rng.integers(0, min(total, 60) + 1)),
             "total": total, "mode": str(rng.choice(["dominant", "recessive"]))}
    if rng.uniform() < 0.5:
        table["penetrance"] = float(rng.uniform(0.3, 1))
        table["completeness"] = float(rng.uniform(0.5, 1))
    if rng.uniform() < 0.5:
        table["phenocopy"] = float(10 ** rng.uniform(-7, -3))
    return parse_observation(table, field="observations[1]", inheritance="autosomal"), table


def _reference_probability(table):
    """P(data | x) as an mpmath function, written from the formula above."""
    k, n = table["affected"], table["total"]
    pen = mp.mpf(table.get("penetrance", 1.0))
    comp = mp.mpf(table.get("completeness", 1.0))
    phi = mp.mpf(table.get("phenocopy", 0.0))
    choose = mp.binomial(n, k)

    def probability(x):
        share = 1 - (1 - x) ** 2 if table["mode"] == "dominant" else x**2
        p = min(comp * (pen * share + phi), mp.mpf(1))
        return choose * p**k * (1 - p) ** (n - k)

    return probability


def _check(seed, rows):
    rng = np.random.default_rng(seed)
    Ne, mu, s, h, nu = _draw(rng, rows)
    worst = 0.0
    for i in range(rows):
        observation, table = _study_observation(rng)
        params = {"Ne": Ne[i:i + 1], "mu": mu[i:i + 1], "s": s[i:i + 1], "h": h[i:i + 1],
                  "nu": nu[i:i + 1], "F": np.zeros(1)}
        got = float(drift.log_expectation(observation.frequency_likelihood(params), Ne[i],
                                          mu[i], s[i], h[i], nu[i]))
        expected = float(reference.log_expectation(
            _reference_probability(table), Ne[i], mu[i], s[i], h[i], nu[i],
            scale=table["total"]))
        error = abs(np.expm1(got - expected))
        worst = max(worst, error)
        assert error < 1e-6, (
            f"log E[P(affected | x)] = {got!r}, mpmath {expected!r} (relative error "
            f"{error:.2e}) for {table} at Ne={Ne[i]:g}, mu={mu[i]:g}, s={s[i]:g}, "
            f"h={h[i]:.3f}, nu={nu[i]:g}")
    return worst


def test_affected_births_integral_matches_mpmath_on_random_studies():
    """Six random rows and registries (quick loop), to the 1e-6 the model requires."""
    _check(seed=11, rows=6)


@pytest.mark.slow
@pytest.mark.parametrize("seed", [12, 13, 14])
def test_affected_births_integral_matches_mpmath_on_more_random_studies(seed):
    """Twelve more rows and registries per seed."""
    _check(seed=seed, rows=12)


def test_log_binomial_matches_scipy_at_the_edges():
    """infer.core.stats.log_binomial against scipy.stats.binom.logpmf, including p = 0, p = 1
    and p outside [0, 1] (-inf: no probability), for counts with and without both logs."""
    from scipy import stats

    from infer.core.stats import log_binomial

    p = np.array([-0.1, 0.0, 1e-300, 1e-9, 0.3, 0.999999, 1.0, 1.2, np.nan])
    for k, n in [(3, 10), (0, 10), (10, 10), (1, 10**6)]:
        expected = stats.binom.logpmf(k, n, p)
        expected = np.where(np.isnan(expected), -np.inf, expected)
        np.testing.assert_allclose(log_binomial(k, n, p), expected, rtol=1e-12,
                                   err_msg=f"log_binomial({k}, {n}, p) against scipy")
