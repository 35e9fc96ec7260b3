"""R-hat and effective sample size against arviz and the AR(1) closed form."""

import numpy as np
import pytest

from infer.inference import diagnostics


def ar1(rng, phi, chains=4, draws=4000):
    x = np.zeros((chains, draws))
    e = rng.normal(size=x.shape)
    for t in range(1, draws):
        x[:, t] = phi * x[:, t - 1] + e[:, t]
    return x


@pytest.mark.parametrize("phi", [0.0, 0.5, 0.9])
def test_bulk_tail_ess_and_rhat_equal_arviz(phi):
    # Independent implementation: arviz-stats (Vehtari et al. 2021, Bayesian Analysis
    # 16:667, rank-normalised split R-hat, bulk ESS and tail ESS at the 5 % and 95 %
    # quantiles). Same definitions, so equal to rounding error (1e-10).
    az = pytest.importorskip("arviz")
    x = ar1(np.random.default_rng(1), phi)
    pairs = {
        "bulk ESS": (diagnostics.ess_bulk(x), float(az.ess(x, method="bulk"))),
        "tail ESS": (diagnostics.ess_tail(x),
                     float(az.ess(x, method="tail", prob=(0.05, 0.95)))),
        "rank R-hat": (diagnostics.r_hat(x), float(az.rhat(x, method="rank"))),
    }
    for what, (ours, theirs) in pairs.items():
        assert ours == pytest.approx(theirs, rel=1e-10), (
            f"AR(1) phi = {phi}: {what} {ours!r}, arviz {theirs!r}")


def test_equal_arviz_on_awkward_arrays():
    # The same reference on the cases where truncation and splitting details matter: odd
    # and short chains, ties (rounded draws), one chain, a shifted chain, strong and
    # negative autocorrelation.
    az = pytest.importorskip("arviz")
    rng = np.random.default_rng(11)
    worst = {}
    for case in range(60):
        chains, draws = int(rng.integers(1, 6)), int(rng.integers(4, 300))
        x = ar1(rng, float(rng.uniform(-0.5, 0.97)), chains=chains, draws=draws)
        if case % 3 == 0:
            x = np.round(x)
        if case % 4 == 0:
            x[0] += 1.0
        pairs = {
            "bulk ESS": (diagnostics.ess_bulk(x), float(az.ess(x, method="bulk"))),
            "tail ESS": (diagnostics.ess_tail(x),
                         float(az.ess(x, method="tail", prob=(0.05, 0.95)))),
            "R-hat": (diagnostics.r_hat(x), float(az.rhat(x))),
        }
        for what, (ours, theirs) in pairs.items():
            if np.isnan(theirs):
                assert np.isnan(ours), f"{what} of {x.shape}: arviz NaN, ours {ours}"
                continue
            assert ours == pytest.approx(theirs, rel=1e-10), (
                f"{what} of a {x.shape} array (case {case}): {ours!r}, arviz {theirs!r}")
            worst[what] = max(worst.get(what, 0.0), abs(ours / theirs - 1))
    assert worst, "no case was compared"


@pytest.mark.parametrize("phi", [0.5, 0.8])
def test_ess_matches_ar1_autocorrelation_time(phi):
    # Closed form: an AR(1) chain has integrated autocorrelation time (1 + phi)/(1 - phi)
    # (common practice; emcee's own test of its autocorrelation estimator uses it).
    x = ar1(np.random.default_rng(2), phi, chains=4, draws=20_000)
    tau = (1 + phi) / (1 - phi)
    ess = diagnostics.ess_bulk(x)
    assert ess == pytest.approx(x.size / tau, rel=0.1), (
        f"AR(1) phi = {phi}: bulk ESS {ess:.0f} vs draws / tau = {x.size / tau:.0f} (10 %)")


def test_rhat_flags_chains_that_disagree():
    rng = np.random.default_rng(3)
    x = rng.normal(size=(4, 1000))
    agree = diagnostics.r_hat(x)
    # 1.01: the threshold of Vehtari et al. 2021 (Bayesian Analysis 16:667)
    assert agree < 1.01, f"four independent N(0, 1) chains must give R-hat < 1.01; got {agree}"
    x[0] += 1.0  # one chain stuck elsewhere
    stuck = diagnostics.r_hat(x)
    assert stuck > 1.05, f"a chain shifted by 1 sd must push R-hat above 1.05; got {stuck}"


@pytest.mark.parametrize("p", [0.025, 0.5, 0.975])
def test_indicator_ess_matches_arviz_quantile_ess(p):
    # Independent implementation: arviz-stats' ESS "quantile" method, the ESS of the
    # indicator x <= quantile over split chains (Vehtari et al. 2021, Bayesian Analysis
    # 16:667, section 4.3), here at the pooled p quantile of an AR(1) chain.
    az = pytest.importorskip("arviz")
    x = ar1(np.random.default_rng(4), 0.7)
    ours = diagnostics.ess_indicator(x, float(np.quantile(x, p)))
    theirs = float(az.ess(x, method="quantile", prob=p))
    assert ours == pytest.approx(theirs, rel=1e-10), (
        f"AR(1) phi = 0.7, p = {p}: indicator ESS {ours:.6g}, arviz {theirs:.6g}")


def test_indicator_ess_of_independent_draws_is_their_number():
    # For independent draws the indicator is a Bernoulli sequence without
    # autocorrelation, so its ESS is the number of draws (common practice); 10 % allows
    # the estimator's own noise at 16,000 draws.
    x = np.random.default_rng(8).normal(size=(4, 4000))
    ess = diagnostics.ess_indicator(x, 1.96)
    assert ess == pytest.approx(x.size, rel=0.1), f"iid N(0, 1): indicator ESS {ess:.0f}"


def test_average_ranks_equal_scipy_rankdata_with_ties():
    # Rank normalisation gives tied draws their average rank (Vehtari et al. 2021,
    # Bayesian Analysis 16:667, section 3); scipy.stats.rankdata(method="average") is the
    # independent reference, on draws with many ties (a walker that did not move).
    from scipy.stats import rankdata

    rng = np.random.default_rng(7)
    for x in (rng.normal(size=(4, 500)), np.round(rng.normal(size=(3, 400)), 1),
              np.repeat(rng.normal(size=(2, 50)), 4, axis=1), np.zeros((2, 5))):
        expected = rankdata(x, method="average", axis=None).reshape(x.shape)
        assert np.array_equal(diagnostics._average_ranks(x), expected), (
            "average ranks must equal scipy.stats.rankdata(method='average')")
