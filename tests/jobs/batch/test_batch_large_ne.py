"""``qhat batch --model drift`` at a huge Ne gives the deterministic model's answer.

As Ne grows Wright's density concentrates on the balance (Wright 1931; Ewens 2004,
Mathematical Population Genetics, §4.5), so each locus's posterior of s_het under the drift
model tends to the deterministic one; the two models' balance differs by O(mu) relative (the
diffusion drops the recursion's factor 1 + mu, docs/model.md, 'Finite populations (drift)'),
so the quantiles agree to 1e-3 relative here (derived tolerance: mu <= 1e-5 moves the
balance by < 1e-5; the two models integrate an uncertain mu by different rules, a 9-node
spline in ln mu against the lattice rule of infer/jobs/batch/run.py, ~2e-4 apart).
"""

from __future__ import annotations

import numpy as np
import pytest

from infer.jobs.batch import run as batch

LOCI = dict(observed=[3, 0, 40, 1], sampled=[1000, 1000, 20000, 5000],
            mu=[1e-5, 1e-6, 3e-6, 2e-6], sigma=[0.0, 0.0, 0.3, 0.0])


@pytest.mark.parametrize("Ne", [1e30, 1e300])
def test_drift_at_huge_ne_is_the_deterministic_posterior(Ne):
    args = (LOCI["observed"], LOCI["sampled"], LOCI["mu"], LOCI["sigma"])
    deterministic = batch.analyse(*args, batch.BatchSettings(nu=1e-8))
    drift = batch.analyse(*args, batch.BatchSettings(model="drift", Ne=Ne, nu=1e-8))
    for key in ("median", "lower", "upper"):
        got = np.asarray(drift.loci[key], dtype=float)
        expected = np.asarray(deterministic.loci[key], dtype=float)
        np.testing.assert_allclose(got, expected, rtol=1e-3, err_msg=(
            f"Ne = {Ne:g}: drift-model s_het {key} must be the deterministic one"))
    # the expected count is n·E[x] at the posterior median: n·(balance at that s_het)
    expected = np.asarray(drift.loci["expected"], dtype=float)
    balance = np.asarray(LOCI["sampled"]) * np.asarray(LOCI["mu"]) / np.asarray(
        drift.loci["median"], dtype=float)
    np.testing.assert_allclose(expected, balance, rtol=1e-4, err_msg=(
        f"Ne = {Ne:g}: expected count must be n·mu/s_het at h = 1/2 (x̂ = mu/(h·2s_het))"))
