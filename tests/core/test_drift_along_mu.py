"""The sample probability at several mutation rates per row
(infer.core.drift.stationary.log_binomial_probability_along_mu), against mpmath and
against the one-row-at-a-time function.

Reference: P(k of n) = C(n, k)·Z(a+k, b+n-k)/Z(a, b) with Z by mpmath.quad at 20 digits
(tests/core/drift_reference.py; Wright 1931 for the density, the binomial sample
probability is common practice).
"""

from __future__ import annotations

import drift_reference as reference
import numpy as np
import pytest

from infer.core.drift import quadrature
from infer.core.drift import stationary as drift


def _rows(rng, loci, nodes):
    """Loci as ``qhat batch`` holds them: a count of n, a median rate with a log-normal
    spread (sigma up to 1.5, wider than any interval in the demos), 9 rates at z = -6..6,
    s_het from the grid's range, Ne from 1e2 to 1e5, and a few with no copies or n small."""
    Ne = 10 ** rng.uniform(2, 5, loci)
    n = np.round(10 ** rng.uniform(1, 6, loci))
    k = np.floor(n * 10 ** rng.uniform(-5, -0.5, loci))
    k[rng.uniform(size=loci) < 0.2] = 0
    mu_c = 10 ** rng.uniform(-7, -4, loci)
    sigma = rng.uniform(0.05, 1.5, loci)
    z = np.linspace(-6, 6, nodes)
    mu = mu_c[:, None] * np.exp(sigma[:, None] * z)
    s = 10 ** rng.uniform(-5, np.log10(0.5), loci)
    h = np.where(rng.uniform(size=loci) < 0.7, 0.5, rng.uniform(0, 1, loci))
    return k, n, Ne, mu, s, h, 1e-8


def test_along_mu_matches_mpmath_on_random_loci():
    """Three rates (the middle one and both ends) of 6 random loci against mpmath,
    relative error below 1e-8."""
    rng = np.random.default_rng(21)
    k, n, Ne, mu, s, h, nu = _rows(rng, 6, 9)
    log_z = drift.log_normaliser(Ne[:, None], mu, s[:, None], h[:, None], nu)
    got = drift.log_binomial_probability_along_mu(k[:, None], n[:, None], Ne[:, None], mu,
                                                   s[:, None], h[:, None], nu, log_z=log_z)
    for i in range(6):
        for j in (0, 4, 8):
            expected = float(reference.log_binomial(int(k[i]), int(n[i]), Ne[i], mu[i, j],
                                                    s[i], h[i], nu))
            error = abs(np.expm1(got[i, j] - expected))
            assert error < 1e-8, (
                f"log P({k[i]:g} of {n[i]:g}) = {got[i, j]!r}, mpmath {expected!r} "
                f"(relative error {error:.2e}) at Ne={Ne[i]:g}, mu={mu[i, j]:g}, "
                f"s={s[i]:g}, h={h[i]:.3f}")


def test_along_mu_equals_the_row_by_row_probability():
    """The shared layout gives the row-by-row quadrature's numbers (to 1e-10 in log P) on
    400 random loci, whether a rate is re-weighted or gets its own quadrature, and both
    kinds occur."""
    rng = np.random.default_rng(22)
    k, n, Ne, mu, s, h, nu = _rows(rng, 400, 9)
    log_z = drift.log_normaliser(Ne[:, None], mu, s[:, None], h[:, None], nu)
    got = drift.log_binomial_probability_along_mu(k[:, None], n[:, None], Ne[:, None], mu,
                                                   s[:, None], h[:, None], nu, log_z=log_z)
    one_by_one = drift.log_binomial_probability(k[:, None], n[:, None], Ne[:, None], mu,
                                                s[:, None], h[:, None], nu, log_z=log_z)
    np.testing.assert_allclose(got, one_by_one, rtol=0, atol=1e-10,
                               err_msg="shared layout vs one quadrature per rate")
    a = 4 * Ne[:, None] * mu
    A = a + k[:, None]
    B = 4 * Ne * nu + (n - k)
    c = 2 * Ne * s
    calls = []
    real = quadrature._log_z

    def counting(*args):
        calls.append(args[0].size)
        return real(*args)

    quadrature._log_z = counting
    try:
        quadrature._log_z_tilted(A[:, 4], B, c, h, A - A[:, 4:5])
    finally:
        quadrature._log_z = real
    own = sum(calls)
    assert 0 < own < 0.5 * A.size, (
        f"{own} of {A.size} rates had their own quadrature: the test should see both kinds")


def test_along_mu_shape_and_single_rate():
    """Broadcast shape (loci, columns, rates) as qhat batch asks, and one rate per row
    falls back to the plain function."""
    Ne, nu = 1e4, 1e-8
    k = np.array([3.0, 40.0])[:, None, None]
    n = np.array([1e5, 2e5])[:, None, None]
    mu = np.array([1e-6, 4e-6])[:, None, None] * np.exp(0.3 * np.linspace(-6, 6, 9))
    s = np.array([1e-3, 1e-2, 0.1])[None, :, None]
    log_z = drift.log_normaliser(Ne, mu, s, 0.5, nu)
    got = drift.log_binomial_probability_along_mu(k, n, Ne, mu, s, 0.5, nu, log_z=log_z)
    assert got.shape == (2, 3, 9), f"shape {got.shape}"
    one = drift.log_binomial_probability_along_mu(k, n, Ne, mu[..., :1], s, 0.5, nu,
                                                   log_z=log_z[..., :1])
    np.testing.assert_allclose(one[..., 0], got[..., 0], rtol=0, atol=1e-10)


@pytest.mark.slow
def test_along_mu_matches_mpmath_on_more_random_loci():
    """Twenty more loci, five rates each, against mpmath."""
    rng = np.random.default_rng(23)
    k, n, Ne, mu, s, h, nu = _rows(rng, 20, 9)
    log_z = drift.log_normaliser(Ne[:, None], mu, s[:, None], h[:, None], nu)
    got = drift.log_binomial_probability_along_mu(k[:, None], n[:, None], Ne[:, None], mu,
                                                   s[:, None], h[:, None], nu, log_z=log_z)
    worst = 0.0
    for i in range(20):
        for j in (0, 2, 4, 6, 8):
            expected = float(reference.log_binomial(int(k[i]), int(n[i]), Ne[i], mu[i, j],
                                                    s[i], h[i], nu))
            worst = max(worst, abs(np.expm1(got[i, j] - expected)))
    assert worst < 1e-8, f"largest relative error against mpmath {worst:.2e}"
