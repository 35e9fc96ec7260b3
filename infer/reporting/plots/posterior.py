"""Posterior plots of a report: prior and posterior marginals, pairs, ensemble traces."""

from __future__ import annotations

import math

import numpy as np

from infer.reporting.plots.common import (
    _bins,
    _every,
    _finite,
    _histogram,
    _level,
    _marked_interval,
    _no_data,
    _panel_figure,
    _prior_density,
    _quiet,
    _scale,
    _tidy,
    _title,
    _to_scale,
    axis_label,
)

__all__ = ["marginals_figure", "pairs_figure", "trace_figure"]

_SCATTER_POINTS = 2000
_TRACE_POINTS = 300
_TRACE_WALKERS = 3


def _marginal_range(draws, prior_draws) -> tuple[float, float, str]:
    """Axis range: prior and posterior together, or the posterior when the prior is far wider."""
    post = np.quantile(draws, [0.001, 0.999]) if draws.size else None
    prior = np.quantile(prior_draws, [0.005, 0.995]) if prior_draws.size else None
    note = ""
    if post is None and prior is None:
        return 0.0, 1.0, note
    if post is None or prior is None or prior[1] - prior[0] <= 8 * (post[1] - post[0]):
        ends = [e for e in (post, prior) if e is not None]
        low, high = min(e[0] for e in ends), max(e[1] for e in ends)
    else:
        width = post[1] - post[0]
        low, high = max(post[0] - 1.5 * width, prior[0]), min(post[1] + 1.5 * width, prior[1])
        note = f"prior 99 % range {prior[0]:.3g} to {prior[1]:.3g}\n(zoomed to the posterior)"
    if not high > low:
        low, high = low - 0.5, high + 0.5
    return float(low), float(high), note


def _marginal_panel(ax, result, name: str, legend: bool = True) -> None:
    scale = _scale(result, name)
    draws = _finite(_to_scale(result.posterior[name], scale))
    prior_draws = _finite(_to_scale(result.prior.get(name, []), scale))
    lower, upper = _marked_interval(result, name, draws)
    low, high, note = _marginal_range(draws, prior_draws)
    z = np.linspace(low, high, 400)
    density = _prior_density(result, name, z)
    if density is not None:
        ax.plot(z, density, color="0.4", lw=1.5, ls="--", label="prior")
    elif prior_draws.size:
        _histogram(ax, prior_draws, _bins(prior_draws), density=True, fill=False,
                   color="0.4", lw=1.5, label="prior (draws)")
    _histogram(ax, draws, _bins(draws), density=True, color="tab:blue", alpha=0.5,
               label="posterior draws")
    ax.axvspan(lower, upper, color="tab:blue", alpha=0.15,
               label=f"{round(100 * _level(result))} % interval")
    if draws.size:
        ax.axvline(np.median(draws), color="tab:blue", lw=1.2, label="posterior median")
    grid = result.grid
    if grid is not None and name in getattr(grid, "marginal_density", {}):
        axis = np.asarray(grid.axes[name], dtype=float)
        exact = np.asarray(grid.marginal_density[name], dtype=float)
        exact = exact * axis * math.log(10.0) if scale == "log10" else exact
        exact_z = _to_scale(axis, scale)
        keep = np.isfinite(exact_z) & np.isfinite(exact)
        area = np.trapezoid(exact[keep], exact_z[keep]) if keep.sum() > 1 else 0.0
        if area > 0:
            ax.plot(exact_z[keep], exact[keep] / area, color="black", lw=1.2,
                    label="exact grid posterior")
    ax.set_xlim(low, high)
    if note:
        ax.text(0.02, 0.97, note, transform=ax.transAxes, va="top", fontsize=7, color="0.3")
    ax.set_xlabel(axis_label(name, scale), fontsize=9)
    ax.set_ylabel(f"density per unit of {'log10 ' if scale == 'log10' else ''}{name}",
                  fontsize=9)
    if legend:
        ax.legend(fontsize=7, loc="upper right", framealpha=0.8)
    _tidy(ax)


def marginals_figure(result):
    """Prior and posterior marginal of each free parameter, one panel each.

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult

    Returns
    -------
    matplotlib.figure.Figure
    """
    names = list(result.free)
    columns = min(len(names), 3) or 1
    rows = max(1, math.ceil(len(names) / columns))
    figure, axes = _panel_figure(rows, columns, 3.6, 2.7)
    axes = axes.ravel()
    for number, (ax, name) in enumerate(zip(axes, names, strict=False)):
        _marginal_panel(ax, result, name, legend=number == 0)
    for ax in axes[len(names):]:
        ax.set_visible(False)
    if not names:
        axes[0].set_visible(True)
        _no_data(axes[0], "no free parameters")
    _title(figure, "Prior and posterior marginals", result)
    return figure


# ---------------------------------------------------------------- 2. pairs


def _smooth(counts: np.ndarray) -> np.ndarray:
    """Two passes of the [1, 2, 1] / 4 kernel along each axis (smoother contours)."""
    for _ in range(2):
        for axis in (0, 1):
            padded = np.moveaxis(np.pad(counts, [(1, 1) if a == axis else (0, 0)
                                                 for a in (0, 1)], mode="edge"), axis, 0)
            counts = np.moveaxis((padded[:-2] + 2 * padded[1:-1] + padded[2:]) / 4, 0, axis)
    return counts


