"""Render a :class:`~infer.jobs.batch.report.BatchReport`: loci.csv, summary.json, the figures.

:func:`loci_rows` gives the rows of loci.csv, :func:`batch_document` the object of
summary.json (the same inputs give the same bytes: wall times go to timing.json,
:func:`timing_document`), and :func:`write_batch_report` writes the report folder atomically (the
figures of :mod:`infer.reporting.plots.batch_figures`, report.md of
:mod:`infer.reporting.batch_markdown` and its report.html).
"""

from __future__ import annotations

import contextlib
import csv
import math
from pathlib import Path

import numpy as np

from infer.jobs.batch.summary import FLAGS, H_HALF_NOTE
from infer.core.text import CAUTION_LINE, spreadsheet_safe
from infer.reporting.batch_markdown import batch_markdown
from infer.reporting.folder import atomic_folder
from infer.reporting.html import report_html
from infer.reporting.jsonout import dumps, versioned
from infer.reporting.plots.batch_figures import BATCH_FIGURE_FILES, batch_figures
from infer.reporting.plots.save import save_figures

__all__ = ["BATCH_FILES", "LOCI_COLUMNS", "loci_rows", "batch_assumptions", "batch_document",
           "timing_document", "BatchFolder", "open_batch_report", "write_batch_report"]

#: files of a batch report folder, as summary.json lists them
BATCH_FILES = ("loci.csv", "summary.json", "timing.json", "report.md", "report.html",
               *BATCH_FIGURE_FILES)
#: header of loci.csv
LOCI_COLUMNS = ("locus", "observed", "sampled", "mu", "mu_lower", "mu_upper", "s_het_median",
                "s_het_lower", "s_het_upper", "s_het_mean", "expected", "flags")
_DPI = 110


def _g(value):
    return f"{value:.6g}" if math.isfinite(value) else ""


def loci_rows(table, loci: dict, flags: dict = FLAGS):
    """Header and rows (lists of str) of loci.csv, in file order.

    Parameters
    ----------
    table : infer.files.loci.LociTable
        The loci read.
    loci : dict
        Per-locus results (``BatchResult.loci``).
    flags : dict, optional
        Bit -> (short name, meaning); a row's flags are its short names joined by ``;``.

    Yields
    ------
    list of str
    """
    yield list(LOCI_COLUMNS)
    yield from _rows(_read_columns(table), loci, flags)


def _read_columns(table) -> dict:
    """The columns of a LociTable that loci.csv repeats, by name."""
    return {name: getattr(table, name)
            for name in ("names", "observed", "sampled", "mu", "mu_lower", "mu_upper")}


def _rows(loci_read, loci: dict, flags: dict = FLAGS, marks=None):
    """The rows of loci.csv of one chunk (``loci_read`` has the LociTable's columns).

    A locus name that a spreadsheet would run as a formula is neutralised
    (:func:`infer.core.text.spreadsheet_safe`).
    """
    bits = sorted(flags)
    marks = {} if marks is None else marks
    columns = [np.asarray(c, dtype=float).tolist() for c in (
        loci_read["observed"], loci_read["sampled"], loci_read["mu"], loci_read["mu_lower"],
        loci_read["mu_upper"], loci["median"], loci["lower"], loci["upper"], loci["mean"],
        loci["expected"])]
    for i, (name, code) in enumerate(zip(loci_read["names"], np.asarray(loci["flags"]).tolist(),
                                         strict=True)):
        if code not in marks:
            marks[code] = ";".join(flags[b][0] for b in bits if code & b)
        k, n, mu, *rest = (column[i] for column in columns)
        yield [spreadsheet_safe(name), f"{k:.0f}", f"{n:.0f}", f"{mu:.6g}", *map(_g, rest),
               marks[code]]


def _fitted(fitted) -> dict | None:
    if fitted is None:
        return None
    return {"family": "log-normal", "median": fitted.prior.median, "sigma": fitted.prior.sigma,
            "se_log_median": fitted.se_log_median, "se_log_sigma": fitted.se_log_sigma,
            "at_search_edge": fitted.at_search_edge, "search": fitted.search,
            "log_marginal_likelihood": fitted.log_marginal,
            "log_marginal_likelihood_log_uniform": fitted.log_marginal_uniform,
            "log_bayes_factor_vs_log_uniform": fitted.log_bayes_factor}


#: ignored column names that look like a mode of inheritance
_MODE_COLUMNS = ("inheritance", "moi", "mode_of_inheritance", "dominance")


def batch_assumptions(table) -> list[str]:
    """What every s_het of the run assumes, with a warning when the file names modes.

    The h = 1/2 convention of s_het (:data:`infer.jobs.batch.summary.H_HALF_NOTE`); when
    the loci file has a column other than ``mode`` that looks like a mode of inheritance
    (which qhat batch does not read), a sentence saying that recessive loci there are
    analysed under h = 1/2 and how to have them flagged.
    """
    notes = [H_HALF_NOTE + "."]
    named = [c for c in table.ignored_columns
             if str(c).strip().lower().replace(" ", "_") in _MODE_COLUMNS]
    if named:
        notes.append(f"The column {', '.join(repr(c) for c in named)} is not read: loci "
                     "marked recessive there are still analysed under h = 1/2 and not "
                     "flagged; name the column mode (dominant or recessive) to flag them, "
                     "leave them out, or estimate them with qhat estimate (h = 0).")
    return notes


