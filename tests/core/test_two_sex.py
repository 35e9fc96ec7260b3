"""The autosomal balance with sex-specific selection (infer.core.two_sex).

References: the one-sex recursion and its balance (Crow & Kimura 1970, An Introduction
to Population Genetics Theory, ch. 6) as the s_male = s_female limit; the first-order
approximations q ≈ mu/(h s) and sqrt(mu/s) (Haldane 1927; common practice) at the
sexes' mean s, derived in the module docstring; a closed form derived here for selection
in one sex only (h = 1, s_male = 1, s_female = 0); the fixed point reached by iterating
the life cycle forward from q = 0 (an independent route to the same equilibrium).
"""

import numpy as np
import pytest

from infer.core.balance import autosomal_balance
from infer.core.life_cycle import autosomal_step
from infer.core.two_sex import two_sex_balance, two_sex_genotypes, two_sex_step


def _random_rows(n, seed=3):
    rng = np.random.default_rng(seed)
    return dict(mu=10 ** rng.uniform(-9, -3, n), s_male=rng.uniform(0.01, 1, n),
                s_female=rng.uniform(0.01, 1, n), h=rng.uniform(0, 1, n),
                F=rng.uniform(0, 0.1, n),
                nu=np.where(rng.uniform(size=n) < 0.5, 0.0, 10 ** rng.uniform(-9, -5, n)))


def test_equal_sexes_reduce_to_the_one_sex_balance():
    rows = _random_rows(500)
    two = two_sex_balance(rows["mu"], rows["s_male"], rows["s_male"], rows["h"],
                          rows["F"], rows["nu"])
    one = autosomal_balance(rows["mu"], rows["s_male"], rows["h"], rows["F"], rows["nu"])
    np.testing.assert_array_equal(two.exists, one.exists)
    np.testing.assert_allclose(two.q_hat[one.exists], one.q_hat[one.exists], rtol=1e-11)
    np.testing.assert_allclose(two.q_sperm[one.exists], two.q_egg[one.exists], rtol=1e-11)


def test_step_with_equal_sexes_is_the_one_sex_recursion():
    rows = _random_rows(200)
    q = np.random.default_rng(4).uniform(0, 0.5, 200)
    x, y = two_sex_step(q, q, rows["mu"], rows["s_male"], rows["s_male"], rows["h"],
                        rows["F"], rows["nu"])
    expected = autosomal_step(q, rows["mu"], rows["s_male"], rows["h"], rows["F"], rows["nu"])
    np.testing.assert_allclose(x, expected, rtol=1e-12)
    np.testing.assert_allclose(y, expected, rtol=1e-12)


def test_genotypes_are_hardy_weinberg_with_inbreeding_when_gametes_agree():
    # Hardy–Weinberg with inbreeding (Wright 1921; common practice)
    q, F = 0.3, 0.05
    AA, Aa, aa = two_sex_genotypes(q, q, F)
    p = 1 - q
    np.testing.assert_allclose([AA, Aa, aa], [p * p * (1 - F) + p * F, 2 * p * q * (1 - F),
                                              q * q * (1 - F) + q * F], rtol=1e-14)


def test_balance_is_a_fixed_point_reached_from_zero():
    rows = {k: v[:40] for k, v in _random_rows(400, seed=8).items()}
    rows["mu"] = 10 ** np.random.default_rng(9).uniform(-4, -3, 40)  # fast to converge
    result = two_sex_balance(**rows)
    x = y = np.zeros(40)
    for _ in range(60_000):
        x, y = two_sex_step(x, y, **rows)
    ok = result.exists
    assert ok.all()
    np.testing.assert_allclose(x[ok], result.q_sperm[ok], rtol=1e-6)
    np.testing.assert_allclose(y[ok], result.q_egg[ok], rtol=1e-6)
    again = two_sex_step(result.q_sperm, result.q_egg, **rows)
    np.testing.assert_allclose(again[0], result.q_sperm, rtol=1e-12)
    np.testing.assert_allclose(again[1], result.q_egg, rtol=1e-12)


@pytest.mark.parametrize("h", [0.3, 1.0])
def test_first_order_frequency_is_the_mean_selection(h):
    # q ≈ 2 mu / (h (s_male + s_female)) (module docstring; Haldane 1927 at the mean s)
    mu = 1e-8
    result = two_sex_balance(mu, 0.9, 0.1, h)
    assert float(result.q_hat) == pytest.approx(2 * mu / (h * 1.0), rel=1e-4)


def test_recessive_first_order_is_the_square_root_rule():
    # q ≈ sqrt(2 mu / (s_male + s_female)) (module docstring; Haldane 1927 at the mean s)
    mu = 1e-9
    result = two_sex_balance(mu, 1.0, 0.2, 0.0)
    assert float(result.q_hat) == pytest.approx(np.sqrt(2 * mu / 1.2), rel=1e-3)


def test_selection_in_one_sex_only_has_a_closed_form():
    # h = 1, s_male = 1, s_female = 0, F = nu = 0 (derived here): every carrier male dies,
    # so sperm carry new mutations only, x = mu; eggs come from unselected females,
    # y = q̄ + mu(1 - q̄) with q̄ = (x + y)/2, which solves to y = (3mu - mu²)/(1 + mu).
    mu = np.array([1e-6, 1e-4, 1e-2])
    result = two_sex_balance(mu, 1.0, 0.0, 1.0)
    np.testing.assert_allclose(result.q_sperm, mu, rtol=1e-12)
    np.testing.assert_allclose(result.q_egg, (3 * mu - mu**2) / (1 + mu), rtol=1e-12)


def test_no_balance_when_mutation_overwhelms_selection():
    result = two_sex_balance(0.2, 0.05, 0.05, 0.5)
    assert not bool(result.exists) and np.isnan(result.q_hat)


def test_out_of_range_selection_gives_nan():
    result = two_sex_balance([1e-6, 1e-6], [1.5, np.nan], [0.5, 0.5], 0.5)
    assert not result.exists.any()
