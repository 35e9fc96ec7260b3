"""Exact equilibria of infer.core.balance against independent references.

The reference is the recursion of DESIGN.md section 2 written out again in mpmath at
50 digits (genotype frequencies -> selection -> mutation), solved with mpmath's
bracketing root finder: it shares no code with the closed form or the Newton solver.
"""

import itertools

import mpmath as mp
import numpy as np
import pytest

from infer.core import balance
from infer.errors import InputError

mp.mp.dps = 50


def mp_autosomal_step(q, mu, s, h, F, nu):
    """One generation of the autosomal life cycle (DESIGN.md section 2), in mpmath."""
    p = 1 - q
    AA, Aa, aa = p * p * (1 - F) + p * F, 2 * p * q * (1 - F), q * q * (1 - F) + q * F
    w = AA + Aa * (1 - h * s) + aa * (1 - s)
    selected = (Aa * (1 - h * s) / 2 + aa * (1 - s)) / w
    return selected * (1 - nu) + (1 - selected) * mu


def mp_x_step(x, y, mu, s, h, F, nu, alpha):
    """One generation of the X-linked life cycle (DESIGN.md section 2), in mpmath.

    Daughters: egg x, sperm y, inbreeding F around their mean (x + y)/2; sons: egg's X.
    """
    mu_f = 3 * mu / (2 + alpha)
    mu_m = alpha * mu_f
    mean = (x + y) / 2
    aa = (1 - F) * x * y + F * mean
    Aa = (1 - F) * (x * (1 - y) + y * (1 - x))
    AA = 1 - aa - Aa
    w = AA + Aa * (1 - h * s) + aa * (1 - s)
    daughters = (Aa * (1 - h * s) / 2 + aa * (1 - s)) / w
    sons = x * (1 - s) / (1 - s * x)
    return (mu_f + daughters * (1 - mu_f - nu), mu_m + sons * (1 - mu_m - nu))


ROOT_WIDTH = mp.mpf("1e-7")


def mp_root_near(g, guess, width=ROOT_WIDTH):
    lo, hi = guess * (1 - width), min(guess * (1 + width), mp.mpf(1) - mp.mpf("1e-40"))
    assert g(lo) > 0 > g(hi), "no sign change of q' - q around the double-precision root"
    return mp.findroot(g, (lo, hi), solver="anderson")


def check_autosomal(mu, s, h, F, nu):
    result = balance.autosomal_balance(mu, s, h, F, nu)
    M = [mp.mpf(v) for v in (mu, s, h, F, nu)]

    def g(q):
        return mp_autosomal_step(q, *M) - q

    grid_low = [mp.mpf(10) ** e for e in np.linspace(-14, 0, 15)[:-1]]
    if not result.exists:
        # No stable interior root: the frequency rises everywhere in (0, 1).
        assert np.isnan(result.q_hat)
        grid = grid_low + [1 - mp.mpf(10) ** -e for e in range(1, 12, 2)]
        assert all(g(x) > 0 for x in grid), (mu, s, h, F, nu)
        return
    q = float(result.q_hat)
    reference = mp_root_near(g, mp.mpf(q))
    assert abs(q - reference) <= 1e-10 * reference, (mu, s, h, F, nu, q, reference)
    slope = mp.diff(lambda x: mp_autosomal_step(x, *M), reference)
    assert -1 < slope < 1, "returned root is not stable"
    assert all(g(x) > 0 for x in grid_low if x < reference * (1 - mp.mpf("1e-6")))


MU = [1e-9, 1e-7, 1e-5, 1e-4, 1e-3, 1e-2]
S = [1e-4, 1e-3, 1e-2, 0.1, 1.0]
H = [0.0, 1e-3, 0.05, 0.3, 0.5, 0.7, 1.0]


@pytest.mark.parametrize("mu", MU)
@pytest.mark.parametrize("F", [0.0, 0.01, 0.2])
@pytest.mark.parametrize("nu", [0.0, 1e-6])
def test_autosomal_matches_mpmath_recursion(mu, F, nu):
    """Exact root vs a 50-digit solution of the same recursion, <= 1e-10 relative."""
    for s, h in itertools.product(S, H):
        check_autosomal(mu, s, h, F, nu)


def test_vectorised_equals_elementwise():
    """One broadcast call (nu = 0 and nu > 0 mixed) equals scalar calls element by element."""
    mu = np.array(MU)[:, None, None]
    s = np.array(S)[None, :, None]
    h = np.array(H)[None, None, :]
    nu = np.where(np.arange(len(H)) % 2 == 0, 0.0, 1e-7)[None, None, :]
    whole = balance.autosomal_balance(mu, s, h, 0.05, nu)
    assert whole.q_hat.shape == (len(MU), len(S), len(H))
    for i, j, k in itertools.product(range(len(MU)), range(len(S)), range(len(H))):
        one = balance.q_hat(MU[i], S[j], H[k], 0.05, nu[0, 0, k])
        np.testing.assert_equal(whole.q_hat[i, j, k], one)


