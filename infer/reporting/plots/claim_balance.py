"""The balance plot of ``qhat check``: the implied quantity against mu, with the data.

Draws a :class:`~infer.jobs.check.balance_curve.ClaimBalanceCurve` (computed by the check):
the exact balance curve, the claimed point, the measured range of mutation rates and
the observed fraction with its exact interval. Build it inside
:func:`infer.reporting.plots.save.plain_text` (``save_figures`` does).
"""

from __future__ import annotations

import numpy as np

from infer.jobs.check.trade import is_human
from infer.core.text import shown
from infer.reporting.plots.common import plain_log_formatters
from infer.reporting.plots.save import new_figure

__all__ = ["claim_balance_figure"]


def claim_balance_figure(result):
    """The implied quantity against mu (others at their claimed values), with the data.

    Parameters
    ----------
    result : infer.jobs.check.run.CheckResult
        Its ``balance_curve`` is drawn; its ``claim`` gives the title and legend values.

    Returns
    -------
    matplotlib.figure.Figure
        Not registered with pyplot.
    """
    claim, curve = result.claim, result.balance_curve
    figure = new_figure(figsize=(6.4, 4.2), dpi=100)
    figure.subplots_adjust(left=0.15, right=0.97, bottom=0.13, top=0.88)
    ax = figure.subplots()
    low, high = curve.measured_range
    if is_human(claim):  # the built-in ranges were measured in humans
        ax.axvspan(low, high, color="tab:green", alpha=0.12, lw=0,
                   label=f"measured human {curve.mu_scale} rates ({low:g} to {high:g})")
    ax.plot(curve.mu, curve.values, color="tab:blue", lw=1.8,
            label=f"exact balance, {', '.join(f'{p} = {claim.values[p]:g}' for p in ('s', 'h'))}")
    ax.plot([curve.claimed_mu], [curve.claimed_value], "o", color="tab:red", ms=7, mec="black",
            label=f"claimed mu = {curve.claimed_mu:.3g}")
    if curve.today_value is not None:  # under a [history]: the curve is the equilibrium
        ax.plot([curve.claimed_mu], [curve.today_value], "D", color="tab:purple", ms=6,
                mec="black", label="today under the stated history")
    band = curve.band
    low_y, high_y = _y_range(curve)
    if band is not None:
        ax.axhspan(max(band.lower, low_y), band.upper, color="tab:orange", alpha=0.3, lw=0,
                   label=f"observed {band.count}/{band.total} "
                         f"({100 * band.level:g} % Clopper-Pearson)")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_ylim(low_y, high_y)
    for axis in (ax.xaxis, ax.yaxis):
        major, minor = plain_log_formatters()
        axis.set_major_formatter(major)
        axis.set_minor_formatter(minor)
    ax.set_xlabel("mu (per gene copy per generation)" if curve.mu_scale == "locus"
                  else "mu (per nucleotide per generation)", fontsize=9)
    ax.set_ylabel(curve.label, fontsize=9)
    ax.legend(fontsize=7, loc="upper left", framealpha=0.85)
    ax.tick_params(labelsize=8)
    figure.suptitle(f"{shown(claim.title)}\n{curve.title}", fontsize=9)
    _fit_left_margin(figure, ax)
    return figure


def _y_range(curve) -> tuple[float, float]:
    """Log-axis limits around the curve, the claimed point and the observed band.

    A band whose lower end is 0 (no copy observed) starts at the axis floor, which the
    curve sets: at most six decades below the smallest value shown.
    """
    values = np.concatenate([np.asarray(curve.values, float).ravel(),
                             [curve.claimed_value]])
    band = curve.band
    if band is not None:
        values = np.concatenate([values, [band.lower, band.upper]])
    if curve.today_value is not None:
        values = np.concatenate([values, [curve.today_value]])
    values = values[np.isfinite(values) & (values > 0)]
    if not values.size:
        return 1e-12, 1.0
    top = min(float(values.max()) * 3, 1.0) if values.max() <= 1 else float(values.max()) * 3
    shown = values[values >= top * 1e-12]
    bottom = max(float(shown.min()) / 3, top * 1e-12)
    return bottom, top


def _fit_left_margin(figure, ax) -> None:
    """Widen the left margin until the y label is inside the figure (drawn with Agg)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(figure).draw()
    extent = ax.yaxis.get_tightbbox(figure.canvas.get_renderer())
    if extent is not None and extent.x0 < 4:
        width = figure.bbox.width
        left = figure.subplotpars.left + (4 - extent.x0) / width
        figure.subplots_adjust(left=min(left, 0.4))

