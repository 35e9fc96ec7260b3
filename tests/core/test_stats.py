"""infer.core.stats against scipy.stats, closed forms and the definitions themselves."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats as scipy_stats

from infer.core import stats


def test_z975_is_the_normal_975_quantile():
    """Source: scipy.stats.norm.ppf(0.975)."""
    assert stats.Z975 == scipy_stats.norm.ppf(0.975), (
        f"Z975 = {stats.Z975!r} differs from norm.ppf(0.975) = {scipy_stats.norm.ppf(0.975)!r}")


@pytest.mark.parametrize("level", [0.5, 0.8, 0.9, 0.95, 0.99, 0.999999])
def test_central_z_is_the_normal_quantile(level):
    """Source: scipy.stats.norm.ppf(0.5 + level / 2)."""
    expected = scipy_stats.norm.ppf(0.5 + level / 2)
    assert stats.central_z(level) == pytest.approx(expected, rel=1e-9), (
        f"central_z({level}) = {stats.central_z(level)!r}, norm.ppf gives {expected!r}")


CASES = [  # (k, n, p), including the edges p = 0, p = 1, k = 0, k = n
    (0, 10, 0.3), (3, 10, 0.3), (10, 10, 0.3), (0, 10, 0.0), (0, 10, 1.0), (10, 10, 1.0),
    (4, 10, 0.0), (4, 10, 1.0), (17, 182_400, 5e-5), (0, 1, 0.5), (5000, 10_000, 0.5),
    (3, 1_000_000, 1e-9),
]


@pytest.mark.parametrize(("k", "n", "p"), CASES)
def test_log_binomial_matches_scipy_logpmf(k, n, p):
    """Source: scipy.stats.binom.logpmf (edges included: log 0 = -inf, 0 log 0 = 0)."""
    expected = scipy_stats.binom.logpmf(k, n, p)
    got = float(stats.log_binomial(k, n, p))
    if math.isinf(expected):
        assert got == expected, f"log_binomial({k}, {n}, {p}) = {got}, binom.logpmf {expected}"
    else:
        assert got == pytest.approx(expected, rel=1e-12, abs=1e-12), (
            f"log_binomial({k}, {n}, {p}) = {got}, binom.logpmf gives {expected}")


def test_log_binomial_vectorised_and_scalar_paths_agree():
    """Definition: the array path gives the same numbers as one call per element."""
    k = np.array([0, 3, 7, 10])
    p = np.array([0.1, 0.3, 0.7, 0.95])
    together = stats.log_binomial(k, 10, p)
    one_by_one = [float(stats.log_binomial(int(a), 10, b)) for a, b in zip(k, p, strict=True)]
    assert np.array_equal(together, one_by_one), (
        f"vector {together} and element-wise {one_by_one} results differ")
    expected = scipy_stats.binom.logpmf(k, 10, p)   # source: scipy.stats
    assert np.allclose(together, expected, rtol=1e-12), f"{together} vs binom.logpmf {expected}"


@pytest.mark.parametrize("p", [-0.1, 1.5, float("nan"), float("inf")])
def test_log_binomial_is_minus_infinity_outside_the_unit_interval(p):
    """Definition (a probability outside [0, 1] has no mass): -inf, never NaN."""
    got = stats.log_binomial(3, 10, np.array([p, 0.5]))
    assert got[0] == -np.inf, f"log_binomial at p = {p} gave {got[0]}, want -inf"
    assert np.isfinite(got[1]), f"log_binomial at p = 0.5 beside it gave {got[1]}"


def test_log_choose_matches_scipy_comb():
    """Source: scipy.special.comb(exact=True) (an integer, so no rounding in the reference)."""
    from scipy.special import comb

    for n, k in [(0, 0), (10, 3), (52, 5), (1000, 500)]:
        expected = math.log(comb(n, k, exact=True))
        assert float(stats.log_choose(n, k)) == pytest.approx(expected, rel=1e-13), (n, k)


def test_log_multinomial_coefficient_matches_scipy_multinomial():
    """Source: scipy.stats.multinomial.logpmf with all probabilities equal, plus n log 3."""
    counts = (12, 30, 7)
    n = sum(counts)
    expected = scipy_stats.multinomial.logpmf(counts, n, [1 / 3] * 3) + n * math.log(3.0)
    assert stats.log_multinomial_coefficient(counts) == pytest.approx(expected, rel=1e-12), (
        "log multinomial coefficient disagrees with scipy.stats.multinomial")


def test_central_tails():
    """Definition of the equal-tailed interval: (1 - level) / 2 on each side."""
    low, high = stats.central_tails(0.95)
    assert low == pytest.approx(0.025) and high == pytest.approx(0.975), (low, high)
    assert low + high == pytest.approx(1.0, abs=1e-15), "the two tails are not symmetric"


def test_central_quantiles_match_numpy_and_skip_non_finite():
    """Source: numpy.quantile on the finite draws (the definition of the summary)."""
    rng = np.random.default_rng(7)
    draws = rng.normal(size=(4, 500))
    with_gaps = draws.copy()
    with_gaps[0, :3] = [np.nan, np.inf, -np.inf]
    expected = np.quantile(draws.ravel()[3:], [0.5, 0.05, 0.95])
    assert np.allclose(stats.central_quantiles(with_gaps, 0.9), expected, rtol=0, atol=0), (
        "central_quantiles does not leave out NaN and infinite draws")
    assert all(math.isnan(v) for v in stats.central_quantiles([np.nan], 0.9)), (
        "no finite draw should give NaN three times")


def test_sigma_of_log_recovers_a_log_normal_interval():
    """Source: scipy.stats.lognorm.interval(0.95, sigma, scale=median) gives the ends."""
    sigma, median = 0.4, 2e-5
    lower, upper = scipy_stats.lognorm.interval(0.95, sigma, scale=median)
    assert stats.sigma_of_log(lower, upper) == pytest.approx(sigma, rel=1e-12), (
        "sigma of ln X from a 95 % interval is wrong")
    lower, upper = scipy_stats.lognorm.interval(0.8, sigma, scale=median)
    got = stats.sigma_of_log(lower, upper, z=stats.central_z(0.8))
    assert got == pytest.approx(sigma, rel=1e-10), "sigma of ln X from an 80 % interval"


def test_sd_of_interval_recovers_a_normal_interval():
    """Source: scipy.stats.norm.interval(0.95, loc, scale)."""
    lower, upper = scipy_stats.norm.interval(0.95, loc=0.3, scale=0.05)
    assert stats.sd_of_interval(lower, upper) == pytest.approx(0.05, rel=1e-12), (
        "sd of a normal from its 95 % interval is wrong")


@pytest.mark.parametrize(("k", "n"), [(0, 20), (3, 20), (20, 20), (17, 182_400)])
def test_clopper_pearson_matches_scipy_beta(k, n):
    """Source: scipy.stats.beta.ppf, the Clopper-Pearson (1934) definition."""
    lower, upper = stats.clopper_pearson(k, n, 0.95)
    want_lower = 0.0 if k == 0 else scipy_stats.beta.ppf(0.025, k, n - k + 1)
    want_upper = 1.0 if k == n else scipy_stats.beta.ppf(0.975, k + 1, n - k)
    assert lower == pytest.approx(want_lower, rel=1e-10), (k, n, lower, want_lower)
    assert upper == pytest.approx(want_upper, rel=1e-10), (k, n, upper, want_upper)


def test_two_sided_p_value_counts_ties_on_both_sides():
    """Definition (Gelman, Meng & Stern 1996): min(1, 2 min(P(T >= t), P(T <= t)))."""
    replicated = np.array([0, 1, 1, 2, 3, 3, 3, 4, 5, 9, np.nan])
    # finite: 10 values; P(T >= 4) = 3/10, P(T <= 4) = 8/10 -> 0.6
    assert stats.two_sided_p_value(replicated, 4) == pytest.approx(0.6), "p-value at t = 4"
    assert stats.two_sided_p_value(replicated, 3) == 1.0, "a central t must give 1"
    assert stats.two_sided_p_value(replicated, 20) == 0.0, "t beyond every replicate gives 0"
    assert math.isnan(stats.two_sided_p_value([np.nan], 1)), "no finite replicate gives NaN"


def test_two_sided_p_value_of_a_binomial_matches_exact_tails():
    """Source: scipy.stats.binom.cdf / sf for the exact tail probabilities."""
    rng = np.random.default_rng(3)
    draws = rng.binomial(40, 0.3, size=400_000)
    t = 18
    exact = min(1.0, 2 * min(scipy_stats.binom.sf(t - 1, 40, 0.3),
                             scipy_stats.binom.cdf(t, 40, 0.3)))
    assert stats.two_sided_p_value(draws, t) == pytest.approx(exact, abs=0.003), (
        "Monte Carlo p-value far from the exact binomial tails")
