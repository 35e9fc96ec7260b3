"""Exact equilibria of infer.core.balance against independent references.

The reference is the recursion of docs/model.md, 'Life cycle' written out again in mpmath at
50 digits (genotype frequencies -> selection -> mutation; tests/core/balance_reference.py),
solved with mpmath's bracketing root finder: it shares no code with the closed form or the
Newton solver.
"""

import itertools

import mpmath as mp
import numpy as np
import pytest
from balance_reference import autosomal_step as mp_autosomal_step
from balance_reference import x_linked_step as mp_x_step

from infer.core import balance
from infer.errors import InputError

mp.mp.dps = 50


ROOT_WIDTH = mp.mpf("1e-7")


def mp_root_near(g, guess, width=ROOT_WIDTH):
    lo, hi = guess * (1 - width), min(guess * (1 + width), mp.mpf(1) - mp.mpf("1e-40"))
    assert g(lo) > 0 > g(hi), (
        f"no sign change of q' - q within {float(width):g} (relative) of the double-precision "
        f"root {float(guess)!r}: q' - q is {float(g(lo)):.3g} below, {float(g(hi)):.3g} above")
    return mp.findroot(g, (lo, hi), solver="anderson")


def check_autosomal(mu, s, h, F, nu):
    result = balance.autosomal_balance(mu, s, h, F, nu)
    M = [mp.mpf(v) for v in (mu, s, h, F, nu)]

    def g(q):
        return mp_autosomal_step(q, *M) - q

    grid_low = [mp.mpf(10) ** e for e in np.linspace(-14, 0, 15)[:-1]]
    if not result.exists:
        # No stable interior root: the frequency rises everywhere in (0, 1).
        assert np.isnan(result.q_hat), (
            f"exists is False but q_hat = {result.q_hat} at {(mu, s, h, F, nu)}")
        grid = grid_low + [1 - mp.mpf(10) ** -e for e in range(1, 12, 2)]
        falling = [float(x) for x in grid if g(x) <= 0]
        assert not falling, (
            f"the library finds no equilibrium at (mu, s, h, F, nu) = {(mu, s, h, F, nu)}, but "
            f"the mpmath recursion has q' <= q at q = {falling[:3]}: a root may exist")
        return
    q = float(result.q_hat)
    reference = mp_root_near(g, mp.mpf(q))
    assert abs(q - reference) <= 1e-10 * reference, (
        f"q_hat {q!r} vs the 50-digit mpmath root {mp.nstr(reference, 17)} at (mu, s, h, F, "
        f"nu) = {(mu, s, h, F, nu)}: relative error {float(abs(q - reference) / reference):.2e}"
        " > 1e-10")
    slope = mp.diff(lambda x: mp_autosomal_step(x, *M), reference)
    assert -1 < slope < 1, (
        f"the returned root {q!r} is not stable: dq'/dq = {float(slope):.6g} at "
        f"{(mu, s, h, F, nu)}")
    lower_roots = [float(x) for x in grid_low
                   if x < reference * (1 - mp.mpf("1e-6")) and g(x) <= 0]
    assert not lower_roots, (
        f"q' <= q at q = {lower_roots[:3]} below the returned root {q!r} at "
        f"{(mu, s, h, F, nu)}: a smaller stable root was missed")


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
    assert whole.q_hat.shape == (len(MU), len(S), len(H)), (
        f"broadcast result has shape {whole.q_hat.shape}; expected {(len(MU), len(S), len(H))}")
    for i, j, k in itertools.product(range(len(MU)), range(len(S)), range(len(H))):
        one = balance.q_hat(MU[i], S[j], H[k], 0.05, nu[0, 0, k])
        np.testing.assert_equal(
            whole.q_hat[i, j, k], one,
            err_msg=f"broadcast vs scalar call at mu={MU[i]}, s={S[j]}, h={H[k]}")


