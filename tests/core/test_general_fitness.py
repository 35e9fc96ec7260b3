"""General genotype fitness in the autosomal balance: h < 0 (heterozygote advantage) and
h > 1 (the heterozygote below aa), and fitnesses given directly.

Outside references:
- Fisher (1922, "On the dominance ratio", Proc. Roy. Soc. Edinburgh 42:321): with fitnesses
  AA 1 - t, Aa 1, aa 1 - s' the stable polymorphism is q = t/(s' + t) (mu = 0);
- the segregational load at that polymorphism, s't/(s' + t) relative to the heterozygote
  (Crow & Kimura 1970, *An Introduction to Population Genetics Theory*, ch. 5; from memory,
  and derived in infer.core.balance.load);
- the fixed point of the life cycle written again in mpmath (tests/core/balance_reference.py,
  no code shared with infer.core.balance), solved at 50 digits, and its slope there
  (stability: |dq'/dq| < 1, common practice for a one-dimensional map);
- direct iteration of infer.core.life_cycle.autosomal_step to convergence (the map the
  equilibrium is a fixed point of).
"""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest

from infer.core import balance, life_cycle
from infer.core.approximations import autosomal_approximations
from tests.core.balance_reference import autosomal_step as reference_step

mp.mp.dps = 50

#: (mu, s, h, F, nu) rows outside 0 <= h <= 1, with 1 - hs >= 0
GENERAL_ROWS = [
    (1e-6, 0.1, -0.5, 0.0, 0.0),
    (1e-6, 0.1, -0.5, 0.1, 0.0),
    (1e-8, 0.5, -0.02, 0.0, 0.0),
    (1e-3, 0.5, -0.01, 0.2, 0.0),   # advantage weaker than inbreeding: b > 0
    (1e-5, 0.9, -5.0, 0.05, 0.0),
    (1e-4, 0.2, -2.0, 0.05, 1e-5),  # back mutation: the cubic
    (1e-7, 0.3, -0.3, 0.0, 1e-6),
    (1e-5, 0.1, 3.0, 0.0, 0.0),     # the heterozygote below aa
    (1e-5, 0.1, 3.0, 0.0, 1e-6),
    (1e-6, 0.2, 1.5, 0.1, 0.0),
    (1e-6, 0.05, 10.0, 0.0, 0.0),
]


def _mp_fixed_point(mu, s, h, F, nu, guess):
    """The 50-digit fixed point of the mpmath life cycle nearest ``guess``, and its slope."""
    M = [mp.mpf(v) for v in (mu, s, h, F, nu)]

    def gap(q):
        return reference_step(q, *M) - q

    root = mp.findroot(gap, mp.mpf(guess), tol=mp.mpf(10) ** -45)
    slope = mp.diff(lambda q: reference_step(q, *M), root)
    return root, slope


def _iterate(mu, s, h, F, nu, q0=0.3, generations=400_000):
    q = np.float64(q0)
    for _ in range(generations):
        nxt = life_cycle.autosomal_step(q, mu, s, h, F, nu)
        if abs(nxt - q) <= 1e-16 * q:
            return float(nxt)
        q = nxt
    return float(q)


@pytest.mark.parametrize("row", GENERAL_ROWS)
def test_general_root_is_the_stable_fixed_point_of_the_life_cycle(row):
    result = balance.autosomal_balance(*row, any_dominance=True)
    assert bool(result.exists), f"{row}: a stable interior equilibrium exists (iteration finds one)"
    q = float(result.q_hat)
    root, slope = _mp_fixed_point(*row, q)
    assert abs(q - float(root)) <= 1e-12 * float(root), (
        f"{row}: q_hat {q!r} vs the 50-digit mpmath fixed point {mp.nstr(root, 17)} "
        "(tests/core/balance_reference.py)")
    assert abs(slope) < 1, (
        f"{row}: the slope of the life cycle at q_hat is {mp.nstr(slope, 6)}; a stable "
        "fixed point of a one-dimensional map needs |slope| < 1 (common practice)")
    iterated = _iterate(*row)
    assert abs(iterated - q) <= 1e-9 * q, (
        f"{row}: iterating infer.core.life_cycle.autosomal_step from 0.3 settles at "
        f"{iterated!r}, not at q_hat {q!r}")


