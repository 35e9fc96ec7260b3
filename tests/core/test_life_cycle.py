"""The forward life-cycle map: its fixed points are the exact equilibria.

References: the selection recursion q' = (pq(1-hs) + q²(1-s)) / w̄ followed by mutation
is the textbook one (common practice; e.g. Crow & Kimura 1970, An Introduction to
Population Genetics Theory, ch. 6); the X-linked recursion for eggs and sperm follows
Haldane (1935), The rate of spontaneous mutation of a human gene.
"""

import numpy as np
import pytest

from infer.core.balance import autosomal_balance
from infer.core.life_cycle import autosomal_step, newborn_frequency, x_linked_step
from infer.core.x_linked import x_linked_balance

RNG = np.random.default_rng(20261203)
N = 400
MU = 10 ** RNG.uniform(-8, -3, N)
S = RNG.uniform(0.01, 1.0, N)
H = RNG.uniform(0.0, 1.0, N)
F = RNG.uniform(0.0, 0.2, N)
NU = 10 ** RNG.uniform(-9, -5, N)


def test_autosomal_equilibrium_is_a_fixed_point():
    balance = autosomal_balance(MU, S, H, F, NU)
    q = balance.q_hat[balance.exists]
    after = autosomal_step(q, MU[balance.exists], S[balance.exists], H[balance.exists],
                           F[balance.exists], NU[balance.exists])
    np.testing.assert_allclose(after, q, rtol=1e-9)


def test_autosomal_step_matches_the_textbook_recursion_without_inbreeding():
    # q' = (pq(1-hs) + q²(1-s)) / (p² + 2pq(1-hs) + q²(1-s)), then q'(1-nu) + (1-q')mu
    q = RNG.uniform(0.0, 1.0, N)
    p = 1 - q
    w = p * p + 2 * p * q * (1 - H * S) + q * q * (1 - S)
    q_sel = (p * q * (1 - H * S) + q * q * (1 - S)) / w
    expected = q_sel * (1 - NU) + (1 - q_sel) * MU
    np.testing.assert_allclose(autosomal_step(q, MU, S, H, 0.0, NU), expected, rtol=1e-12)


def test_iterating_from_near_zero_reaches_the_equilibrium():
    # a dominant (h = 1) with s = 0.5 approaches q = mu/(hs) geometrically (rate 1 - hs)
    mu, s, h = 1e-5, 0.5, 1.0
    q = np.zeros(1)
    for _ in range(200):
        q = autosomal_step(q, mu, s, h)
    assert q[0] == pytest.approx(autosomal_balance(mu, s, h).q_hat, rel=1e-10)


def test_x_linked_equilibrium_is_a_fixed_point():
    alpha = 10 ** RNG.uniform(-1, 1, N)
    balance = x_linked_balance(MU, S, H, F, NU, alpha)
    ok = balance.exists
    x = balance.q_male[ok]
    y = 2 * balance.q_female[ok] - x
    x_next, y_next = x_linked_step(x, y, MU[ok], S[ok], H[ok], F[ok], NU[ok], alpha[ok])
    np.testing.assert_allclose(x_next, x, rtol=1e-8)
    np.testing.assert_allclose(y_next, y, rtol=1e-8, atol=1e-15)
    q_male, q_female, q_all = newborn_frequency(x_next, y_next)
    np.testing.assert_allclose(q_all, balance.q_hat[ok], rtol=1e-8)


def test_x_linked_lethal_third_of_cases_are_new():
    # Haldane (1935): with s = 1 (affected sons leave no children) and equal germ-line
    # rates, x* = 3 mu at equilibrium
    mu = 1e-6
    x = y = np.zeros(1)
    for _ in range(400):
        x, y = x_linked_step(x, y, mu, 1.0, 0.0)
    assert x[0] == pytest.approx(3 * mu, rel=1e-3)