def test_mean_fitness_closed_form():
    """w̄ = (1-mu)(1-(1-F)hs q̂) at equilibrium (derived; docs/model.md)."""
    mu, s, h, F = 1e-5, np.array([0.01, 0.1, 1.0])[:, None], np.array([0.0, 0.2, 0.8]), 0.1
    result = balance.autosomal_balance(mu, s, h, F)
    expected = (1 - mu) * (1 - (1 - F) * h * s * result.q_hat)
    np.testing.assert_allclose(result.mean_fitness, expected, rtol=1e-14,
                               err_msg="mean fitness vs (1-mu)(1-(1-F)hs q) (derived)")
    np.testing.assert_allclose(result.load, 1 - expected, rtol=1e-9,
                               err_msg="load vs 1 - (1-mu)(1-(1-F)hs q) (derived)")


def test_complete_recessive_is_sqrt_mu_over_s():
    """h = 0, F = 0: the quadratic is s q² = mu exactly, q = sqrt(mu/s) (closed form)."""
    mu = np.logspace(-9, -2, 8)
    np.testing.assert_allclose(balance.q_hat(mu, 0.3, 0.0), np.sqrt(mu / 0.3), rtol=1e-15,
                               err_msg="h = 0, F = 0: q_hat must be sqrt(mu/s) (closed form)")


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
        assert abs(load / (2 * mu) - 1) < 2e-2, (
            f"load {float(load):.6g} at h = {h}, s = {s} is not within 2 % of 2mu = {2 * mu:g} "
            "(Haldane 1937)")
    np.testing.assert_allclose(balance.autosomal_balance(mu, s, 0.0).load, mu, rtol=1e-12,
                               err_msg="h = 0, F = 0: the load must be mu exactly (derived)")


def test_monotone_in_mu_s_h():
    """q̂ rises with mu and falls with s and h (common practice: more input, less removal)."""
    mu = np.logspace(-9, -3, 40)
    s = np.logspace(-2, 0, 40)
    h = np.linspace(0, 1, 41)
    cases = [("mu", mu, balance.q_hat(mu, 0.1, 0.3), 1),
             ("s", s, balance.q_hat(1e-6, s, 0.3), -1),
             ("h", h, balance.q_hat(1e-6, 0.1, h), -1),
             ("h (nu = 1e-7)", h, balance.q_hat(1e-6, 0.1, h, nu=1e-7), -1)]
    for name, grid, q, sign in cases:
        wrong = np.flatnonzero(sign * np.diff(q) <= 0)
        assert wrong.size == 0, (
            f"q_hat must {'rise' if sign > 0 else 'fall'} with {name}; it does not between "
            f"{grid[wrong[0]]:.4g} and {grid[wrong[0] + 1]:.4g}")


def test_overdominant_side_returns_stable_smaller_root():
    """h > 1/2: the second root 2mu/(b - sqrt(...)) is a fixed point too, but unstable.

    It lies inside (0, 1) when 1 - h < mu/s roughly (f(1) < 0 with the vertex below 1).
    """
    mu, s, h = 1e-3, 0.05, 0.995
    a, b = (1 - 2 * h) * s, h * s * (1 + mu)
    other = 2 * mu / (b - np.sqrt(b * b + 4 * a * mu))
    q = float(balance.q_hat(mu, s, h))
    assert 0 < q < other < 1, (
        f"expected the stable root below the unstable one inside (0, 1); q_hat = {q!r}, "
        f"other root (closed form) = {other!r}")
    M = [mp.mpf(v) for v in (mu, s, h, 0, 0)]
    step = lambda x: mp_autosomal_step(x, *M)  # noqa: E731
    assert abs(step(mp.mpf(other)) - other) < 1e-14, (
        f"the closed-form second root {other!r} is not a fixed point of the mpmath recursion")
    slope_other, slope_q = mp.diff(step, mp.mpf(other)), mp.diff(step, mp.mpf(q))
    assert slope_other > 1, f"the second root must be unstable: dq'/dq = {float(slope_other)}"
    assert slope_q < 1, f"the returned root must be stable: dq'/dq = {float(slope_q)}"


