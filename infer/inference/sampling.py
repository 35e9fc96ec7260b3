"""Run emcee ensembles until the posterior is converged.

Several ensembles are started independently (from different prior draws) and run side by
side. A run has three phases:

1. **Exploration.** Differential-evolution and stretch moves from the starting points, in
   blocks of ``first_block`` steps. After each block, walkers whose best recent log
   density lies more than :func:`stuck_threshold` below their ensemble's median are moved
   onto typical walkers of the same ensemble (a stuck walker averaged into the draws puts
   a far tail where the posterior has none).
2. **Adaptation.** Each ensemble fits a mixture density to its own recent draws
   (``infer.inference.proposal``) and samples with an independence proposal from it
   (mixed with differential evolution), ``adapt_rounds`` times; the mixture follows a
   curved ridge, which the affine-invariant moves cross slowly. These steps are discarded.
3. **Sampling**, with the mixtures fixed (so the chain is a valid Markov chain), checked
   after each block on the whole chain of this phase. The run stops when, for every free
   parameter,

   - the bulk effective sample size over all ensembles is at least ``target_ess``,
   - split R-hat across ensembles (each ensemble one chain, its walkers laid end to end,
     split in half) is below ``max_r_hat``,
   - the chain is longer than ``tau_multiple`` integrated autocorrelation times
     (Foreman-Mackey et al. 2013, PASP 125:306: "about 50 autocorrelation times"),
   - the autocorrelation time moved by at most ``tau_stability`` (relative) since the
     previous check (a short chain underestimates it), and
   - no walker is stuck (a stuck walker restarts the phase, at most twice).

Walkers of one ensemble are not independent chains (LIBRARIES.md: treating them as chains
inflates R-hat), so a chain is one ensemble: its walkers' kept draws laid end to end
(walker-major), where the lag structure of the sequence is that of a single walker. The
effective sample sizes and R-hat are computed on exactly these (ensemble, draw) arrays,
the layout of ``SamplingRun.z`` and of posterior.nc, so arviz gives the same numbers from
the file. No move passes information between ensembles.

The first ``ceil(burn_in_taus * tau_max)`` steps of the sampling phase are discarded as
well; the kept draws are thinned by ``max(1, floor(tau_min / 2))`` steps.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from infer.inference import diagnostics

__all__ = ["SamplerSettings", "SamplingRun", "run_to_convergence"]


@dataclass(frozen=True)
class SamplerSettings:
    """Settings of the convergence loop.

    Parameters
    ----------
    walkers : int
        Walkers per ensemble (raised to ``2 * ndim + 2`` when smaller).
    ensembles : int
        Independently started ensembles, compared by R-hat.
    target_ess : float
        Bulk effective sample size required of every free parameter.
    max_r_hat : float
        Split R-hat bound.
    tau_multiple : float
        Chains must be longer than this many autocorrelation times.
    first_block, max_steps : int
        Steps per ensemble in each exploration block, and the cap on the total.
    burn_in_taus : float
        Steps discarded at the start of the sampling phase, in autocorrelation times.
    adapt_rounds, adapt_steps : int
        Fits of the independence proposals before the sampling phase, and the steps run
        after each fit.
    check_block : int
        Steps of the first block of the sampling phase (later blocks are sized from the
        estimates).
    tau_stability : float
        Largest relative change of an autocorrelation time between two checks.
    """

    walkers: int = 48
    ensembles: int = 4
    target_ess: float = 1000.0
    max_r_hat: float = 1.01
    tau_multiple: float = 50.0
    first_block: int = 200
    max_steps: int = 40_000
    burn_in_taus: float = 3.0
    adapt_rounds: int = 2
    adapt_steps: int = 60
    check_block: int = 100
    tau_stability: float = 0.1


@dataclass
class SamplingRun:
    """The kept draws of a run and its diagnostics.

    Attributes
    ----------
    z : ndarray, shape (chains, draws, ndim)
        Kept draws in unconstrained coordinates, walker-major within each chain.
    blobs : ndarray, shape (chains, draws, nblobs)
        The extra columns the log-probability function returned (per-observation
        log-likelihoods), aligned with ``z``.
    log_prob : ndarray, shape (chains, draws)
    trace : ndarray, shape (chains, steps, walkers, ndim)
        Time-ordered kept draws (thinned), for trace plots.
    moved_walkers : int
        Stuck walkers moved onto typical ones (all phases).
    exploration_steps : int
        Steps of the exploration and adaptation phases.
    """

    z: np.ndarray
    blobs: np.ndarray
    log_prob: np.ndarray
    trace: np.ndarray
    converged: bool
    walkers: int
    steps: int
    burn_in: int
    thin: int
    autocorr_time: np.ndarray
    ess_bulk: np.ndarray
    ess_tail: np.ndarray
    r_hat: np.ndarray
    seconds: float
    evaluations: int
    messages: list[str] = field(default_factory=list)
    moved_walkers: int = 0
    exploration_steps: int = 0


def _sampler(emcee, nwalkers, ndim, log_prob, moves, random):
    sampler = emcee.EnsembleSampler(nwalkers, ndim, log_prob, vectorize=True, moves=moves)
    # emcee keeps a legacy RandomState and ignores a Generator (LIBRARIES.md); one state
    # is shared by the phases so that the whole run follows from the seed.
    sampler._random = random
    return sampler


def _exploring_moves(groups, evaluate):
    from infer.inference.moves import GroupedDifferentialEvolution, GroupedStretch

    # Differential-evolution moves (ter Braak 2006, Statistics and Computing 16:239)
    # mix faster than the default stretch move on correlated balance posteriors.
    return [(GroupedDifferentialEvolution(groups, evaluate), 0.8),
            (GroupedStretch(groups, evaluate), 0.2)]


def _sampling_moves(groups, evaluate, proposals):
    from infer.inference.moves import (GroupedDifferentialEvolution, GroupedIndependence,
                                       GroupedStretch)

    if proposals is None:
        return _exploring_moves(groups, evaluate)
    return [(GroupedIndependence(proposals, evaluate), 0.75),
            (GroupedDifferentialEvolution(groups, evaluate), 0.2),
            (GroupedStretch(groups, evaluate), 0.05)]


def stuck_threshold(ndim: int) -> float:
    """Log-density gap below the ensemble's median that marks a walker as stuck.

    Half the chi-square(ndim) quantile at 1 - 1e-6, and at least 10: for a Gaussian
    posterior a walker falls that far below the maximum with probability 1e-6 per step
    (common practice: twice the log-density drop from the mode is chi-square distributed
    with ndim degrees of freedom near a regular mode).
    """
    from scipy.special import gammaincinv

    return max(10.0, float(gammaincinv(ndim / 2.0, 1.0 - 1e-6)))


def stuck_walkers(log_prob: np.ndarray, ndim: int) -> np.ndarray:
    """Walkers stuck far below their ensemble, from recent log densities.

    Parameters
    ----------
    log_prob : ndarray, shape (ensembles, steps, walkers)
        Recent log densities of each ensemble's walkers.
    ndim : int

    Returns
    -------
    ndarray of bool, shape (ensembles, walkers)
        True where a walker's best recent value is more than :func:`stuck_threshold`
        below the median of its ensemble.
    """
    median = np.median(log_prob.reshape(log_prob.shape[0], -1), axis=1)
    best = log_prob.max(axis=1)
    return best < median[:, None] - stuck_threshold(ndim)


def _relocate(state, stuck: np.ndarray, walkers: int, random) -> int:
    """Move stuck walkers onto walkers of their own ensemble at or above its median."""
    moved = 0
    for e, row in enumerate(stuck):
        if not row.any():
            continue
        index = e * walkers + np.arange(walkers)
        lp = state.log_prob[index]
        good = index[lp >= np.median(lp)]
        targets = good[random.randint(len(good), size=int(row.sum()))]
        bad = index[row]
        state.coords[bad] = state.coords[targets]
        state.log_prob[bad] = state.log_prob[targets]
        if state.blobs is not None:
            state.blobs[bad] = state.blobs[targets]
        moved += len(bad)
    return moved


def _autocorr_times(emcee, chain: np.ndarray) -> np.ndarray:
    """Integrated autocorrelation time per parameter of one ensemble's (steps, walkers, ndim).

    A walker that has not moved at all makes emcee's estimate NaN; the chain's length is
    used then, so that the run continues rather than stopping on an unknown tau.
    """
    steps = chain.shape[0]
    with np.errstate(invalid="ignore", divide="ignore"):
        tau = np.asarray(emcee.autocorr.integrated_time(chain, tol=0, quiet=True), dtype=float)
    return np.where(np.isfinite(tau), tau, float(steps))


def _diagnose(kept: np.ndarray, constrain=None, full: bool = True):
    """ESS (bulk, tail) and split R-hat per parameter for kept (chains, steps, walkers, ndim).

    Computed on the (chain, walker-major draw) arrays of ``SamplingRun.z``, after
    ``constrain`` when given (the folded R-hat is not invariant under a change of scale).
    Without ``full`` only the bulk ESS is computed (the tail ESS and R-hat are NaN): a
    check that fails on length or bulk ESS alone needs no more.
    """
    chains, steps, walkers, ndim = kept.shape
    walker_major = kept.transpose(0, 2, 1, 3).reshape(chains, walkers * steps, ndim)
    if constrain is not None:
        walker_major = np.asarray(constrain(walker_major.reshape(-1, ndim)),
                                  dtype=float).reshape(walker_major.shape)
    ess_bulk = np.empty(ndim)
    ess_tail = np.empty(ndim)
    r_hat = np.empty(ndim)
    ess_tail[:] = r_hat[:] = np.nan
    for j in range(ndim):
        ess_bulk[j] = diagnostics.ess_bulk(walker_major[..., j])
        if full:
            ess_tail[j] = diagnostics.ess_tail(walker_major[..., j])
            r_hat[j] = diagnostics.r_hat(walker_major[..., j])
    return ess_bulk, ess_tail, r_hat


def _fit_proposals(chains: np.ndarray, rng: np.random.Generator):
    """One mixture per ensemble from its own draws (groups, steps, walkers, ndim), or None."""
    from infer.inference.proposal import fit_mixture

    ndim = chains.shape[-1]
    try:
        return [fit_mixture(c.reshape(-1, ndim), rng) for c in chains]
    except (ValueError, np.linalg.LinAlgError):
        return None


def run_to_convergence(
    log_prob: Callable[[np.ndarray], np.ndarray],
    initial: Callable[[np.random.Generator, int], np.ndarray],
    ndim: int,
    rng: np.random.Generator,
    settings: SamplerSettings = SamplerSettings(),
    progress: Callable[[int, int], None] | None = None,
    constrain: Callable[[np.ndarray], np.ndarray] | None = None,
) -> SamplingRun:
    """Sample a vectorised log density with emcee until the convergence criteria hold.

    Parameters
    ----------
    log_prob : callable
        Takes an array (n, ndim) of unconstrained points and returns (n, 1 + nblobs):
        column 0 the log posterior, the rest kept as per-point blobs.
    initial : callable
        ``initial(rng, n)`` returns n starting points (n, ndim) with finite log posterior.
    ndim : int
        Number of free parameters.
    rng : numpy.random.Generator
        The only source of randomness; every ensemble is seeded from it.
    settings : SamplerSettings
    progress : callable, optional
        Called as ``progress(steps_done, max_steps)`` after each block. If it also has a
        method ``ess(ess_bulk, target_ess)``, that is called after each convergence check
        of the sampling phase with the smallest bulk ESS over the free parameters (so a
        progress bar can show how far the run is from its target, and when it will get
        there).
    constrain : callable, optional
        Maps unconstrained points (n, ndim) to the values reported (n, ndim), e.g. the
        parameters on their own scale; ESS and R-hat are computed on these, so that they
        equal arviz's on the stored parameter draws. Default: the unconstrained values.

    Returns
    -------
    SamplingRun
    """
    from infer.inference.emcee_loader import load_emcee

    emcee = load_emcee()
    walkers = max(settings.walkers, 2 * ndim + 2)
    walkers += walkers % 2
    evaluations = 0

    def evaluate(points: np.ndarray):
        """(log posterior, blob columns or None) of an (n, ndim) array, -inf where invalid."""
        nonlocal evaluations
        evaluations += len(points)
        out = np.asarray(log_prob(points), dtype=float)
        lp = np.where(np.isfinite(out[:, 0]), out[:, 0], -np.inf)
        return lp, (out[:, 1:] if out.shape[1] > 1 else None)

    def for_emcee(points):
        # emcee reads column 0 as the log probability and the rest as blobs; the moves
        # call ``evaluate`` directly, so emcee calls this only if it lacks a state.
        lp, extra = evaluate(points)
        return lp if extra is None else np.column_stack([lp, extra])

    groups = settings.ensembles
    nwalkers = walkers * groups
    random = np.random.RandomState(np.random.MT19937(int(rng.integers(2**32))))
    coords = np.concatenate([initial(rng, walkers) for _ in range(groups)])
    state = emcee.State(coords, *evaluate(coords))

    def by_ensemble(values: np.ndarray) -> np.ndarray:
        """(steps, groups * walkers, ...) -> (groups, steps, walkers, ...)."""
        steps_, _, *rest = values.shape
        return np.moveaxis(values.reshape(steps_, groups, walkers, *rest), 1, 0)

    started = time.perf_counter()
    report_ess = getattr(progress, "ess", None)
    steps = 0
    messages: list[str] = []
    moved = 0

    def advance(sampler, state, n):
        nonlocal steps
        state = sampler.run_mcmc(state, n, progress=False)
        steps += n
        if progress is not None:
            progress(steps, settings.max_steps)
        return state

    def settle(sampler, state, n):
        """Run n steps, then move walkers stuck far below their ensemble; True if none."""
        nonlocal moved
        state = advance(sampler, state, n)
        recent = by_ensemble(sampler.get_log_prob()[-max(n // 2, 1):])
        stuck = stuck_walkers(recent, ndim)
        moved += _relocate(state, stuck, walkers, random)
        return state, not stuck.any()

    # 1. Exploration: differential evolution from the starting points, with stuck walkers
    #    moved onto their ensemble's typical ones, until no walker is stuck.
    explorer = _sampler(emcee, nwalkers, ndim, for_emcee, _exploring_moves(groups, evaluate),
                        random)
    for _ in range(4):
        n = min(settings.first_block, settings.max_steps - steps)
        if n <= 0:
            break
        state, clean = settle(explorer, state, n)
        if clean:
            break
    pilot = by_ensemble(explorer.get_chain()[-max(settings.first_block // 2, 1):])

    # 2. Adaptation: each ensemble fits an independence proposal to its own recent draws,
    #    samples with it for a while, and fits again; these steps are discarded too.
    proposals = None
    for _ in range(settings.adapt_rounds):
        n = min(settings.adapt_steps, settings.max_steps - steps)
        if n <= 0:
            break
        proposals = _fit_proposals(pilot, rng)
        adapter = _sampler(emcee, nwalkers, ndim, for_emcee,
                           _sampling_moves(groups, evaluate, proposals), random)
        state, _ = settle(adapter, state, n)
        pilot = by_ensemble(adapter.get_chain())
    if steps < settings.max_steps and settings.adapt_rounds:
        proposals = _fit_proposals(pilot, rng)
    exploration = steps

    # 3. Sampling with the proposals fixed, checked after each block on the whole chain.
    converged = False
    restarts = 0
    previous_tau = None
    while True:
        sampler = _sampler(emcee, nwalkers, ndim, for_emcee,
                           _sampling_moves(groups, evaluate, proposals), random)
        main_steps = 0
        block = settings.check_block
        restart = False
        while True:
            block = min(block, settings.max_steps - steps)
            if block <= 0:
                break
            state = advance(sampler, state, block)
            main_steps += block
            chains = by_ensemble(sampler.get_chain())  # (ensembles, steps, walkers, ndim)
            tau = np.max([_autocorr_times(emcee, c) for c in chains], axis=0)
            discard = min(int(math.ceil(settings.burn_in_taus * tau.max())), main_steps // 2)
            thin = max(1, int(tau.min() // 2))
            kept = chains[:, discard::thin]
            stuck = stuck_walkers(by_ensemble(sampler.get_log_prob()[discard:]), ndim)
            if stuck.any() and restarts < 2:
                moved += _relocate(state, stuck, walkers, random)
                restarts += 1
                restart = True
                break
            long_enough = (main_steps - discard) > settings.tau_multiple * tau
            stable = (previous_tau is not None
                      and np.all(np.abs(tau - previous_tau) <= settings.tau_stability * tau))
            previous_tau = tau
            ess_bulk, ess_tail, r_hat = _diagnose(kept, constrain, full=False)
            # the tail ESS and R-hat only where they can decide (or the run ends here)
            if ((long_enough.all() and stable and (ess_bulk >= settings.target_ess).all())
                    or steps >= settings.max_steps):
                ess_bulk, ess_tail, r_hat = _diagnose(kept, constrain)
            if report_ess is not None:
                report_ess(float(np.min(ess_bulk)), settings.target_ess)
            ok = ((ess_bulk >= settings.target_ess) & (r_hat < settings.max_r_hat)
                  & long_enough & ~stuck.any())
            if ok.all() and stable:
                converged = True
                break
            if steps >= settings.max_steps:
                break
            # Enough steps for the slowest criterion, judged from the current estimates.
            need_taus = settings.tau_multiple * tau.max() + discard
            need_ess = main_steps * settings.target_ess / max(ess_bulk.min(), 1.0)
            target = max(need_taus, need_ess) * 1.1
            block = int(max(min(target, 4 * main_steps) - main_steps,
                            settings.check_block // 2))
        if not restart:
            break
        previous_tau = None

    if main_steps == 0:
        # the step cap ended the run before the sampling phase: report the exploration
        sampler, main_steps = explorer, explorer.iteration
        chains = by_ensemble(sampler.get_chain())
        tau = np.max([_autocorr_times(emcee, c) for c in chains], axis=0)
        discard, thin = main_steps // 2, 1
        kept = chains[:, discard::thin]
        ess_bulk, ess_tail, r_hat = _diagnose(kept, constrain)
        stuck = np.zeros((groups, walkers), dtype=bool)
    if not converged:
        if steps >= settings.max_steps:
            messages.append(
                f"stopped at the step cap of {settings.max_steps} steps per "
                "ensemble before every criterion held"
            )
        if stuck.any():
            messages.append(
                f"{int(stuck.sum())} walkers stayed stuck far below the posterior mode "
                "after two restarts"
            )
    seconds = time.perf_counter() - started
    kept_steps = kept.shape[1]
    z = kept.transpose(0, 2, 1, 3).reshape(groups, walkers * kept_steps, ndim)
    lp = by_ensemble(sampler.get_log_prob()[discard::thin])
    log_prob_kept = lp.transpose(0, 2, 1).reshape(groups, -1)
    raw_blobs = sampler.get_blobs()
    if raw_blobs is None:
        blobs = np.zeros((groups, walkers * kept_steps, 0))
    else:
        b = by_ensemble(np.asarray(raw_blobs, dtype=float)[discard::thin])
        b = b.reshape(groups, kept_steps, walkers, -1)
        blobs = b.transpose(0, 2, 1, 3).reshape(groups, walkers * kept_steps, -1)
    return SamplingRun(
        z=z,
        blobs=blobs,
        log_prob=log_prob_kept,
        trace=kept,
        converged=converged,
        walkers=walkers,
        steps=steps,
        burn_in=steps - main_steps + discard,
        thin=thin,
        autocorr_time=tau,
        ess_bulk=ess_bulk,
        ess_tail=ess_tail,
        r_hat=r_hat,
        seconds=seconds,
        evaluations=evaluations,
        messages=messages,
        moved_walkers=moved,
        exploration_steps=exploration,
    )