def test_mean_fitness_closed_form():
    """w̄ = (1-mu)(1-(1-F)hs q̂) at equilibrium (derived; DESIGN.md section 2)."""
    mu, s, h, F = 1e-5, np.array([0.01, 0.1, 1.0])[:, None], np.array([0.0, 0.2, 0.8]), 0.1
    result = balance.autosomal_balance(mu, s, h, F)
    expected = (1 - mu) * (1 - (1 - F) * h * s * result.q_hat)
    np.testing.assert_allclose(result.mean_fitness, expected, rtol=1e-14)
    np.testing.assert_allclose(result.load, 1 - expected, rtol=1e-9)


def test_complete_recessive_is_sqrt_mu_over_s():
    """h = 0, F = 0: the quadratic is s q² = mu exactly, q = sqrt(mu/s) (closed form)."""
    mu = np.logspace(-9, -2, 8)
    np.testing.assert_allclose(balance.q_hat(mu, 0.3, 0.0), np.sqrt(mu / 0.3), rtol=1e-15)


@pytest.mark.parametrize("s", [1e-3, 0.1, 1.0])
def test_haldane_muller_load(s):
    """Load ≈ 2 mu with heterozygous effect, = mu for a complete recessive, whatever s.

    Haldane 1937, Am. Nat. 71:337; Crow & Kimura 1970, An Introduction to Population
    Genetics Theory (from memory). At h = 0, F = 0 the load is mu exactly (derived:
    w̄ = 1 - s q² = 1 - mu).
    """
    mu = 1e-7
    for h in (0.1, 0.5, 1.0):  # h >> sqrt(mu/s): away from the recessive limit
        load = balance.autosomal_balance(mu, s, h).load
        assert abs(load / (2 * mu) - 1) < 2e-2
    np.testing.assert_allclose(balance.autosomal_balance(mu, s, 0.0).load, mu, rtol=1e-12)


def test_monotone_in_mu_s_h():
    """q̂ rises with mu and falls with s and h (common practice: more input, less removal)."""
    mu = np.logspace(-9, -3, 40)
    s = np.logspace(-2, 0, 40)
    h = np.linspace(0, 1, 41)
    assert np.all(np.diff(balance.q_hat(mu, 0.1, 0.3)) > 0)
    assert np.all(np.diff(balance.q_hat(1e-6, s, 0.3)) < 0)
    assert np.all(np.diff(balance.q_hat(1e-6, 0.1, h)) < 0)
    assert np.all(np.diff(balance.q_hat(1e-6, 0.1, h, nu=1e-7)) < 0)


def test_overdominant_side_returns_stable_smaller_root():
    """h > 1/2: the second root 2mu/(b - sqrt(...)) is a fixed point too, but unstable.

    It lies inside (0, 1) when 1 - h < mu/s roughly (f(1) < 0 with the vertex below 1).
    """
    mu, s, h = 1e-3, 0.05, 0.995
    a, b = (1 - 2 * h) * s, h * s * (1 + mu)
    other = 2 * mu / (b - np.sqrt(b * b + 4 * a * mu))
    q = float(balance.q_hat(mu, s, h))
    assert 0 < q < other < 1
    M = [mp.mpf(v) for v in (mu, s, h, 0, 0)]
    step = lambda x: mp_autosomal_step(x, *M)  # noqa: E731
    assert abs(step(mp.mpf(other)) - other) < 1e-14
    assert mp.diff(step, mp.mpf(other)) > 1  # unstable threshold
    assert mp.diff(step, mp.mpf(q)) < 1


def test_no_equilibrium_cases():
    """Mutation overwhelms selection, or no selection: NaN with exists False."""
    r = balance.autosomal_balance([1e-2, 1e-3, 1e-5], [1e-3, 1e-3, 0.0], [0.3, 0.95, 0.5])
    assert not r.exists.any() and np.isnan(r.q_hat).all() and np.isnan(r.load).all()
    # s = 0 with back mutation: the neutral balance mu/(mu+nu) (closed form).
    np.testing.assert_allclose(balance.q_hat(1e-5, 0.0, 0.5, nu=4e-5), 0.2, rtol=1e-14)
    # mu = 0: the loss boundary.
    assert balance.q_hat(0.0, 0.1, 0.5) == 0 and balance.q_hat(0.0, 0.1, 0.0, nu=1e-6) == 0


def test_out_of_domain_is_nan():
    bad = balance.autosomal_balance([-1e-5, 1e-5, 1e-5, 1e-5, np.nan], [0.1, 1.5, 0.1, 0.1, 0.1],
                                    [0.5, 0.5, 1.2, 0.5, 0.5], [0, 0, 0, 1.0, 0])
    assert not bad.exists.any() and np.isnan(bad.q_hat).all()
    assert np.isnan(balance.x_linked_balance(1e-5, 0.1, 0.5, alpha=0.0).q_male)


