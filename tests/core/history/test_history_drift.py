"""The drift history: the allele-frequency distribution carried through epochs.

References: under neutral drift the expected heterozygosity decays as (1 - 1/(2Ne))^t
(Wright 1931, Genetics 16:97), e^(-t/(2Ne)) in the diffusion limit (Kimura 1955, PNAS
41:144); a founder sample of 2N genes multiplies it by 1 - 1/(2N) (Nei, Maruyama &
Chakraborty 1975, Evolution 29:1); a long constant epoch ends at Wright's stationary
density (Wright 1931), here computed independently by infer.core.drift.stationary
(checked against mpmath in tests/core/test_drift.py).
"""

import numpy as np
import pytest
from scipy import special

from infer.core.drift.stationary import log_binomial_probability, stationary_summary
from infer.core.history.distribution import history_distributions
from infer.core.history.spec import Epoch, Founder, History


def _rows(n=1, **given):
    base = dict(Ne=100.0, mu=1e-12, s=0.0, h=0.5, nu=1e-12)
    base.update(given)
    return {k: np.broadcast_to(np.asarray(v, dtype=float), (n,)).copy() for k, v in base.items()}


def _from_half(generations):
    """A history that puts every row at x = 1/2, ``generations`` ago."""
    return History(epochs=(Epoch(generations=generations),),
                   founder=Founder(founders=10, generations_ago=generations, frequency=0.5))


def test_neutral_heterozygosity_decays_exactly_under_the_discrete_transition():
    Ne = np.array([10.0, 37.0, 50.0, 100.0])
    out = history_distributions(_from_half(150), _rows(4, Ne=Ne), times=(150, 60, 0))
    for t in (60, 0):
        expected = 0.5 * (1 - 1 / (2 * Ne)) ** (150 - t)
        # mutation at 1e-12 adds heterozygosity of order 1e-10 from the fixed states
        np.testing.assert_allclose(out[t].heterozygosity, expected, rtol=1e-9, atol=1e-9)
        np.testing.assert_allclose(out[t].masses.sum(axis=1), 1.0, rtol=1e-10)


