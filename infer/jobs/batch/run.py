r"""Many loci at once: the posterior of heterozygous selection per locus (``qhat batch``).

Each locus gives k copies of its deleterious (e.g. loss-of-function) alleles among n
alleles sampled, and a per-locus mutation rate mu, optionally uncertain (a log-normal
with that median whose central interval is given). The approach of Cassa et al. 2017
(Nat. Genet. 49:806): under mutation–selection balance the frequency q of a rare allele
is set by mu and by the selection against heterozygous carriers, s_het.

Convention
----------
``s_het = h·s`` with additive fitnesses, ``h = 1/2``: Aa has fitness 1 − s_het and
aa 1 − 2·s_het (s = 2·s_het, so s_het ≤ 1/2). Homozygotes are therefore not ignored
but treated additively; for rare alleles they hardly ever occur and any other choice
changes q by O(q²). With h = 1/2 the quadratic of docs/model.md (F = 0, nu = 0)
loses its q² term, (1−2h)s = 0, leaving hs(1+mu)·q = mu, so the exact balance is

    q_hat = mu / (s_het·(1 + mu)) = mu' / s_het,   mu' = mu/(1 + mu)     (derived)

(equal to ``infer.core.balance.q_hat(mu, 2·s_het, 0.5)``). Where mu' ≥ s_het no interior
equilibrium exists (mutation overwhelms selection, the allele goes to fixation): there
q = 1 and only k = n has probability. The classic approximation q ≈ mu/s_het is the
first-order term.

Models
------
*deterministic*: k ~ Binomial(n, q_hat(mu, s_het)).
*drift*: k integrated over Wright's stationary density with effective size Ne
(``infer.core.drift.stationary.log_binomial_probability`` with s = 2·s_het, h = 1/2,
back mutation nu).

Quadrature
----------
u = ln s_het lives on a fixed grid u_i = u_0 + i·Δ (i < S). The posterior density of u
is taken piecewise linear between the nodes (trapezoid rule; quantiles invert its
piecewise quadratic CDF exactly).

With uncertain mu (deterministic model), write t = ln mu'. Then ln q = t − u: the
likelihood depends on t and u only through their difference, so the likelihood of u,
∫ B(t − u) p(t) dt, is a correlation of the binomial B on a lattice of ln q with the
density of t. Placing the t nodes on the same spacing Δ, t_j = ln mu'_c + j·Δ
(|j| ≤ J), makes every t_j − u_i a lattice point: L_i = Σ_j w_j B(t_j − u_i), with
w_j ∝ N(ln mu_j; ln mu, σ) · d ln mu/dt (ln mu_j = t_j − log1p(−e^{t_j}),
d ln mu/dt = 1/(1 − e^{t_j})), cut at |j·Δ| ≤ 6σ and at t_j < 0 (mu finite) and
normalised (derived). The rule resolves likelihoods narrower than σ (many copies
observed), where a few fixed Gauss–Hermite nodes in mu would leave a comb of spikes.
In the drift model mu and s do not enter as a ratio; there log L, smooth in u and in
ln mu, is evaluated on grid nodes about 0.33 apart in ln s_het and at 9 nodes of ln mu,
and carried to the full grid and to a fine ln mu rule by cubic splines of the
logarithm (``_drift_grid``).

Every per-locus quantity is computed elementwise or by reductions along a row, so in
the deterministic model a locus's results do not depend on which other loci share its
chunk. (The drift model's results can differ in the last bits between chunk sizes,
because ``infer.core.drift.stationary`` iterates whole arrays until every row has converged; for a
given ``chunk_size`` they are identical whichever way the chunks are run.)

Shared prior on s_het
---------------------
``log-uniform`` on [s_low, s_high] (default), or ``log-normal`` (ln s_het ~ N(ln median,
sigma²), truncated to the grid). Empirical Bayes: the log-normal's (ln median, sigma) are
fitted by maximising Σ_loci log ∫ L_locus(u) π(u | θ) du — a hierarchical model across
loci. The summed log marginal is evaluated on a fixed θ grid chunk by chunk (memory
flat in the number of loci), summed in chunk order, interpolated by a bicubic spline
and maximised with scipy.optimize; the fitted values are rounded to 10 significant
digits, so the per-locus results are identical however the loci were chunked.

Per-locus output (``posterior_summary``): median, central interval and mean of s_het,
the expected count (n × posterior median of q_hat; drift model: n × E[x] at the
posterior median of s_het) and ``FLAGS``.

Layout: this module holds the settings, the chunk driver (``analyse``, ``run_chunk``)
and re-exports the pieces: ``infer.jobs.batch.likelihood`` (grids), ``infer.jobs.batch.prior``
(prior families, empirical-Bayes fit), ``infer.jobs.batch.summary`` (per-locus summaries).
``infer.jobs.batch.report`` gathers a finished run into a ``BatchReport``,
``infer.jobs.batch.chunk_store`` keeps chunks on disk between passes; the loci file is read
by ``infer.files.loci`` and the report folder written by ``infer.reporting.batch_report``.
"""

