"""The propagated distribution against forward Wright–Fisher replicates of the same history.

Replicates follow the life cycle generation by generation with binomial sampling of 2Ne
genes (Fisher 1930; Wright 1931, Genetics 16:97), starting from draws of Wright's
stationary density; the propagated distribution must give the same law of the number of
copies in a sample of 20 genes drawn from the population today (Pearson's chi-square,
scipy.stats.chisquare, bins pooled to an expected count of at least 10).
"""

import numpy as np
import pytest
from scipy import special, stats

from infer.core.history.distribution import history_distributions
from infer.core.history.simulate import simulate_history
from infer.core.history.spec import Epoch, Founder, History

SAMPLE = 20
REPLICATES = 40_000


def _pooled_chi_square(observed, expected, least=10.0):
    order_obs, order_exp, acc_o, acc_e = [], [], 0.0, 0.0
    for o, e in zip(observed, expected, strict=True):
        acc_o, acc_e = acc_o + o, acc_e + e
        if acc_e >= least:
            order_obs.append(acc_o)
            order_exp.append(acc_e)
            acc_o = acc_e = 0.0
    order_obs[-1] += acc_o
    order_exp[-1] += acc_e
    expected = np.array(order_exp) * (np.sum(order_obs) / np.sum(order_exp))
    return stats.chisquare(order_obs, expected)


def _compare(history, params, seed):
    rng = np.random.default_rng(seed)
    rows = {k: np.array([v]) for k, v in params.items()}
    law = history_distributions(history, rows, times=(0,))[0]
    k = np.arange(SAMPLE + 1)
    x = law.points[0][:, None]
    expected = law.masses[0] @ (special.comb(SAMPLE, k) * x**k * (1 - x) ** (SAMPLE - k))
    replicates = simulate_history(rng, history, params, REPLICATES, times=(0,))[0]
    copies = rng.binomial(SAMPLE, replicates)
    observed = np.bincount(copies, minlength=SAMPLE + 1)
    return _pooled_chi_square(observed, expected * REPLICATES)


@pytest.mark.slow
def test_a_bottleneck_history_under_the_exact_transition():
    history = History(
        epochs=(Epoch(generations=15, values={"Ne": 30.0}),
                Epoch(generations=25, ends=15, values={"s": 0.2})),
        founder=Founder(founders=8, generations_ago=15),
    )
    params = dict(Ne=60.0, mu=5e-3, s=0.05, h=0.4, nu=1e-3)
    result = _compare(history, params, seed=11)
    assert result.pvalue > 1e-3


@pytest.mark.slow
def test_a_history_carried_by_the_diffusion():
    history = History(
        epochs=(Epoch(generations=40, values={"s": 0.0}),
                Epoch(generations=30, ends=40, values={"Ne": 1500.0})),
        founder=Founder(founders=150, generations_ago=40),
    )
    params = dict(Ne=600.0, mu=1e-3, s=0.02, h=0.5, nu=1e-4)
    result = _compare(history, params, seed=12)
    assert result.pvalue > 1e-3


def test_a_founder_frequency_starts_every_replicate_there():
    history = History(epochs=(Epoch(generations=1),),
                      founder=Founder(founders=5, generations_ago=1, frequency=0.25))
    out = simulate_history(np.random.default_rng(3), history,
                           dict(Ne=10.0, mu=1e-9, s=0.0, h=0.5, nu=1e-9), 8, times=(1, 0))
    np.testing.assert_array_equal(out[1], 0.25)
    np.testing.assert_allclose(out[0] * 20, np.rint(out[0] * 20))
