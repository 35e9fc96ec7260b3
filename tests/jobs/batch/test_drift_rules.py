"""The drift model's mu integral in ``qhat batch`` (infer/jobs/batch/likelihood.py): each
locus's own fine z rule (Simpson's rule between the spline's nodes) and the tabulated
normaliser, against a rule 40 times finer and against the locus computed alone.

References: the same integral by composite Simpson's rule on 4,801 points (its error falls
as h^4: derived, common practice for smooth integrands), and the direct quadrature of
``infer.core.drift.stationary.log_binomial_probability`` per row.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from infer.core.drift import stationary as drift
from infer.jobs.batch import likelihood
from infer.jobs.batch import run as batch

K = np.array([0.0, 1.0, 4.0, 30.0, 250.0, 2.0])
N = np.array([1e5, 1e5, 8e4, 1.2e5, 1e5, 5e3])
MU = np.array([2e-6, 5e-7, 1e-6, 3e-6, 8e-6, 1e-5])
SIGMA = np.array([0.3, 0.3, 0.8, 0.3, 0.3, 0.0])


def _settings():
    return batch.with_half_width(batch.BatchSettings(model="drift", Ne=1e4, nu=1e-8,
                                                     grid_points=120), SIGMA, K)


def test_each_locus_rule_matches_a_much_finer_rule(monkeypatch):
    settings = _settings()
    got = likelihood.drift_coarse_log_likelihood(K, N, MU, SIGMA, settings)
    monkeypatch.setattr(likelihood, "z_points", lambda sigma, k: np.full(np.shape(sigma), 4801))
    fine = likelihood.drift_coarse_log_likelihood(K, N, MU, SIGMA,
                                                  dataclasses.replace(settings, z_points=4801))
    np.testing.assert_allclose(got, fine, rtol=0, atol=1e-6,
                               err_msg="per-locus Simpson rule vs 4,801 points (log L)")


def test_a_locus_does_not_depend_on_the_others():
    """The rule's size comes from the locus's own sigma and count, so a locus with a large
    count in the same chunk leaves the others' log L unchanged (to the quadrature's
    last digits)."""
    settings = _settings()
    together = likelihood.drift_coarse_log_likelihood(K, N, MU, SIGMA, settings)
    for i in range(K.size):
        alone = likelihood.drift_coarse_log_likelihood(K[i:i + 1], N[i:i + 1], MU[i:i + 1],
                                                       SIGMA[i:i + 1], settings)
        np.testing.assert_allclose(alone[0], together[i], rtol=0, atol=1e-9,
                                   err_msg=f"locus {i} alone vs in the chunk")


def test_rule_sizes():
    """Points needed, ceil(12·sigma·sqrt(k + 1)/0.5) + 1 (derived from the spacing rule):
    2, 9, 146, 860 and 48,001, rounded up to 129, 129, 257, 1,025 and the cap 1,201."""
    sizes = likelihood.z_points(np.array([0.0, 0.3, 0.3, 0.8, 2.0]),
                                np.array([1e6, 0.0, 400.0, 2000.0, 1e6]))
    assert list(sizes) == [129, 129, 257, 1025, 1201], f"sizes {list(sizes)}"
    assert all((s - 1) % 16 == 0 for s in sizes), (
        "every size must put an even number of intervals between the 9 spline nodes")


def test_known_mu_rows_use_the_direct_probability():
    """A locus with mu known exactly (sigma 0): log L at the coarse nodes equals
    log_binomial_probability itself (normaliser tabulated or not)."""
    settings = _settings()
    got = likelihood.drift_coarse_log_likelihood(K, N, MU, SIGMA, settings)
    nodes = likelihood._drift_nodes(settings)
    two_s = 2 * np.exp(settings.log_s[nodes])
    direct = drift.log_binomial_probability(K[-1], N[-1], 1e4, MU[-1], two_s, 0.5, 1e-8)
    np.testing.assert_allclose(got[-1], direct, rtol=0, atol=1e-9,
                               err_msg="known-mu locus vs log_binomial_probability")
