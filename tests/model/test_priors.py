"""Priors against scipy.stats (an independent implementation of each family).

References: scipy.stats ``loguniform``, ``lognorm``, ``uniform``, ``beta``, ``truncnorm``
for densities, distribution functions and quantiles; the change-of-variables formula
p_z(z) = p_x(x(z)) |dx/dz| (closed form) for the transforms, checked by quadrature,
by finite differences and by Monte Carlo.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from infer.errors import InputError
from infer.model.priors.parsing import (
    DEFAULTS,
    DRIFT_DEFAULTS,
    PARAMETERS,
    SUPPORT,
    Fixed,
    Prior,
    defaults_for,
    defaults_table,
    parse_parameter,
)


def prior(name, **table):
    return parse_parameter(name, table, field=f"parameters.{name}")


# (prior, frozen scipy distribution restricted to the same support)
def _cases():
    s_lognormal = stats.lognorm(s=1.0, scale=0.5)  # truncated to s <= 1 below
    return [
        ("log-uniform mu", prior("mu", prior="log-uniform", low=1e-8, high=1e-3),
         stats.loguniform(1e-8, 1e-3), None),
        ("log-normal Ne", prior("Ne", prior="log-normal", median=500.0, sigma=0.7),
         stats.lognorm(s=0.7, scale=500.0), None),
        ("log-normal s (truncated at 1)", prior("s", prior="log-normal", median=0.5, sigma=1.0),
         s_lognormal, 1.0),
        ("uniform h", prior("h", prior="uniform", low=0.1, high=0.7),
         stats.uniform(loc=0.1, scale=0.6), None),
        ("beta s", prior("s", prior="beta", a=2.0, b=5.0), stats.beta(2.0, 5.0), None),
        ("normal h", prior("h", prior="normal", mean=0.3, sd=0.2),
         stats.truncnorm(a=-1.5, b=3.5, loc=0.3, scale=0.2), None),
        ("normal alpha", prior("alpha", prior="normal", mean=2.0, sd=1.5),
         stats.truncnorm(a=-2.0 / 1.5, b=np.inf, loc=2.0, scale=1.5), None),
        # the support in one tail of the normal: the lower tail, then the upper
        ("normal s, mean above 1", prior("s", prior="normal", mean=1.6, sd=0.15),
         stats.truncnorm(a=-1.6 / 0.15, b=-0.6 / 0.15, loc=1.6, scale=0.15), None),
        ("normal h, mean below 0", prior("h", prior="normal", mean=-0.5, sd=0.2),
         stats.truncnorm(a=2.5, b=7.5, loc=-0.5, scale=0.2), None),
    ]


CASES = _cases()
IDS = [c[0] for c in CASES]


def _reference(dist, cut):
    """Log density, cdf and ppf of ``dist`` truncated above at ``cut`` (if given)."""
    if cut is None:
        return dist.logpdf, dist.cdf, dist.ppf
    mass = dist.cdf(cut)
    return (lambda x: dist.logpdf(x) - math.log(mass),
            lambda x: dist.cdf(x) / mass,
            lambda p: dist.ppf(p * mass))


@pytest.mark.parametrize("name, p, dist, cut", CASES, ids=IDS)
def test_density_cdf_quantile_match_scipy(name, p, dist, cut):
    logpdf, cdf, ppf = _reference(dist, cut)
    probs = np.array([0.001, 0.025, 0.2, 0.5, 0.8, 0.975, 0.999])
    x = ppf(probs)
    np.testing.assert_allclose(p.quantile(probs), x, rtol=1e-9)
    np.testing.assert_allclose(p.log_density(x), logpdf(x), rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(p.cdf(x), probs, rtol=1e-9)
    lower, upper = p.interval(0.95)
    np.testing.assert_allclose([lower, upper], ppf(np.array([0.025, 0.975])), rtol=1e-9)


@pytest.mark.parametrize("name, p, dist, cut", CASES, ids=IDS)
def test_log_density_is_minus_inf_outside(name, p, dist, cut):
    lower, upper = SUPPORT[p.parameter]
    outside = [lower - 1.0, upper + 1.0 if math.isfinite(upper) else -5.0]
    assert np.all(p.log_density(outside) == -np.inf)


@pytest.mark.parametrize("name, p, dist, cut", CASES, ids=IDS)
def test_transform_round_trip_and_finite_difference_jacobian(name, p, dist, cut):
    """log|dx/dz| against a central finite difference of x(z) (closed form check)."""
    z = np.linspace(-6, 6, 25)
    x, log_jac = p.from_unconstrained(z)
    np.testing.assert_allclose(p.to_unconstrained(x), z, atol=1e-7)
    step = 1e-5
    x_plus, _ = p.from_unconstrained(z + step)
    x_minus, _ = p.from_unconstrained(z - step)
    numeric = (x_plus - x_minus) / (2 * step)
    np.testing.assert_allclose(log_jac, np.log(numeric), atol=1e-6)


@pytest.mark.parametrize("name, p, dist, cut", CASES, ids=IDS)
def test_transformed_density_integrates_to_prior_cdf(name, p, dist, cut):
    """∫_{-inf}^{z0} p(x(z)) |dx/dz| dz = CDF(x(z0)): change of variables (closed form)."""

    def density(z):
        return float(np.exp(p.log_density_unconstrained(np.array([z]))[1][0]))

    total, _ = integrate.quad(density, -np.inf, np.inf, limit=200)
    assert total == pytest.approx(1.0, abs=1e-6)
    for z0 in (-1.0, 0.0, 1.5):
        partial, _ = integrate.quad(density, -np.inf, z0, limit=200)
        x0, _ = p.from_unconstrained(np.array([z0]))
        assert partial == pytest.approx(float(p.cdf(x0)[0]), abs=1e-6)


@pytest.mark.parametrize("name, p, dist, cut", CASES, ids=IDS)
def test_jacobian_by_monte_carlo(name, p, dist, cut):
    """E_z~N(0,3)[p_z(z)/N(z;0,3)] = 1 when p_z includes the Jacobian (importance sampling)."""
    rng = np.random.default_rng(11)
    z = rng.normal(0.0, 3.0, 200_000)
    _, log_pz = p.log_density_unconstrained(z)
    weights = np.exp(log_pz - stats.norm(0, 3).logpdf(z))
    se = weights.std() / math.sqrt(z.size)
    assert abs(weights.mean() - 1.0) < 5 * se + 1e-3


@pytest.mark.parametrize("name, p, dist, cut", CASES, ids=IDS)
def test_samples_follow_the_prior(name, p, dist, cut):
    _, cdf, _ = _reference(dist, cut)
    draws = p.sample(np.random.default_rng(5), 5000)
    assert draws.shape == (5000,)
    assert stats.kstest(draws, cdf).pvalue > 1e-3


def test_sampling_scales_and_their_sd():
    """sd of log10 x under log-uniform(a, b) is log10(b/a)/sqrt(12) (closed form)."""
    mu = prior("mu", prior="log-uniform", low=1e-8, high=1e-3)
    assert mu.sampling_scale_name == "log10"
    np.testing.assert_allclose(mu.sampling_scale([1e-5, 1e-3]), [-5.0, -3.0])
    assert mu.sampling_scale_sd() == pytest.approx(5 / math.sqrt(12), rel=1e-4)
    ln = prior("Ne", prior="log-normal", median=100.0, sigma=0.5)
    assert ln.sampling_scale_name == "log10"
    assert ln.sampling_scale_sd() == pytest.approx(0.5 / math.log(10), rel=2e-3)
    h = prior("h", prior="uniform", low=0.2, high=0.8)
    assert h.sampling_scale_name == "linear"
    np.testing.assert_allclose(h.sampling_scale([0.3]), [0.3])
    assert h.sampling_scale_sd() == pytest.approx(0.6 / math.sqrt(12), rel=1e-4)
    b = prior("s", prior="beta", a=2.0, b=3.0)
    assert b.sampling_scale_sd() == pytest.approx(stats.beta(2, 3).std(), rel=1e-4)


def test_describe():
    assert prior("mu", prior="log-uniform", low=1e-8, high=1e-3).describe() == (
        "log-uniform(1e-08, 0.001)"
    )
    assert prior("h", prior="uniform", low=0, high=1).describe() == "uniform(0, 1)"
    assert prior("s", prior="beta", a=2, b=2).describe() == "beta(2, 2)"
    assert prior("mu", prior="log-normal", median=1e-5, sigma=0.5).describe() == (
        "log-normal(1e-05, 0.5)"
    )
    assert "truncated to (0, 1]" in prior("s", prior="log-normal", median=0.5, sigma=1).describe()
    assert prior("h", prior="normal", mean=0.3, sd=0.1).describe() == (
        "normal(0.3, 0.1) truncated to [0, 1]"
    )
    assert parse_parameter("h", 1, field="parameters.h") == Fixed("h", 1.0)
    assert Fixed("F", 0.0).describe() == "fixed 0"


def test_defaults_as_documented():
    assert DEFAULTS["mu"].describe() == "log-uniform(1e-09, 0.001)"
    assert DEFAULTS["s"].describe() == "uniform(0, 1)"
    assert DEFAULTS["h"].describe() == "uniform(0, 1)"
    assert DEFAULTS["F"] == Fixed("F", 0.0)
    assert DEFAULTS["nu"] == Fixed("nu", 0.0)
    assert DEFAULTS["alpha"] == Fixed("alpha", 1.0)
    assert DRIFT_DEFAULTS["nu"] == Fixed("nu", 1e-9)
    assert "Ne" not in DRIFT_DEFAULTS
    assert set(defaults_for("deterministic")) == set(PARAMETERS)
    rows = {row[0]: row[1:] for row in defaults_table()}
    assert rows["Ne"] == ("not used", "required")
    assert rows["nu"] == ("fixed 0", "fixed 1e-09")


def test_prior_bounds_may_touch_the_support():
    s = prior("s", prior="uniform", low=0.0, high=1.0)
    assert s.log_density(0.0) == -np.inf  # s = 0 is outside (0, 1]
    assert s.log_density(1.0) == 0.0
    assert isinstance(s, Prior)


BAD = [
    # (name, value, field, text in the message)
    ("mu", {"prior": "log-uniforme", "low": 1e-8, "high": 1e-3}, "parameters.mu.prior",
     'must be one of log-uniform, log-normal, uniform, beta, normal'),
    ("mu", {"low": 1e-8, "high": 1e-3}, "parameters.mu.prior", "missing"),
    ("mu", {"prior": "log-uniform", "low": 1e-8}, "parameters.mu.high", "missing"),
    ("mu", {"prior": "log-uniform", "low": 1e-8, "high": 1e-3, "mean": 2},
     "parameters.mu.mean", 'unknown key "mean"; must be one of prior, low, high'),
    ("mu", {"prior": "log-uniform", "low": 1e-3, "high": 1e-8}, "parameters.mu.low",
     "0.001 is not below high 1e-08"),
    ("s", {"prior": "uniform", "low": 0.5, "high": 0.5}, "parameters.s.low", "0.5 is not below"),
    ("s", {"prior": "uniform", "low": 0.0, "high": 2.0}, "parameters.s.high",
     "2.0 is outside the support (0, 1] of s"),
    # h reaches [-10, 10] through a uniform prior or a fixed value (general genotype
    # fitness, infer/core/balance.py); beyond that, and for F, the support holds
    ("h", {"prior": "uniform", "low": -10.5, "high": 0.5}, "parameters.h.low",
     "-10.5 is outside [-10, 10], the range of h"),
    ("F", {"prior": "uniform", "low": -0.5, "high": 0.5}, "parameters.F.low", "-0.5 is outside"),
    ("mu", {"prior": "log-uniform", "low": 0.0, "high": 1e-3}, "parameters.mu.low",
     "0.0 is not above 0"),
    ("mu", {"prior": "log-normal", "median": 1e-5, "sigma": 0.0}, "parameters.mu.sigma",
     "0.0 is not above 0"),
    ("mu", {"prior": "log-normal", "median": -1e-5, "sigma": 1.0}, "parameters.mu.median",
     "-1e-05 is outside"),
    ("h", {"prior": "normal", "mean": 0.3, "sd": -0.1}, "parameters.h.sd", "-0.1 is not above 0"),
    ("h", {"prior": "normal", "mean": 60.0, "sd": 0.1}, "parameters.h",
     "puts no probability inside the support"),
    # narrower than double precision can sample (MIN_RELATIVE_SPREAD)
    ("mu", {"prior": "log-normal", "median": 1e-5, "sigma": 1e-15}, "parameters.mu.sigma",
     "1e-15 is too narrow"),
    ("s", {"prior": "normal", "mean": 0.5, "sd": 1e-300}, "parameters.s.sd",
     "1e-300 is too narrow"),
    ("s", {"prior": "uniform", "low": 0.5, "high": 0.5000000000000001}, "parameters.s",
     "too narrow"),
    ("s", {"prior": "beta", "a": 0.0, "b": 2.0}, "parameters.s.a", "0.0 is not above 0"),
    ("Ne", {"prior": "beta", "a": 2.0, "b": 2.0}, "parameters.Ne.prior",
     '"beta" is for parameters on [0, 1]'),
    ("mu", {"prior": "log-uniform", "low": float("nan"), "high": 1e-3}, "parameters.mu.low",
     "nan is not a finite number"),
    ("mu", {"prior": "log-uniform", "low": 1e-8, "high": float("inf")}, "parameters.mu.high",
     "inf is not a finite number"),
    ("s", {"prior": "uniform", "low": True, "high": 1.0}, "parameters.s.low",
     "true is not a number"),
    ("h", True, "parameters.h", "true is neither a number nor a prior table"),
    ("h", "0.5", "parameters.h", '"0.5" is neither a number nor a prior table'),
    ("h", 10.5, "parameters.h", "10.5 is outside [-10, 10], the range of h"),
    ("mu", 0, "parameters.mu", "0 is outside the support (0, 1) of mu"),
    ("F", 1.0, "parameters.F", "1.0 is outside the support [0, 1) of F"),
    ("Ne", -100, "parameters.Ne", "-100 is outside the support (0, inf) of Ne"),
    ("Ne", float("inf"), "parameters.Ne", "inf is not a finite number"),
    ("sigma", 0.1, "parameters.sigma",
     'unknown parameter "sigma"; must be one of mu, s, h, F, nu, Ne, alpha'),
]


@pytest.mark.parametrize("name, value, field, text", BAD, ids=[f"{b[2]}:{b[3][:25]}" for b in BAD])
def test_bad_parameters_name_field_and_value(name, value, field, text):
    with pytest.raises(InputError) as caught:
        parse_parameter(name, value, field=f"parameters.{name}")
    assert caught.value.field == field
    assert text in caught.value.message
    assert "\n" not in str(caught.value)


def test_normal_with_a_huge_sd_is_uniform_on_a_bounded_support():
    """Closed form: Normal(m, sd) truncated to [0, 1] has density proportional to
    exp(-(x - m)^2 / (2 sd^2)), which is flat to 1e-600 at sd = 1e300, so the prior is
    uniform(0, 1) (scipy.stats.uniform as the reference); it used to be refused as
    putting "no probability inside the support"."""
    wide = prior("s", prior="normal", mean=0.5, sd=1e300)
    p = np.array([1e-6, 0.01, 0.3, 0.5, 0.9, 0.999])
    uniform = stats.uniform(0.0, 1.0)
    # x = mean + sd * t loses the digits of x below those of the mean (1e-16 absolute)
    np.testing.assert_allclose(wide.quantile(p), uniform.ppf(p), rtol=1e-12, atol=1e-15,
                               err_msg="quantiles of normal(0.5, 1e300) on (0, 1] vs uniform")
    np.testing.assert_allclose(wide.cdf(p), uniform.cdf(p), rtol=1e-12, atol=1e-15,
                               err_msg="cdf of normal(0.5, 1e300) on (0, 1] vs uniform")
    np.testing.assert_allclose(wide.log_density(p), uniform.logpdf(p), atol=1e-12,
                               err_msg="log density of normal(0.5, 1e300) vs uniform")


def test_relative_spread_against_scipy():
    """The spread the narrow-prior check reads: the interquartile range over the median,
    the smaller of its value on x and on the logit scale (scipy.stats.lognorm quantiles,
    scipy.special.logit as the reference)."""
    from scipy import special

    from infer.model.priors.parsing import MIN_RELATIVE_SPREAD, relative_spread

    for sigma in (1e-3, 1e-9):
        lognormal = prior("mu", prior="log-normal", median=1e-5, sigma=sigma)
        x = stats.lognorm(s=sigma, scale=1e-5).ppf([0.25, 0.5, 0.75])
        z = special.logit(x)
        expected = min((x[2] - x[0]) / x[1], (z[2] - z[0]) / abs(z[1]))
        assert relative_spread(lognormal) == pytest.approx(expected, rel=1e-5), (
            f"relative spread of log-normal(1e-5, {sigma}) vs scipy")
        assert relative_spread(lognormal) >= MIN_RELATIVE_SPREAD, (
            f"log-normal(1e-5, {sigma}) is wide enough to sample and must be accepted")
