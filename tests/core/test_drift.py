"""Wright's stationary density (infer.core.drift.stationary) against closed forms,
scipy.stats and mpmath.

Sources: Wright 1931, Genetics 16:97 (the stationary density; neutral case Beta(4Ne·u,
4Ne·v)); Kummer's integral representation of 1F1 (Abramowitz & Stegun 13.2.1);
mpmath.quad at 20+ digits via tests/core/drift_reference.py (independent quadrature).
"""

from __future__ import annotations

import math

import drift_reference as reference
import mpmath as mp
import numpy as np
import pytest
from scipy import special, stats

from infer.core.drift import stationary as drift
from infer.errors import InputError

RTOL = 1e-6  # docs/model.md: relative error <= 1e-6 against an mpmath reference


# ------------------------------------------------------------------ neutral limit
NEUTRAL = [(100, 1e-3, 2e-4), (50, 5e-3, 5e-3), (1000, 2.5e-3, 1e-4), (10, 0.2, 0.05)]


@pytest.mark.parametrize("Ne, mu, nu", NEUTRAL)
def test_neutral_density_is_beta(Ne, mu, nu):
    """s = 0: φ is the Beta(4Ne·mu, 4Ne·nu) density (Wright 1931; scipy.stats.beta)."""
    x = np.array([1e-9, 1e-4, 0.01, 0.3, 0.5, 0.9, 0.999, 1 - 1e-7])
    expected = stats.beta(4 * Ne * mu, 4 * Ne * nu).pdf(x)
    got = drift.stationary_density(x, Ne, mu, 0.0, 0.3, nu)
    np.testing.assert_allclose(got, expected, rtol=1e-9)


@pytest.mark.parametrize("Ne, mu, nu", NEUTRAL)
def test_neutral_summary_is_beta(Ne, mu, nu):
    """Mean, sd, median and the central 95 % interval of Beta(a, b) (scipy.stats.beta)."""
    beta = stats.beta(4 * Ne * mu, 4 * Ne * nu)
    got = drift.stationary_summary(Ne, mu, 0.0, 0.5, nu, interval=0.95)
    np.testing.assert_allclose(got["mean"], beta.mean(), rtol=1e-9)
    np.testing.assert_allclose(got["sd"], beta.std(), rtol=1e-7)
    np.testing.assert_allclose(got["median"], beta.median(), rtol=1e-7)
    np.testing.assert_allclose(got["lower"], beta.ppf(0.025), rtol=1e-7)
    np.testing.assert_allclose(got["upper"], beta.ppf(0.975), rtol=1e-7)


def test_neutral_normaliser_is_beta_function_over_the_range():
    """log Z(s = 0) = log B(4Ne·mu, 4Ne·nu) for 4Ne·mu, 4Ne·nu in [1e-6, 10] (scipy betaln)."""
    a = np.logspace(-6, 1, 15)[:, None]
    b = np.logspace(-6, 1, 15)[None, :]
    Ne = 1000.0
    got = drift.log_normaliser(Ne, a / (4 * Ne), 0.0, 0.5, b / (4 * Ne))
    assert got.shape == (15, 15), f"broadcast (15, 1) x (1, 15) gave shape {got.shape}"
    np.testing.assert_allclose(got, special.betaln(a, b), rtol=1e-12, atol=1e-12,
                               err_msg="s = 0: log Z must be log B(a, b) (scipy betaln)")


