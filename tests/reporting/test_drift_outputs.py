"""Drift studies report Wright's stationary distribution (issue 13, item 2).

Reference: Wright's stationary density (Wright 1931, Genetics 16:97; 1937, PNAS 23:307)
phi(x) ~ x^(4Ne mu - 1) (1-x)^(4Ne nu - 1) exp(-2Ne s (2hx + (1-2h)x^2)), integrated
here independently with mpmath.quad (tanh-sinh, which handles the end singularities),
not with the project's quadrature.
"""

from __future__ import annotations

import re

import mpmath
import numpy as np
import pytest
from scipy import stats

from infer.core.drift import stationary as drift
from infer.files.study import parse_study
from infer.jobs.estimate.results import drift_frequency, predictive_counts
from infer.reporting.labels import model_assumptions
from infer.reporting.markdown import drift_lines

NE, MU, S, H, NU = 50.0, 2e-3, 0.04, 0.5, 5e-4
ROWS = 6000


def _wright(f, lower=0.0, upper=1.0):
    """∫ f(x) phi(x) dx over (lower, upper) / ∫ phi(x) dx with mpmath (Wright 1931; 1937).

    Each half of (0, 1) is integrated in its distance to the nearer end (x or 1 - x), on
    panels down to 1e-30, so the end singularities x^(a-1) and (1-x)^(b-1) are resolved.
    """
    mpmath.mp.dps = 40
    a, b, c = (mpmath.mpf(v) for v in (4 * NE * MU, 4 * NE * NU, 2 * NE * S))

    def phi(x, t):  # t = 1 - x, passed separately to keep its digits near x = 1
        return x ** (a - 1) * t ** (b - 1) * mpmath.exp(-c * (2 * H * x + (1 - 2 * H) * x * x))

    ends = [mpmath.mpf(10) ** -k for k in (30, 20, 15, 12, 9, 6, 4, 3, 2)]
    panels = [mpmath.mpf(0), *ends, mpmath.mpf("0.1"), mpmath.mpf("0.3"), mpmath.mpf("0.5")]

    def integral(g):
        left = mpmath.quad(lambda x: g(x) * phi(x, 1 - x), panels)
        right = mpmath.quad(lambda t: g(1 - t) * phi(1 - t, t), panels)
        return left + right

    def inside(x):
        return f(x) if lower <= x <= upper else 0

    split = [v for v in (lower, upper) if 0 < v < 1]
    if split:  # put the cut on a panel edge so the step is integrated exactly
        global_panels = sorted({*panels, *(mpmath.mpf(v) for v in split if v <= 0.5)})
        mirrored = sorted({*panels, *(mpmath.mpf(1 - v) for v in split if v > 0.5)})
        left = mpmath.quad(lambda x: inside(x) * phi(x, 1 - x), global_panels)
        right = mpmath.quad(lambda t: inside(1 - t) * phi(1 - t, t), mirrored)
        return float((left + right) / integral(lambda x: 1))
    return float(integral(f) / integral(lambda x: 1))


@pytest.fixture(scope="module")
def summary():
    study = parse_study({
        "title": "drift", "model": "drift",
        "parameters": {"mu": {"prior": "log-uniform", "low": 1e-4, "high": 1e-2}, "s": S,
                       "h": H, "Ne": NE, "nu": NU},
        "observations": [{"label": "sample", "kind": "allele-count", "observed": 12,
                          "sampled": 100}]})
    params = {name: np.full(ROWS, value) for name, value in
              {"Ne": NE, "mu": MU, "s": S, "h": H, "nu": NU, "F": 0.0, "alpha": 1.0}.items()}
    x = drift.sample_stationary(np.random.default_rng(5), params["Ne"], params["mu"],
                                params["s"], params["h"], params["nu"])
    means = drift.stationary_summary(params["Ne"], params["mu"], params["s"], params["h"],
                                     params["nu"])["mean"]
    return drift_frequency(params, x, means, study.observations, 0.95)


def test_mean_against_wright(summary):
    expected = _wright(lambda x: x)
    assert summary["mean"] == pytest.approx(expected, rel=1e-6), (
        f"mean of Wright's density: mpmath gives {expected}")


def test_probability_absent_against_wright(summary):
    n = summary["samples"][0]["sample"]
    assert n == 100
    expected = _wright(lambda x: (1 - x) ** n)
    assert summary["samples"][0]["p_absent"]["mean"] == pytest.approx(expected, rel=1e-6), (
        f"P(no copy in {n} genes) = E[(1-x)^n] under Wright's density: mpmath {expected}")


