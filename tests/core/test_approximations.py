"""Classic approximations against the exact root, each check with its published source."""

import itertools

import numpy as np
import pytest

from infer.core import balance
from infer.core.approximations import (
    RANGE_TOLERANCE,
    autosomal_approximations,
    x_linked_approximations,
)

MU = np.logspace(-9, -2, 15)[:, None, None, None]
S = np.logspace(-4, 0, 9)[None, :, None, None]
H = np.array([0, 1e-4, 1e-3, 1e-2, 0.05, 0.1, 0.2, 0.3, 0.5, 0.7, 0.9, 1.0])[None, None, :, None]
F = np.array([0.0, 1e-3, 0.01, 0.05, 0.2])[None, None, None, :]


def test_partial_dominance_mu_over_hs():
    """q ≈ mu/(hs) when hs >> sqrt(mu s) (Haldane 1927, Proc. Camb. Phil. Soc. 23:838;
    Crow & Kimura 1970, An Introduction to Population Genetics Theory, ch. 6 — from memory)."""
    mu, s, h = 1e-7, np.array([0.01, 0.1, 1.0])[:, None], np.array([0.1, 0.3, 0.5, 1.0])
    a = autosomal_approximations(mu, s, h)["mu/(hs)"]
    assert a.in_range.all(), f"mu/(hs) must be in range for h >= 0.1 >> sqrt(mu/s); {a.in_range}"
    np.testing.assert_allclose(a.value, mu / (h * s), err_msg="mu/(hs) value (closed form)")
    assert np.all(np.abs(a.relative_error) < 1e-3), (
        f"mu/(hs) must be within 0.1 % of the exact root here; errors {a.relative_error}")


def test_complete_recessive_sqrt_mu_over_s():
    """q ≈ sqrt(mu/s) for a complete recessive (Haldane 1927; Crow & Kimura 1970 — from
    memory); with h = 0 and F = 0 it is exact for this life cycle (derived: s q² = mu)."""
    mu, s = np.logspace(-9, -4, 6)[:, None], np.array([1e-3, 0.1, 1.0])
    a = autosomal_approximations(mu, s, 0.0)["sqrt(mu/s)"]
    assert a.in_range.all(), f"sqrt(mu/s) must be in range at h = 0, F = 0; {a.in_range}"
    assert np.all(np.abs(a.relative_error) < 1e-14), (
        f"sqrt(mu/s) is exact at h = 0, F = 0 (derived); errors {a.relative_error}")
    tiny_h = autosomal_approximations(1e-5, 1.0, 1e-5)["sqrt(mu/s)"]  # h << sqrt(mu/s)
    assert tiny_h.in_range and abs(tiny_h.relative_error) < 1e-2, (
        f"h = 1e-5 << sqrt(mu/s) = 3e-3: sqrt(mu/s) must be in range and within 1 %; got "
        f"in_range {tiny_h.in_range}, error {tiny_h.relative_error}")


def test_inbred_recessive_mu_over_sF():
    """q ≈ mu/(sF) when F >> q (derived from the exact quadratic; Morton, Crow & Muller
    1956, PNAS 42:855 for the linear effect of F)."""
    a = autosomal_approximations(1e-6, 1.0, 0.0, 0.05)["mu/(s(h(1-F)+F))"]
    assert a.in_range and abs(a.value - 1e-6 / 0.05) < 1e-18, (
        f"F = 0.05 >> q: mu/(sF) = 2e-5 must be in range; got value {a.value}, "
        f"in_range {a.in_range}")
    assert abs(a.relative_error) < 1e-3, f"mu/(sF) error {a.relative_error} must be < 0.1 %"


def test_rare_allele_quadratic():
    """hs q + (1-2h) s q² = mu (Crow & Kimura 1970, ch. 6 — from memory) covers the whole
    h range at random mating: differs from the exact root by O(mu) only."""
    h = np.linspace(0, 0.6, 13)
    a = autosomal_approximations(1e-6, 0.1, h)["quadratic"]
    assert a.in_range.all(), f"the quadratic must be in range for h in [0, 0.6]; {a.in_range}"
    assert np.all(np.abs(a.relative_error) < 2e-6), (
        f"the quadratic must differ from the exact root by O(mu) only; errors {a.relative_error}")


