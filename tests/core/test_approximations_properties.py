"""Property-based tests (hypothesis) of infer.core.approximations over the documented
ranges (docs/model.md; strategies in tests/core/parameter_ranges.py): wherever an
approximation is flagged in range it is finite and honest about its error."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from hypothesis import given
from parameter_ranges import ALPHA, MU, SETTINGS, F, H, S, failing_rows, rows

from infer.core import approximations, balance


@pytest.mark.filterwarnings("ignore:overflow encountered:RuntimeWarning")  # subnormal h·s:
# see test_tiny_dominance_gives_no_floating_point_warning
@SETTINGS
@given(rows(MU, S, H, F))
def test_autosomal_approximations_are_finite_and_honest_where_in_range(params):
    """Where an approximation is flagged in range its value and relative error are finite,
    relative_error = value / exact - 1 (the definition in infer.core.approximations), and the
    error is below twice the 10 % tolerance the flag promises (first-order estimate <= 10 %;
    second-order terms are smaller by the same factor -- derived)."""
    mu, s, h, F = params
    exact = balance.q_hat(mu, s, h, F)
    for name, approx in approximations.autosomal_approximations(mu, s, h, F).items():
        inside = approx.in_range
        cols = dict(value=approx.value, error=approx.relative_error, exact=exact, mu=mu, s=s,
                    h=h, F=F)
        finite = np.isfinite(approx.value) & np.isfinite(approx.relative_error)
        assert np.all(finite[inside]), (
            f"{name}: flagged in range but not finite: " + failing_rows(finite | ~inside, **cols))
        np.testing.assert_allclose(
            approx.relative_error[inside], approx.value[inside] / exact[inside] - 1, atol=1e-15,
            err_msg=f"{name}: relative_error must be value / exact - 1 (definition)",
        )
        honest = np.abs(approx.relative_error) <= 2 * approximations.RANGE_TOLERANCE
        assert np.all(honest[inside]), (
            f"{name}: flagged in range with error above {2 * approximations.RANGE_TOLERANCE}: "
            + failing_rows(honest | ~inside, **cols))


@SETTINGS
@given(rows(MU, S, H, ALPHA))
def test_x_linked_approximations_are_finite_and_honest_where_in_range(params):
    """As for the autosomal forms, against the exact q_male (Haldane 1935 3mu/s and the
    rare-allele form of infer.core.approximations)."""
    mu, s, h, alpha = params
    exact = balance.x_linked_balance(mu, s, h, 0.0, 0.0, alpha).q_male
    for name, approx in approximations.x_linked_approximations(mu, s, h, alpha).items():
        inside = approx.in_range
        cols = dict(value=approx.value, error=approx.relative_error, exact=exact, mu=mu, s=s,
                    h=h, alpha=alpha)
        finite = np.isfinite(approx.value)
        assert np.all(finite[inside]), (
            f"{name}: flagged in range but not finite: " + failing_rows(finite | ~inside, **cols))
        np.testing.assert_allclose(
            approx.relative_error[inside], approx.value[inside] / exact[inside] - 1, atol=1e-15,
            err_msg=f"{name}: relative_error must be value / exact q_male - 1 (definition)",
        )
        honest = np.abs(approx.relative_error) <= 2 * approximations.RANGE_TOLERANCE
        assert np.all(honest[inside]), (
            f"{name}: flagged in range with error above {2 * approximations.RANGE_TOLERANCE}: "
            + failing_rows(honest | ~inside, **cols))


def test_tiny_dominance_gives_no_floating_point_warning():
    """h = 1e-320 is inside h's documented range [0, 1]; mu/(hs) is then out of range
    (flagged, NaN), but nothing is printed."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        result = approximations.autosomal_approximations(1e-5, 0.1, 1e-320)
    assert not result["mu/(hs)"].in_range, (
        "mu/(hs) at h = 1e-320 must be flagged out of range (needs h >> sqrt(mu/s) = 0.01)")