def test_no_equilibrium_cases():
    """Mutation overwhelms selection, or no selection: NaN with exists False."""
    r = balance.autosomal_balance([1e-2, 1e-3, 1e-5], [1e-3, 1e-3, 0.0], [0.3, 0.95, 0.5])
    assert not r.exists.any() and np.isnan(r.q_hat).all() and np.isnan(r.load).all(), (
        f"no equilibrium expected (f(1) < 0, or s = 0 without nu): exists {r.exists}, "
        f"q_hat {r.q_hat}, load {r.load}")
    # s = 0 with back mutation: the neutral balance mu/(mu+nu) (closed form).
    np.testing.assert_allclose(balance.q_hat(1e-5, 0.0, 0.5, nu=4e-5), 0.2, rtol=1e-14,
                               err_msg="s = 0: q_hat must be mu/(mu + nu) = 0.2 (closed form)")
    # mu = 0: the loss boundary.
    for nu, h in ((0.0, 0.5), (1e-6, 0.0)):
        q = balance.q_hat(0.0, 0.1, h, nu=nu)
        assert q == 0, f"mu = 0 (h = {h}, nu = {nu}): the allele is lost, q_hat must be 0; got {q}"


def test_out_of_domain_is_nan():
    bad = balance.autosomal_balance([-1e-5, 1e-5, 1e-5, 1e-5, np.nan], [0.1, 1.5, 0.1, 0.1, 0.1],
                                    [0.5, 0.5, 1.2, 0.5, 0.5], [0, 0, 0, 1.0, 0])
    assert not bad.exists.any() and np.isnan(bad.q_hat).all(), (
        f"parameters outside their supports must give NaN and exists False; got exists "
        f"{bad.exists}, q_hat {bad.q_hat}")
    q_male = balance.x_linked_balance(1e-5, 0.1, 0.5, alpha=0.0).q_male
    assert np.isnan(q_male), f"alpha = 0 is outside (0, inf): q_male must be NaN, got {q_male}"


def check_x_linked(mu, s, h, F, nu, alpha):
    result = balance.x_linked_balance(mu, s, h, F, nu, alpha)
    M = [mp.mpf(v) for v in (mu, s, h, F, nu, alpha)]
    if not result.exists:
        # No stable interior root: eggs' frequency keeps rising from the rare state.
        assert np.isnan(result.q_male), (
            f"exists is False but q_male = {result.q_male} at {(mu, s, h, F, nu, alpha)}")
        x = y = mp.mpf("1e-12")
        for generation in range(40):
            x2, y2 = mp_x_step(x, y, *M)
            assert x2 > x, (
                f"the library finds no X-linked equilibrium at {(mu, s, h, F, nu, alpha)}, but "
                f"the mpmath recursion stops rising at generation {generation} (x = "
                f"{mp.nstr(x, 6)}): a root may exist")
            x, y = x2, y2
        return
    x0 = mp.mpf(float(result.q_male))
    y0 = mp.mpf(float(2 * result.q_female - result.q_male))
    ref = mp.findroot(
        lambda x, y: [a - b for a, b in zip(mp_x_step(x, y, *M), (x, y), strict=True)],
        (x0, y0), tol=mp.mpf(10) ** -45,
    )
    where = f"(mu, s, h, F, nu, alpha) = {(mu, s, h, F, nu, alpha)}"
    assert abs(x0 - ref[0]) <= 1e-10 * ref[0], (
        f"q_male {mp.nstr(x0, 17)} vs the mpmath root {mp.nstr(ref[0], 17)} at {where}")
    assert abs(y0 - ref[1]) <= 1e-10 * ref[1], (
        f"sperm frequency {mp.nstr(y0, 17)} vs the mpmath root {mp.nstr(ref[1], 17)} at {where}")
    jac = mp.jacobian(lambda x, y: list(mp_x_step(x, y, *M)), (ref[0], ref[1]))
    trace, det = jac[0, 0] + jac[1, 1], mp.det(jac)
    disc = trace * trace - 4 * det
    radius = max(abs((trace + mp.sqrt(disc)) / 2), abs((trace - mp.sqrt(disc)) / 2))
    assert radius < 1, (
        f"the returned X-linked equilibrium is not stable (spectral radius "
        f"{float(radius):.6g}) at {where}")
    q_hat = (2 * (ref[0] + ref[1]) / 2 + ref[0]) / 3
    assert abs(float(result.q_hat) - q_hat) <= 1e-10 * q_hat, (
        f"q_hat {float(result.q_hat)!r} vs (2 q_female + q_male)/3 of the mpmath root "
        f"{mp.nstr(q_hat, 17)} at {where}")


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
            assert abs(x / (3 * mu / s) - 1) < 5 * (3 * mu / s), (
                f"q_male {float(x)!r} vs Haldane's 3mu/s = {3 * mu / s:g} (s = {s}, alpha = "
                f"{alpha}): relative gap must be O(3mu/s)")
    share = balance.x_linked_balance(mu, 1.0, 0.0).new_mutation_share
    assert abs(share - 1 / 3) < 1e-5, (
        f"new-mutation share {float(share)!r} vs Haldane's 1/3 (s = 1, equal rates)")