def batch_document(report) -> dict:
    """The object of summary.json.

    Parameters
    ----------
    report : infer.jobs.batch.report.BatchReport

    Returns
    -------
    dict
        Schema and qhat versions, input, model, settings, prior, log marginal likelihood,
        flag counts, quantiles of the medians across loci, execution and the files of the
        folder (schema ``batch-summary`` of :mod:`infer.reporting.schemas`); no wall time,
        so the same inputs give the same document.
    """
    result, table = report.result, report.table
    settings = result.settings
    deterministic = settings.model == "deterministic"
    return versioned({
        "caution": CAUTION_LINE,
        "command": "qhat batch",
        "input": {"file": table.source, "loci": report.loci,
                  "loci_with_mu_interval": report.loci_with_mu_interval,
                  "skipped_rows": table.skipped, "ignored_columns": table.ignored_columns},
        "model": {
            "name": settings.model,
            "convention": "s_het = h*s with h = 1/2: Aa fitness 1 - s_het, aa 1 - 2 s_het; "
                          "q_hat = mu / (s_het (1 + mu)) exactly (deterministic balance)",
            "likelihood": "k ~ Binomial(n, q_hat)" if deterministic
            else "k ~ Binomial(n, x), x from Wright's stationary density",
            "Ne": settings.Ne, "nu": settings.nu if settings.model == "drift" else None,
            "mu_uncertainty": f"log-normal with median mu and the {report.mu_level:g} central "
                              "interval mu_lower..mu_upper, integrated out",
            "assumptions": batch_assumptions(table),
        },
        "settings": {"s_low": settings.s_low, "s_high": settings.s_high,
                     "grid_points": settings.grid_points, "grid_step_log": settings.step,
                     "interval": settings.interval, "mu_level": report.mu_level,
                     "kernel_half_width": settings.half_width, "chunk_size": report.chunk_size},
        "prior": {"requested": report.requested_prior, "used": result.prior.describe(),
                  "family": result.prior.family, "low": settings.s_low, "high": settings.s_high,
                  "fitted": _fitted(result.fitted)},
        "log_marginal_likelihood": result.log_marginal,
        "expected_count": "n x the posterior median of q_hat" if deterministic
        else "n x E[x] under Wright's density at the posterior median of s_het",
        "flags": {FLAGS[bit][0]: {"count": count, "meaning": FLAGS[bit][1]}
                  for bit, count in report.flag_counts.items()},
        "medians_across_loci": {f"q{int(p * 100):02d}": value
                                for p, value in report.median_quantiles.items()},
        "execution": {"jobs": report.jobs, "scheduler": report.scheduler,
                      "chunks": result.chunks},
        "files": list(BATCH_FILES),
    })


def timing_document(report) -> dict:
    """The object of a batch folder's timing.json: the run's wall times in seconds.

    Parameters
    ----------
    report : infer.jobs.batch.report.BatchReport

    Returns
    -------
    dict
        Schema and qhat versions, then ``report.timings`` (``read_seconds``,
        ``compute_seconds`` for a run of ``qhat batch``; schema ``timing``).
    """
    return versioned(dict(report.timings))


class BatchFolder:
    """A batch report folder being written: loci.csv row by row, then the rest.

    Made by :func:`open_batch_report`; :meth:`add` appends one chunk's rows to loci.csv,
    :meth:`finish` writes summary.json, timing.json, report.md, report.html and the figures.
    """

    def __init__(self, folder: Path, handle):
        self.folder = folder
        self._writer = csv.writer(handle, lineterminator="\n")
        self._writer.writerow(list(LOCI_COLUMNS))
        self._marks = {}

    def add(self, loci_read, loci: dict) -> None:
        """Write the rows of one chunk (``names``, the input columns; ``posterior_summary``)."""
        self._writer.writerows(_rows(loci_read, loci, marks=self._marks))

    def finish(self, report) -> None:
        """Write everything but loci.csv from the finished ``report`` (a ``BatchReport``).

        summary.json, timing.json (the wall times), report.md, report.html and the figures.
        """
        folder = self.folder
        figures = save_figures(lambda: batch_figures(report), folder, dpi=_DPI)
        document = batch_document(report)
        (folder / "summary.json").write_text(dumps(document), encoding="utf-8")
        (folder / "timing.json").write_text(dumps(timing_document(report)), encoding="utf-8")
        text = batch_markdown(document, tuple(figures))
        (folder / "report.md").write_text(text, encoding="utf-8")
        images = {name: (folder / name).read_bytes() for name in figures}
        (folder / "report.html").write_text(report_html(text, images), encoding="utf-8")


@contextlib.contextmanager
def open_batch_report(out, *, force: bool = False):
    """Open the report folder ``out`` (atomically, :func:`infer.reporting.folder.atomic_folder`).

    Yields a :class:`BatchFolder` whose loci.csv takes rows chunk by chunk while the
    loci are computed, so memory stays flat in the number of loci. The folder appears at
    ``out`` only when the block completes (after :meth:`BatchFolder.finish`).
    """
    with atomic_folder(Path(out), force=force) as folder:
        with open(folder / "loci.csv", "w", newline="", encoding="utf-8") as handle:
            yield BatchFolder(folder, handle)


def write_batch_report(report, out, *, force: bool = False) -> Path:
    """Write loci.csv, summary.json, timing.json, report.md, report.html and the figures.

    The folder appears atomically, when everything is written.

    Parameters
    ----------
    report : infer.jobs.batch.report.BatchReport
        Of a run held in memory (``report.table`` a LociTable, ``report.result.loci``
        the per-locus results).
    out : str or pathlib.Path
        The report folder; refused if it exists, unless ``force``.
    force : bool, optional
        Replace an existing report folder.

    Returns
    -------
    pathlib.Path
        ``out``.
    """
    out = Path(out)
    with open_batch_report(out, force=force) as written:
        written.add(_read_columns(report.table), report.result.loci)
        written.finish(report)
    return out