def test_neutral_sample_probability_is_beta_binomial():
    """s = 0: P(k of n) is beta-binomial(n, a, b) (scipy.stats.betabinom), n up to 1e6."""
    Ne, mu, nu = 200.0, 1e-4, 3e-5
    a, b = 4 * Ne * mu, 4 * Ne * nu
    for n in (1, 10, 1000, 10**6):
        k = np.unique(np.array([0, 1, n // 3, n - 1, n]).clip(0, n))
        got = drift.log_binomial_probability(k, n, Ne, mu, 0.0, 0.5, nu)
        np.testing.assert_allclose(got, stats.betabinom.logpmf(k, n, a, b), rtol=1e-9, atol=1e-9,
                                   err_msg=f"s = 0, n = {n}: log P(k) vs scipy betabinom.logpmf")
        np.testing.assert_allclose(
            drift.probability_absent(n, Ne, mu, 0.0, 0.5, nu),
            stats.betabinom.pmf(0, n, a, b),
            rtol=1e-8,
            err_msg=f"s = 0, n = {n}: P(absent) vs scipy betabinom.pmf(0)",
        )


def test_underflowing_quantiles_are_zero():
    """4Ne·mu = 4e-6: the median is exp((log(1/2) + log(a·B(a,b)))/a) ≈ 10^(-40000) (derived:
    F(x) ≈ x^a/(a·B(a,b)) near 0), far below the smallest double, so it is reported as 0.0;
    the mean stays a/(a+b) (Beta mean, s = 0)."""
    Ne, mu, nu = 1000.0, 1e-9, 1e-7
    a, b = 4 * Ne * mu, 4 * Ne * nu
    log10_median = (math.log(0.5) + math.log(a) + special.betaln(a, b)) / a / math.log(10)
    assert log10_median < -300, f"test premise: the median 10^{log10_median:.0f} must underflow"
    got = drift.stationary_summary(Ne, mu, 0.0, 0.5, nu)
    assert got["median"] == 0.0 and got["lower"] == 0.0, (
        f"a median of 10^{log10_median:.0f} must be reported as 0.0; got median "
        f"{got['median']}, lower {got['lower']}")
    np.testing.assert_allclose(got["mean"], a / (a + b), rtol=1e-9,
                               err_msg="s = 0: the mean must be a/(a+b) (Beta mean)")


# ------------------------------------------------------------------ h = 1/2: Kummer
def _log_kummer(A, B, c):
    """log B(A,B)·1F1(A; A+B; -c), computed as B(A,B)·e^(-c)·1F1(B; A+B; c) (Kummer's
    transformation; all terms positive, so mpmath's series converges without cancellation)."""
    with mp.workdps(30):
        A, B, c = mp.mpf(A), mp.mpf(B), mp.mpf(c)
        return float(mp.log(mp.beta(A, B)) - c + mp.log(mp.hyp1f1(B, A + B, c, maxterms=10**7)))


@pytest.mark.parametrize("a", [1e-6, 1e-3, 0.1, 1.0, 10.0])
@pytest.mark.parametrize("four_ne_s", [0.5, 20.0, 2e3, 1e5])
def test_normaliser_h_half_is_kummer(a, four_ne_s):
    """h = 1/2: the exponent -2Ne·s(2hx + (1-2h)x²) is -2Ne·s·x, so (derived) Z = ∫ x^(a-1)
    (1-x)^(b-1) e^(-cx) dx = B(a,b)·1F1(a; a+b; -c) with c = 2Ne·s (Kummer's integral)."""
    Ne = 1e5
    for b in (1e-6, 0.01, 1.0, 10.0):
        got = drift.log_normaliser(Ne, a / (4 * Ne), four_ne_s / (4 * Ne), 0.5, b / (4 * Ne))
        expected = _log_kummer(a, b, four_ne_s / 2)
        assert abs(got - expected) <= RTOL * 1e-3 * max(1.0, abs(expected)), (
            f"h = 1/2, a = {a}, b = {b}, 4Ne·s = {four_ne_s}: log Z {float(got)!r} vs Kummer "
            f"(mpmath hyp1f1) {expected!r}")


@pytest.mark.slow
def test_binomial_h_half_is_kummer_with_shifted_exponents():
    """h = 1/2: log P(k of n) = log C(n,k) + log[B(a+k,b+n-k)1F1(a+k; a+b+n; -c)] - log[B(a,b)
    1F1(a; a+b; -c)] (derived; Kummer's integral), for n up to 1e6 and k = 0, 1, n/2, n
    (the exponents are shifted because x^k (1-x)^(n-k) multiplies the integrand)."""
    Ne = 1e5
    cases = [
        (1e-6, 1e-6, 1e5),
        (1e-3, 1e-4, 1e3),
        (0.3, 1e-2, 10.0),
        (10.0, 0.5, 1e5),
        (2.0, 1e-6, 0.0),
    ]
    for a, b, four_ne_s in cases:
        c = four_ne_s / 2
        # n = 1e6 with 4Ne·s = 1e5 is left to the mpmath sweep: hyp1f1 takes ~15 s there
        for n in (20, 10**6) if four_ne_s < 1e4 else (20, 2000):
            for k in (0, 1, n // 2, n):
                got = drift.log_binomial_probability(
                    k, n, Ne, a / (4 * Ne), four_ne_s / (4 * Ne), 0.5, b / (4 * Ne)
                )
                log_choose = (
                    special.gammaln(n + 1) - special.gammaln(k + 1) - special.gammaln(n - k + 1)
                )
                expected = log_choose + _log_kummer(a + k, b + (n - k), c) - _log_kummer(a, b, c)
                assert abs(got - expected) <= RTOL, (
                    f"h = 1/2, (a, b, 4Ne·s, n, k) = {(a, b, four_ne_s, n, k)}: log P(k of n) "
                    f"{float(got)!r} vs Kummer (mpmath hyp1f1) {expected!r}")


# ------------------------------------------------------------------ general h: mpmath sweep
EDGE_CASES = [  # (4Ne·mu, 4Ne·s, h, 4Ne·nu, n, k): corners of the range in docs/model.md
    (1e-6, 1e5, 0.0, 1e-6, 10**6, 0),
    (1e-6, 1e5, 1.0, 1e-3, 10**6, 1),
    (10.0, 1e5, 0.0, 0.1, 10**6, 10**6 // 2),
    (1e-6, 0.0, 0.3, 1e-6, 50, 50),
    (0.02, 300.0, 0.05, 1e-4, 10**6, 10**6),
    (3.0, 1e4, 0.9, 2.0, 1000, 7),
]


def _random_cases(seed, count):
    rng = np.random.default_rng(seed)
    for _ in range(count):
        n = int(10 ** rng.uniform(0, 6))
        yield (
            10 ** rng.uniform(-6, 1),
            0.0 if rng.random() < 0.1 else 10 ** rng.uniform(-1, 5),
            float(rng.choice([0.0, 1.0, rng.uniform()])),
            10 ** rng.uniform(-6, 1),
            n,
            int(rng.choice([0, n, rng.integers(0, n + 1)])),
        )


def _check_case(a, four_ne_s, h, b, n, k):
    Ne = 1e5  # s = 4Ne·s/(4Ne) stays at most 1
    mu, s, nu = a / (4 * Ne), four_ne_s / (4 * Ne), b / (4 * Ne)
    case = f"(4Ne·mu, 4Ne·s, h, 4Ne·nu, n, k) = {(a, four_ne_s, h, b, n, k)}"
    log_z = float(reference.log_z_drift(Ne, mu, s, h, nu))
    got = float(drift.log_normaliser(Ne, mu, s, h, nu))
    assert abs(got - log_z) <= RTOL * max(1, abs(log_z)), (
        f"log Z {got!r} vs mpmath.quad {log_z!r} at {case}")
    mean = float(reference.mean(Ne, mu, s, h, nu))
    got = float(drift.stationary_summary(Ne, mu, s, h, nu)["mean"])
    assert abs(got / mean - 1) <= RTOL, f"mean {got!r} vs mpmath.quad {mean!r} at {case}"
    log_p = float(reference.log_binomial(k, n, Ne, mu, s, h, nu))
    got = float(drift.log_binomial_probability(k, n, Ne, mu, s, h, nu))
    assert abs(got - log_p) <= RTOL, f"log P(k of n) {got!r} vs mpmath.quad {log_p!r} at {case}"


@pytest.mark.slow
@pytest.mark.parametrize("case", [*EDGE_CASES, *_random_cases(2026, 8)])
def test_sweep_against_mpmath(case):
    """Normaliser, mean and log P(k of n) against mpmath.quad at 20 digits (drift_reference),
    relative error <= 1e-6, over 4Ne·mu in [1e-6, 10], 4Ne·s in [0, 1e5], h in [0, 1],
    4Ne·nu in [1e-6, 10], n <= 1e6 (random cases, fixed seed)."""
    _check_case(*case)


# ------------------------------------------------------------------ large Ne, recessive limit
def test_large_ne_mean_converges_to_deterministic_q_hat():
    """As Ne grows (4Ne·mu and 4Ne·s both ≫ 1) the density concentrates at the deterministic
    equilibrium of infer.core.balance.q_hat (diffusion theory, common practice): the relative gap
    shrinks roughly like 1/Ne and is below 0.1 % at Ne = 1e5."""
    mu, s, h, nu = 1e-4, 0.05, 0.2, 1e-7
    from infer.core.balance import q_hat

    target = q_hat(mu, s, h, nu=nu)
    gaps = [
        abs(drift.stationary_summary(Ne, mu, s, h, nu)["mean"] / target - 1)
        for Ne in (1e3, 1e4, 1e5)
    ]
    assert gaps[0] > gaps[1] > gaps[2], (
        f"the gap to q_hat must shrink as Ne grows 1e3, 1e4, 1e5; gaps {gaps}")
    assert gaps[2] < 1e-3, f"at Ne = 1e5 the mean must be within 0.1 % of q_hat; gap {gaps[2]}"
    assert gaps[1] / gaps[2] > 5, (
        f"the gap must shrink roughly like 1/Ne (ratio ~10 per decade); ratio {gaps[1] / gaps[2]}")


def _gamma_moment(j, Ne, mu, s):
    """M_j = ∫_0^∞ x^(a-1+j) e^(-c x²) dx / ∫_0^∞ x^(a-1) e^(-c x²) dx = Γ((a+j)/2)/(Γ(a/2)
    c^(j/2)), a = 4Ne·mu, c = 2Ne·s (substitute t = c x²: the Gamma integral)."""
    a, c = 4 * Ne * mu, 2 * Ne * s
    return math.exp(special.gammaln((a + j) / 2) - special.gammaln(a / 2) - j / 2 * math.log(c))


#: E[q] for mu = 1e-5, s = 1 (REFERENCES.md, "Complete recessive, v → 0" [derived])
RECESSIVE_CHECKS = [(50, 1.770e-4), (500, 5.529e-4), (5000, 1.565e-3), (50000, 2.803e-3)]


@pytest.mark.parametrize("Ne, published", RECESSIVE_CHECKS)
def test_recessive_closed_form_check_values(Ne, published):
    """E[q] = Γ(2Ne·mu + ½)/(Γ(2Ne·mu)·√(2Ne·s)) for mu = 1e-5, s = 1 (REFERENCES.md, derived):
    the test's own Gamma-integral helper reproduces the tabled values."""
    got = _gamma_moment(1, Ne, 1e-5, 1.0)
    assert got == pytest.approx(published, rel=1e-3), (
        f"Ne = {Ne}: the Gamma-integral helper gives {got:.4g}; REFERENCES.md tables "
        f"{published}")


@pytest.mark.parametrize("Ne", [50, 500, 5000, 50000])
def test_recessive_gamma_integral_is_exact_when_four_ne_nu_is_one(Ne):
    """h = 0 gives φ ∝ x^(a-1)(1-x)^(b-1) e^(-c x²). With b = 1 the middle factor is 1, and
    extending the range from [0, 1] to [0, ∞) adds only O(e^(-c)) (c = 2Ne·s ≥ 100), so by the
    Gamma integral (derived) E[q] = Γ(2Ne·mu+½)/(Γ(2Ne·mu)√(2Ne·s)) and E[q²] = mu/s exactly."""
    mu, s = 1e-5, 1.0
    got = drift.stationary_summary(Ne, mu, s, 0.0, 1 / (4 * Ne))
    mean = _gamma_moment(1, Ne, mu, s)
    np.testing.assert_allclose(got["mean"], mean, rtol=1e-9,
                               err_msg=f"Ne = {Ne}: E[q] vs the Gamma integral (derived)")
    np.testing.assert_allclose(got["sd"] ** 2 + got["mean"] ** 2, mu / s, rtol=1e-8,
                               err_msg=f"Ne = {Ne}: E[q²] must be mu/s (derived)")


@pytest.mark.parametrize("Ne", [50, 500, 5000, 50000])
def test_recessive_with_nu_to_zero(Ne):
    """nu → 0 (4Ne·nu = 4e-12·Ne): φ ∝ x^(a-1)(1-x)^(-1) e^(-c x²), the mass near 1 being
    O(e^(-c)/b), negligible. Expanding (1-x)^(-1) = Σ x^j and integrating term by term with the
    Gamma integral (derived; an asymptotic series, accurate for c = 2Ne·s ≥ 100 when cut at
    j = 20): E[q] = Σ_j M_(j+1)/Σ_j M_j, E[q²] = Σ_j M_(j+2)/Σ_j M_j. The leading terms are the
    closed forms Γ(2Ne·mu+½)/(Γ(2Ne·mu)√(2Ne·s)) and mu/s; the first correction is
    ≈ mu/s added to the mean, so the closed form holds to O(√(mu/s)/E[q]·√(mu/s))."""
    mu, s, nu = 1e-5, 1.0, 1e-12
    moments = [_gamma_moment(j, Ne, mu, s) for j in range(23)]
    norm = sum(moments[:20])
    mean = sum(moments[1:21]) / norm
    second = sum(moments[2:22]) / norm
    got = drift.stationary_summary(Ne, mu, s, 0.0, nu)
    np.testing.assert_allclose(got["mean"], mean, rtol=1e-7,
                               err_msg=f"Ne = {Ne}: E[q] vs the Gamma-integral series (derived)")
    np.testing.assert_allclose(got["sd"] ** 2 + got["mean"] ** 2, second, rtol=1e-6,
                               err_msg=f"Ne = {Ne}: E[q²] vs the Gamma-integral series")
    leading = _gamma_moment(1, Ne, mu, s)
    bound = 3 * (mu / s) * math.sqrt(mu / s) / leading + 1e-12
    gap = abs(got["mean"] - leading - mu / s)
    assert gap < bound, (
        f"Ne = {Ne}: E[q] - closed form - mu/s = {gap:.3g} exceeds the next-order bound "
        f"{bound:.3g} (derived)")
    second_moment = got["sd"] ** 2 + got["mean"] ** 2
    assert second_moment == pytest.approx(mu / s, rel=0.2), (
        f"Ne = {Ne}: E[q²] = {float(second_moment):.4g} must be near mu/s = {mu / s:g}")


# ------------------------------------------------------------------ sensitivity to nu
def test_strong_selection_answer_does_not_depend_on_nu():
    """4Ne·s ≫ 1 (here 400 and 4000): mean, median and interval change by < 1e-4 relative when
    nu spans two orders of magnitude, since (1-x)^(4Ne·nu - 1) ≈ (1-x)^(-1) where the mass is
    and the mass near 1 is O(e^(-2Ne·s)) (derived). Under neutrality the mean a/(a+b) does
    depend on nu strongly, so the comparison can tell."""
    for Ne, mu, s, h in [
        (1000, 1e-5, 0.1, 0.0),
        (1000, 1e-5, 1.0, 0.3),
        (100, 1e-4, 10.0 / 1000, 1.0),
    ]:
        if 4 * Ne * s < 30:
            continue
        summaries = [drift.stationary_summary(Ne, mu, s, h, nu) for nu in (1e-9, 1e-8, 1e-7)]
        for key in ("mean", "median", "lower", "upper", "sd"):
            values = np.array([summary[key] for summary in summaries])
            np.testing.assert_allclose(values, values[0], rtol=1e-4, err_msg=key)
    neutral = [drift.stationary_summary(1000, 1e-5, 0.0, 0.5, nu)["mean"] for nu in (1e-7, 1e-5)]
    # control: a/(a+b) is 0.99 at nu = 1e-7 and 0.5 at nu = 1e-5 (Beta mean, closed form)
    assert neutral[0] / neutral[1] > 1.5, (
        f"control failed: the neutral mean must depend on nu; means {neutral}")


# ------------------------------------------------------------------ identities and arbitrary P
def test_sample_probabilities_sum_to_one():
    """Σ_k P(k of n) = ∫ φ = 1 (law of total probability; derived), for several shapes."""
    k = np.arange(31)
    for Ne, mu, s, h, nu in [
        (100, 1e-3, 0.05, 0.0, 1e-4),
        (1e4, 1e-6, 0.5, 0.5, 1e-8),
        (30, 0.01, 0.0, 1, 0.01),
    ]:
        total = np.exp(drift.log_binomial_probability(k, 30, Ne, mu, s, h, nu)).sum()
        assert total == pytest.approx(1.0, rel=1e-9), (
            f"Σ_k P(k of 30) = {total!r}, must be 1, at (Ne, mu, s, h, nu) = {(Ne, mu, s, h, nu)}")


def test_log_expectation_matches_binomial_and_genotype_closed_forms():
    """log_expectation of a binomial P(k | x) equals log_binomial_probability; under s = 0 a
    genotype-count multinomial (AA, Aa, aa) on Hardy–Weinberg frequencies integrates (derived) to
    log[N!/(AA! Aa! aa!)] + Aa·log 2 + log B(a + 2aa + Aa, b + 2AA + Aa) - log B(a, b)."""
    rng = np.random.default_rng(4)
    Ne = 10 ** rng.uniform(1, 4, 200)
    mu, s, h, nu = (
        10 ** rng.uniform(-7, -3, 200),
        rng.uniform(0, 1, 200),
        rng.uniform(0, 1, 200),
        1e-7,
    )
    for k, n in [(0, 10), (3, 400), (1, 10**6), (10**6, 10**6)]:

        def log_p(x, k=k, n=n):
            choose = special.gammaln(n + 1) - special.gammaln(k + 1) - special.gammaln(n - k + 1)
            return choose + special.xlogy(k, x) + special.xlog1py(n - k, -x)

        got = drift.log_expectation(log_p, Ne, mu, s, h, nu)
        np.testing.assert_allclose(
            got, drift.log_binomial_probability(k, n, Ne, mu, s, h, nu), atol=1e-8,
            err_msg=f"log_expectation of a binomial ({k} of {n}) vs log_binomial_probability",
        )

    AA, Aa, aa = 480, 18, 2
    N = AA + Aa + aa

    def genotypes(x):
        return (
            special.gammaln(N + 1)
            - special.gammaln(AA + 1)
            - special.gammaln(Aa + 1)
            - special.gammaln(aa + 1)
            + special.xlog1py(2 * AA, -x)
            + Aa * (math.log(2) + np.log(x) + np.log1p(-x))
            + special.xlogy(2 * aa, x)
        )

    Ne, mu, nu = np.array([50.0, 500.0]), 1e-3, 1e-4
    a, b = 4 * Ne * mu, 4 * Ne * nu
    expected = (
        special.gammaln(N + 1)
        - special.gammaln(AA + 1)
        - special.gammaln(Aa + 1)
        - special.gammaln(aa + 1)
        + Aa * math.log(2)
        + special.betaln(a + 2 * aa + Aa, b + 2 * AA + Aa)
        - special.betaln(a, b)
    )
    np.testing.assert_allclose(
        drift.log_expectation(genotypes, Ne, mu, 0.0, 0.5, nu), expected, atol=1e-8,
        err_msg="s = 0 genotype multinomial vs its Beta-function closed form (derived)",
    )


def test_broadcasting_matches_elementwise():
    Ne = np.array([[30.0], [300.0], [3000.0]])
    s = np.array([0.0, 0.01, 0.1, 1.0])
    got = drift.log_binomial_probability(2, 100, Ne, 1e-4, s, 0.3, 1e-6)
    assert got.shape == (3, 4), f"broadcast (3, 1) x (4,) gave shape {got.shape}"
    for i in range(3):
        for j in range(4):
            one = float(drift.log_binomial_probability(2, 100, Ne[i, 0], 1e-4, s[j], 0.3, 1e-6))
            assert got[i, j] == pytest.approx(one, abs=1e-12), (
                f"broadcast value {got[i, j]!r} vs scalar call {one!r} at Ne = {Ne[i, 0]}, "
                f"s = {s[j]}")
    summary = drift.stationary_summary(Ne, 1e-4, s, 0.3, 1e-6)
    shapes = {key: value.shape for key, value in summary.items()}
    assert all(shape == (3, 4) for shape in shapes.values()), f"summary shapes: {shapes}"


@pytest.mark.parametrize(
    "kwargs, field",
    [
        (dict(Ne=0.0), "Ne"),
        (dict(mu=-1e-6), "mu"),
        (dict(nu=0.0), "nu"),
        (dict(s=1.5), "s"),
        (dict(h=float("nan")), "h"),
    ],
)
def test_impossible_parameters_raise_input_error(kwargs, field):
    params = dict(Ne=100.0, mu=1e-5, s=0.1, h=0.5, nu=1e-7) | kwargs
    with pytest.raises(InputError) as error:
        drift.log_normaliser(**params)
    assert error.value.field == field, (
        f"{kwargs} must be rejected naming {field!r}; the error names {error.value.field!r}")


def test_impossible_counts_raise_input_error():
    with pytest.raises(InputError, match="more than"):
        drift.log_binomial_probability(5, 4, 100, 1e-5, 0.1, 0.5, 1e-7)
    with pytest.raises(InputError):
        drift.probability_absent(-3, 100, 1e-5, 0.1, 0.5, 1e-7)
    with pytest.raises(InputError):
        drift.stationary_summary(100, 1e-5, 0.1, 0.5, 1e-7, interval=1.2)


# ------------------------------------------------------------------ large Ne: concentrated limit
# A strongly selected locus: mu = 1e-5, s = 0.5, h = 1/2, nu = 1e-9.
BIG = dict(mu=1e-5, s=0.5, h=0.5, nu=1e-9)


@pytest.mark.parametrize("Ne", [1e12, 1e15, 1e30, 1e100, 1e300])
def test_large_ne_concentrates_on_the_deterministic_balance(Ne):
    """As Ne grows the density concentrates on the balance (Wright 1931; Ewens 2004, §4.5):
    the mean is the mode of φ to O(1/(4Ne·mu)) relative (derived: Laplace's method, the
    mean - mode gap is O(σ²/x̂)), that mode is within O(mu) relative of the exact discrete
    balance of infer.core.balance.q_hat (derived: the two equilibrium equations differ by
    the factor 1 + mu on hs, docs/model.md), and the sd is the linear-noise sd (6.3e-9 at
    Ne = 1e12; the general quadrature alone gave sd 0.0 there and mean 1 at Ne = 1e300)."""
    from infer.core.balance import q_hat

    got = drift.stationary_summary(Ne, **BIG)
    mode = reference.diffusion_balance(Ne, **BIG)
    a = 4 * Ne * BIG["mu"]
    assert abs(got["mean"] / mode - 1) <= 10 / a + 1e-14, (
        f"Ne = {Ne:g}: mean {float(got['mean'])!r} vs the diffusion balance {mode!r} (brentq)")
    exact = float(q_hat(BIG["mu"], BIG["s"], BIG["h"], nu=BIG["nu"]))
    assert abs(got["mean"] / exact - 1) <= 3 * BIG["mu"], (
        f"Ne = {Ne:g}: mean {float(got['mean'])!r} must be within O(mu) of q_hat {exact!r}")
    sd = reference.linear_noise_sd(Ne, **BIG)
    assert abs(got["sd"] / sd - 1) <= 10 / math.sqrt(a) / math.sqrt(a) + 1e-12, (
        f"Ne = {Ne:g}: sd {float(got['sd'])!r} vs the linear-noise sd {sd!r}")
    for key in ("lower", "median", "upper"):
        assert abs(got[key] / mode - 1) <= 3 * float(got["sd"] / mode) + 1e-14, (
            f"Ne = {Ne:g}: {key} {float(got[key])!r} must lie within 3 sd of {mode!r}")


def test_large_ne_quantiles_are_gaussian():
    """Ne = 1e15 (4Ne·mu = 4e10): median and 95 % bounds are x̂ + σ·z_p, z_p the normal
    quantile (scipy.stats.norm), to O(1/√(4Ne·mu)) relative in the offset (the skewness
    correction of the Cornish–Fisher expansion, common practice)."""
    Ne = 1e15
    got = drift.stationary_summary(Ne, **BIG, interval=0.95)
    mode, sd = reference.diffusion_balance(Ne, **BIG), reference.linear_noise_sd(Ne, **BIG)
    tolerance = 5 / math.sqrt(4 * Ne * BIG["mu"])
    for key, p in (("lower", 0.025), ("upper", 0.975)):
        offset = (got[key] - got["median"]) / (sd * stats.norm.ppf(p))
        assert abs(offset - 1) <= tolerance, (
            f"{key}: offset from the median is {offset:.6f} normal quantiles; expected 1")
    assert abs(got["median"] - mode) <= 1e-3 * sd + 2e-16 * mode, (
        f"median {float(got['median'])!r} vs the mode {mode!r} (sd {sd:.3g})")


@pytest.mark.parametrize("Ne", [1e30, 1e300])
def test_large_ne_sample_probability_is_binomial_at_the_balance(Ne):
    """When the peak is far narrower than a sample can resolve, P(k of n) is the binomial at the
    balance: scipy.stats.binom.logpmf(k, n, x̂) (derived; corrections O(n²/(4Ne·mu)))."""
    mode = reference.diffusion_balance(Ne, **BIG)
    k = np.array([0, 1, 3, 40, 1000])
    got = drift.log_binomial_probability(k, 1000, Ne, **BIG)
    np.testing.assert_allclose(got, stats.binom.logpmf(k, 1000, mode), rtol=1e-10, atol=1e-10,
                               err_msg=f"Ne = {Ne:g}: log P(k of 1000) vs the binomial at x̂")
    assert np.exp(got).sum() < 1.0 + 1e-12, "probabilities must not sum above 1"


def test_large_ne_neutral_is_beta():
    """s = 0, Ne = 1e9 and 1e12: Beta(4Ne·mu, 4Ne·nu) with parameters up to 4e7 (Wright 1931;
    scipy.stats.beta): the general quadrature's sd loses ~3e-7 relative here, so the centred
    rule must take these rows."""
    for Ne, mu, nu in [(1e9, 1e-5, 1e-6), (1e12, 1e-5, 1e-9), (1e8, 0.3, 0.1)]:
        beta = stats.beta(4 * Ne * mu, 4 * Ne * nu)
        got = drift.stationary_summary(Ne, mu, 0.0, 0.5, nu)
        case = f"Ne = {Ne:g}, mu = {mu:g}, nu = {nu:g}"
        for key, expected in (("mean", beta.mean()), ("sd", beta.std()),
                              ("median", beta.median()), ("lower", beta.ppf(0.025)),
                              ("upper", beta.ppf(0.975))):
            np.testing.assert_allclose(got[key], expected, rtol=1e-10,
                                       err_msg=f"{case}: {key} vs scipy.stats.beta")


SWITCH = [  # rows just below and above LIMIT = max(4Ne·mu, 4Ne·nu, 2Ne·|s|) = 1e4
    (1e4, 0.05, 0.5, 0.5, 1e-4),
    (1e4, 0.05, 0.5, 0.0, 1e-4),
    (1e4, 0.03, 0.5, 0.8, 1e-4),
    (2.5e4, 0.1, 0.0, 0.5, 0.05),
]


@pytest.mark.parametrize("Ne, mu, s, h, nu", SWITCH)
def test_switch_to_the_centred_rule_is_continuous(Ne, mu, s, h, nu):
    """Across the switch (docs/model.md: the centred rule from max(4Ne·mu, 4Ne·nu, 2Ne·|s|) =
    1e4 when the peak is narrow) the two rules agree: evaluated on the same row, mean, sd,
    quantiles, log Z and log P(k of n) differ by < 1e-7 relative, and the public functions
    are continuous through the switch to that tolerance (derived: the general rule's sd,
    from E[x²]/E[x] - E[x], keeps about eps·|log Z|/(var/mean²) ≈ 2e-8 relative for
    Beta(1e4, 5e3); the documented accuracy is 1e-6)."""
    from infer.core.drift import concentrated as rule
    from infer.core.drift.quadrature import _log_z
    from infer.core.drift.stationary import _log_ratio, _summary

    a, b, c, hh = (np.array([v]) for v in (4 * Ne * mu, 4 * Ne * nu, 2 * Ne * s, h))
    assert max(a[0], b[0], abs(c[0])) == pytest.approx(rule.LIMIT), "test premise: at LIMIT"
    mask, peak = rule.concentrated(a, b, c, hh)
    assert mask[0], f"test premise: the row {(Ne, mu, s, h, nu)} is concentrated"
    probs = {"lower": 0.025, "median": 0.5, "upper": 0.975}
    general = _summary(a, b, c, hh, probs)
    mean, sd = rule.summary(peak)
    centred = {"mean": mean, "sd": sd, **{k: rule.quantile(peak, p) for k, p in probs.items()}}
    for key in general:
        np.testing.assert_allclose(centred[key], general[key], rtol=1e-7,
                                   err_msg=f"{key}: centred vs general rule at the switch")
    np.testing.assert_allclose(rule.log_z(peak), _log_z(a, b, c, hh), rtol=1e-12,
                               err_msg="log Z: centred vs general rule")
    for k, n in ((0, 10), (3, 100), (50, 1000)):
        kk, nn = np.array([float(k)]), np.array([float(n)])
        centred_lp, ok = rule.log_binomial(peak, kk, nn)
        assert ok[0], f"the centred rule must resolve {k} of {n}"
        np.testing.assert_allclose(centred_lp, _log_ratio(kk, nn, a, b, c, hh), atol=1e-8,
                                   err_msg=f"log P({k} of {n}): centred vs general rule")
    eps = 1e-9  # Ne just below (general rule) and just above (centred rule) the switch
    below = drift.stationary_summary(Ne * (1 - eps), mu, s, h, nu)
    above = drift.stationary_summary(Ne * (1 + eps), mu, s, h, nu)
    for key in below:
        assert abs(above[key] / below[key] - 1) < 1e-7, (
            f"{key} jumps across the switch: {float(below[key])!r} -> {float(above[key])!r}")


def test_large_ne_log_expectation_matches_binomial():
    """log_expectation of a binomial P(k | x) equals log_binomial_probability on concentrated
    rows too (both are derived from the same density; different integration rules)."""
    Ne = np.array([1e9, 1e12, 1e300])
    for k, n in [(0, 10), (3, 1000), (1, 10**6)]:

        def log_p(x, k=k, n=n):
            choose = special.gammaln(n + 1) - special.gammaln(k + 1) - special.gammaln(n - k + 1)
            return choose + special.xlogy(k, x) + special.xlog1py(n - k, -x)

        got = drift.log_expectation(log_p, Ne, **BIG)
        np.testing.assert_allclose(got, drift.log_binomial_probability(k, n, Ne, **BIG),
                                   atol=1e-8, err_msg=f"log_expectation ({k} of {n}) at large Ne")


def test_large_ne_density_integrates_to_one():
    """φ integrates to 1 on concentrated rows: trapezoid over x̂ ± 12 sd (closed form: the
    normalisation), Ne = 1e12."""
    Ne = 1e12
    mode, sd = reference.diffusion_balance(Ne, **BIG), reference.linear_noise_sd(Ne, **BIG)
    x = mode + sd * np.linspace(-12, 12, 4001)
    total = np.trapezoid(drift.stationary_density(x, Ne, **BIG), x)
    assert total == pytest.approx(1.0, rel=1e-6), f"∫φ = {total!r} at Ne = 1e12"


MPMATH_LARGE = [  # (Ne, mu, s, h, nu): the example and other dominance values
    (1e6, 1e-5, 0.5, 0.5, 1e-9),
    (1e9, 1e-5, 0.5, 0.5, 1e-9),
    (1e12, 1e-5, 0.5, 0.5, 1e-9),
    (1e10, 1e-5, 0.5, 0.0, 1e-9),
    (1e10, 1e-5, 0.5, 0.9, 1e-9),
    (1e11, 1e-5, 0.5, 0.3, 1e-13),
    (1e5, 1e-3, 0.5, 0.0, 1e-5),
]


@pytest.mark.slow
@pytest.mark.parametrize("Ne, mu, s, h, nu", MPMATH_LARGE)
def test_large_ne_against_mpmath(Ne, mu, s, h, nu):
    """Mean, sd and log P(3 of 100) against mpmath.quad of the raw density at 40 + log10 Ne
    digits (drift_reference.concentrated_moments): relative error <= 1e-9 (mean, sd) and
    absolute <= 1e-9 (log P), for Ne from 1e5 to 1e12."""
    mean, sd, log_p = reference.concentrated_moments(Ne, mu, s, h, nu, k=3, n=100)
    got = drift.stationary_summary(Ne, mu, s, h, nu)
    case = f"(Ne, mu, s, h, nu) = {(Ne, mu, s, h, nu)}"
    assert abs(got["mean"] / float(mean) - 1) <= 1e-9, f"mean {got['mean']!r} vs {mean} at {case}"
    assert abs(got["sd"] / float(sd) - 1) <= 1e-9, f"sd {got['sd']!r} vs {sd} at {case}"
    lp = drift.log_binomial_probability(3, 100, Ne, mu, s, h, nu)
    assert abs(lp - float(log_p)) <= 1e-9, f"log P(3 of 100) {lp!r} vs {log_p} at {case}"


def test_centred_exponent_series_against_mpmath():
    """λ(u) = log(1+u) - u, the centred rule's building block, to a few ulps relative over
    u from 1e-150 to 3 (mpmath log1p at 400 digits), in arrays of every range mix (the
    series length depends on the largest |u|)."""
    from infer.core.drift.concentrated import _lambda

    u = np.array([1e-150, -1e-20, 1e-9, -3e-5, 2e-3, -0.05, 0.0999, 0.1, 0.5, -0.9, 3.0])
    with mp.workdps(400):
        expected = [mp.log1p(mp.mpf(x)) - mp.mpf(x) for x in u]
        for k in range(1, u.size + 1):
            got = _lambda(u[:k])
            worst = max(abs((mp.mpf(g) - e) / e) for g, e in zip(got, expected[:k], strict=True))
            assert worst < 5e-16, f"λ(u) on {u[:k]}: relative error {float(worst):.2g}"