def test_sex_specific_rates_average():
    """mu = (2 mu_female + mu_male)/3 and mu_male = alpha mu_female (docs/model.md)."""
    mu_f, mu_m = balance.sex_specific_rates(np.array([1e-5, 2e-6]), np.array([1.0, 5.0]))
    np.testing.assert_allclose((2 * mu_f + mu_m) / 3, [1e-5, 2e-6], rtol=1e-15,
                               err_msg="the sex-averaged rate must be (2 mu_f + mu_m)/3")
    np.testing.assert_allclose(mu_m / mu_f, [1.0, 5.0], rtol=1e-15,
                               err_msg="mu_m / mu_f must be alpha")


def test_genotype_frequencies_with_inbreeding():
    """aa = q² + Fpq (Morton, Crow & Muller 1956, PNAS 42:855), Aa = 2pq(1-F); sum 1."""
    q, F = np.linspace(0, 1, 11), 0.15
    AA, Aa, aa = balance.genotype_frequencies(q, F)
    p = 1 - q
    np.testing.assert_allclose(aa, q**2 + F * p * q, atol=1e-16,
                               err_msg="aa vs q² + Fpq (Morton, Crow & Muller 1956)")
    np.testing.assert_allclose(Aa, 2 * p * q * (1 - F), atol=1e-16,
                               err_msg="Aa vs 2pq(1-F) (Morton, Crow & Muller 1956)")
    np.testing.assert_allclose(AA + Aa + aa, 1.0, rtol=1e-15,
                               err_msg="genotype frequencies must sum to 1")


def test_affected_fraction_modes():
    """Hardy-Weinberg (F = 0, closed form): dominant penetrance·(1 - p²), recessive q²;
    hemizygous sons are affected with probability penetrance·q."""
    q = 1e-3
    dominant = balance.affected_fraction("dominant", q, penetrance=0.8)
    assert dominant == pytest.approx(0.8 * (1 - (1 - q) ** 2)), (
        f"dominant affected {float(dominant)!r} vs 0.8·(1 - p²) = {0.8 * (1 - (1 - q) ** 2)!r}")
    recessive = balance.affected_fraction("recessive", q)
    assert recessive == pytest.approx(q * q), f"recessive affected {recessive} vs q² = {q * q}"
    sons = balance.affected_fraction("x-linked-male", q, penetrance=0.5)
    assert sons == pytest.approx(5e-4), f"affected sons {sons} vs 0.5·q = 5e-4"
    with pytest.raises(InputError, match="mode"):
        balance.affected_fraction("codominant", q)


def test_recessive_incidence_with_inbreeding_is_mu_over_s():
    """h = 0: incidence of aa at equilibrium is mu/s whatever F (derived: the exact
    condition reads s(q²(1-F) + qF) = mu; Morton, Crow & Muller 1956 for the F effect)."""
    mu, s = 1e-6, 0.5
    for F in (0.0, 0.01, 0.1):
        q = balance.q_hat(mu, s, 0.0, F)
        incidence = balance.affected_fraction("recessive", q, F)
        assert incidence == pytest.approx(mu / s, rel=1e-12), (
            f"F = {F}: recessive incidence {float(incidence)!r} vs mu/s = {mu / s!r} (derived)")
