"""The figure of ``qhat simulate --plot``: trajectories and the long-run distribution.

Left, up to ten replicate trajectories of q after the burn-in; right, the histogram of
every recorded frequency with Wright's stationary density over it (when it exists,
nu > 0). Built without pyplot (:mod:`infer.reporting.plots.save`).
"""

from __future__ import annotations

import os

import numpy as np

from infer.core.drift import stationary as drift
from infer.reporting.plots.save import new_figure, plain_text, save_figure

__all__ = ["simulation_figure", "write_simulation_plot", "DPI", "TRAJECTORIES_SHOWN"]

#: resolution of the PNG
DPI = 110
#: replicate trajectories drawn on the left
TRAJECTORIES_SHOWN = 10


def simulation_figure(result, settings, wright: dict | None):
    """Trajectories (left) and the long-run histogram over Wright's density (right).

    Parameters
    ----------
    result : infer.core.wright_fisher.SimulationResult
        The simulation.
    settings : object
        Its settings as attributes ``Ne``, ``mu``, ``s``, ``h``, ``nu`` and
        ``replicates`` (the parsed options of ``qhat simulate`` will do).
    wright : dict or None
        Wright's stationary summary, or None when it does not exist (nu = 0 or mu = 0):
        then no density is drawn.

    Returns
    -------
    matplotlib.figure.Figure
        Two axes, left and right.
    """
    figure = new_figure(figsize=(11, 4.2))
    left, right = figure.subplots(1, 2)
    shown = result.trajectories[: min(TRAJECTORIES_SHOWN, len(result.trajectories))]
    for row in shown:
        left.plot(result.generations, row, lw=0.7)
    left.set_xlabel("generation")
    left.set_ylabel("frequency q of the deleterious allele")
    left.set_title(f"{len(shown)} of {settings.replicates} trajectories")
    pooled = result.trajectories.ravel()
    top = max(float(np.quantile(pooled, 0.999)), 2 / result.genes)
    bins = np.linspace(0, top, 60)
    right.hist(pooled, bins=bins, density=True, alpha=0.5, label="simulated (after burn-in)")
    if wright:
        x = np.linspace(top / 2000, top, 400)
        density = drift.stationary_density(x, settings.Ne, settings.mu, settings.s, settings.h,
                                           settings.nu)
        right.plot(x, density, color="black", label="Wright's stationary density")
    right.set_xlabel("frequency q")
    right.set_ylabel("probability density")
    right.set_title("long-run distribution")
    right.legend()
    figure.tight_layout()
    return figure


def write_simulation_plot(result, settings, wright: dict | None,
                          path: str | os.PathLike) -> None:
    """Draw :func:`simulation_figure` and write it to ``path`` as a PNG, atomically.

    Parameters
    ----------
    result, settings, wright
        As for :func:`simulation_figure`.
    path : str or os.PathLike
        The PNG to write; its folder must exist. The file gets the mode the umask gives.
    """
    with plain_text():
        figure = simulation_figure(result, settings, wright)
    save_figure(figure, path, dpi=DPI)
