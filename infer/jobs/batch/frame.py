"""``qhat batch`` from Python: per-locus posteriors of s_het as a pandas DataFrame.

:func:`batch_loci` reads and validates a loci CSV (:func:`infer.files.loci.read_loci`),
runs :func:`infer.jobs.batch.run.analyse` with the settings ``qhat batch`` takes as options,
and returns one row per locus, indexed by locus name, with the flags spelled out
(``"zero-observed;at-prior-bound"``, as in loci.csv) rather than as bit codes. Nothing is written.
"""

from __future__ import annotations

import math
import os

import numpy as np

from infer.jobs.batch.run import FLAGS, BatchSettings, analyse, mu_sigma_from_interval
from infer.core.text import CAUTION_LINE
from infer.errors import InputError
from infer.files.loci import LociTable, read_loci

__all__ = ["batch_loci", "flag_names", "COLUMNS"]

#: result columns, after the input columns observed, sampled, mu, mu_lower, mu_upper
COLUMNS = {
    "s_het_median": "median",
    "s_het_lower": "lower",
    "s_het_upper": "upper",
    "s_het_mean": "mean",
    "sd_log_s_het": "sd_log",
    "expected": "expected",
    "log_marginal": "log_marginal",
}


def flag_names(code: int) -> str:
    """The names of the ``FLAGS`` bits set in ``code``, joined by ``";"`` as in loci.csv."""
    return ";".join(name for bit, (name, _) in sorted(FLAGS.items()) if code & bit)


def _check(model, Ne, nu, prior, s_low, s_high, grid_points, interval, mu_level, chunk_size):
    """Refuse settings ``qhat batch`` would refuse; the source names the keyword."""
    def bad(keyword, message):
        raise InputError(message, source=keyword)

    if model not in ("deterministic", "drift"):
        bad("model", f"{model!r} must be one of deterministic, drift")
    if prior not in ("log-uniform", "empirical"):
        bad("prior", f"{prior!r} must be one of log-uniform, empirical")
    for keyword, value in (("s_low", s_low), ("s_high", s_high), ("interval", interval),
                           ("mu_level", mu_level), ("nu", nu)):
        if not math.isfinite(value):
            bad(keyword, f"{value} is not a finite number")
    if not 0 < s_low < s_high:
        bad("s_low", f"{s_low:g} must be positive and below s_high {s_high:g}")
    if s_high > 0.5:
        bad("s_high", f"{s_high:g} is above 0.5 (aa fitness 1 - 2 s_het would be negative)")
    for keyword, value in (("interval", interval), ("mu_level", mu_level)):
        if not 0 < value < 1:
            bad(keyword, f"{value:g} is not between 0 and 1")
    if grid_points < 20:
        bad("grid_points", f"{grid_points} is fewer than 20")
    if chunk_size < 1:
        bad("chunk_size", f"{chunk_size} is less than 1")
    if model == "drift":
        if Ne is None or not (math.isfinite(Ne) and Ne > 0):
            bad("Ne", f"{Ne} is not a positive number: the drift model needs Ne")
        if not 0 < nu < 1:
            bad("nu", f"{nu:g} must be in (0, 1) for Wright's density")
    elif Ne is not None:
        bad("Ne", 'Ne applies only with model="drift"')


