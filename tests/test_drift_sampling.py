"""Quantiles and random draws of Wright's stationary density."""

import numpy as np
import pytest
from scipy import stats

from infer import drift


@pytest.mark.parametrize("Ne,mu,nu", [(50, 1e-3, 1e-3), (50, 1e-3, 5e-4), (1000, 1e-6, 1e-6)])
def test_neutral_quantiles_are_beta_quantiles(Ne, mu, nu):
    # Closed form (Wright 1931, Genetics 16:97): with s = 0 the density is
    # Beta(4 Ne mu, 4 Ne nu); scipy.stats.beta is the reference.
    p = np.array([0.05, 0.25, 0.5, 0.75, 0.95])
    got = drift.stationary_quantile(p, Ne, mu, 0.0, 0.5, nu)
    ref = stats.beta(4 * Ne * mu, 4 * Ne * nu).ppf(p)
    assert got == pytest.approx(ref, rel=1e-6, abs=1e-300)


def test_quantile_inverts_the_density():
    # Derived: integrating the normalised density up to the p-quantile gives p.
    from scipy import integrate

    Ne, mu, s, h, nu = 200.0, 1e-4, 0.05, 0.3, 1e-6
    for p in (0.3, 0.6, 0.9):
        x = float(drift.stationary_quantile(p, Ne, mu, s, h, nu))
        mass = integrate.quad(lambda v: drift.stationary_density(v, Ne, mu, s, h, nu), 0, x,
                              limit=200, points=[min(x, 1e-3)])[0]
        assert mass == pytest.approx(p, rel=1e-4)


def test_draws_follow_the_density():
    # Kolmogorov-Smirnov against the neutral Beta (closed form).
    rng = np.random.default_rng(5)
    x = drift.sample_stationary(rng, np.full(5000, 50.0), 1e-3, 0.0, 0.5, 1e-3)
    assert stats.kstest(x, stats.beta(0.2, 0.2).cdf).pvalue > 0.001
