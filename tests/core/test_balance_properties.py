"""Property-based tests (hypothesis) of infer.core.balance over the documented ranges.

Inside mu 1e-10..1e-2, s 1e-6..1, h 0..1, F 0..0.5, nu 1e-9..1e-5, alpha 0.1..10 (docs/model.md)
no result is NaN or infinite where a result is promised, equilibria are true
stable fixed points of the life cycle (checked with mpmath on the recursion written out
again in tests/core/balance_reference.py, not with the library's own polynomial), and
q_hat moves the way the implicit-function theorem says it must.

Sources are named beside each check: "derived" (derivation in the docstring), "closed
form", "common practice".
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
from balance_reference import autosomal_step, x_linked_step
from hypothesis import assume, given
from hypothesis import strategies as st
from parameter_ranges import (
    ALPHA,
    FEW,
    MU,
    NU_OR_ZERO,
    SETTINGS,
    STEP,
    F,
    H,
    S,
    failing_rows,
    log_uniform,
    rows,
)

from infer.core import balance

mpmath.mp.dps = 50


def autosomal_change(q, mu, s, h, F, nu):
    """q' - q for one generation of the autosomal life cycle, in 50-digit arithmetic."""
    q, mu, s, h, F, nu = (mpmath.mpf(float(v)) for v in (q, mu, s, h, F, nu))
    return autosomal_step(q, mu, s, h, F, nu) - q


def x_linked_change(x, mu, s, h, F, nu, alpha):
    """x' - x for the egg frequency of the X-linked life cycle, in 50-digit arithmetic,
    with the sperm frequency at its value given x (sons carry the egg's X: derived)."""
    x, mu, s, h, F, nu, alpha = (mpmath.mpf(float(v)) for v in (x, mu, s, h, F, nu, alpha))
    y = x_linked_step(x, x, mu, s, h, F, nu, alpha)[1]
    return x_linked_step(x, y, mu, s, h, F, nu, alpha)[0] - x


def assert_stable_fixed_point(change, root, *args):
    """The recursion moves up just below ``root`` and down just above it (stable root).

    The bracket is 1e-8 of the distance to the nearer boundary (0 or 1), never below
    64 ulps: the root is claimed to full double precision (docs/model.md, 'Autosomal equilibrium').
    """
    width = max(1e-8 * min(root, 1.0 - root), 64 * np.spacing(root))
    below, above = change(root - width, *args), change(root + width, *args)
    assert below > 0 and above < 0, (
        f"{root!r} is not a stable fixed point of the mpmath life cycle at {args}: "
        f"q' - q is {float(below):.3g} just below (must be > 0) and {float(above):.3g} "
        "just above (must be < 0)")


@SETTINGS
@given(rows(MU, S, H, F, NU_OR_ZERO))
def test_autosomal_equilibrium_is_finite_and_a_stable_fixed_point(params):
    """exists => q_hat in (0, 1), mean fitness and load finite in [0, 1], and q_hat is a
    stable fixed point of the life-cycle recursion (derived, mpmath)."""
    mu, s, h, F, nu = params
    cols = dict(mu=mu, s=s, h=h, F=F, nu=nu)
    with np.errstate(over="raise", divide="raise", invalid="raise"):  # no warning swallowed
        result = balance.autosomal_balance(mu, s, h, F, nu)
    assert result.q_hat.shape == mu.shape, (
        f"q_hat has shape {result.q_hat.shape}; the inputs have {mu.shape}")
    ok = result.exists
    assert np.all(np.isnan(result.q_hat[~ok])), (
        "q_hat must be NaN where no equilibrium exists: "
        + failing_rows(~ok <= np.isnan(result.q_hat), q_hat=result.q_hat, **cols))
    inside = (result.q_hat > 0) & (result.q_hat < 1)
    assert np.all(inside[ok]), (
        "q_hat must be finite in (0, 1) where it exists: "
        + failing_rows(inside | ~ok, q_hat=result.q_hat, **cols))
    for name in ("load", "mean_fitness"):
        value = getattr(result, name)
        good = np.isfinite(value) & (value >= 0) & (value <= 1)
        assert np.all(good[ok]), (
            f"{name} must be finite in [0, 1] where an equilibrium exists: "
            + failing_rows(good | ~ok, **{name: value}, **cols))
    # load = 1 - w̄ (definition, docs/model.md)
    np.testing.assert_allclose(result.load[ok] + result.mean_fitness[ok], 1.0, rtol=1e-15,
                               err_msg="load + mean fitness must be 1 (definition)")
    np.testing.assert_array_equal(balance.q_hat(mu, s, h, F, nu), result.q_hat,
                                  err_msg="q_hat() must equal autosomal_balance().q_hat")
    for i in np.flatnonzero(ok):
        assert_stable_fixed_point(autosomal_change, result.q_hat[i], mu[i], s[i], h[i], F[i], nu[i])


