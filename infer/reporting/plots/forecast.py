"""The fan plot of ``qhat forecast``: q and incidence over the coming generations.

Left the allele frequency, right the incidence; each with the median over posterior
draws as a line, the 50 % central interval dark and the 95 % one light. Built without
pyplot (:mod:`infer.reporting.plots.save`).
"""

from __future__ import annotations

import numpy as np

from infer.reporting.plots.save import new_figure

__all__ = ["forecast_figure", "FORECAST_PLOT", "DPI"]

#: the file name of the fan plot in a forecast folder
FORECAST_PLOT = "forecast.png"
#: resolution of the PNG
DPI = 110


def _band(axes, x, points: np.ndarray, probabilities, colour: str, label: str) -> None:
    column = {round(p, 6): j for j, p in enumerate(probabilities)}
    outer = (column.get(0.025), column.get(0.975))
    inner = (column.get(0.25), column.get(0.75))
    if None not in outer:
        axes.fill_between(x, points[:, outer[0]], points[:, outer[1]], color=colour,
                          alpha=0.2, lw=0, label="95 % of draws")
    if None not in inner:
        axes.fill_between(x, points[:, inner[0]], points[:, inner[1]], color=colour,
                          alpha=0.45, lw=0, label="50 % of draws")
    if 0.5 in column:
        axes.plot(x, points[:, column[0.5]], color=colour, lw=1.6, label="median")
    axes.set_xlabel("generations from now")
    axes.set_ylabel(label)
    axes.ticklabel_format(axis="y", style="sci", scilimits=(-3, 3))
    axes.set_xlim(x[0], x[-1])


def forecast_figure(result):
    """Fan plots of q (left) and incidence (right) against generations.

    Parameters
    ----------
    result : infer.jobs.forecast.run.ForecastResult

    Returns
    -------
    matplotlib.figure.Figure
        Two axes; call inside :func:`infer.reporting.plots.save.plain_text`.
    """
    figure = new_figure(figsize=(11, 4.2))
    left, right = figure.subplots(1, 2)
    x = np.asarray(result.generations, dtype=float)
    frequency = ("allele frequency q among newborns" if result.inheritance == "autosomal"
                 else "allele frequency q over all X chromosomes")
    _band(left, x, result.q, result.probabilities, "tab:blue", frequency)
    _band(right, x, result.incidence, result.probabilities, "tab:red",
          f"incidence (affected per {result.incidence_of[:-1]})")
    changed = ", ".join(f"{k} = {v:g}" for k, v in result.changes.items()) or "nothing changed"
    left.set_title(f"allele frequency ({changed})")
    right.set_title(f"incidence, {result.mode}")
    left.legend(loc="upper left", fontsize="small")
    figure.suptitle(result.title[:100], fontsize="medium")
    figure.tight_layout()
    return figure
