"""Evidences by quadrature and by bridge sampling against analytically known ones.

References:
- beta-binomial: k successes of n under p ~ Beta(a, b) has marginal likelihood
  C(n, k) B(k + a, n - k + b) / B(a, b) (closed form; scipy.stats.betabinom);
- conjugate normal: y ~ N(theta, sigma²), theta ~ N(m, tau²) gives y ~ N(m, tau² + sigma²)
  (closed form; scipy.stats.norm), independent coordinates multiply;
- a qhat study with one free rate: the evidence as a one-dimensional integral by
  scipy.integrate.quad (an independent quadrature of the same integrand);
- posterior model probabilities: Kass & Raftery (1995, JASA 90:773), P(M_i | data) =
  w_i Z_i / sum_j w_j Z_j.
Bridge sampling is Meng & Wong (1996, Statistica Sinica 6:831); its error is
Frühwirth-Schnatter's (2004, Econometrics Journal 7:143) Monte Carlo standard error.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from infer.files.study import parse_study
from infer.inference.evidence import (
    bridge_log_evidence,
    model_probabilities,
    quadrature_fit,
    quadrature_log_evidence,
    strength,
)
from infer.model.posterior import Model
from infer.model.priors.families import Beta


class BetaBinomial:
    """k of n under p ~ Beta(a, b), in qhat's logit coordinates for the Beta prior."""

    def __init__(self, k, n, a, b):
        self.k, self.n, self.ndim, self.free = k, n, 1, ["p"]
        self.priors = [Beta("h", a, b)]   # qhat's Beta family (the name is a label)

    def log_posterior(self, z):
        x, log_jac = self.priors[0].from_unconstrained(np.asarray(z)[:, 0])
        with np.errstate(invalid="ignore"):
            value = self.priors[0].log_density(x) + log_jac + stats.binom.logpmf(
                self.k, self.n, x)
        return np.where(np.isfinite(value), value, -np.inf)   # as Model.__call__ does


class _NormalPrior:
    def __init__(self, mean, sd):
        self.law = stats.norm(mean, sd)

    def quantile(self, p):
        return self.law.ppf(p)

    def to_unconstrained(self, x):
        return np.asarray(x, dtype=float)


class ConjugateNormal:
    """Independent coordinates: y_j ~ N(theta_j, sigma²), theta_j ~ N(m, tau²)."""

    def __init__(self, y, sigma=0.3, m=0.0, tau=2.0):
        self.y, self.sigma, self.m, self.tau = np.asarray(y, dtype=float), sigma, m, tau
        self.ndim = len(self.y)
        self.free = [f"theta{j}" for j in range(self.ndim)]
        self.priors = [_NormalPrior(m, tau) for _ in range(self.ndim)]

    def log_posterior(self, z):
        z = np.asarray(z, dtype=float)
        return (stats.norm.logpdf(z, self.m, self.tau)
                + stats.norm.logpdf(self.y, z, self.sigma)).sum(axis=1)

    def exact(self):
        return float(stats.norm.logpdf(self.y, self.m, math.hypot(self.tau, self.sigma)).sum())

    def draws(self, rng, n):
        v = 1.0 / (1.0 / self.tau ** 2 + 1.0 / self.sigma ** 2)
        mean = v * (self.m / self.tau ** 2 + self.y / self.sigma ** 2)
        return mean + math.sqrt(v) * rng.standard_normal((n, self.ndim))


@pytest.mark.parametrize("k, n, a, b", [(37, 120, 2.0, 3.0), (0, 50, 1.0, 1.0),
                                        (995, 1000, 2.0, 2.0)])
def test_quadrature_matches_the_beta_binomial(k, n, a, b):
    found = quadrature_log_evidence(BetaBinomial(k, n, a, b))
    exact = float(stats.betabinom.logpmf(k, n, a, b))
    assert found.settled and abs(found.log_evidence - exact) < 2e-3, (
        f"log evidence {found.log_evidence:.6f} vs the beta-binomial {exact:.6f} "
        "(scipy.stats.betabinom)")


@pytest.mark.parametrize("k, n, a, b", [(37, 120, 2.0, 3.0), (0, 50, 1.0, 1.0),
                                        (995, 1000, 2.0, 2.0)])
def test_one_pass_fit_gives_the_beta_posterior(k, n, a, b):
    """With one free parameter a single quadrature gives the evidence and the quantiles:
    the posterior is Beta(a + k, b + n - k) (conjugacy; scipy.stats.beta)."""
    fit = quadrature_fit(BetaBinomial(k, n, a, b), 0.95)
    assert abs(fit.evidence.log_evidence - float(stats.betabinom.logpmf(k, n, a, b))) < 2e-3
    posterior = stats.beta(a + k, b + n - k)
    for key, p in (("median", 0.5), ("lower", 0.025), ("upper", 0.975)):
        assert fit.quantiles["p"][key] == pytest.approx(posterior.ppf(p), rel=1e-2), (
            f"{key}: {fit.quantiles['p'][key]:.6g} vs the beta quantile {posterior.ppf(p):.6g}")