def quadratic_at_one(mu, s, h, F):
    """f(1) for f(q) = (1-F)(1-2h)s q² + [(1-F)hs(1+mu) + Fs] q - mu (docs/model.md)."""
    return s * ((1 - F) * (1 - h + h * mu) + F) - mu


@SETTINGS
@given(rows(MU, S, H, F))
def test_existence_condition_of_the_quadratic(params):
    """Derived from the quadratic f of docs/model.md (nu = 0), f(0) = -mu < 0:

    - f(1) > 0: f changes sign in (0, 1), so a stable interior root exists;
    - f(1) < 0 and h <= 1/2: a = (1-F)(1-2h)s >= 0 and b >= 0 make f increasing on (0, 1),
      so no root lies in (0, 1): mutation overwhelms selection;
    - f(1) < 0 and h > 1/2: roots in (0, 1) exist iff the discriminant b² + 4a·mu > 0 and
      the vertex -b/(2a) lies in (0, 1).

    Points within 1e-9 (relative) of a boundary are skipped: there rounding decides.
    """
    mu, s, h, F = params
    cols = dict(mu=mu, s=s, h=h, F=F)
    result = balance.autosomal_balance(mu, s, h, F)
    f_one = quadratic_at_one(mu, s, h, F)
    scale = s + mu
    clear = np.abs(f_one) > 1e-9 * scale
    a = (1 - F) * (1 - 2 * h) * s
    b = (1 - F) * h * s * (1 + mu) + F * s
    disc = b * b + 4 * a * mu
    with np.errstate(divide="ignore", invalid="ignore"):
        vertex = -b / (2 * a)
    clear &= (np.abs(disc) > 1e-9 * b * b) & (np.abs(vertex - 1) > 1e-9)
    positive = clear & (f_one > 0)
    assert np.all(result.exists[positive]), (
        "f(1) > 0 means a root in (0, 1), but exists is False: "
        + failing_rows(result.exists | ~positive, f_one=f_one, **cols))
    recessive_side = clear & (f_one < 0) & (h <= 0.5)
    assert not np.any(result.exists[recessive_side]), (
        "f(1) < 0 with h <= 1/2 means no root in (0, 1), but exists is True: "
        + failing_rows(~(result.exists & recessive_side), f_one=f_one, **cols))
    dominant_side = clear & (f_one < 0) & (h > 0.5)
    expected = (disc > 0) & (vertex > 0) & (vertex < 1)
    np.testing.assert_array_equal(
        result.exists[dominant_side], expected[dominant_side],
        err_msg="h > 1/2, f(1) < 0: exists must be (discriminant > 0 and vertex in (0, 1))")


@SETTINGS
@given(rows(MU, S, H, F, NU_OR_ZERO, ALPHA))
def test_x_linked_equilibrium_is_finite_and_a_stable_fixed_point(params):
    """exists => every reported frequency in (0, 1), loads and the new-mutation share in
    [0, 1], all finite; q_male is a stable fixed point of the X-linked recursion (derived,
    mpmath); q_female = (x + y)/2 and q_hat = (2 q_female + q_male)/3 (docs/model.md)."""
    mu, s, h, F, nu, alpha = params
    cols = dict(mu=mu, s=s, h=h, F=F, nu=nu, alpha=alpha)
    result = balance.x_linked_balance(mu, s, h, F, nu, alpha)
    ok = result.exists
    for name in ("q_male", "q_female", "q_hat"):
        value = getattr(result, name)
        good = np.isfinite(value) & (value > 0) & (value < 1)
        assert np.all(good[ok]), (
            f"{name} must be finite in (0, 1) where an equilibrium exists: "
            + failing_rows(good | ~ok, **{name: value}, **cols))
    for name in ("load_male", "load_female", "new_mutation_share"):
        value = getattr(result, name)
        # 1 is reached exactly (s = h = 1: every a in a newborn is new); allow its rounding
        good = np.isfinite(value) & (value >= 0) & (value <= 1 + 1e-12)
        assert np.all(good[ok]), (
            f"{name} must be finite in [0, 1] where an equilibrium exists: "
            + failing_rows(good | ~ok, **{name: value}, **cols))
    np.testing.assert_allclose(
        result.q_hat[ok], (2 * result.q_female[ok] + result.q_male[ok]) / 3, rtol=1e-14,
        err_msg="q_hat must be (2 q_female + q_male)/3 (docs/model.md)",
    )
    for i in np.flatnonzero(ok):
        assert_stable_fixed_point(
            x_linked_change, result.q_male[i], mu[i], s[i], h[i], F[i], nu[i], alpha[i]
        )