@pytest.mark.parametrize("t, s_prime", [(0.02, 0.05), (0.1, 0.3), (0.01, 0.011), (0.3, 0.9)])
def test_fisher_overdominant_root_in_the_limit_mu_to_zero(t, s_prime):
    """Fisher (1922): AA 1 - t, Aa 1, aa 1 - s' hold q = t/(s' + t) at mu = 0."""
    s, h = balance.fitness_coefficients(1 - t, 1.0, 1 - s_prime)
    np.testing.assert_allclose(
        [float(s), float(h)], [(s_prime - t) / (1 - t), -t / (s_prime - t)], rtol=1e-13,
        err_msg="dividing by w_AA: s = (s'-t)/(1-t), h = -t/(s'-t) (derived)")
    fisher = t / (s_prime + t)
    at_zero = float(balance.q_hat(0.0, s, h, any_dominance=True))
    assert abs(at_zero - fisher) <= 1e-13, (
        f"mu = 0: q_hat {at_zero!r} vs Fisher's (1922) t/(s'+t) = {fisher!r}")
    # approaching the limit: the gap shrinks in proportion to mu
    gaps = [abs(float(balance.q_hat(mu, s, h, any_dominance=True)) - fisher)
            for mu in (1e-4, 1e-6, 1e-8)]
    assert gaps[1] < 2e-2 * gaps[0] and gaps[2] < 2e-2 * gaps[1], (
        f"q_hat must tend to Fisher's t/(s'+t) linearly in mu; gaps {gaps}")
    load = float(balance.autosomal_balance(0.0, s, h, any_dominance=True).load)
    assert abs(load - s_prime * t / (s_prime + t)) <= 1e-13, (
        f"the load relative to the heterozygote at mu = 0 is {load!r}, not the segregational "
        f"load s't/(s'+t) = {s_prime * t / (s_prime + t)!r} (Crow & Kimura 1970, from memory)")


def test_unchanged_for_dominance_between_zero_and_one():
    """0 <= h <= 1: any_dominance changes nothing, bit for bit."""
    mu = np.geomspace(1e-9, 1e-3, 7)[:, None, None]
    s = np.array([1e-3, 0.1, 1.0])[None, :, None]
    h = np.linspace(0, 1, 11)[None, None, :]
    for nu in (0.0, 1e-7):
        old = balance.autosomal_balance(mu, s, h, 0.05, nu)
        new = balance.autosomal_balance(mu, s, h, 0.05, nu, any_dominance=True)
        for name in ("q_hat", "exists", "mean_fitness", "load"):
            np.testing.assert_array_equal(
                getattr(new, name), getattr(old, name),
                err_msg=f"{name} (nu = {nu}) must not change for h in [0, 1]")


def test_outside_the_domain():
    """Without any_dominance h outside [0, 1] stays NaN; with it, 1 - hs < 0 is refused."""
    plain = balance.autosomal_balance(1e-5, 0.1, [-0.5, 1.2])
    assert not plain.exists.any(), "h outside [0, 1] without any_dominance must give NaN"
    bad = balance.autosomal_balance(1e-5, [0.5, 0.1, 0.1], [3.0, np.nan, np.inf],
                                    any_dominance=True)
    assert not bad.exists.any() and np.isnan(bad.q_hat).all(), (
        f"hs > 1 (negative heterozygote fitness), NaN and inf h have no equilibrium; got "
        f"{bad.q_hat}")


def test_mutation_free_polymorphism_with_back_mutation():
    """mu = 0, nu > 0, h < 0: q = 0 repels, the interior root is the life cycle's fixed point."""
    row = (0.0, 0.2, -0.3, 0.0, 1e-4)
    q = float(balance.q_hat(*row[:3], nu=row[4], any_dominance=True))
    root, slope = _mp_fixed_point(*row, 0.18)
    assert abs(q - float(root)) <= 1e-12 * float(root) and abs(slope) < 1, (
        f"mu = 0 with nu > 0: q_hat {q!r} vs the stable mpmath fixed point {mp.nstr(root, 17)}")


def test_fitnesses_given_directly():
    """w_AA, w_Aa, w_aa on any scale give the same balance as (s, h) on the scale AA = 1."""
    s, h = balance.fitness_coefficients(2.0, 1.8, 1.0)
    np.testing.assert_allclose([float(s), float(h)], [0.5, 0.2], rtol=1e-15,
                               err_msg="AA 2, Aa 1.8, aa 1: s = 1/2, hs = 0.1 (derived)")
    s, h = balance.fitness_coefficients([1.0, 1.0, 0.0], [1.1, 0.9, 1.0], [1.0, 1.2, 0.5])
    assert np.isnan(s).all() and np.isnan(h).all(), (
        "equal homozygotes, w_aa above w_AA and w_AA = 0 have no (s, h) on qhat's scale")


def test_overdominant_approximation():
    """Fisher's root is the approximation offered for h < 0; the rare-allele forms are not."""
    found = autosomal_approximations(1e-7, 0.1, -0.5)
    assert "overdominant" in found and bool(found["overdominant"].in_range), (
        "h < 0: Fisher's (1922) t/(s'+t) must be offered and in range at mu = 1e-7")
    assert abs(float(found["overdominant"].value) - 0.25) < 1e-15, (
        "h = -1/2, F = 0: -h/(1-2h) = 1/4 (closed form)")
    for name in ("mu/(hs)", "sqrt(mu/s)", "mu/(s(h(1-F)+F))", "quadratic"):
        assert not bool(found[name].in_range), f"{name} must not be in range for h < 0"
    assert "overdominant" not in autosomal_approximations(1e-7, 0.1, 0.5), (
        "0 <= h <= 1: the approximation table is unchanged")
