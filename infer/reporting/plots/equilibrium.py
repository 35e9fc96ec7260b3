"""The figure of ``qhat equilibrium --plot``: q̂ against h, with the classic approximations.

The top panel draws the exact stable equilibrium over h in [0, 1], widened to reach a
chosen h outside it (heterozygote advantage, h < 0, or Aa below aa, h > 1) (X-linked: the
frequency among sons), each approximation solid where it is in range and dotted
outside, and a dashed line at the chosen h; the strip below marks where each
approximation leaves its range. Built without pyplot (:mod:`infer.reporting.plots.save`).
"""

from __future__ import annotations

import os

import numpy as np

from infer.core import approximations, balance
from infer.reporting.plots.common import plain_log_formatters
from infer.reporting.plots.save import new_figure, plain_text, save_figure

__all__ = ["equilibrium_figure", "write_equilibrium_plot", "DPI"]

#: resolution of the PNG
DPI = 120
_POINTS = 501


def _curves(options: dict, h: np.ndarray):
    """(exact curve, approximations, y-axis label) over ``h``."""
    mu, s, F, nu = (options[k] for k in ("mu", "s", "F", "nu"))
    if options["inheritance"] == "autosomal":
        exact = balance.autosomal_balance(mu, s, h, F, nu, any_dominance=True).q_hat
        found = approximations.autosomal_approximations(mu, s, h, F)
        return exact, found, "equilibrium frequency q̂ of the deleterious allele"
    exact = balance.x_linked_balance(mu, s, h, F, nu, options["alpha"]).q_male
    found = approximations.x_linked_approximations(mu, s, h, options["alpha"])
    return exact, found, "equilibrium frequency among sons, q̂ (q_male)"


def equilibrium_figure(options: dict):
    """Draw q̂ against the dominance coefficient h in [0, 1].

    Parameters
    ----------
    options : dict
        The validated options of ``qhat equilibrium``: ``mu``, ``s``, ``h``, ``F``,
        ``nu``, ``inheritance`` and (X-linked) ``alpha``.

    Returns
    -------
    matplotlib.figure.Figure
        Two axes: the curves (log scale) and the out-of-range strip.
    """
    import matplotlib

    mu, s, F, nu = (options[k] for k in ("mu", "s", "F", "nu"))
    # h outside [0, 1] (general genotype fitness, autosomal) widens the axis to reach it
    h = np.linspace(min(0.0, options["h"]), max(1.0, options["h"]), _POINTS)
    exact, found, ylabel = _curves(options, h)
    figure = new_figure(figsize=(7.0, 5.6))
    top, strip = figure.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [4, 1.2]})
    top.plot(h, exact, color="black", linewidth=2.2, label="exact (this life cycle)")
    colours = matplotlib.rcParams["axes.prop_cycle"].by_key()["color"]
    for row, (name, a) in enumerate(found.items()):
        colour = colours[row % len(colours)]
        top.plot(h, np.where(a.in_range, a.value, np.nan), color=colour, linewidth=1.3,
                 label=f"{name}")
        top.plot(h, np.where(a.in_range, np.nan, a.value), color=colour, linewidth=1.0,
                 linestyle=":")
        strip.fill_between(h, row, row + 0.8, where=~a.in_range, color=colour, alpha=0.45,
                           step="mid", linewidth=0)
    top.axvline(options["h"], color="grey", linewidth=0.8, linestyle="--")
    top.set_yscale("log")
    major, minor = plain_log_formatters()
    top.yaxis.set_major_formatter(major)
    top.yaxis.set_minor_formatter(minor)
    finite = exact[np.isfinite(exact)]
    if finite.size:
        top.set_ylim(finite.min() / 3.0, min(1.0, finite.max() * 3.0))
    top.set_ylabel(ylabel)
    top.legend(fontsize=8, loc="best", title="solid: in range; dotted: outside", title_fontsize=8)
    sex = " (x-linked)" if options["inheritance"] == "x-linked" else ""
    top.set_title(f"Mutation-selection balance{sex}: mu = {mu:g}, s = {s:g}, F = {F:g}, "
                  f"nu = {nu:g}", fontsize=10)
    strip.set_yticks([row + 0.4 for row in range(len(found))], list(found), fontsize=7)
    strip.set_ylim(-0.1, len(found))
    strip.set_ylabel("outside range", fontsize=8)
    strip.set_xlabel("dominance coefficient h")
    strip.set_xlim(float(h[0]), float(h[-1]))
    figure.tight_layout()
    return figure


def write_equilibrium_plot(options: dict, path: str | os.PathLike) -> None:
    """Draw :func:`equilibrium_figure` and write it to ``path`` as a PNG, atomically.

    Parameters
    ----------
    options : dict
        As for :func:`equilibrium_figure`.
    path : str or os.PathLike
        The PNG to write; its folder must exist. The file gets the mode the umask gives.
    """
    with plain_text():
        figure = equilibrium_figure(options)
    save_figure(figure, path, dpi=DPI)