def batch_loci(loci: str | os.PathLike | LociTable, *, model: str = "deterministic",
               Ne: float | None = None, nu: float = 1e-8, prior: str = "log-uniform",
               s_low: float = 1e-5, s_high: float = 0.5, grid_points: int = 400,
               interval: float = 0.95, mu_level: float = 0.95, chunk_size: int = 512,
               map_chunks=map, skip_bad_rows: bool = False):
    """Posterior of heterozygous selection s_het for every locus of a loci CSV.

    The computation of ``qhat batch`` (same options, same numbers), returned instead of
    written.

    Parameters
    ----------
    loci : str, os.PathLike or infer.files.loci.LociTable
        A loci CSV (columns ``locus, observed, sampled, mu[, mu_lower, mu_upper]``) or a
        table already read with :func:`infer.files.loci.read_loci`.
    model : {"deterministic", "drift"}
        Deterministic balance, or Wright's stationary density with ``Ne`` and ``nu``.
    Ne, nu : float
        Effective size and back-mutation rate of the drift model.
    prior : {"log-uniform", "empirical"}
        Shared prior on s_het: log-uniform on [s_low, s_high], or a log-normal fitted to
        all loci (empirical Bayes).
    s_low, s_high : float
        Bounds of s_het (``s_high <= 0.5``).
    grid_points : int
        Log-spaced grid nodes of s_het.
    interval : float
        Level of the central credible intervals.
    mu_level : float
        Level of the ``mu_lower..mu_upper`` intervals in the file.
    chunk_size : int
        Loci per chunk (memory grows with it, not with the number of loci).
    map_chunks : callable
        ``map``-like runner of the chunks, e.g. an executor's ``map``; the results do
        not depend on it.
    skip_bad_rows : bool
        Leave bad rows out (listed in ``frame.attrs["skipped_rows"]``) instead of raising.

    Returns
    -------
    pandas.DataFrame
        Indexed by ``locus`` in file order: the inputs ``observed, sampled, mu, mu_lower,
        mu_upper``, then ``s_het_median, s_het_lower, s_het_upper, s_het_mean,
        sd_log_s_het`` (sd of ln s_het), ``expected`` (posterior predictive median of
        the count), ``log_marginal`` and ``flag_names`` (the ``flags`` column of
        loci.csv: names of ``infer.jobs.batch.run.FLAGS``, ``";"``-separated, empty when
        none; not ``flags``, which is a DataFrame attribute). ``frame.attrs`` holds the
        prior used, the flag meanings, the settings, the summed log marginal likelihood
        and the caution.

    Raises
    ------
    InputError
        A bad file or row (as ``qhat batch``), or a setting out of range (the source
        names the keyword).
    """
    import pandas as pd

    _check(model, Ne, nu, prior, s_low, s_high, grid_points, interval, mu_level, chunk_size)
    table = loci if isinstance(loci, LociTable) else read_loci(loci, skip_bad_rows=skip_bad_rows)
    mu_sigma = mu_sigma_from_interval(table.mu_lower, table.mu_upper, mu_level)
    settings = BatchSettings(model=model, Ne=Ne, nu=nu, s_low=s_low, s_high=s_high,
                             grid_points=grid_points, interval=interval)
    result = analyse(table.observed, table.sampled, table.mu, mu_sigma, settings, prior=prior,
                     chunk_size=chunk_size, map_chunks=map_chunks)
    columns = {"observed": table.observed.astype(np.int64),
               "sampled": table.sampled.astype(np.int64), "mu": table.mu,
               "mu_lower": table.mu_lower, "mu_upper": table.mu_upper}
    columns.update({column: result.loci[key] for column, key in COLUMNS.items()})
    names = {code: flag_names(code) for code in np.unique(result.loci["flags"]).tolist()}
    columns["flag_names"] = [names[code] for code in result.loci["flags"].tolist()]
    frame = pd.DataFrame(columns, index=pd.Index(table.names, name="locus"))
    frame.attrs.update({
        "prior": result.prior.describe(),
        "flags": {name: meaning for _, (name, meaning) in sorted(FLAGS.items())},
        "settings": {"model": model, "Ne": Ne, "nu": nu if model == "drift" else None,
                     "s_low": s_low, "s_high": s_high, "grid_points": grid_points,
                     "interval": interval, "mu_level": mu_level},
        "log_marginal_likelihood": result.log_marginal,
        "skipped_rows": list(table.skipped),
        "source": table.source,
        "caution": CAUTION_LINE,
    })
    return frame