def test_range_flag_is_honest_over_sweep():
    """Wherever a flag says in range, the true error is within ~the tolerance (derived:
    the flag uses a first-order error estimate, so allow 50 % slack on 10 %)."""
    for name, a in autosomal_approximations(MU, S, H, F).items():
        assert a.in_range.any(), f"{name} is never in range over the sweep"
        worst = np.max(np.abs(a.relative_error[a.in_range]))
        assert worst <= 1.5 * RANGE_TOLERANCE, (
            f"{name} flagged in range with error {worst:.3g} > 1.5 x {RANGE_TOLERANCE}")
    for alpha in (0.3, 1.0, 4.0):
        for name, a in x_linked_approximations(MU[..., 0], S[..., 0], H[..., 0], alpha).items():
            assert a.in_range.any(), f"{name} (alpha {alpha}) is never in range over the sweep"
            worst = np.max(np.abs(a.relative_error[a.in_range]))
            assert worst <= 1.5 * RANGE_TOLERANCE, (
                f"{name} (alpha {alpha}) flagged in range with error {worst:.3g} > 1.5 x "
                f"{RANGE_TOLERANCE}")


def test_flag_catches_failures():
    """mu/(hs) near the recessive limit (h << sqrt(mu/s)) is flagged, and is badly off."""
    a = autosomal_approximations(1e-5, 0.1, 1e-3)["mu/(hs)"]
    assert not a.in_range and abs(a.relative_error) > 1, (
        f"h = 1e-3 << sqrt(mu/s) = 0.01: mu/(hs) = 0.1 must be flagged and far off the exact "
        f"≈ sqrt(mu/s); got in_range {a.in_range}, error {a.relative_error}")
    r = autosomal_approximations(1e-5, 0.1, 0.3)["sqrt(mu/s)"]
    assert not r.in_range and abs(r.relative_error) > 1, (
        f"h = 0.3 >> sqrt(mu/s): sqrt(mu/s) = 0.01 must be flagged and far off mu/(hs) ≈ 3e-4; "
        f"got in_range {r.in_range}, error {r.relative_error}")
    none = autosomal_approximations(1e-2, 1e-3, 0.3)["mu/(hs)"]  # no equilibrium
    assert not none.in_range and np.isnan(none.relative_error), (
        f"without an equilibrium no approximation is in range and the error is NaN; got "
        f"in_range {none.in_range}, error {none.relative_error}")


def test_relative_error_definition():
    """relative_error = value / exact - 1 (definition)."""
    mu, s, h = 1e-5, 0.2, np.array([0.05, 0.5, 0.9])
    exact = balance.q_hat(mu, s, h)
    for name, a in autosomal_approximations(mu, s, h).items():
        np.testing.assert_allclose(a.relative_error, a.value / exact - 1, rtol=1e-12,
                                   err_msg=f"{name}: relative_error must be value/exact - 1")


@pytest.mark.parametrize("alpha", [0.5, 1.0, 3.0])
def test_haldane_x_linked_3mu_over_s(alpha):
    """Sons: q ≈ 3mu/s = (2u+v)/s with selection in hemizygous males only (Haldane 1935,
    J. Genet. 31:317), for every male-to-female ratio alpha."""
    for mu, s in itertools.product([1e-7, 1e-5], [0.01, 0.5, 1.0]):
        a = x_linked_approximations(mu, s, 0.0, alpha)["3mu/s"]
        assert a.in_range, f"3mu/s must be in range at h = 0 (mu {mu}, s {s}, alpha {alpha})"
        assert abs(a.relative_error) < 5 * 3 * mu / s, (
            f"3mu/s error {a.relative_error:.3g} must be O(3mu/s) = {3 * mu / s:.3g} (mu {mu}, "
            f"s {s}, alpha {alpha})")


def test_x_linked_rare_allele_with_dominance():
    """With heterozygous daughters selected the rare-allele form (derived, see
    x_linked_approximations) holds while Haldane's 3mu/s is flagged outside its range.

    At s = h = 1 every a in a zygote dies, so every a in a son is new: q_male ≈ mu_f =
    3mu/(2 + alpha) = mu/2 at alpha = 4 (derived), and 3mu/s is 6 times too large."""
    a = x_linked_approximations(1e-6, 1.0, 1.0, 4.0)
    rare = a["rare-allele"]
    assert rare.in_range and abs(rare.relative_error) < 1e-4, (
        f"rare-allele form must be in range and within 1e-4; got in_range {rare.in_range}, "
        f"error {rare.relative_error}")
    haldane = a["3mu/s"]
    assert not haldane.in_range and haldane.relative_error > 1, (
        f"3mu/s must be flagged and about 5 (= 6 - 1) too large; got in_range "
        f"{haldane.in_range}, error {haldane.relative_error}")