from __future__ import annotations

import collections
import math
from dataclasses import dataclass, replace

import numpy as np

from infer.jobs.batch.likelihood import TAILS, drift_coarse_log_likelihood, likelihood_grid
from infer.jobs.batch.likelihood import z_points as likelihood_z_points
from infer.jobs.batch.prior import (
    FittedPrior,
    SHetPrior,
    fit_log_normal_prior,
    hyper_grid,
    log_marginal_surface,
)
from infer.jobs.batch.summary import FLAGS, RECESSIVE_FLAG, posterior_summary

__all__ = [
    "BatchSettings",
    "SHetPrior",
    "FittedPrior",
    "BatchResult",
    "FLAGS",
    "analyse",
    "balance_frequency",
    "mu_sigma_from_interval",
    "kernel_half_width",
    "with_half_width",
    "likelihood_grid",
    "drift_coarse_log_likelihood",
    "posterior_summary",
    "hyper_grid",
    "log_marginal_surface",
    "fit_log_normal_prior",
    "run_chunk",
    "recut",
    "fit_prior",
    "posteriors",
    "add_log_marginal",
]


@dataclass(frozen=True)
class BatchSettings:
    """Everything that fixes the per-locus maths (shared by every chunk).

    Parameters
    ----------
    model : {"deterministic", "drift"}
    Ne : float, optional
        Effective population size (drift model only).
    nu : float
        Back-mutation rate a -> A per generation (drift model; must be > 0 there).
    s_low, s_high : float
        Grid (and prior) bounds of s_het; ``s_high <= 0.5`` (aa fitness 1 - 2 s_het >= 0).
    grid_points : int
        Number S of log-spaced grid nodes.
    interval : float
        Central credible level of the reported interval.
    half_width : int
        Kernel half width J in grid steps, shared by all loci of a run
        (``kernel_half_width`` of the largest sigma).
    z_points : int
        Drift model: the most points in z = (ln mu - ln mu_c)/sigma over [-6, 6] at
        which a locus's interpolated log-likelihood is integrated; each locus takes its
        own count (``infer.jobs.batch.likelihood.z_points``: spacing in ln mu below half
        the likelihood's width 1/sqrt(k + 1)), at most this; ``with_half_width`` sets it
        to the largest locus's.
    """

    model: str = "deterministic"
    Ne: float | None = None
    nu: float = 1e-8
    s_low: float = 1e-5
    s_high: float = 0.5
    grid_points: int = 400
    interval: float = 0.95
    half_width: int = 0
    z_points: int = 121

    @property
    def log_s(self) -> np.ndarray:
        """Grid nodes u_i = ln s_het, shape (S,)."""
        return np.linspace(math.log(self.s_low), math.log(self.s_high), self.grid_points)

    @property
    def step(self) -> float:
        """Grid spacing Δ in ln s_het."""
        return (math.log(self.s_high) - math.log(self.s_low)) / (self.grid_points - 1)


def balance_frequency(mu, s_het):
    """Exact balance q_hat = mu / (s_het (1 + mu)) for h = 1/2 (module docstring).

    NaN where no interior equilibrium exists (mu/(1+mu) >= s_het).
    """
    mu, s_het = np.asarray(mu, dtype=float), np.asarray(s_het, dtype=float)
    q = mu / (s_het * (1.0 + mu))
    return np.where(q < 1.0, q, np.nan)


def mu_sigma_from_interval(lower, upper, level=0.95):
    """Sigma of ln mu from a central interval of a log-normal: ln(U/L) / (2 z).

    NaN bounds give 0 (mu known exactly).
    """
    from infer.core.stats import central_z, sigma_of_log

    sigma = sigma_of_log(lower, upper, z=central_z(level))
    return np.where(np.isfinite(sigma), sigma, 0.0)


def kernel_half_width(mu_sigma, settings: BatchSettings) -> int:
    """Half width J (grid steps) of the mu kernel that covers ±6 sigma of every locus."""
    largest = float(np.max(mu_sigma, initial=0.0))
    return int(math.ceil(TAILS * largest / settings.step))


