"""Run emcee ensembles until the posterior is converged.

Several ensembles are started independently (from different prior draws) and run side by
side in blocks of steps. After each block the run stops when, for every free parameter,

- the bulk effective sample size over all ensembles is at least ``target_ess``,
- split R-hat across ensembles (each ensemble one chain, split in time) is below
  ``max_r_hat``, and
- each ensemble's chain is longer than ``tau_multiple`` integrated autocorrelation times
  (Foreman-Mackey et al. 2013, PASP 125:306: "about 50 autocorrelation times").

Walkers of one ensemble are not independent chains (LIBRARIES.md: treating them as chains
inflates R-hat), so R-hat compares ensembles, and the effective sample size is computed
on each ensemble's walkers laid end to end (walker-major), where the lag structure of the
sequence is that of a single walker.

The burn-in is ``ceil(burn_in_taus * tau_max)`` steps of each ensemble; the kept draws are
thinned by ``max(1, floor(tau_min / 2))`` steps.
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
        Steps per ensemble in the first block, and the cap on the total.
    burn_in_taus : float
        Burn-in length in autocorrelation times.
    """

    walkers: int = 48
    ensembles: int = 4
    target_ess: float = 1000.0
    max_r_hat: float = 1.01
    tau_multiple: float = 50.0
    first_block: int = 500
    max_steps: int = 40_000
    burn_in_taus: float = 3.0


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


def _seeded_sampler(emcee, nwalkers, ndim, log_prob, evaluate, rng, groups):
    from infer.inference.moves import GroupedDifferentialEvolution, GroupedStretch

    # Differential-evolution moves (ter Braak 2006, Statistics and Computing 16:239)
    # mix faster than the default stretch move on correlated balance posteriors.
    moves = [(GroupedDifferentialEvolution(groups, evaluate), 0.8),
             (GroupedStretch(groups, evaluate), 0.2)]
    sampler = emcee.EnsembleSampler(nwalkers, ndim, log_prob, vectorize=True, moves=moves)
    # emcee keeps a legacy RandomState and ignores a Generator (LIBRARIES.md).
    sampler._random = np.random.RandomState(np.random.MT19937(int(rng.integers(2**32))))
    return sampler


def _autocorr_times(emcee, chain: np.ndarray) -> np.ndarray:
    """Integrated autocorrelation time per parameter of one ensemble's (steps, walkers, ndim)."""
    return np.asarray(emcee.autocorr.integrated_time(chain, tol=0, quiet=True), dtype=float)


def _diagnose(kept: np.ndarray):
    """ESS (bulk, tail) and split R-hat per parameter for kept (chains, steps, walkers, ndim)."""
    chains, steps, walkers, ndim = kept.shape
    walker_major = kept.transpose(0, 2, 1, 3).reshape(chains, walkers * steps, ndim)
    time_major = kept.reshape(chains, steps * walkers, ndim)
    ess_bulk = np.empty(ndim)
    ess_tail = np.empty(ndim)
    r_hat = np.empty(ndim)
    for j in range(ndim):
        ess_bulk[j] = diagnostics.ess_bulk(walker_major[..., j])
        ess_tail[j] = diagnostics.ess_tail(walker_major[..., j])
        r_hat[j] = diagnostics.r_hat(time_major[..., j])
    return ess_bulk, ess_tail, r_hat


def run_to_convergence(
    log_prob: Callable[[np.ndarray], np.ndarray],
    initial: Callable[[np.random.Generator, int], np.ndarray],
    ndim: int,
    rng: np.random.Generator,
    settings: SamplerSettings = SamplerSettings(),
    progress: Callable[[int, int], None] | None = None,
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
        Called as ``progress(steps_done, max_steps)`` after each block.

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
    sampler = _seeded_sampler(emcee, walkers * groups, ndim, for_emcee, evaluate, rng, groups)
    coords = np.concatenate([initial(rng, walkers) for _ in range(groups)])
    state = emcee.State(coords, *evaluate(coords))

    def by_ensemble(values: np.ndarray) -> np.ndarray:
        """(steps, groups * walkers, ...) -> (groups, steps, walkers, ...)."""
        steps_, _, *rest = values.shape
        return np.moveaxis(values.reshape(steps_, groups, walkers, *rest), 1, 0)

    started = time.perf_counter()
    steps = 0
    block = settings.first_block
    messages: list[str] = []
    converged = False
    while True:
        block = min(block, settings.max_steps - steps)
        state = sampler.run_mcmc(state, block, progress=False)
        steps += block
        if progress is not None:
            progress(steps, settings.max_steps)
        chains = by_ensemble(sampler.get_chain())  # (ensembles, steps, walkers, ndim)
        tau = np.max([_autocorr_times(emcee, c) for c in chains], axis=0)
        burn_in = min(int(math.ceil(settings.burn_in_taus * tau.max())), steps // 2)
        thin = max(1, int(tau.min() // 2))
        kept = chains[:, burn_in::thin]
        ess_bulk, ess_tail, r_hat = _diagnose(kept)
        long_enough = (steps - burn_in) > settings.tau_multiple * tau
        ok = (ess_bulk >= settings.target_ess) & (r_hat < settings.max_r_hat) & long_enough
        if ok.all():
            converged = True
            break
        if steps >= settings.max_steps:
            messages.append(
                f"stopped at the step cap of {settings.max_steps} steps per "
                "ensemble before every criterion held"
            )
            break
        # Enough steps for the slowest criterion, judged from the current estimates.
        need_taus = settings.tau_multiple * tau.max() + burn_in
        need_ess = steps * settings.target_ess / max(ess_bulk.min(), 1.0)
        block = int(max(min(max(need_taus, need_ess) * 1.1, 4 * steps) - steps, 200))

    seconds = time.perf_counter() - started
    kept_steps = kept.shape[1]
    z = kept.transpose(0, 2, 1, 3).reshape(groups, walkers * kept_steps, ndim)
    lp = by_ensemble(sampler.get_log_prob()[burn_in::thin])
    log_prob_kept = lp.transpose(0, 2, 1).reshape(groups, -1)
    raw_blobs = sampler.get_blobs()
    if raw_blobs is None:
        blobs = np.zeros((groups, walkers * kept_steps, 0))
    else:
        b = by_ensemble(np.asarray(raw_blobs, dtype=float)[burn_in::thin])
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
        burn_in=burn_in,
        thin=thin,
        autocorr_time=tau,
        ess_bulk=ess_bulk,
        ess_tail=ess_tail,
        r_hat=r_hat,
        seconds=seconds,
        evaluations=evaluations,
        messages=messages,
    )
