"""Quantiles and random draws of Wright's stationary density."""

import numpy as np
import pytest
from scipy import stats

from infer.core.drift import stationary as drift


@pytest.mark.parametrize("Ne,mu,nu", [(50, 1e-3, 1e-3), (50, 1e-3, 5e-4), (1000, 1e-6, 1e-6)])
def test_neutral_quantiles_are_beta_quantiles(Ne, mu, nu):
    # Closed form (Wright 1931, Genetics 16:97): with s = 0 the density is
    # Beta(4 Ne mu, 4 Ne nu); scipy.stats.beta is the reference.
    p = np.array([0.05, 0.25, 0.5, 0.75, 0.95])
    got = drift.stationary_quantile(p, Ne, mu, 0.0, 0.5, nu)
    ref = stats.beta(4 * Ne * mu, 4 * Ne * nu).ppf(p)
    assert got == pytest.approx(ref, rel=1e-6, abs=1e-300), (
        f"s = 0, (Ne, mu, nu) = {(Ne, mu, nu)}: quantiles {got} vs scipy beta.ppf {ref}")


def test_quantile_inverts_the_density():
    # Derived: integrating the normalised density up to the p-quantile gives p.
    from scipy import integrate

    Ne, mu, s, h, nu = 200.0, 1e-4, 0.05, 0.3, 1e-6
    for p in (0.3, 0.6, 0.9):
        x = float(drift.stationary_quantile(p, Ne, mu, s, h, nu))
        mass = integrate.quad(lambda v: drift.stationary_density(v, Ne, mu, s, h, nu), 0, x,
                              limit=200, points=[min(x, 1e-3)])[0]
        assert mass == pytest.approx(p, rel=1e-4), (
            f"the {p} quantile is {x!r}, but scipy.integrate.quad of the density up to it "
            f"gives {mass!r}")


def test_draws_follow_the_density():
    # Kolmogorov-Smirnov against the neutral Beta (closed form).
    rng = np.random.default_rng(5)
    x = drift.sample_stationary(rng, np.full(5000, 50.0), 1e-3, 0.0, 0.5, 1e-3)
    # 4Ne·mu = 4Ne·nu = 0.2; p > 0.001 fails a correct sampler once in 1000 seeds
    pvalue = stats.kstest(x, stats.beta(0.2, 0.2).cdf).pvalue
    assert pvalue > 0.001, f"5000 neutral draws vs Beta(0.2, 0.2): KS p-value {pvalue:.3g}"


@pytest.mark.parametrize("kind", ["genotype-count", "allele-count"])
def test_binomial_fast_path_equals_the_general_integral(kind):
    # Derived (Hardy-Weinberg): with F = 0 the genotype multinomial is a binomial in the
    # allele copies times a constant, so the fast sample probability must equal the
    # general quadrature of P(data | x) over Wright's density.
    from infer.model.observations.kinds import parse_observation

    table = ({"kind": kind, "AA": 112, "Aa": 7, "aa": 1} if kind == "genotype-count"
             else {"kind": kind, "observed": 9, "sampled": 240})
    obs = parse_observation(table, field="observations[1]", inheritance="autosomal")
    n_rows = 4
    params = {"Ne": np.full(n_rows, 40.0), "mu": np.geomspace(1e-6, 1e-4, n_rows),
              "s": np.array([0.01, 0.1, 0.5, 1.0]), "h": np.array([0.0, 0.2, 0.5, 0.0]),
              "nu": np.full(n_rows, 1e-7), "F": np.zeros(n_rows), "alpha": np.ones(n_rows)}
    rates = [params[k] for k in ("Ne", "mu", "s", "h", "nu")]
    k, n, constant = obs.binomial_form()
    fast = constant + drift.log_binomial_probability(k, n, *rates)
    general = drift.log_expectation(lambda x: obs.log_likelihood_given_frequency(x, params),
                                    *rates)
    assert fast == pytest.approx(general, rel=1e-7), (
        f"{kind}: binomial fast path {fast} vs general quadrature {general}")