# ---------------------------------------------------------------- monotonicity


@SETTINGS
@given(rows(MU, S, H, F, NU_OR_ZERO), STEP)
def test_q_hat_rises_with_mu(params, step):
    """Derived (implicit function theorem): at the stable root G(q) = 0 with dG/dq > 0, and
    dG/dmu = p[(1-F)hs q - 1] < 0 (G = p f + nu N of infer.core.balance, N free of mu), so
    dq_hat/dmu = -(dG/dmu)/(dG/dq) > 0, with or without back mutation."""
    mu, s, h, F, nu = params
    low = balance.q_hat(mu, s, h, F, nu)
    high = balance.q_hat(mu * (1 + step), s, h, F, nu)
    both = np.isfinite(low) & np.isfinite(high)
    rises = high > low
    assert np.all(rises[both]), (
        f"q_hat must rise when mu grows by a factor {1 + step}: "
        + failing_rows(rises | ~both, before=low, after=high, mu=mu, s=s, h=h, F=F, nu=nu))


@SETTINGS
@given(rows(MU, S, H, F), STEP)
def test_q_hat_falls_with_s(params, step):
    """Derived: f(q) = A q² + B q - mu with A, B proportional to s (B's mu term included), so
    df/ds = (A q² + B q)/s = mu/s > 0 at the root and dq_hat/ds = -(mu/s)/f'(q) < 0 (nu = 0)."""
    mu, s, h, F = params
    larger = np.minimum(s * (1 + step), 1.0)
    assume(np.any(larger > s))
    low = balance.q_hat(mu, larger, h, F)
    high = balance.q_hat(mu, s, h, F)
    both = np.isfinite(low) & np.isfinite(high) & (larger > s)
    falls = low < high
    assert np.all(falls[both]), (
        "q_hat must fall when s grows: "
        + failing_rows(falls | ~both, before=high, after=low, mu=mu, s=s, larger=larger,
                       h=h, F=F))


@SETTINGS
@given(rows(MU, S, H, F), st.floats(1e-3, 0.5))
def test_q_hat_falls_with_h_while_the_allele_is_in_the_minority(params, step):
    """Derived: df/dh = (1-F)s q(1 + mu - 2q), positive while q < (1 + mu)/2, so q_hat falls
    as h rises wherever q_hat < 1/2 (nu = 0). (Above 1/2 it rises: next test.)"""
    mu, s, h, F = params
    higher = np.minimum(h + step, 1.0)
    before = balance.q_hat(mu, s, h, F)
    after = balance.q_hat(mu, s, higher, F)
    minority = np.isfinite(before) & np.isfinite(after) & (before < 0.45) & (higher > h)
    cols = dict(before=before, after=after, mu=mu, s=s, h=h, higher=higher, F=F)
    # where h and the capped h + step differ in the last digits (h within 1e-12 of 1), the
    # true change is below the root's accuracy (1e-10 relative against mpmath,
    # tests/core/test_balance.py), so the fall is checked within that accuracy
    within = after < before * (1 + 1e-10)
    assert np.all(within[minority]), (
        "q_hat < 1/2 must not rise with h (beyond 1e-10 relative): "
        + failing_rows(within | ~minority, **cols))
    clear = minority & (higher - h > 1e-6)
    falls = after < before
    assert np.all(falls[clear]), (
        "q_hat < 1/2 must fall when h rises by more than 1e-6: "
        + failing_rows(falls | ~clear, **cols))


@FEW
@given(log_uniform(-3, 0), st.floats(0.5, 0.95), st.floats(0.0, 0.3), st.floats(1e-3, 0.05))
def test_q_hat_rises_with_h_when_the_allele_is_in_the_majority(s, share, h, step):
    """Derived: with q_hat > (1 + mu)/2, df/dh = (1-F)s q(1 + mu - 2q) < 0, so q_hat rises
    with h: when a is common most a copies sit in aa, and raising h costs A (in Aa) more
    than a (marginal fitness gap w_A - w_a = s(hp + (1-h)q), d/dh = s(p - q) < 0).
    mu = share * s keeps q_hat ~ sqrt(share) > 0.7 at h = 0."""
    mu = share * s
    before = float(balance.q_hat(mu, s, h))
    after = float(balance.q_hat(mu, s, h + step))
    assume(math.isfinite(before) and math.isfinite(after))
    assume(min(before, after) > (1 + mu) / 2 + 0.05)
    assert after > before, (
        f"q_hat > 1/2 must rise with h: mu={mu:.6g}, s={s:.6g}, h {h:.6g} -> {h + step:.6g} "
        f"gave q_hat {before!r} -> {after!r}")
