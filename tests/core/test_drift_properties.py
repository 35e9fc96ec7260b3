"""Property-based tests (hypothesis) of Wright's stationary density
(infer.core.drift.stationary) over the documented ranges of Ne, mu, s, h and nu (docs/model.md,
'Finite populations (drift)'; strategies in tests/core/parameter_ranges.py), and of its
large-Ne limit."""

from __future__ import annotations

import numpy as np
from hypothesis import given
from hypothesis import strategies as st
import drift_reference as reference
from parameter_ranges import FEW, MU, NE, NU, H, S, failing_rows, log_uniform, rows
from scipy.special import logsumexp

from infer.core.drift import stationary as drift


@FEW
@given(rows(NE, MU, S, H, NU, max_size=8))
def test_drift_normaliser_and_summary_are_finite(params):
    """log ∫φ finite; summary: 0 <= lower <= median <= upper <= 1, 0 <= mean <= 1,
    0 <= sd <= 1/2 (a variable on [0, 1] has variance <= 1/4: Popoviciu's inequality,
    common practice), all finite, over the documented ranges of Ne, mu, s, h, nu."""
    Ne, mu, s, h, nu = params
    cols = dict(Ne=Ne, mu=mu, s=s, h=h, nu=nu)
    log_z = drift.log_normaliser(Ne, mu, s, h, nu)
    assert log_z.shape == Ne.shape, f"log_normaliser shape {log_z.shape}, inputs {Ne.shape}"
    assert np.all(np.isfinite(log_z)), (
        "log normaliser must be finite: " + failing_rows(np.isfinite(log_z), log_z=log_z, **cols))
    summary = drift.stationary_summary(Ne, mu, s, h, nu)
    for key in ("mean", "median", "lower", "upper", "sd"):
        finite = np.isfinite(summary[key])
        assert np.all(finite), f"{key} must be finite: " + failing_rows(finite, **cols)
    lower, median, upper = summary["lower"], summary["median"], summary["upper"]
    mean, sd = summary["mean"], summary["sd"]
    checks = {
        "0 <= lower and upper <= 1": (lower >= 0) & (upper <= 1),
        "lower <= median": lower <= median,
        "median <= upper": median <= upper,
        "0 <= mean <= 1": (mean >= 0) & (mean <= 1),
        "0 <= sd <= 1/2 (Popoviciu)": (sd >= 0) & (sd <= 0.5),
    }
    for rule, ok in checks.items():
        assert np.all(ok), f"{rule} fails: " + failing_rows(
            ok, lower=lower, median=median, upper=upper, mean=mean, sd=sd, **cols)


@FEW
@given(rows(NE, MU, S, H, NU, max_size=8), st.integers(1, 16))
def test_drift_sample_probabilities_are_finite_and_sum_to_one(params, n):
    """Every log P(k copies in n) is finite and <= 0, and the n + 1 probabilities sum to 1
    (derived: sum_k C(n,k) x^k (1-x)^(n-k) = 1 under the integral) within 1e-6, the
    quadrature tolerance of docs/model.md, 'Sampling integrals'."""
    Ne, mu, s, h, nu = params
    k = np.arange(n + 1)[:, None]
    log_p = drift.log_binomial_probability(k, n, Ne, mu, s, h, nu)
    assert log_p.shape == (n + 1, Ne.size), (
        f"log P(k of n) has shape {log_p.shape}; expected (n + 1, rows) = {(n + 1, Ne.size)}")
    ok = np.all(np.isfinite(log_p) & (log_p <= 1e-12), axis=0)
    assert np.all(ok), (
        f"log P(k of {n}) must be finite and <= 0 for every k: "
        + failing_rows(ok, Ne=Ne, mu=mu, s=s, h=h, nu=nu))
    np.testing.assert_allclose(np.exp(logsumexp(log_p, axis=0)), 1.0, rtol=1e-6,
                               err_msg=f"P(k of {n}) summed over k must be 1 (derived)")


@FEW
@given(rows(log_uniform(15, 300), log_uniform(-9, -5), log_uniform(-3, 0), st.floats(0.0, 0.5),
            NU, max_size=6))
def test_large_ne_is_the_linear_noise_limit(params):
    """Ne from 1e15 to 1e300 (4Ne·mu >= 4e6): the mean is the diffusion balance (brentq on
    M(x) = (1-2x)/(4Ne)) and the sd the linear-noise sd sqrt(V/(2|M'|)) (Kimura 1964; Ewens
    2004, §4.5; drift_reference), each to 10/(4Ne·mu) relative (derived: Laplace's method),
    and lower <= median <= upper within 6 sd of the balance (or of the mode's rounding when
    the sd is below an ulp); h <= 1/2 keeps the density
    unimodal (derived: log φ concave)."""
    Ne, mu, s, h, nu = params
    got = drift.stationary_summary(Ne, mu, s, h, nu)
    for i in range(Ne.size):
        row = (Ne[i], mu[i], s[i], h[i], nu[i])
        mode, sd = reference.diffusion_balance(*row), reference.linear_noise_sd(*row)
        tolerance = 10 / (4 * Ne[i] * mu[i]) + 1e-13
        assert abs(got["mean"][i] / mode - 1) <= tolerance, (
            f"mean {got['mean'][i]!r} vs the diffusion balance {mode!r} at {row}")
        assert abs(got["sd"][i] / sd - 1) <= tolerance, (
            f"sd {got['sd'][i]!r} vs the linear-noise sd {sd!r} at {row}")
        lower, median, upper = got["lower"][i], got["median"][i], got["upper"][i]
        assert lower <= median <= upper, f"quantiles out of order at {row}"
        slack = 6 * sd + 1e-14 * mode  # 6 sd, or the rounding of the mode (a few ulps)
        assert abs(lower - mode) <= slack and abs(upper - mode) <= slack, (
            f"interval [{lower!r}, {upper!r}] far from {mode!r} at {row}")