def run_chunk(task):
    """Work on one chunk: ``task = (stage, arrays, settings, prior)``.

    ``stage`` ``"surface"`` returns ``(surface, coarse)``: the chunk's summed
    log-marginal surface and, in the drift model, its coarse log-likelihood (None
    otherwise), which the caller may hand back as ``arrays["coarse_log_l"]`` so the
    second pass skips the drift integrals. ``"posterior"`` returns the
    ``posterior_summary`` dict. ``arrays`` holds ``observed``, ``sampled``, ``mu``,
    ``mu_sigma``. Top level so that process pools and dask can pickle it.
    """
    stage, arrays, settings, prior = task
    rows = arrays["observed"].size
    group = rows_per_call(settings)
    if settings.model == "drift" or group >= rows:
        return _run_rows(stage, arrays, settings, prior)
    # a large grid: the rows in groups, so that no single numpy call runs for long and
    # a SIGTERM or Ctrl-C is handled within a fraction of a second (each row's results
    # are elementwise in the deterministic model; the surface is summed group by group)
    parts = [_run_rows(stage, {name: values[start:start + group]
                               for name, values in arrays.items()}, settings, prior)
             for start in range(0, rows, group)]
    if stage == "surface":
        surface = parts[0][0]
        for part, _ in parts[1:]:
            surface = surface + part
        return surface, None
    return {name: np.concatenate([part[name] for part in parts]) for name in parts[0]}


#: multiply-adds of one likelihood call (rows x S x (2J + 1)) above which ``run_chunk``
#: works a chunk's rows in groups (about 0.1 s of numpy work)
WORK_PER_CALL = 1e8