def test_bayes_factor_words():
    """Kass & Raftery 1995 (JASA 90:773, section 3.2), on log10 of the factor."""
    assert [strength(v) for v in (0.2, -0.7, 1.5, 2.5, math.inf)] == [
        "not worth more than a bare mention", "substantial", "strong", "decisive", "decisive"]


@pytest.mark.parametrize("k, n, a, b", [(37, 120, 2.0, 3.0), (3, 400, 1.0, 1.0)])
def test_bridge_matches_the_beta_binomial(k, n, a, b):
    rng = np.random.default_rng(7)
    model = BetaBinomial(k, n, a, b)
    p = stats.beta(a + k, b + n - k).rvs(4000, random_state=rng)
    z = model.priors[0].to_unconstrained(p)[:, None]
    found = bridge_log_evidence(model.log_posterior, z, rng)
    exact = float(stats.betabinom.logpmf(k, n, a, b))
    assert 0 < found.error < 0.05, f"a Monte Carlo error is reported: {found.error}"
    assert abs(found.log_evidence - exact) < 4 * found.error + 1e-4, (
        f"bridge log evidence {found.log_evidence:.5f} ± {found.error:.1e} vs the "
        f"beta-binomial {exact:.5f} (scipy.stats.betabinom)")


@pytest.mark.parametrize("ndim", [1, 2, 3])
def test_quadrature_matches_the_conjugate_normal(ndim):
    model = ConjugateNormal(np.linspace(-1.0, 2.0, ndim))
    found = quadrature_log_evidence(model)
    assert abs(found.log_evidence - model.exact()) < 2e-3, (
        f"{ndim}-d: log evidence {found.log_evidence:.6f} vs the closed form "
        f"{model.exact():.6f} (y ~ N(m, tau² + sigma²))")


@pytest.mark.parametrize("ndim", [2, 5])
def test_bridge_matches_the_conjugate_normal_and_its_error_is_honest(ndim):
    """Twenty independent runs: the spread of the estimates matches the reported error."""
    model = ConjugateNormal(np.linspace(-1.0, 2.0, ndim))
    rng = np.random.default_rng(11)
    runs = [bridge_log_evidence(model.log_posterior, model.draws(rng, 2000), rng)
            for _ in range(20)]
    values = np.array([r.log_evidence for r in runs])
    errors = np.array([r.error for r in runs])
    assert abs(values.mean() - model.exact()) < 4 * errors.mean() / math.sqrt(len(runs)) + 1e-4, (
        f"{ndim}-d: mean bridge estimate {values.mean():.5f} vs the closed form "
        f"{model.exact():.5f}")
    ratio = values.std(ddof=1) / errors.mean()
    assert 0.5 < ratio < 2.0, (
        f"{ndim}-d: the spread of 20 estimates is {ratio:.2f} x the reported Monte Carlo "
        "error (Frühwirth-Schnatter 2004 should match within a factor 2)")


def test_a_study_with_one_free_rate_against_scipy_quad():
    """The evidence of a real qhat model equals the one-dimensional integral of prior x
    likelihood over mu, computed by scipy.integrate.quad."""
    study = parse_study({"parameters": {"mu": {"prior": "log-uniform", "low": 1e-7,
                                               "high": 1e-3}, "s": 0.2, "h": 0.5},
                         "observations": [{"kind": "allele-count", "observed": 4,
                                           "sampled": 2000}]})
    found = quadrature_log_evidence(Model(study))

    def integrand(log_mu):   # mu = e^log_mu, log-uniform: density 1/width in log mu
        mu = math.exp(log_mu)
        # the balance's quadratic (1-2h)s q² + hs(1+mu) q - mu = 0 (docs/model.md) is linear
        # at h = 1/2: q = mu / (hs(1+mu)) (derived here), written in the root's form
        q = 2 * mu / (0.1 * (1 + mu) + math.sqrt((0.1 * (1 + mu)) ** 2))
        return stats.binom.pmf(4, 2000, q) / math.log(1e-3 / 1e-7)

    reference, _ = integrate.quad(integrand, math.log(1e-7), math.log(1e-3), points=[
        math.log(2e-4)], limit=200, epsabs=0, epsrel=1e-10)
    assert abs(found.log_evidence - math.log(reference)) < 2e-3, (
        f"log evidence {found.log_evidence:.6f} vs scipy.integrate.quad "
        f"{math.log(reference):.6f}")


def test_model_probabilities():
    log_z = {"a": -10.0, "b": -12.0, "c": -math.inf}
    out = model_probabilities(log_z, {"a": 1.0, "b": 3.0, "c": 1.0})
    za, zb = math.exp(-10.0), math.exp(-12.0)
    expected_a = 0.2 * za / (0.2 * za + 0.6 * zb)
    assert out["a"]["posterior_probability"] == pytest.approx(expected_a, rel=1e-12), (
        "P(a | data) = w_a Z_a / sum w Z (Kass & Raftery 1995)")
    assert out["c"]["posterior_probability"] == 0.0
    assert out["b"]["log10_bayes_factor"] == pytest.approx(-2 / math.log(10), rel=1e-12), (
        "log10 Bayes factor of b against the largest evidence: (ln Z_b - ln Z_a)/ln 10")
