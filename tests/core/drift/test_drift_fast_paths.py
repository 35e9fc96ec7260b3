"""The fast paths of the drift quadrature against plain evaluations of the same rule.

infer.core.drift.quadrature evaluates L(y) = A·log x + B·log(1-x) - c·S(x), x = logit⁻¹ y
(Wright 1931, Genetics 16:97: the stationary density and its sample integrals), with a
shortcut for h = 1/2 (S(x) = x), integrates its Gauss–Legendre panels in chunks of whole
rows and scales each row by the peak search's maximum. Here the same panels are summed
plainly, one row at a time, with scipy.special.log_expit for log x and log(1-x) and
scipy.special.logsumexp for the sum (independent of the module's arithmetic), on random
rows of the kinds ``qhat batch`` and the studies produce; the fast path must agree to
1e-12 relative (issue 19 asks for 1e-10). Accuracy of the rule itself against mpmath is
checked in tests/core/test_drift.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from infer.core.drift import quadrature
from infer.core.drift.stationary import log_binomial_probability, log_normaliser


def _rows(rng, size, half):
    """Sample integrals of batch-like loci: A = 4Ne·mu + k, B = 4Ne·nu + n - k, c = 2Ne·s."""
    Ne = 10 ** rng.uniform(2, 4.5, size)
    n = np.floor(10 ** rng.uniform(1, 5.5, size))
    k = np.floor(rng.uniform(0, 1, size) ** 3 * np.minimum(n, 200))
    A = 4 * Ne * 10 ** rng.uniform(-9, -4, size) + k
    B = 4 * Ne * 10 ** rng.uniform(-9, -6, size) + (n - k)
    c = 2 * Ne * 10 ** rng.uniform(-5, 0, size)
    h = np.full(size, 0.5) if half else rng.uniform(0, 1, size)
    return A, B, c, h


def _plain_log_f(y, A, B, c, h):
    x = special.expit(y)
    return (A * special.log_expit(y) + B * special.log_expit(-y)
            - c * x * (2 * h + (1 - 2 * h) * x))


@pytest.mark.parametrize("half", [True, False], ids=["h=1/2", "any h"])
def test_log_f_rows_equals_plain_formula(half):
    """L(y) at random nodes, both coefficient forms, against log_expit (scipy)."""
    rng = np.random.default_rng(19)
    A, B, c, h = _rows(rng, 400, half)
    y = rng.uniform(-40, 15, (7, 400))
    expected = _plain_log_f(y, A, B, c, h)
    scale = (A + B) * (1 + np.abs(y)) + np.abs(c)
    for form in (quadrature._coefficients(A, B, c, h),
                 quadrature._value_coefficients(quadrature._coefficients(A, B, c, h))):
        got = quadrature._log_f_rows(y.copy(), form)
        assert np.all(np.abs(got - expected) <= 1e-13 * scale)
    assert (quadrature._value_coefficients(quadrature._coefficients(A, B, c, h))[3] is None) == half


@pytest.mark.parametrize("half", [True, False], ids=["h=1/2", "any h"])
def test_interior_equals_row_by_row_sum(half):
    """Chunked, peak-scaled panel sums equal a plain logsumexp of each row's panels."""
    rng = np.random.default_rng(7)
    A, B, c, h = _rows(rng, 3000, half)
    layout = quadrature._Layout(A, B, c, h)
    got = layout.log_interior()
    lo, hi = layout.panels
    check = rng.choice(A.size, 60, replace=False)
    for i in check:
        wide = hi[i] > lo[i]
        mid, half_width = 0.5 * (hi[i][wide] + lo[i][wide]), 0.5 * (hi[i][wide] - lo[i][wide])
        nodes = (mid[:, None] + half_width[:, None] * quadrature._GL_T).ravel()
        weights = (half_width[:, None] * quadrature._GL_W).ravel()
        expected = special.logsumexp(_plain_log_f(nodes, A[i], B[i], c[i], h[i]), b=weights)
        assert abs(got[i] - expected) <= 1e-12 * max(1.0, abs(expected))
    # scaled by the nodes' own maximum (the rule before the peak's scale was reused)
    again = quadrature._integrate(layout.panels, layout.coefficients)
    np.testing.assert_allclose(got, again, rtol=1e-13, atol=0)


def test_chunk_size_does_not_change_the_sums(monkeypatch):
    """Rows cut into chunks of any size give the same sums (chunks hold whole rows; the
    weights' matrix product may round differently by shape)."""
    rng = np.random.default_rng(3)
    A, B, c, h = _rows(rng, 2000, True)
    layout = quadrature._Layout(A, B, c, h)
    reference = layout.log_interior()
    for size in (10, 640, 1 << 20):
        monkeypatch.setattr(quadrature, "_CHUNK_NODES", size)
        np.testing.assert_allclose(layout.log_interior(), reference, rtol=1e-14, atol=1e-14)


def test_binomial_probability_of_batch_rows_sums_to_one():
    """Σ_k C(n,k) Z(a+k, b+n-k)/Z(a,b) = 1 (the binomial mixture is a distribution;
    common practice), h = 1/2 rows as ``qhat batch`` sends them."""
    n = 40
    k = np.arange(n + 1.0)[:, None]
    Ne = 5000.0
    mu = np.array([1e-7, 3e-6, 1e-5])
    s = np.array([1e-4, 1e-2, 0.3])
    log_z = log_normaliser(Ne, mu, s, 0.5, 1e-8)
    log_p = log_binomial_probability(k, n, Ne, mu, s, 0.5, 1e-8, log_z=log_z)
    np.testing.assert_allclose(np.exp(special.logsumexp(log_p, axis=0)), 1.0, rtol=1e-10)