def check_x_linked(mu, s, h, F, nu, alpha):
    result = balance.x_linked_balance(mu, s, h, F, nu, alpha)
    M = [mp.mpf(v) for v in (mu, s, h, F, nu, alpha)]
    if not result.exists:
        # No stable interior root: eggs' frequency keeps rising from the rare state.
        assert np.isnan(result.q_male)
        x = y = mp.mpf("1e-12")
        for _ in range(40):
            x2, y2 = mp_x_step(x, y, *M)
            assert x2 > x
            x, y = x2, y2
        return
    x0 = mp.mpf(float(result.q_male))
    y0 = mp.mpf(float(2 * result.q_female - result.q_male))
    ref = mp.findroot(
        lambda x, y: [a - b for a, b in zip(mp_x_step(x, y, *M), (x, y), strict=True)],
        (x0, y0), tol=mp.mpf(10) ** -45,
    )
    assert abs(x0 - ref[0]) <= 1e-10 * ref[0], (mu, s, h, F, nu, alpha)
    assert abs(y0 - ref[1]) <= 1e-10 * ref[1], (mu, s, h, F, nu, alpha)
    jac = mp.jacobian(lambda x, y: list(mp_x_step(x, y, *M)), (ref[0], ref[1]))
    trace, det = jac[0, 0] + jac[1, 1], mp.det(jac)
    disc = trace * trace - 4 * det
    radius = max(abs((trace + mp.sqrt(disc)) / 2), abs((trace - mp.sqrt(disc)) / 2))
    assert radius < 1, "returned X-linked equilibrium is not stable"
    q_hat = (2 * (ref[0] + ref[1]) / 2 + ref[0]) / 3
    assert abs(float(result.q_hat) - q_hat) <= 1e-10 * q_hat


@pytest.mark.parametrize("mu", [1e-8, 1e-6, 1e-4, 1e-3])
@pytest.mark.parametrize("alpha", [0.5, 1.0, 4.0])
def test_x_linked_matches_mpmath_recursion(mu, alpha):
    """X-linked (x, y) vs a 50-digit solution of the two-sex recursion, <= 1e-10."""
    for s, h, F, nu in itertools.product([1e-3, 0.1, 1.0], [0.0, 0.3, 0.5, 1.0], [0.0, 0.1],
                                         [0.0, 1e-6]):
        check_x_linked(mu, s, h, F, nu, alpha)


def test_haldane_x_linked_males_and_new_mutants():
    """Haldane 1935, J. Genet. 31:317: q_male ≈ 3mu/s = (2u+v)/s with selection in
    hemizygous males only, and one third of affected males are new mutants when
    affected males do not reproduce (s = 1, equal rates)."""
    mu = 1e-6
    for s in (0.01, 0.3, 1.0):
        for alpha in (0.5, 1.0, 3.0):
            x = balance.x_linked_balance(mu, s, 0.0, alpha=alpha).q_male
            assert abs(x / (3 * mu / s) - 1) < 5 * (3 * mu / s)
    share = balance.x_linked_balance(mu, 1.0, 0.0).new_mutation_share
    assert abs(share - 1 / 3) < 1e-5


def test_sex_specific_rates_average():
    """mu = (2 mu_female + mu_male)/3 and mu_male = alpha mu_female (DESIGN.md section 2)."""
    mu_f, mu_m = balance.sex_specific_rates(np.array([1e-5, 2e-6]), np.array([1.0, 5.0]))
    np.testing.assert_allclose((2 * mu_f + mu_m) / 3, [1e-5, 2e-6], rtol=1e-15)
    np.testing.assert_allclose(mu_m / mu_f, [1.0, 5.0], rtol=1e-15)


def test_genotype_frequencies_with_inbreeding():
    """aa = q² + Fpq (Morton, Crow & Muller 1956, PNAS 42:855), Aa = 2pq(1-F); sum 1."""
    q, F = np.linspace(0, 1, 11), 0.15
    AA, Aa, aa = balance.genotype_frequencies(q, F)
    p = 1 - q
    np.testing.assert_allclose(aa, q**2 + F * p * q, atol=1e-16)
    np.testing.assert_allclose(Aa, 2 * p * q * (1 - F), atol=1e-16)
    np.testing.assert_allclose(AA + Aa + aa, 1.0, rtol=1e-15)


def test_affected_fraction_modes():
    q = 1e-3
    AA, Aa, aa = balance.genotype_frequencies(q, 0.0)
    dominant = balance.affected_fraction("dominant", q, penetrance=0.8)
    assert dominant == pytest.approx(0.8 * (Aa + aa))
    assert balance.affected_fraction("recessive", q) == pytest.approx(q * q)
    assert balance.affected_fraction("x-linked-male", q, penetrance=0.5) == pytest.approx(5e-4)
    with pytest.raises(InputError, match="mode"):
        balance.affected_fraction("codominant", q)


def test_recessive_incidence_with_inbreeding_is_mu_over_s():
    """h = 0: incidence of aa at equilibrium is mu/s whatever F (derived: the exact
    condition reads s(q²(1-F) + qF) = mu; Morton, Crow & Muller 1956 for the F effect)."""
    mu, s = 1e-6, 0.5
    for F in (0.0, 0.01, 0.1):
        q = balance.q_hat(mu, s, 0.0, F)
        assert balance.affected_fraction("recessive", q, F) == pytest.approx(mu / s, rel=1e-12)
