"""The grouped moves draw the published proposals (infer/inference/moves.py).

References: differential evolution picks an ordered pair of distinct walkers uniformly and
scales their difference by gamma = 2.38 / sqrt(2 ndim) (ter Braak 2006, Statistics and
Computing 16:239); the stretch move draws z from g(z) ~ 1/sqrt(z) on [1/a, a], whose
distribution function is (sqrt(z) - sqrt(1/a)) / (sqrt(a) - sqrt(1/a)), with the factor
z^(ndim - 1) (Goodman & Weare 2010, CAMCoS 5:65). The checks are chi-square and
Kolmogorov-Smirnov tests from scipy.stats.
"""

from __future__ import annotations

import numpy as np
from scipy import stats

from infer.inference.moves import GroupedDifferentialEvolution, GroupedStretch


def _unused(points):
    raise AssertionError("not evaluated in these tests")


def test_differential_evolution_pairs_are_uniform_over_distinct_ordered_pairs():
    groups, m, k = 3, 4000, 5
    move = GroupedDifferentialEvolution(groups, _unused, sigma=0.0)
    index = np.arange(k, dtype=float)
    other = np.broadcast_to(np.column_stack([index, index**2]), (groups, k, 2)).copy()
    moving = np.zeros((groups, m, 2))
    q, factors = move._proposal(moving, other, np.random.RandomState(7))
    gamma = 2.38 / np.sqrt(2 * 2)
    d0, d1 = np.rint(q[..., 0] / gamma), np.rint(q[..., 1] / gamma)
    i = np.rint((d0 + d1 / d0) / 2).astype(int)  # i - j = d0, i + j = (i² - j²)/(i - j)
    j = i - d0.astype(int)
    assert np.all(i != j), "a walker was paired with itself (ter Braak 2006 needs i != j)"
    counts = np.bincount((i * k + j).ravel(), minlength=k * k).reshape(k, k)
    assert np.all(np.diag(counts) == 0), f"pairs (i, i) were drawn: {np.diag(counts)}"
    off_diagonal = counts[~np.eye(k, dtype=bool)]
    pvalue = stats.chisquare(off_diagonal).pvalue
    assert pvalue > 1e-3, (
        f"ordered pairs are not uniform over the {k * (k - 1)} distinct pairs: chi-square "
        f"p = {pvalue:.3g}; counts\n{counts}")
    assert np.all(factors == 0), "differential evolution is symmetric: log factors must be 0"


def test_differential_evolution_uses_only_the_walkers_of_its_own_block():
    move = GroupedDifferentialEvolution(2, _unused, sigma=0.0)
    other = np.stack([np.zeros((6, 1)), np.arange(6.0)[:, None] * 1e3])
    q, _ = move._proposal(np.zeros((2, 50, 1)), other, np.random.RandomState(1))
    # block 0's other half all sit at 0: a proposal from its own block adds no difference
    assert np.all(q[0] == 0), "block 0 moved: it used walkers of block 1"
    assert np.all(q[1] != 0), "block 1 did not move: it used walkers of block 0"


def test_stretch_factor_follows_goodman_weare():
    a, groups, m, ndim = 2.0, 2, 20_000, 3
    move = GroupedStretch(groups, _unused, a=a)
    other = np.zeros((groups, 7, ndim))
    moving = np.ones((groups, m, ndim))
    q, log_factor = move._proposal(moving, other, np.random.RandomState(3))
    z = q[..., 0]
    # from 1 towards 0: the proposal is z·1, the same z in every coordinate
    assert np.allclose(q, z[..., None]), "the stretch must scale every coordinate by one z"
    assert np.allclose(log_factor, (ndim - 1) * np.log(z)), (
        "the log acceptance factor must be (ndim - 1) log z (Goodman & Weare 2010)")

    def cdf(x):
        return (np.sqrt(x) - np.sqrt(1 / a)) / (np.sqrt(a) - np.sqrt(1 / a))

    assert z.min() >= 1 / a and z.max() <= a, f"z outside [1/a, a]: {z.min()}..{z.max()}"
    pvalue = stats.kstest(z.ravel(), cdf).pvalue
    assert pvalue > 1e-3, f"z does not follow g(z) ~ 1/sqrt(z) on [1/a, a]: KS p = {pvalue:.3g}"