def test_probability_at_least_observed_against_wright(summary):
    sample = summary["samples"][0]
    expected = _wright(lambda x: 1, lower=0.12)
    se = np.sqrt(expected * (1 - expected) / ROWS)
    assert abs(sample["p_at_least_observed"] - expected) < 4 * se, (
        f"P(x >= 0.12) = {sample['p_at_least_observed']:.4f}; mpmath {expected:.4f} "
        f"(4 Monte Carlo se = {4 * se:.4f})")


def test_interval_and_mass_at_zero_against_wright(summary):
    one_copy = 1 / (2 * NE)
    expected = _wright(lambda x: 1, upper=one_copy)
    se = np.sqrt(expected * (1 - expected) / ROWS)
    assert abs(summary["below_one_copy"] - expected) < 4 * se, (
        f"share below 1/(2Ne): {summary['below_one_copy']:.4f}, mpmath {expected:.4f}")
    assert summary["mostly_at_zero"] == (expected > 0.5)
    # the predictive upper end: the Wright cdf there is 0.975 (within Monte Carlo error)
    tail = _wright(lambda x: 1, lower=summary["upper"])
    assert tail == pytest.approx(0.025, abs=4 * np.sqrt(0.025 * 0.975 / ROWS))


def test_drift_section_reads_plainly():
    d = {"mean": 3e-3, "mean_lower": 1e-4, "mean_upper": 0.5, "median": 1.13e-302,
         "lower": 0.0, "upper": 0.2, "below_one_copy": 0.92, "mostly_at_zero": True,
         "draws": 2000, "samples": [{"label": "s", "copies": 7, "sample": 238,
                                      "observed_frequency": 7 / 238,
                                      "p_absent": {"mean": 0.9, "median": 0.95, "lower": 0.2,
                                                   "upper": 0.99},
                                      "p_at_least_observed": 0.08,
                                      "p_at_least_observed_se": 0.006}]}
    text = "\n".join(drift_lines(d, "95 %"))
    assert not re.search(r"e-[0-9]{3}", text), f"no 1e-302-style numbers: {text}"
    assert "< 1e-12" in text and "Most of the mass is at 0" in text
    assert "P(absent from a sample of 238" in text and "P(frequency ≥ observed" in text


def test_drift_assumptions_say_stationarity():
    text = " ".join(model_assumptions("drift"))
    assert "Stationarity" in text and "constant effective size" in text
    assert "Wright 1931" in text and "Equilibrium is assumed" not in text


def test_predictive_counts_are_integers():
    rng = np.random.default_rng(2)
    draws = rng.binomial(238, 0.03, size=20_000).astype(float)
    out = predictive_counts(draws, 0.95)
    assert out["integer"] and isinstance(out["predictive_median"], int)
    # scipy.stats.binom as the reference for the quantiles of Binomial(238, 0.03)
    ref = stats.binom(238, 0.03)
    assert out["predictive_median"] == ref.median()
    assert abs(out["predictive_lower"] - ref.ppf(0.025)) <= 1
    assert abs(out["predictive_upper"] - ref.ppf(0.975)) <= 1


@pytest.mark.slow
def test_drift_demo_report(tmp_path):
    """The Kestrel drift demo end to end: no tiny medians, Wright's section, the band."""
    from pathlib import Path

    from infer.files.study import load_study
    from infer.jobs.estimate.pipeline import estimate
    from infer.reporting.markdown import report_markdown
    from infer.reporting.plots.fit import balance_curve_figure
    from infer.reporting.plots.save import plain_text

    demo = Path(__file__).resolve().parents[2] / "data_demo" / "kestrel-captive-drift.toml"
    result, _ = estimate(load_study(demo), seed=14, grid=False)
    text = report_markdown(result, {})
    assert "Equilibrium is assumed" not in text and "Stationarity is assumed" in text
    assert "Wright's stationary distribution" in text
    assert not re.search(r"\| [0-9.]+e-[0-9]{3} ", text), "no 1e-302-style medians in tables"
    predictive = result.summary["predictive"][0]
    assert isinstance(predictive["predictive_median"], int)
    with plain_text():
        figure = balance_curve_figure(result)
        labels = [t.get_text() for t in figure.axes[0].get_legend().get_texts()]
    assert any("Wright's stationary distribution" in t for t in labels), labels
    assert any(t.startswith("deterministic") for t in labels), labels