def rows_per_call(settings: BatchSettings) -> int:
    """Rows of a chunk worked in one call (deterministic model): WORK_PER_CALL / (S·(2J+1))."""
    per_row = settings.grid_points * (2 * settings.half_width + 1)
    return max(1, int(WORK_PER_CALL // per_row))


def _run_rows(stage, arrays, settings, prior):
    k, n, mu, sigma = arrays["observed"], arrays["sampled"], arrays["mu"], arrays["mu_sigma"]
    coarse = arrays.get("coarse_log_l")
    if settings.model == "drift" and coarse is None:
        coarse = drift_coarse_log_likelihood(k, n, mu, sigma, settings)
    likelihood, log_scale = likelihood_grid(k, n, mu, sigma, settings, coarse_log_l=coarse)
    if stage == "surface":
        return log_marginal_surface(likelihood, log_scale, settings), coarse
    return posterior_summary(likelihood, log_scale, prior, settings, k, n, mu, sigma)


def with_half_width(settings: BatchSettings, mu_sigma, observed=None) -> BatchSettings:
    """Copy of ``settings`` with the kernel half width (and drift z points) for every locus."""
    sigma = float(np.max(mu_sigma, initial=0.0))
    most = float(np.max(observed, initial=0.0)) if observed is not None else 0.0
    z_points = int(likelihood_z_points(sigma, most))  # the largest locus's own rule
    return replace(settings, half_width=kernel_half_width(mu_sigma, settings), z_points=z_points)


@dataclass(frozen=True)
class BatchResult:
    """Per-locus results (input order) and what produced them."""

    loci: dict            # name -> (loci,) array, keys of ``posterior_summary``
    settings: BatchSettings
    prior: SHetPrior      # the prior the per-locus posteriors used
    fitted: FittedPrior | None
    chunks: int
    log_marginal: float   # summed over loci, under ``prior``


#: the columns a chunk hands to ``run_chunk``
_TASK_COLUMNS = ("observed", "sampled", "mu", "mu_sigma")


def _concat(a, b):
    return a + b if isinstance(a, list) else np.concatenate([a, b])


def recut(blocks, chunk_size):
    """Cut consecutive blocks (dicts of equal-length columns) into chunks of ``chunk_size``.

    Every chunk but the last holds exactly ``chunk_size`` rows, so the chunks, and hence
    the results, do not depend on how the rows were blocked.
    """
    carry = None
    for block in blocks:
        if carry is not None:
            block = {name: _concat(carry[name], block[name]) for name in block}
        size = len(block["observed"])
        whole = size - size % chunk_size
        for start in range(0, whole, chunk_size):
            yield {name: values[start:start + chunk_size] for name, values in block.items()}
        carry = {name: values[whole:] for name, values in block.items()} if whole < size \
            else None
    if carry is not None:
        yield carry


def _tasks(stage, chunks, settings, prior, store=None, in_flight=None):
    for index, chunk in enumerate(chunks):
        part = {name: chunk[name] for name in _TASK_COLUMNS}
        if store is not None:
            part["coarse_log_l"] = store[index]
        if in_flight is not None:
            in_flight.append(chunk)
        yield stage, part, settings, prior


def fit_prior(chunks, settings: BatchSettings, *, map_chunks=map, progress=None, store=None):
    """First pass of the empirical prior: the summed surface over all chunks, fitted.

    Parameters
    ----------
    chunks : iterable of dict
        Chunks (``recut``) with ``observed, sampled, mu, mu_sigma``.
    settings : BatchSettings
        With the half width of every locus (``with_half_width``).
    map_chunks, progress
        As for :func:`analyse`.
    store : mutable mapping, optional
        Drift model: receives each chunk's coarse log-likelihood by chunk index.

    Returns
    -------
    FittedPrior
    """
    surface = None
    for index, (part, coarse) in enumerate(map_chunks(run_chunk, _tasks("surface", chunks,
                                                                          settings, None))):
        surface = part if surface is None else surface + part   # fixed chunk order
        if store is not None:
            store[index] = coarse
        if progress:
            progress()
    return fit_log_normal_prior(surface, settings)


def posteriors(chunks, settings: BatchSettings, prior: SHetPrior, *, map_chunks=map,
               progress=None, store=None):
    """Yield ``(chunk, posterior_summary dict)`` chunk by chunk, in order.

    Only the chunks in flight in ``map_chunks`` are held; ``store`` holds the coarse
    log-likelihoods of :func:`fit_prior` (drift model), or is None.
    """
    in_flight = collections.deque()
    tasks = _tasks("posterior", chunks, settings, prior, store, in_flight)
    for part in map_chunks(run_chunk, tasks):
        chunk = in_flight.popleft()
        if chunk.get("recessive") is not None:
            part["flags"] = np.asarray(part["flags"]) | np.where(
                np.asarray(chunk["recessive"]) == 1.0, RECESSIVE_FLAG, 0)
        yield chunk, part
        if progress:
            progress()


def analyse(observed, sampled, mu, mu_sigma, settings: BatchSettings, *, prior="log-uniform",
            chunk_size=512, map_chunks=map, progress=None, store=None) -> BatchResult:
    """Per-locus posteriors of s_het for many loci, chunk by chunk.

    Parameters
    ----------
    observed, sampled, mu, mu_sigma : array_like, shape (loci,)
        See ``likelihood_grid``.
    settings : BatchSettings
        Its ``half_width`` is recomputed from ``mu_sigma``.
    prior : {"log-uniform", "empirical"} or SHetPrior
        ``"empirical"`` fits a log-normal prior to all loci first (two passes).
    chunk_size : int
        Loci per chunk; memory grows with it, not with the number of loci.
    map_chunks : callable
        ``map``-like ``(function, tasks) -> results in order`` (builtin map, an
        executor's ``map``, a dask client wrapper): how the chunks are run does not
        change the results.
    progress : callable, optional
        Called with no argument after every finished chunk.
    store : mutable mapping, optional
        Drift model with ``"empirical"``: where each chunk's coarse log-likelihood is
        kept between the two passes (chunk index -> array; a dict by default, or a
        disk-backed mapping to keep memory flat). Unused otherwise.

    Returns
    -------
    BatchResult
    """
    arrays = {"observed": np.asarray(observed, dtype=float),
              "sampled": np.asarray(sampled, dtype=float),
              "mu": np.asarray(mu, dtype=float), "mu_sigma": np.asarray(mu_sigma, dtype=float)}
    settings = with_half_width(settings, arrays["mu_sigma"], arrays["observed"])
    chunks = -(-arrays["observed"].size // chunk_size)
    fitted = None
    if prior == "empirical":
        if settings.model != "drift":
            store = None              # only the drift integrals are worth keeping
        elif store is None:
            store = {}
        fitted = fit_prior(recut([arrays], chunk_size), settings, map_chunks=map_chunks,
                           progress=progress, store=store)
        prior = fitted.prior
    else:
        store = None
    if prior == "log-uniform":
        prior = SHetPrior()
    parts = [part for _, part in posteriors(recut([arrays], chunk_size), settings, prior,
                                            map_chunks=map_chunks, progress=progress,
                                            store=store)]
    loci = {name: np.concatenate([part[name] for part in parts]) for name in parts[0]}
    total = 0.0
    for part in parts:
        total = add_log_marginal(total, part)
    return BatchResult(loci=loci, settings=settings, prior=prior, fitted=fitted, chunks=chunks,
                       log_marginal=total)


def add_log_marginal(total: float, part: dict) -> float:
    """``total`` plus the finite log marginals of one chunk, exactly rounded (math.fsum).

    Summed chunk by chunk in chunk order, so a streamed run and :func:`analyse` agree.
    """
    values = part["log_marginal"]
    return math.fsum([total, *values[np.isfinite(values)].tolist()])