@pytest.mark.parametrize("Ne", [500.0, 5000.0])
def test_neutral_heterozygosity_decays_under_the_diffusion(Ne):
    t = int(Ne // 5)
    out = history_distributions(_from_half(t), _rows(1, Ne=Ne), times=(t, 0))
    ratio = out[0].heterozygosity / out[t].heterozygosity
    # the diffusion's e^(-t/2Ne) and Wright's (1 - 1/2Ne)^t differ by < 1e-4 here
    np.testing.assert_allclose(ratio, (1 - 1 / (2 * Ne)) ** t, rtol=2e-3)
    np.testing.assert_allclose(out[0].masses.sum(axis=1), 1.0, rtol=1e-10)
    assert (out[0].masses >= 0).all()


def test_a_founder_sample_scales_heterozygosity_by_one_minus_one_over_2n():
    params = _rows(3, Ne=np.array([40.0, 400.0, 4000.0]), mu=1e-3, nu=1e-3, s=0.02)
    history = History(epochs=(Epoch(generations=5),),
                      founder=Founder(founders=12, generations_ago=5))
    before = history_distributions(History(epochs=(Epoch(generations=5),)), params, times=(5,))
    after = history_distributions(history, params, times=(5,))
    np.testing.assert_allclose(after[5].heterozygosity,
                               before[5].heterozygosity * (1 - 1 / 24), rtol=1e-9)
    np.testing.assert_allclose(after[5].mean, before[5].mean, rtol=1e-9)


@pytest.mark.parametrize("Ne, rtol", [(400.0, 2e-3), (3000.0, 2e-3)])
def test_a_long_constant_epoch_ends_at_wrights_density(Ne, rtol):
    mu, s, h, nu = 2.5 / (4 * Ne), 8.0 / (2 * Ne), 0.3, 1.0 / (4 * Ne)
    generations = int(20 * Ne)
    params = _rows(1, Ne=Ne, mu=mu, s=s, h=h, nu=nu)
    out = history_distributions(_from_half(generations), params, times=(0,))[0]
    reference = stationary_summary(Ne, mu, s, h, nu)
    np.testing.assert_allclose(out.mean, reference["mean"], rtol=rtol)
    sd = np.sqrt(out.expectation(out.points**2) - out.mean**2)
    np.testing.assert_allclose(sd, reference["sd"], rtol=5 * rtol)
    # the probabilities of every count in a sample of 30 genes
    k = np.arange(31)
    exact = np.exp(log_binomial_probability(k, 30, Ne, mu, s, h, nu))
    x = out.points[0][:, None]
    ours = out.masses[0] @ (special.comb(30, k) * x**k * (1 - x) ** (30 - k))
    np.testing.assert_allclose(ours, exact, atol=2e-3, rtol=2e-2)


def test_the_discrete_transition_approaches_wrights_density_for_moderate_ne():
    # Wright's density is the diffusion limit; at Ne = 80 the discrete chain's mean is
    # within a few per cent of it (the O(1/Ne) corrections)
    Ne, mu, s, h, nu = 80.0, 2.0 / 320, 4.0 / 160, 0.5, 1.0 / 320
    out = history_distributions(_from_half(3000), _rows(1, Ne=Ne, mu=mu, s=s, h=h, nu=nu),
                                times=(0,))[0]
    np.testing.assert_allclose(out.mean, stationary_summary(Ne, mu, s, h, nu)["mean"],
                               rtol=0.03)


def test_rows_with_different_ne_are_carried_at_once_as_one_by_one():
    Ne = np.array([30.0, 99.0, 150.0, 2000.0])
    history = History(epochs=(Epoch(generations=10, values={"Ne": 60.0}),
                              Epoch(generations=10, ends=10, values={"s": 0.2})),
                      founder=Founder(founders=25, generations_ago=10))
    params = _rows(4, Ne=Ne, mu=1e-4, s=0.05, h=0.2, nu=1e-6)
    together = history_distributions(history, params, times=(0, 15))
    for i in range(4):
        alone = history_distributions(history, {k: v[i:i + 1] for k, v in params.items()},
                                      times=(0, 15))
        for t in (0, 15):
            np.testing.assert_allclose(together[t].mean[i], alone[t].mean[0], rtol=1e-10)


def test_a_large_founder_sample_is_one_generation_of_neutral_diffusion():
    # 300 genes: above the exact transition; the diffusion limit of the same draw keeps
    # the mean and scales heterozygosity by about 1 - 1/300 (Nei et al. 1975)
    params = _rows(2, Ne=np.array([400.0, 4000.0]), mu=1e-3, nu=1e-3, s=0.02)
    history = History(epochs=(Epoch(generations=5),),
                      founder=Founder(founders=150, generations_ago=5))
    before = history_distributions(History(epochs=(Epoch(generations=5),)), params, times=(5,))
    after = history_distributions(history, params, times=(5,))
    np.testing.assert_allclose(after[5].mean, before[5].mean, rtol=1e-3)
    np.testing.assert_allclose(after[5].heterozygosity,
                               before[5].heterozygosity * (1 - 1 / 300), rtol=2e-3)


def test_draws_follow_the_masses():
    # Pearson's chi-square (scipy.stats.chisquare) of 40,000 one-per-row draws
    from scipy import stats

    from infer.core.history.distribution import FrequencyDistribution

    masses = np.array([0.1, 0.0, 0.25, 0.4, 0.25])
    points = np.linspace(0.0, 0.8, 5)
    n = 40_000
    law = FrequencyDistribution(np.tile(points, (n, 1)), np.tile(masses, (n, 1)))
    drawn = law.draw(np.random.default_rng(9))
    counts = np.array([np.sum(drawn == p) for p in points])
    assert counts[1] == 0 and counts.sum() == n
    keep = masses > 0
    assert stats.chisquare(counts[keep], n * masses[keep]).pvalue > 1e-3


def test_cell_averaged_sample_probabilities_sum_to_one_and_match_wright():
    # Σ_k P(k of n) = 1 for every row; at stationarity they match the independent
    # quadrature of infer.core.drift.stationary (Wright 1931)
    from infer.core.drift.stationary import log_binomial_probability

    Ne, mu, s, h, nu = 600.0, 1e-3, 0.01, 0.5, 5e-4
    params = _rows(1, Ne=Ne, mu=mu, s=s, h=h, nu=nu)
    law = history_distributions(History(epochs=(Epoch(generations=3),)), params,
                                times=(0,))[0]
    n = 300
    probs = np.exp([law.log_binomial(k, n)[0] for k in range(n + 1)])
    np.testing.assert_allclose(probs.sum(), 1.0, rtol=1e-9)
    exact = np.exp(log_binomial_probability(np.arange(n + 1), n, Ne, mu, s, h, nu))
    np.testing.assert_allclose(probs, exact, atol=2e-3 * exact.max())


def test_a_recessive_lethal_at_small_ne_matches_a_binomial_chain_built_with_scipy():
    """At Ne = 30 the lattice reaches x = 1, where every zygote is a lethal homozygote
    (w-bar = 0). The exact chain is rebuilt here with scipy.stats.binom over the same
    life cycle (selection, mutation, then 2Ne genes drawn: Wright 1931; Crow & Kimura
    1970 for the selection step) and the masses must be finite and agree."""
    from scipy import stats

    Ne, mu, generations = 30.0, 1e-4, 8
    genes = int(2 * Ne)
    params = _rows(1, Ne=Ne, mu=mu, s=1.0, h=0.0)
    out = history_distributions(_from_half(generations), params, times=(0,))[0]
    assert np.all(np.isfinite(out.masses[0]))
    x = np.arange(genes + 1) / genes
    # after selection q_sel = pq / (1 - q^2) = q / (1 + q); at q = 1 its limit is 1
    selected = x / (1 + x)
    selected[-1] = 1.0
    gametes = selected * (1 - 1e-12) + (1 - selected) * mu
    transition = stats.binom.pmf(np.arange(genes + 1)[None, :], genes, gametes[:, None])
    masses = np.zeros(genes + 1)
    masses[genes // 2] = 1.0
    for _ in range(generations):
        masses = masses @ transition
    mean = float(masses @ x)
    np.testing.assert_allclose(out.mean[0], mean, rtol=1e-9)
