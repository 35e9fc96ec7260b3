"""Everything a ``qhat batch`` report shows, computed once: :class:`BatchReport`.

:func:`summarise_batch` gathers the loci read (:class:`~infer.files.loci.LociTable`),
the per-locus results (:class:`~infer.jobs.batch.run.BatchResult`) and how the run was made,
and computes the numbers the summary and the figures show: loci per flag, quantiles of
the posterior medians across loci and the density of the prior used. The renderers
(:mod:`infer.reporting.batch_report`, :mod:`infer.reporting.plots.batch_figures`) only
lay them out. Nothing here prints or touches files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from infer.jobs.batch.prior import SHetPrior
from infer.jobs.batch.run import BatchResult, BatchSettings
from infer.jobs.batch.summary import FLAGS
from infer.files.loci import LociTable

__all__ = ["MEDIAN_PROBABILITIES", "BatchReport", "prior_curve", "summarise_batch"]

#: probabilities of the quantiles of the per-locus posterior medians across loci
MEDIAN_PROBABILITIES = (0.05, 0.25, 0.5, 0.75, 0.95)


@dataclass(frozen=True)
class BatchReport:
    """A finished batch run with the numbers its report shows.

    Attributes
    ----------
    table : infer.files.loci.LociTable
        The loci read, in file order (skipped rows and ignored columns included).
    result : infer.jobs.batch.run.BatchResult
        Per-locus results, the settings and the prior used.
    requested_prior : str
        The prior asked for (``"log-uniform"``, ``"empirical"``).
    mu_level : float
        Level of the file's mu_lower..mu_upper intervals.
    chunk_size : int
        Loci per chunk.
    loci_with_mu_interval : int
        Loci whose mu is uncertain (a log-normal with sigma > 0).
    flag_counts : dict of int to int
        ``FLAGS`` bit -> loci carrying it, in bit order.
    median_quantiles : dict of float to float
        Probability (``MEDIAN_PROBABILITIES``) -> quantile of the finite per-locus
        posterior medians of s_het; empty when no locus has one.
    prior_curve : tuple of numpy.ndarray
        ``(log10 s_het, density per log10 unit)`` of the prior used (:func:`prior_curve`).
    jobs : int
        Local processes the chunks ran in.
    scheduler : str or None
        dask.distributed scheduler address, when the chunks ran there.
    timings : dict
        Wall seconds of the run's stages (``read_seconds``, ``compute_seconds``).
    """

    table: LociTable
    result: BatchResult
    requested_prior: str
    mu_level: float
    chunk_size: int
    loci_with_mu_interval: int
    flag_counts: dict
    median_quantiles: dict
    prior_curve: tuple
    jobs: int = 1
    scheduler: str | None = None
    timings: dict = field(default_factory=dict)

    @property
    def flagged(self) -> int:
        """Flags raised over all loci (a locus with two flags counts twice)."""
        return sum(self.flag_counts.values())


def prior_curve(prior: SHetPrior, settings: BatchSettings) -> tuple[np.ndarray, np.ndarray]:
    """The prior on the grid as ``(log10 s_het, density per log10 unit)``, normalised.

    Parameters
    ----------
    prior : infer.jobs.batch.prior.SHetPrior
    settings : infer.jobs.batch.run.BatchSettings
        Its grid of ln s_het.

    Returns
    -------
    tuple of numpy.ndarray
        Grid nodes in log10 s_het and the density there (trapezoid-normalised in ln s_het,
        times ln 10).
    """
    u = settings.log_s
    density = np.exp(prior.log_density(u))
    mass = np.trapezoid(density, u)
    return u / math.log(10), density / mass * math.log(10)


def summarise_batch(table: LociTable, result: BatchResult, mu_sigma, *, requested_prior: str,
                    mu_level: float, chunk_size: int, jobs: int = 1,
                    scheduler: str | None = None, timings: dict | None = None) -> BatchReport:
    """Gather a batch run into a :class:`BatchReport`.

    Parameters
    ----------
    table : infer.files.loci.LociTable
        The loci read.
    result : infer.jobs.batch.run.BatchResult
        What :func:`infer.jobs.batch.run.analyse` returned for them.
    mu_sigma : array_like, shape (loci,)
        Sigma of ln mu per locus (0 where mu is exact).
    requested_prior : str
        The prior asked for.
    mu_level, chunk_size, jobs, scheduler, timings
        How the run was made (see :class:`BatchReport`).

    Returns
    -------
    BatchReport
    """
    loci = result.loci
    flags = np.asarray(loci["flags"])
    counts = {bit: int(np.sum((flags & bit) > 0)) for bit in sorted(FLAGS)}
    medians = loci["median"][np.isfinite(loci["median"])]
    quantiles = ({p: float(np.quantile(medians, p)) for p in MEDIAN_PROBABILITIES}
                 if medians.size else {})
    return BatchReport(table=table, result=result, requested_prior=requested_prior,
                       mu_level=mu_level, chunk_size=chunk_size,
                       loci_with_mu_interval=int(np.sum(np.asarray(mu_sigma) > 0)),
                       flag_counts=counts, median_quantiles=quantiles,
                       prior_curve=prior_curve(result.prior, result.settings), jobs=jobs,
                       scheduler=scheduler, timings=dict(timings or {}))