def _mass_levels(counts: np.ndarray, masses=(0.865, 0.393)) -> list[float]:
    """Count levels enclosing the given shares of draws (2-D 2- and 1-sigma regions)."""
    flat = np.sort(counts.ravel())[::-1]
    cumulative = np.cumsum(flat) / max(flat.sum(), 1)
    levels = {float(flat[min(np.searchsorted(cumulative, m), flat.size - 1)]) for m in masses}
    return sorted(level for level in levels if level > 0)


def pairs_figure(result):
    """Pairwise scatter and contours of the free parameters, histograms on the diagonal.

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult

    Returns
    -------
    matplotlib.figure.Figure
    """
    names = list(result.free)
    if len(names) < 2:
        figure, axes = _panel_figure(1, 1, 4.8, 3.2)
        ax = axes[0, 0]
        if names:
            _marginal_panel(ax, result, names[0])
            ax.text(0.02, 0.96, "one free parameter", transform=ax.transAxes, va="top",
                    fontsize=9, style="italic")
        else:
            _no_data(ax, "no free parameters")
        _title(figure, "Posterior pairs", result)
        return figure
    k = len(names)
    size = max(1.3, min(2.3, 7.5 / k))
    figure, axes = _panel_figure(k, k, size, size, left=0.9, bottom=0.75, wgap=0.12, hgap=0.12,
                           sharex="col")
    labels = [axis_label(n, _scale(result, n)) for n in names]
    stack = np.column_stack([_to_scale(result.posterior[n], _scale(result, n)).ravel()
                             for n in names])
    stack = stack[np.all(np.isfinite(stack), axis=1)]
    points = _every(stack, _SCATTER_POINTS)
    bins = [_bins(stack[:, i], 40) for i in range(k)]
    for i in range(k):
        for j in range(k):
            ax = axes[i, j]
            if j > i:
                ax.set_visible(False)
                continue
            if i == j:
                _histogram(ax, stack[:, i], bins[i], color="tab:blue", alpha=0.6)
                ax.yaxis.set_label_position("right")
                ax.set_ylabel("draws", fontsize=7)
                ax.set_yticks([])
            else:
                ax.plot(points[:, j], points[:, i], ".", ms=1.5, alpha=0.3, color="tab:blue")
                counts, x_edges, y_edges = np.histogram2d(stack[:, j], stack[:, i],
                                                          bins=[bins[j], bins[i]])
                counts = _smooth(counts)
                levels = _mass_levels(counts)
                if levels and counts.max() > levels[0]:
                    ax.contour(0.5 * (x_edges[1:] + x_edges[:-1]),
                               0.5 * (y_edges[1:] + y_edges[:-1]), counts.T, levels=levels,
                               colors="navy", linewidths=0.9)
                ax.set_ylim(bins[i][0], bins[i][-1])
                if j == 0:
                    ax.set_ylabel(labels[i], fontsize=8)
                else:
                    ax.sharey(axes[i, 0])
                    ax.tick_params(labelleft=False)
            ax.set_xlim(bins[j][0], bins[j][-1])
            if i == k - 1:
                ax.set_xlabel(labels[j], fontsize=8)
            _tidy(ax, 7, nbins=3)
    _title(figure, "Posterior pairs (contours hold 39 % and 86 % of the draws)", result)
    return figure


# ---------------------------------------------------------------- 3. trace


def trace_figure(result):
    """Traces of the independently started ensembles (walker medians and a few walkers).

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib

    names = list(result.free)
    figure, axes = _panel_figure(max(1, len(names)), 1, 8.0, 1.6, left=1.0, hgap=0.25,
                           sharex=True)
    axes = axes[:, 0]
    colours = matplotlib.colormaps["tab10"].colors
    chains = 0
    for ax, name in zip(axes, names, strict=False):
        scale = _scale(result, name)
        walkers = _to_scale(result.trace_walkers[name], scale)  # (chains, steps, walkers)
        chains, steps, count = walkers.shape
        index = np.unique(np.linspace(0, steps - 1, min(steps, _TRACE_POINTS)).astype(int))
        shown = np.unique(np.linspace(0, count - 1, min(count, _TRACE_WALKERS)).astype(int))
        with np.errstate(all="ignore"), _quiet():
            centre = np.nanmedian(walkers[:, index], axis=2)
        for chain in range(chains):
            colour = colours[chain % len(colours)]
            # the shown walkers as one NaN-separated line: one artist instead of several
            thin = np.vstack([walkers[chain][index][:, shown], np.full((1, shown.size), np.nan)])
            steps_axis = np.append(index, index[-1]).astype(float)
            steps_axis[-1] = np.nan
            ax.plot(np.tile(steps_axis, shown.size), thin.T.ravel(), color=colour, lw=0.5,
                    alpha=0.35)
            ax.plot(index, centre[chain], color=colour, lw=1.3, label=f"ensemble {chain + 1}")
        ax.set_ylabel(axis_label(name, scale).replace(" (", "\n("), fontsize=8)
        _tidy(ax)
    if names:
        axes[0].legend(fontsize=7, ncols=min(4, chains), loc="upper right", framealpha=0.8)
        axes[-1].set_xlabel(f"saved step after a burn-in of {result.burn_in} steps "
                            "(thick: walker median; thin: single walkers)", fontsize=9)
    else:
        _no_data(axes[0], "no free parameters")
    _title(figure, "Traces of the independently started ensembles", result)
    return figure
