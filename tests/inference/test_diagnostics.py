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
def test_bulk_ess_and_rhat_match_arviz(phi):
    # Independent implementation: arviz-stats (Vehtari et al. 2021, Bayesian Analysis
    # 16:667, rank-normalised split R-hat and bulk ESS).
    az = pytest.importorskip("arviz")
    x = ar1(np.random.default_rng(1), phi)
    assert diagnostics.ess_bulk(x) == pytest.approx(float(az.ess(x, method="bulk")), rel=1e-4)
    assert diagnostics.r_hat(x) == pytest.approx(float(az.rhat(x, method="rank")), rel=1e-6)
    tail = float(az.ess(x, method="tail", prob=(0.05, 0.95)))
    assert diagnostics.ess_tail(x) == pytest.approx(tail, rel=0.02)


@pytest.mark.parametrize("phi", [0.5, 0.8])
def test_ess_matches_ar1_autocorrelation_time(phi):
    # Closed form: an AR(1) chain has integrated autocorrelation time (1 + phi)/(1 - phi)
    # (common practice; emcee's own test of its autocorrelation estimator uses it).
    x = ar1(np.random.default_rng(2), phi, chains=4, draws=20_000)
    tau = (1 + phi) / (1 - phi)
    assert diagnostics.ess_bulk(x) == pytest.approx(x.size / tau, rel=0.1)


def test_rhat_flags_chains_that_disagree():
    rng = np.random.default_rng(3)
    x = rng.normal(size=(4, 1000))
    assert diagnostics.r_hat(x) < 1.01
    x[0] += 1.0  # one chain stuck elsewhere
    assert diagnostics.r_hat(x) > 1.05
