"""Two-source capture-recapture likelihood of the completeness (infer.core.capture)."""

import mpmath
import numpy as np
import pytest

from infer.core.capture import (
    TwoSourceLikelihood,
    chapman_total,
    prior_split_draws,
    split_draws,
    two_source_log_likelihood,
)

CELLS = [(30, 20, 60), (3, 1, 2), (0, 5, 10), (120, 340, 75)]


def _closed_form(c, n10, n01, n11):
    """Euler's integral: B(n1+1, n2+1) 2F1(n1+1, n1+1; n1+n2+2; c) (mpmath, 40 digits)."""
    mpmath.mp.dps = 40
    n1, n2, n = n10 + n11, n01 + n11, n10 + n01 + n11
    c = mpmath.mpf(c)
    coefficient = mpmath.factorial(n) / (mpmath.factorial(n10) * mpmath.factorial(n01)
                                         * mpmath.factorial(n11))
    value = (coefficient * (1 - c) ** n10 * c ** (n11 + 1) / (-mpmath.log(1 - c))
             * mpmath.beta(n1 + 1, n2 + 1) * mpmath.hyp2f1(n1 + 1, n1 + 1, n1 + n2 + 2, c))
    return float(mpmath.log(value))


def _defining_integral(c, n10, n01, n11):
    """The multinomial averaged over p1 on (0, c), density 1/((1-p1)(-ln(1-c))) (mpmath)."""
    mpmath.mp.dps = 40
    c, n = mpmath.mpf(c), n10 + n01 + n11
    coefficient = mpmath.factorial(n) / (mpmath.factorial(n10) * mpmath.factorial(n01)
                                         * mpmath.factorial(n11))

    def integrand(p1):
        p2 = 1 - (1 - c) / (1 - p1)
        return ((p1 * (1 - p2) / c) ** n10 * ((1 - p1) * p2 / c) ** n01
                * (p1 * p2 / c) ** n11 / ((1 - p1) * -mpmath.log(1 - c)))

    return float(mpmath.log(coefficient * mpmath.quad(integrand, mpmath.linspace(0, c, 41))))


@pytest.mark.parametrize("cells", CELLS)
def test_quadrature_matches_the_hypergeometric_closed_form(cells):
    # derivation in infer/core/capture.py; mpmath's hyp2f1 as the outside reference
    for c in (0.3, 0.7, 0.9, 0.99):
        ours = float(two_source_log_likelihood(c, *cells)[0])
        assert ours == pytest.approx(_closed_form(c, *cells), abs=1e-9)


def test_closed_form_is_the_defining_integral():
    for c in (0.5, 0.9):
        assert _closed_form(c, 30, 20, 60) == pytest.approx(_defining_integral(c, 30, 20, 60),
                                                            abs=1e-10)


@pytest.mark.parametrize("cells", CELLS)
def test_table_interpolates_the_direct_quadrature(cells):
    table = TwoSourceLikelihood(*cells)
    c = np.linspace(0.02, 0.999, 300)
    direct = two_source_log_likelihood(c, *cells)
    near = direct > direct.max() - 20
    np.testing.assert_allclose(table(c)[near], direct[near], atol=1e-5)
    assert table(np.array([0.0]))[0] == -np.inf


def test_the_two_sources_are_exchangeable():
    c = np.array([0.4, 0.8, 0.95])
    np.testing.assert_allclose(two_source_log_likelihood(c, 30, 20, 60),
                               two_source_log_likelihood(c, 20, 30, 60), rtol=1e-12)


@pytest.mark.parametrize("cells", [(300, 200, 600), (5000, 3000, 20000)])
def test_large_sample_maximum_is_chapmans_completeness(cells):
    # Chapman 1951 (Univ. Calif. Publ. Stat. 1:131): N = (n1+1)(n2+1)/(n11+1) - 1; the
    # completeness found/N is the large-sample maximum of the likelihood
    found = sum(cells)
    assert TwoSourceLikelihood(*cells).mode == pytest.approx(found / chapman_total(*cells),
                                                             rel=2e-3)


def test_split_draws_satisfy_the_completeness_and_follow_lincoln_petersen():
    rng = np.random.default_rng(3)
    c = np.full(4000, 0.9179)  # n / N-hat of (30, 20, 60)
    p1, p2 = split_draws(c, (30, 20, 60), rng)
    np.testing.assert_allclose(1 - (1 - p1) * (1 - p2), c, rtol=1e-12)
    # given c, the split's posterior centres near Lincoln-Petersen: p1 = n11/n2, p2 = n11/n1
    assert np.median(p1) == pytest.approx(60 / 80, abs=0.03)
    assert np.median(p2) == pytest.approx(60 / 90, abs=0.03)
    q1, q2 = prior_split_draws(np.full(4000, 0.6), rng)
    np.testing.assert_allclose(1 - (1 - q1) * (1 - q2), 0.6, rtol=1e-12)
    # uniform over the square given c is symmetric in the two sources
    assert np.mean(q1) == pytest.approx(np.mean(q2), abs=0.02)
