"""The three figures of a ``qhat batch`` report, drawn from a ``BatchReport``.

* ``medians.png``: histogram of the per-locus posterior medians of s_het (log10);
* ``observed_vs_expected.png``: 2-D histogram of observed against expected allele
  copies (log10 of count + 1), with the diagonal;
* ``prior.png``: the shared prior used over the histogram of the medians.

loci.csv's ``expected`` is n x the posterior median of q (deterministic model) or
n x E[x] under Wright's density at the posterior median of s_het (drift model).
Build them inside :func:`infer.reporting.plots.save.plain_text` (``save_figures`` does).
"""

from __future__ import annotations

import math

import numpy as np

from infer.reporting.plots.common import plain_log_formatters
from infer.reporting.plots.save import new_figure

__all__ = ["BATCH_FIGURE_FILES", "batch_figures"]

#: file names of the figures, in the order they are built
BATCH_FIGURE_FILES = ("medians.png", "observed_vs_expected.png", "prior.png")
_BINS = 40


def _log_norm(counts):
    from matplotlib.colors import LogNorm

    return LogNorm(vmin=1, vmax=max(float(counts.max()) if counts.count() else 1.0, 2.0))


def batch_figures(report) -> dict:
    """The three figures of a batch report.

    Parameters
    ----------
    report : infer.jobs.batch.report.BatchReport
        The finite medians, the binned (expected, observed) pairs and the prior curve.

    Returns
    -------
    dict of str to matplotlib.figure.Figure
        File name (``BATCH_FIGURE_FILES``) -> figure, not registered with pyplot.
    """
    result = report.result
    medians = np.log10(report.medians)
    s = result.settings
    bins = np.linspace(math.log10(s.s_low), math.log10(s.s_high), _BINS + 1)
    medians_name, scatter_name, prior_name = BATCH_FIGURE_FILES
    figures = {}

    fig = new_figure(figsize=(6, 4), layout="tight")
    ax = fig.add_subplot()
    ax.hist(medians, bins=bins, color="#4c72b0", edgecolor="white")
    ax.set_xlabel("log10 posterior median of s_het")
    ax.set_ylabel("loci")
    ax.set_title(f"Per-locus estimates ({medians.size} loci)")
    figures[medians_name] = fig

    fig = new_figure(figsize=(6, 5), layout="tight")
    ax = fig.add_subplot()
    counts, edges = report.scatter     # binned chunk by chunk (BatchTally)
    top = float(edges[-1])
    shown = np.ma.masked_equal(counts.T, 0)
    image = ax.pcolormesh(edges, edges, shown, cmap="viridis", norm=_log_norm(shown))
    colorbar = fig.colorbar(image, ax=ax, label="loci")
    colorbar.formatter, colorbar.minorformatter = plain_log_formatters()
    ax.plot([0, top], [0, top], color="0.3", lw=1, label="observed = expected")
    what = "n × E[x] (drift)" if s.model == "drift" else "n × posterior median of q"
    ax.set_xlabel(f"log10(expected + 1), expected = {what}")
    ax.set_ylabel("log10(observed + 1)")
    ax.set_title("Observed vs expected allele copies")
    ax.legend(loc="upper left", fontsize=8)
    figures[scatter_name] = fig

    fig = new_figure(figsize=(6, 4), layout="tight")
    ax = fig.add_subplot()
    ax.hist(medians, bins=bins, density=True, color="#bbbbbb", edgecolor="white",
            label="per-locus posterior medians")
    curve_x, curve_y = report.prior_curve
    ax.plot(curve_x, curve_y, color="#c44e52", lw=2, label=result.prior.describe())
    ax.set_xlabel("log10 s_het")
    ax.set_ylabel("density per log10 unit")
    ax.set_title("Shared prior over the per-locus medians")
    ax.legend(loc="upper left", fontsize=8)
    figures[prior_name] = fig
    return figures