def _shifted_proposal(groups):
    # A deliberately imperfect proposal: a wide normal kernel off the target's centre,
    # plus a Student-t component.
    from infer.inference.proposal import MixtureProposal

    return [MixtureProposal(means=np.array([[0.7]]), cholesky=np.array([[[1.6]]]), df=4.0,
                            log_weights=np.log([0.8, 0.2]), t_mean=np.array([-0.5]),
                            t_cholesky=np.array([[2.0]])) for _ in range(groups)]


def test_independence_factor_is_the_ratio_of_proposal_densities():
    # Independence Metropolis-Hastings accepts with pi(q) g(x) / (pi(x) g(q))
    # (Tierney 1994, Annals of Statistics 22:1701).
    from infer.inference.moves import GroupedIndependence

    proposals = _shifted_proposal(2)
    move = GroupedIndependence(proposals, _unused)
    current = np.random.default_rng(1).normal(size=(2, 9, 1))
    proposed, factors = move._proposal(current, np.random.RandomState(2))
    for g in range(2):
        expected = (proposals[g].log_density(current[g])
                    - proposals[g].log_density(proposed[g]))
        assert np.allclose(factors[g], expected), "log factor must be log g(x) - log g(q)"


def test_independence_move_leaves_the_target_invariant():
    # Sampled with the independence move alone from an off-centre proposal, the chain's
    # draws follow the target N(1, 0.5^2) (scipy.stats.norm, KS test on thinned draws).
    from infer.inference.emcee_loader import load_emcee
    from infer.inference.moves import GroupedIndependence

    emcee = load_emcee()

    def evaluate(points):
        return stats.norm.logpdf(points[:, 0], 1.0, 0.5), None

    groups, walkers = 2, 20
    move = GroupedIndependence(_shifted_proposal(groups), evaluate)
    sampler = emcee.EnsembleSampler(groups * walkers, 1, lambda p: evaluate(p)[0],
                                    vectorize=True, moves=[(move, 1.0)])
    sampler._random = np.random.RandomState(3)
    start = np.random.default_rng(4).normal(5.0, 0.1, size=(groups * walkers, 1))
    state = emcee.State(start, evaluate(start)[0])
    sampler.run_mcmc(state, 3000, progress=False)
    draws = sampler.get_chain()[500::10].ravel()
    pvalue = stats.kstest(draws, stats.norm(1.0, 0.5).cdf).pvalue
    assert pvalue > 1e-3, f"independence draws do not follow N(1, 0.5^2): KS p = {pvalue:.3g}"


def test_independence_factor_is_exact_for_walkers_moved_by_other_moves():
    # The move keeps log g of walkers it placed itself; a walker another move has taken
    # elsewhere meanwhile must be evaluated again. Whatever the cache holds, the factor
    # must equal log g(x) - log g(q) computed afresh (Tierney 1994, Annals of Statistics
    # 22:1701: the Metropolis-Hastings ratio of an independence proposal).
    from infer.inference.emcee_loader import load_emcee
    from infer.inference.moves import GroupedIndependence

    emcee = load_emcee()
    groups, walkers = 2, 6
    proposals = _shifted_proposal(groups)
    move = GroupedIndependence(proposals, lambda p: (stats.norm.logpdf(p[:, 0]), None))
    rng = np.random.default_rng(5)
    coords = rng.normal(size=(groups * walkers, 1))
    state = emcee.State(coords, stats.norm.logpdf(coords[:, 0]))

    class Model:
        random = np.random.RandomState(6)

    for step in range(6):
        if step % 2:  # another move shifts some walkers between two independence moves
            shifted = rng.random(groups * walkers) < 0.5
            state.coords[shifted] += rng.normal(size=(shifted.sum(), 1))
            state.log_prob[shifted] = stats.norm.logpdf(state.coords[shifted, 0])
        before = state.coords.copy().reshape(groups, walkers, 1)
        cached = move._current_log_density(before)
        fresh = np.stack([proposals[g].log_density(before[g]) for g in range(groups)])
        assert np.allclose(cached, fresh, rtol=0, atol=1e-12), (
            f"step {step}: the kept log g of the current walkers must equal log g afresh")
        state, _ = move.propose(Model, state)
