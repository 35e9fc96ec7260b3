"""The five PNG plots of a report folder, drawn from an ``EstimateResult``.

``make_figures`` builds matplotlib ``Figure`` objects that pyplot never sees (so none
stays open); ``write_plots`` saves them with the Agg renderer and releases them.
Scatter plots and curves use evenly spaced subsamples of the draws, so the pictures
are deterministic. Margins are set in inches rather than by a layout engine, ticks are
few, and histograms are single outlines: a layout engine and bar-per-bin histograms
each cost more than the drawing itself on a 2-core machine.

The figures are drawn by :mod:`infer.reporting.plots.posterior` (marginals, pairs,
trace) and :mod:`infer.reporting.plots.fit` (balance, predictive), with the labels
and shared helpers of :mod:`infer.reporting.plots.common`.
"""

from __future__ import annotations

import pathlib

from infer.reporting.plots.common import DPI, PARAMETER_LABELS, axis_label

# the exact binomial interval of the balance plot, tested as plots._clopper_pearson
from infer.reporting.plots.fit import (
    _clopper_pearson,  # noqa: F401
    balance_figure,
    predictive_figure,
)
from infer.reporting.plots.posterior import marginals_figure, pairs_figure, trace_figure

__all__ = ["PLOT_FILES", "PARAMETER_LABELS", "axis_label", "make_figures", "write_plots"]

#: plot key -> file name inside the report folder
PLOT_FILES = {
    "marginals": "marginals.png",
    "pairs": "pairs.png",
    "trace": "trace.png",
    "balance": "balance.png",
    "predictive": "predictive.png",
}


def make_figures(result) -> dict:
    """Build the five report figures.

    Parameters
    ----------
    result : infer.estimate.results.EstimateResult
        Posterior, prior, trace and predictive draws with their summary.

    Returns
    -------
    dict of str to matplotlib.figure.Figure
        Keyed as ``PLOT_FILES``; the figures are not registered with pyplot.
    """
    return {"marginals": marginals_figure(result), "pairs": pairs_figure(result),
            "trace": trace_figure(result), "balance": balance_figure(result),
            "predictive": predictive_figure(result)}


def write_plots(result, folder: pathlib.Path) -> dict[str, str]:
    """Write the five PNG plots into ``folder`` and return plot key -> file name.

    Parameters
    ----------
    result : infer.estimate.results.EstimateResult
        What to draw.
    folder : pathlib.Path
        An existing folder (the report's temporary folder).

    Returns
    -------
    dict of str to str
        ``{"marginals": "marginals.png", ...}`` for the files written.
    """
    import sys

    import matplotlib

    if "matplotlib.pyplot" not in sys.modules:  # never switch (and so close) a user's pyplot
        matplotlib.use("Agg")
    folder = pathlib.Path(folder)
    written = {}
    # titles and labels carry user text: a "$" must not start matplotlib's maths parser
    with matplotlib.rc_context({"text.parse_math": False}):
        for key, figure in make_figures(result).items():
            figure.savefig(folder / PLOT_FILES[key], dpi=DPI, pil_kwargs={"compress_level": 3})
            figure.clear()
            written[key] = PLOT_FILES[key]
    return written
