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
import tempfile
from array import array
from dataclasses import dataclass, field

import numpy as np

from infer.jobs.batch.prior import SHetPrior
from infer.jobs.batch.run import BatchResult, BatchSettings
from infer.jobs.batch.summary import FLAGS
from infer.files.loci import LociTable

__all__ = ["MEDIAN_PROBABILITIES", "SCATTER_CELLS", "BatchReport", "BatchTally", "prior_curve",
           "summarise_batch"]

#: probabilities of the quantiles of the per-locus posterior medians across loci
MEDIAN_PROBABILITIES = (0.05, 0.25, 0.5, 0.75, 0.95)
#: cells a side of the 2-D histogram of observed against expected copies
SCATTER_CELLS = 60


@dataclass(frozen=True)
class BatchReport:
    """A finished batch run with the numbers its report shows.

    Attributes
    ----------
    table : infer.files.loci.LociTable or infer.files.loci.LociScan
        The loci read (skipped rows and ignored columns included): the whole table, or
        what a streamed read learnt about the file.
    result : infer.jobs.batch.run.BatchResult
        The settings and the prior used, and the per-locus results (``loci`` is None
        when the rows were streamed to loci.csv).
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
    loci : int
        Loci analysed.
    medians : numpy.ndarray
        The finite per-locus posterior medians of s_het, in file order.
    scatter : tuple of numpy.ndarray
        ``(counts, edges)``: loci per cell of log10(expected + 1) (first axis) against
        log10(observed + 1), over ``edges`` shared by both axes (``SCATTER_CELLS`` cells
        from 0 to 1.02 times the largest value, at least 1).
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
    loci: int = 0
    medians: np.ndarray = field(default_factory=lambda: np.empty(0))
    scatter: tuple = ()
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


class BatchTally:
    """The report's numbers gathered chunk by chunk, in memory flat in the loci.

    Exact counts (loci, flags, loci with a mu interval), the summed log marginal
    (:func:`infer.jobs.batch.run.add_log_marginal`, as :func:`~infer.jobs.batch.run.analyse`),
    the finite posterior medians in one float array (8 bytes a locus: their quantiles
    are exact, ``numpy.quantile``), and the (expected, observed) pairs of the 2-D
    histogram in an anonymous temporary file, binned once the largest value is known.
    Use as a context manager (the temporary file goes away on exit).
    """

    def __init__(self):
        self.loci = 0
        self.with_interval = 0
        self.log_marginal = 0.0
        self._flags = {bit: 0 for bit in sorted(FLAGS)}
        self._medians = array("d")
        self._pairs = tempfile.TemporaryFile()   # noqa: SIM115 - closed by __exit__
        self._top = 1.0

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self._pairs.close()

    def add(self, observed, mu_sigma, part: dict) -> None:
        """Count one chunk: its observed copies, sigma of ln mu and ``posterior_summary``."""
        from infer.jobs.batch.run import add_log_marginal

        flags = np.asarray(part["flags"])
        for bit in self._flags:
            self._flags[bit] += int(np.count_nonzero(flags & bit))
        self.loci += flags.size
        self.with_interval += int(np.count_nonzero(np.asarray(mu_sigma) > 0))
        self.log_marginal = add_log_marginal(self.log_marginal, part)
        ok = np.isfinite(part["median"])
        self._medians.extend(part["median"][ok].tolist())
        pairs = np.column_stack([np.log10(part["expected"][ok] + 1.0),
                                 np.log10(np.asarray(observed, dtype=float)[ok] + 1.0)])
        if pairs.size:
            self._top = max(self._top, float(np.max(pairs)))
        self._pairs.write(np.ascontiguousarray(pairs, dtype=float).tobytes())

    def _scatter(self):
        edges = np.linspace(0.0, self._top * 1.02, SCATTER_CELLS + 1)
        counts = np.zeros((SCATTER_CELLS, SCATTER_CELLS))
        self._pairs.flush()
        self._pairs.seek(0)
        while block := self._pairs.read(16 << 16):
            pairs = np.frombuffer(block, dtype=float).reshape(-1, 2)
            counts += np.histogram2d(pairs[:, 0], pairs[:, 1], bins=[edges, edges])[0]
        return counts, edges

    def report(self, table, result: BatchResult, *, requested_prior: str, mu_level: float,
               chunk_size: int, jobs: int = 1, scheduler: str | None = None,
               timings: dict | None = None) -> BatchReport:
        """The :class:`BatchReport` of the chunks added (arguments as :func:`summarise_batch`)."""
        medians = np.frombuffer(self._medians, dtype=float)
        quantiles = ({p: float(np.quantile(medians, p)) for p in MEDIAN_PROBABILITIES}
                     if medians.size else {})
        return BatchReport(table=table, result=result, requested_prior=requested_prior,
                           mu_level=mu_level, chunk_size=chunk_size,
                           loci_with_mu_interval=self.with_interval,
                           flag_counts=dict(self._flags), median_quantiles=quantiles,
                           prior_curve=prior_curve(result.prior, result.settings),
                           loci=self.loci, medians=medians, scatter=self._scatter(),
                           jobs=jobs, scheduler=scheduler, timings=dict(timings or {}))


def summarise_batch(table: LociTable, result: BatchResult, mu_sigma, *, requested_prior: str,
                    mu_level: float, chunk_size: int, jobs: int = 1,
                    scheduler: str | None = None, timings: dict | None = None) -> BatchReport:
    """Gather a batch run held in memory into a :class:`BatchReport`.

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
    with BatchTally() as tally:
        tally.add(table.observed, mu_sigma, result.loci)
        return tally.report(table, result, requested_prior=requested_prior, mu_level=mu_level,
                            chunk_size=chunk_size, jobs=jobs, scheduler=scheduler,
                            timings=timings)
