"""The mixture proposal is a proper density and draws from itself (infer/inference/proposal.py).

References: a mixture's density is the weighted sum of its components' (common practice);
the multivariate Student-t density with nu degrees of freedom and its covariance
nu/(nu - 2) Sigma (Kotz & Nadarajah 2004, Multivariate t Distributions and Their
Applications, ch. 1), checked here against scipy.stats.multivariate_t; draws are checked
against the density by a Kolmogorov–Smirnov test of a one-dimensional mixture's
distribution function, written from scipy.stats.norm and scipy.stats.t.
"""

from __future__ import annotations

import numpy as np
from scipy import stats

from infer.inference.proposal import MixtureProposal, fit_mixture


def _banana(rng, n):
    x = rng.normal(size=n)
    return np.column_stack([x, x**2 + 0.1 * rng.normal(size=n)])


def test_density_integrates_to_one_on_a_curved_ridge():
    rng = np.random.default_rng(1)
    mix = fit_mixture(_banana(rng, 4000), rng, centres=80)
    x = np.linspace(-12, 12, 481)
    y = np.linspace(-12, 40, 1041)
    grid = np.stack(np.meshgrid(x, y, indexing="ij"), -1).reshape(-1, 2)
    total = sum(np.exp(mix.log_density(chunk)).sum() for chunk in np.array_split(grid, 40))
    total *= (x[1] - x[0]) * (y[1] - y[0])
    # the Student-t component's tails beyond the box hold well under 1 %
    assert abs(total - 1.0) < 0.01, f"the mixture density integrates to {total:.4f}, not 1"


def test_student_t_component_matches_scipy():
    rng = np.random.default_rng(2)
    cov = np.array([[2.0, 0.6], [0.6, 0.5]])
    chol = np.linalg.cholesky(cov)
    mix = MixtureProposal(means=np.zeros((1, 2)), cholesky=np.eye(2)[None], df=4.0,
                          log_weights=np.log([1e-300, 1.0]), t_mean=np.array([1.0, -1.0]),
                          t_cholesky=chol)
    points = rng.normal(size=(50, 2)) * 3
    expected = stats.multivariate_t(loc=[1.0, -1.0], shape=cov, df=4.0).logpdf(points)
    assert np.allclose(mix.log_density(points), expected, rtol=1e-10, atol=1e-10), (
        "the defensive component must be the multivariate t density of scipy.stats")


def test_draws_follow_the_density_in_one_dimension():
    means = np.array([[-2.0], [0.5], [3.0]])
    sds = np.array([0.3, 1.0, 0.5])
    weights = np.array([0.3, 0.4, 0.2, 0.1])  # three kernels and the t component
    mix = MixtureProposal(means=means, cholesky=sds[:, None, None], df=4.0,
                          log_weights=np.log(weights), t_mean=np.array([1.0]),
                          t_cholesky=np.array([[2.0]]))

    def cdf(x):
        kernels = sum(w * stats.norm.cdf(x, m, s)
                      for w, m, s in zip(weights[:3], means[:, 0], sds, strict=True))
        return kernels + weights[3] * stats.t.cdf((x - 1.0) / 2.0, df=4.0)

    draws = mix.sample(np.random.RandomState(3), 40_000)[:, 0]
    pvalue = stats.kstest(draws, cdf).pvalue
    assert pvalue > 1e-3, f"draws do not follow the mixture: KS p = {pvalue:.3g}"
    x = np.linspace(-6, 8, 2001)
    density = np.exp(mix.log_density(x[:, None]))
    assert np.allclose(np.cumsum(density) * (x[1] - x[0]), cdf(x) - cdf(x[0]), atol=2e-3), (
        "the log density must be the derivative of the mixture's distribution function")


def test_local_kernels_follow_a_curved_ridge_better_than_one_gaussian():
    # Importance-sampling efficiency (sum w)^2 / sum w^2 / n of the banana target
    # x ~ N(0, 1), y | x ~ N(x^2, 0.1^2): a proposal that follows the curve keeps it high.
    rng = np.random.default_rng(4)
    mix = fit_mixture(_banana(rng, 5000), rng)
    draws = mix.sample(np.random.RandomState(5), 20_000)
    target = (stats.norm.logpdf(draws[:, 0])
              + stats.norm.logpdf(draws[:, 1], draws[:, 0] ** 2, 0.1))
    w = np.exp(target - mix.log_density(draws))
    efficiency = w.sum() ** 2 / (w**2).sum() / len(w)
    pilot = _banana(rng, 5000)
    gauss = stats.multivariate_normal(pilot.mean(axis=0), np.cov(pilot, rowvar=False))
    g_draws = gauss.rvs(size=20_000, random_state=6)
    g_target = (stats.norm.logpdf(g_draws[:, 0])
                + stats.norm.logpdf(g_draws[:, 1], g_draws[:, 0] ** 2, 0.1))
    gw = np.exp(g_target - gauss.logpdf(g_draws))
    g_efficiency = gw.sum() ** 2 / (gw**2).sum() / len(gw)
    assert efficiency > 0.2 and efficiency > 3 * g_efficiency, (
        f"local kernels: efficiency {efficiency:.3f}; one Gaussian: {g_efficiency:.3f}")
