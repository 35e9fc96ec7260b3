"""The exact quadrature posterior against closed forms (scipy.stats as the reference)."""

import numpy as np
import pytest
from scipy import stats

from infer.files.study import parse_study
from infer.inference.grid import grid_posterior
from infer.model.posterior import Model


def one_parameter_sporadic(cases, births, low=1e-8, high=1e-3):
    document = {
        "title": "direct method",
        "parameters": {"mu": {"prior": "log-uniform", "low": low, "high": high},
                       "s": 0.5, "h": 1.0},
        "observations": [{"kind": "sporadic", "cases": cases, "births": births,
                          "mode": "dominant"}],
    }
    return Model(parse_study(document, source="test.toml"))


@pytest.mark.parametrize("cases,births", [(8, 94_075), (40, 1_000_000), (0, 50_000)])
def test_sporadic_log_uniform_posterior_is_a_truncated_beta(cases, births):
    """Derived: with k sporadic cases in n births, P(case) = 2 mu (direct method, Vogel &
    Motulsky, *Human Genetics*), and a log-uniform prior on mu (density ~ 1/mu), the
    posterior of p = 2 mu is proportional to p^(k-1) (1-p)^(n-k) on [2 low, 2 high]:
    Beta(k, n - k + 1) truncated to that range. For k = 0 the density p^-1 (1-p)^n is not
    a proper Beta, so the check uses numerical integration instead."""
    low, high = 1e-8, 1e-3
    model = one_parameter_sporadic(cases, births, low, high)
    grid = grid_posterior(model, interval=0.95)
    q = grid.quantiles["mu"]
    if cases > 0:
        ref = stats.beta(cases, births - cases + 1)
        a, b = ref.cdf(2 * low), ref.cdf(2 * high)
        expected = [ref.ppf(a + (b - a) * u) / 2 for u in (0.5, 0.025, 0.975)]
    else:
        from scipy import integrate

        log_p = np.linspace(np.log(2 * low), np.log(2 * high), 200_001)
        # in log p the density p^-1 (1-p)^n dp becomes (1-p)^n d(log p)
        dens = np.exp(births * np.log1p(-np.exp(log_p)))
        cdf = integrate.cumulative_trapezoid(dens, log_p, initial=0)
        cdf /= cdf[-1]
        expected = [np.exp(np.interp(u, cdf, log_p)) / 2 for u in (0.5, 0.025, 0.975)]
    got = [q["median"], q["lower"], q["upper"]]
    assert got == pytest.approx(expected, rel=2e-3), (
        f"{cases} cases in {births} births: grid (median, lower, upper) {got} vs the "
        f"truncated Beta {expected}")


def test_marginal_density_integrates_to_one():
    model = one_parameter_sporadic(8, 94_075)
    grid = grid_posterior(model)
    x, d = grid.axes["mu"], grid.marginal_density["mu"]
    area = np.trapezoid(d, x)
    assert area == pytest.approx(1.0, rel=1e-3), f"the marginal density integrates to {area}"


def test_two_parameters_binomial_and_fertility_factorise():
    """Derived: fertility data depend on s alone, so with mu free as well the marginal of s
    equals the one-parameter posterior, which is checked against direct integration."""
    fertility = {"kind": "fertility", "affected_people": 200, "affected_children": 60,
                 "reference_people": 1000, "reference_children": 2000, "mode": "dominant"}
    two = {"title": "t", "parameters": {"mu": {"prior": "log-normal", "median": 1e-5,
                                               "sigma": 1.0},
                                        "s": {"prior": "uniform", "low": 0, "high": 1},
                                        "h": 1.0},
           "observations": [fertility]}
    one = {"title": "t", "parameters": {"mu": 1e-5, "s": {"prior": "uniform", "low": 0,
                                                          "high": 1}, "h": 1.0},
           "observations": [fertility]}
    g2 = grid_posterior(Model(parse_study(two, source="t.toml")))
    g1 = grid_posterior(Model(parse_study(one, source="t.toml")))
    for key in ("median", "lower", "upper"):
        two_free, one_free = g2.quantiles["s"][key], g1.quantiles["s"][key]
        assert two_free == pytest.approx(one_free, rel=2e-3), (
            f"s {key}: {two_free} with mu free vs {one_free} with mu fixed; fertility data "
            "do not depend on mu, so they must agree")
    # Fertility alone, derived: w = 1 - s is uniform on [0, 1] under the uniform prior on
    # s, and the conditional binomial gives a posterior density of w proportional to
    # (A w)^k R^(N - k) / (A w + R)^N. Integrate it independently with scipy.
    from scipy import integrate, optimize

    A, R, k, N = 200, 1000, 60, 2060
    log_density = lambda w: k * np.log(A * w) - N * np.log(A * w + R)  # noqa: E731
    peak = log_density(k * R / (A * (N - k)))
    density = lambda w: np.exp(log_density(w) - peak)  # noqa: E731
    total = integrate.quad(density, 0, 1, points=[0.3], limit=200)[0]
    def cdf(w):
        return integrate.quad(density, 0, w, points=[min(w, 0.3)], limit=200)[0] / total

    for key, u in (("median", 0.5), ("lower", 0.025), ("upper", 0.975)):
        w = optimize.brentq(lambda v, u=u: cdf(v) - u, 1e-6, 1 - 1e-9, xtol=1e-12)
        # s = 1 - w: the lower end of s is the upper end of w
        s_key = {"median": "median", "lower": "upper", "upper": "lower"}[key]
        got = g1.quantiles["s"][s_key]
        assert got == pytest.approx(1 - w, rel=2e-3), (
            f"s {s_key}: grid {got} vs 1 - w = {1 - w} from scipy quad/brentq")
