"""The five PNG plots of a report folder, drawn from an ``EstimateResult``.

``estimate_figures`` builds matplotlib ``Figure`` objects that pyplot never sees (so none
stays open); ``write_plots`` writes them with :func:`infer.reporting.plots.save.save_figures`
(literal ``$``, atomic rename, the umask's file mode).
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

from infer.reporting.plots.common import DPI
from infer.reporting.plots.fit import balance_curve_figure, predictive_figure
from infer.reporting.plots.posterior import marginals_figure, pairs_figure, trace_figure
from infer.reporting.plots.save import save_figures

__all__ = ["PLOT_FILES", "estimate_figures", "write_plots"]

#: plot key -> file name inside the report folder
PLOT_FILES = {
    "marginals": "marginals.png",
    "pairs": "pairs.png",
    "trace": "trace.png",
    "balance": "balance.png",
    "predictive": "predictive.png",
}
#: zlib level of the PNGs (Pillow defaults to 6; a lower level writes faster, larger files)
_COMPRESS_LEVEL = 3


def estimate_figures(result) -> dict:
    """Build the five report figures.

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult
        Posterior, prior, trace and predictive draws with their summary.

    Returns
    -------
    dict of str to matplotlib.figure.Figure
        Keyed as ``PLOT_FILES``; the figures are not registered with pyplot. Build them
        inside :func:`infer.reporting.plots.save.plain_text` so that a ``$`` in the study's
        title or labels stays literal.
    """
    return {"marginals": marginals_figure(result), "pairs": pairs_figure(result),
            "trace": trace_figure(result), "balance": balance_curve_figure(result),
            "predictive": predictive_figure(result)}


def write_plots(result, folder: pathlib.Path) -> dict[str, str]:
    """Write the five PNG plots into ``folder`` and return plot key -> file name.

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult
        What to draw.
    folder : pathlib.Path
        An existing folder (the report's temporary folder).

    Returns
    -------
    dict of str to str
        ``{"marginals": "marginals.png", ...}`` for the files written.
    """
    def build():
        return {PLOT_FILES[key]: figure for key, figure in estimate_figures(result).items()}

    written = save_figures(build, folder, dpi=DPI, pil_kwargs={"compress_level": _COMPRESS_LEVEL})
    return {key: name for key, name in PLOT_FILES.items() if name in written}
