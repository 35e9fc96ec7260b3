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
    assert a.in_range.all()
    np.testing.assert_allclose(a.value, mu / (h * s))
    assert np.all(np.abs(a.relative_error) < 1e-3)


def test_complete_recessive_sqrt_mu_over_s():
    """q ≈ sqrt(mu/s) for a complete recessive (Haldane 1927; Crow & Kimura 1970 — from
    memory); with h = 0 and F = 0 it is exact for this life cycle (derived: s q² = mu)."""
    mu, s = np.logspace(-9, -4, 6)[:, None], np.array([1e-3, 0.1, 1.0])
    a = autosomal_approximations(mu, s, 0.0)["sqrt(mu/s)"]
    assert a.in_range.all()
    assert np.all(np.abs(a.relative_error) < 1e-14)
    tiny_h = autosomal_approximations(1e-5, 1.0, 1e-5)["sqrt(mu/s)"]  # h << sqrt(mu/s)
    assert tiny_h.in_range and abs(tiny_h.relative_error) < 1e-2


def test_inbred_recessive_mu_over_sF():
    """q ≈ mu/(sF) when F >> q (derived from the exact quadratic; Morton, Crow & Muller
    1956, PNAS 42:855 for the linear effect of F)."""
    a = autosomal_approximations(1e-6, 1.0, 0.0, 0.05)["mu/(s(h(1-F)+F))"]
    assert a.in_range and abs(a.value - 1e-6 / 0.05) < 1e-18
    assert abs(a.relative_error) < 1e-3


def test_rare_allele_quadratic():
    """hs q + (1-2h) s q² = mu (Crow & Kimura 1970, ch. 6 — from memory) covers the whole
    h range at random mating: differs from the exact root by O(mu) only."""
    h = np.linspace(0, 0.6, 13)
    a = autosomal_approximations(1e-6, 0.1, h)["quadratic"]
    assert a.in_range.all()
    assert np.all(np.abs(a.relative_error) < 2e-6)


def test_range_flag_is_honest_over_sweep():
    """Wherever a flag says in range, the true error is within ~the tolerance (derived:
    the flag uses a first-order error estimate, so allow 50 % slack on 10 %)."""
    for name, a in autosomal_approximations(MU, S, H, F).items():
        assert a.in_range.any(), name
        assert np.all(np.abs(a.relative_error[a.in_range]) <= 1.5 * RANGE_TOLERANCE), name
    for alpha in (0.3, 1.0, 4.0):
        for name, a in x_linked_approximations(MU[..., 0], S[..., 0], H[..., 0], alpha).items():
            assert a.in_range.any(), name
            assert np.all(np.abs(a.relative_error[a.in_range]) <= 1.5 * RANGE_TOLERANCE)


def test_flag_catches_failures():
    """mu/(hs) near the recessive limit (h << sqrt(mu/s)) is flagged, and is badly off."""
    a = autosomal_approximations(1e-5, 0.1, 1e-3)["mu/(hs)"]
    assert not a.in_range and abs(a.relative_error) > 1
    r = autosomal_approximations(1e-5, 0.1, 0.3)["sqrt(mu/s)"]
    assert not r.in_range and abs(r.relative_error) > 1
    none = autosomal_approximations(1e-2, 1e-3, 0.3)["mu/(hs)"]  # no equilibrium
    assert not none.in_range and np.isnan(none.relative_error)


def test_relative_error_definition():
    """relative_error = value / exact - 1 (definition)."""
    mu, s, h = 1e-5, 0.2, np.array([0.05, 0.5, 0.9])
    exact = balance.q_hat(mu, s, h)
    for a in autosomal_approximations(mu, s, h).values():
        np.testing.assert_allclose(a.relative_error, a.value / exact - 1, rtol=1e-12)


@pytest.mark.parametrize("alpha", [0.5, 1.0, 3.0])
def test_haldane_x_linked_3mu_over_s(alpha):
    """Sons: q ≈ 3mu/s = (2u+v)/s with selection in hemizygous males only (Haldane 1935,
    J. Genet. 31:317), for every male-to-female ratio alpha."""
    for mu, s in itertools.product([1e-7, 1e-5], [0.01, 0.5, 1.0]):
        a = x_linked_approximations(mu, s, 0.0, alpha)["3mu/s"]
        assert a.in_range
        assert abs(a.relative_error) < 5 * 3 * mu / s


def test_x_linked_rare_allele_with_dominance():
    """With heterozygous daughters selected the rare-allele form (derived, see
    x_linked_approximations) holds while Haldane's 3mu/s is flagged outside its range."""
    a = x_linked_approximations(1e-6, 1.0, 1.0, 4.0)
    assert a["rare-allele"].in_range and abs(a["rare-allele"].relative_error) < 1e-4
    assert not a["3mu/s"].in_range and a["3mu/s"].relative_error > 1
