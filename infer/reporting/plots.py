"""The five PNG plots of a report folder, drawn from an ``EstimateResult``.

``make_figures`` builds matplotlib ``Figure`` objects that pyplot never sees (so none
stays open); ``write_plots`` saves them with the Agg renderer and releases them.
Scatter plots and curves use evenly spaced subsamples of the draws, so the pictures
are deterministic. Margins are set in inches rather than by a layout engine, ticks are
few, and histograms are single outlines: a layout engine and bar-per-bin histograms
each cost more than the drawing itself on a 2-core machine.
"""

from __future__ import annotations

import math
import pathlib

import numpy as np

__all__ = ["PLOT_FILES", "PARAMETER_LABELS", "axis_label", "make_figures", "write_plots"]

#: plot key -> file name inside the report folder
PLOT_FILES = {
    "marginals": "marginals.png",
    "pairs": "pairs.png",
    "trace": "trace.png",
    "balance": "balance.png",
    "predictive": "predictive.png",
}

#: parameter -> axis text (name and unit or meaning)
PARAMETER_LABELS = {
    "mu": "mu (per gene copy per generation)",
    "s": "s (selection coefficient)",
    "h": "h (dominance)",
    "F": "F (inbreeding coefficient)",
    "nu": "nu (back mutation per gene copy per generation)",
    "Ne": "Ne (effective population size)",
    "alpha": "alpha (male:female mutation-rate ratio)",
    "q_hat": "q_hat (deleterious allele frequency)",
}

_TARGET_LEGEND = {"q_hat": "q_hat", "q_male": "q_male (newborn sons)",
                  "q_female": "q_female (daughters)"}
_DPI = 100
_SCATTER_POINTS = 2000
_CURVE_DRAWS = 300
_TRACE_POINTS = 300
_TRACE_WALKERS = 3
_FIXED_DEFAULTS = {"F": 0.0, "nu": 0.0, "alpha": 1.0}


def axis_label(name: str, scale: str = "linear") -> str:
    """Return the axis text for a parameter, noting a log10 sampling scale.

    Examples
    --------
    >>> axis_label("mu", "log10")
    'mu (per gene copy per generation, log10)'
    """
    text = PARAMETER_LABELS.get(name, name)
    if scale == "log10":
        text = text[:-1] + ", log10)" if text.endswith(")") else f"{text} (log10)"
    return text


def make_figures(result) -> dict:
    """Build the five report figures.

    Parameters
    ----------
    result : infer.results.EstimateResult
        Posterior, prior, trace and predictive draws with their summary.

    Returns
    -------
    dict of str to matplotlib.figure.Figure
        Keyed as ``PLOT_FILES``; the figures are not registered with pyplot.
    """
    return {"marginals": _marginals(result), "pairs": _pairs(result), "trace": _trace(result),
            "balance": _balance(result), "predictive": _predictive(result)}


def write_plots(result, folder: pathlib.Path) -> dict[str, str]:
    """Write the five PNG plots into ``folder`` and return plot key -> file name.

    Parameters
    ----------
    result : infer.results.EstimateResult
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
    for key, figure in make_figures(result).items():
        figure.savefig(folder / PLOT_FILES[key], dpi=_DPI, pil_kwargs={"compress_level": 3})
        figure.clear()
        written[key] = PLOT_FILES[key]
    return written


# ---------------------------------------------------------------- shared helpers


def _panels(rows, columns, width, height, *, left=0.85, right=0.25, top=0.8, bottom=0.6,
            wgap=0.9, hgap=0.95, **options):
    """Figure of rows x columns panels of width x height inches, margins in inches."""
    from matplotlib.figure import Figure

    total_w = left + right + columns * width + (columns - 1) * wgap
    total_h = top + bottom + rows * height + (rows - 1) * hgap
    figure = Figure(figsize=(total_w, total_h), dpi=_DPI)
    figure.subplots_adjust(left=left / total_w, right=1 - right / total_w,
                           bottom=bottom / total_h, top=1 - top / total_h,
                           wspace=wgap / width, hspace=hgap / height)
    return figure, figure.subplots(rows, columns, squeeze=False, **options)


def _tidy(ax, size: float = 8, nbins: int = 5) -> None:
    """Few ticks, plain labels: each tick is several artists, the main cost of drawing."""
    from matplotlib.ticker import AutoLocator, LogFormatter, LogLocator, MaxNLocator, NullLocator

    for axis, limits in ((ax.xaxis, ax.get_xlim()), (ax.yaxis, ax.get_ylim())):
        if type(axis.get_major_locator()) is AutoLocator:
            axis.set_major_locator(MaxNLocator(nbins=nbins))
        elif isinstance(axis.get_major_locator(), LogLocator):
            axis.set_major_formatter(LogFormatter())  # "1e-05": mathtext labels are slow
            axis.set_minor_formatter(LogFormatter(labelOnlyBase=False,
                                                  minor_thresholds=(1, 0.4)))
            low, high = sorted(limits)
            if low > 0 and high / low > 100:
                axis.set_minor_locator(NullLocator())
    ax.tick_params(labelsize=size)


def _title(figure, text: str, result) -> None:
    study_title = str(getattr(result.study, "title", "") or "")
    if len(study_title) > 80:
        study_title = study_title[:77] + "..."
    figure.suptitle(f"{text}\n{study_title}" if study_title else text, fontsize=11)


def _scale(result, name: str) -> str:
    prior = result.study.parameters.get(name)
    if hasattr(prior, "sampling_scale_name"):
        return prior.sampling_scale_name
    return result.summary.get("parameters", {}).get(name, {}).get("scale", "linear")


def _to_scale(values, scale: str) -> np.ndarray:
    values = np.asarray(values, dtype=float)
    if scale != "log10":
        return values
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(values > 0, np.log10(np.where(values > 0, values, 1.0)), np.nan)


def _finite(values) -> np.ndarray:
    values = np.asarray(values, dtype=float).ravel()
    return values[np.isfinite(values)]


def _every(values: np.ndarray, count: int) -> np.ndarray:
    """Evenly spaced subsample along the first axis (keeps every chain, deterministic)."""
    if values.shape[0] <= count:
        return values
    return values[np.linspace(0, values.shape[0] - 1, count).astype(int)]


def _level(result) -> float:
    return float(result.summary.get("interval", 0.95))


def _interval(result, name: str, draws: np.ndarray) -> tuple[float, float]:
    entry = result.summary.get("parameters", {}).get(name, {})
    bounds = _to_scale([entry.get("lower", np.nan), entry.get("upper", np.nan)],
                       _scale(result, name))
    if np.all(np.isfinite(bounds)):
        return float(bounds[0]), float(bounds[1])
    if not draws.size:
        return (np.nan, np.nan)
    tail = (1 - _level(result)) / 2
    low, high = np.quantile(draws, [tail, 1 - tail])
    return float(low), float(high)


def _bins(values: np.ndarray, count: int = 50) -> np.ndarray:
    low, high = np.quantile(values, [0.001, 0.999]) if values.size else (0.0, 1.0)
    if not high > low:
        low, high = low - 0.5, high + 0.5
    return np.linspace(low, high, count + 1)


def _histogram(ax, values, bins, *, density=False, fill=True, **style) -> None:
    """One step outline (much cheaper to draw than ``Axes.hist``'s bar per bin)."""
    counts, edges = np.histogram(values, bins=bins, density=density and values.size > 0)
    ax.stairs(counts, edges, fill=fill, **style)


def _prior_density(result, name: str, z: np.ndarray) -> np.ndarray | None:
    """Prior density on the sampling scale z; on log10 it gains the Jacobian x ln 10."""
    prior = result.study.parameters.get(name)
    if not hasattr(prior, "log_density"):
        return None
    log10 = _scale(result, name) == "log10"
    x = 10.0**z if log10 else z
    with np.errstate(all="ignore"):
        density = np.exp(np.asarray(prior.log_density(x), dtype=float))
        density = density * x * math.log(10.0) if log10 else density
    return np.where(np.isfinite(density), density, 0.0)


def _quiet():
    """Silence numpy's 'All-NaN slice' warnings where draws have no equilibrium."""
    import warnings

    return warnings.catch_warnings(action="ignore", category=RuntimeWarning)


def _no_data(ax, text: str) -> None:
    ax.text(0.5, 0.5, text, ha="center", va="center", transform=ax.transAxes)
    ax.set_xticks([])
    ax.set_yticks([])


# ---------------------------------------------------------------- 1. marginals


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
    lower, upper = _interval(result, name, draws)
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


def _marginals(result):
    names = list(result.free)
    columns = min(len(names), 3) or 1
    rows = max(1, math.ceil(len(names) / columns))
    figure, axes = _panels(rows, columns, 3.6, 2.7)
    axes = axes.ravel()
    for number, (ax, name) in enumerate(zip(axes, names)):
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


def _pairs(result):
    names = list(result.free)
    if len(names) < 2:
        figure, axes = _panels(1, 1, 4.8, 3.2)
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
    figure, axes = _panels(k, k, size, size, left=0.9, bottom=0.75, wgap=0.12, hgap=0.12,
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


def _trace(result):
    import matplotlib

    names = list(result.free)
    figure, axes = _panels(max(1, len(names)), 1, 8.0, 1.6, left=1.0, hgap=0.25,
                           sharex=True)
    axes = axes[:, 0]
    colours = matplotlib.colormaps["tab10"].colors
    chains = 0
    for ax, name in zip(axes, names):
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


# ---------------------------------------------------------------- 4. balance


def _clopper_pearson(k: int, n: int, level: float = 0.95) -> tuple[float, float]:
    """Exact binomial interval (Clopper & Pearson 1934, Biometrika 26: 404-413)."""
    from scipy.stats import beta

    tail = (1 - level) / 2
    lower = 0.0 if k <= 0 else float(beta.ppf(tail, k, n - k + 1))
    upper = 1.0 if k >= n else float(beta.ppf(1 - tail, k + 1, n - k))
    return lower, upper


def _observed_bands(result) -> list[tuple[str, float, float, str]]:
    """(frequency compared, lower, upper, legend) per allele- or genotype-count datum."""
    x_linked = result.study.inheritance == "x-linked"
    bands = []
    for obs in result.study.observations:
        if obs.kind == "allele-count":
            k, n = int(obs.observed), int(obs.sampled)
            target = {"male": "q_male", "female": "q_female"}.get(getattr(obs, "sex", None),
                                                                 "q_hat")
        elif obs.kind == "genotype-count":
            k, n = int(obs.Aa) + 2 * int(obs.aa), 2 * (int(obs.AA) + int(obs.Aa) + int(obs.aa))
            target = "q_female"  # X-linked genotypes are daughters'
        else:
            continue
        if n > 0:
            lower, upper = _clopper_pearson(k, n)
            bands.append((target if x_linked else "q_hat", lower, upper,
                          f"observed {obs.label}: {k}/{n} (95 % Clopper-Pearson)"))
    return bands


def _balance_curves(result, draws, against, x, targets):
    from infer import balance

    count = max([v.size for v in draws.values()] or [1])
    column = {n: (draws[n] if n in draws else
                  np.full(count, float(getattr(result.study.parameters.get(n), "value",
                                               _FIXED_DEFAULTS.get(n, 0.0)))))[:, None]
              for n in ("mu", "s", "h", "F", "nu", "alpha")}
    column[against] = x[None, :]
    with np.errstate(all="ignore"):
        if result.study.inheritance == "x-linked":
            solved = balance.x_linked_balance(*(column[n] for n in
                                                ("mu", "s", "h", "F", "nu", "alpha")))
            return {t: np.asarray(getattr(solved, t), float) for t in targets}
        return {"q_hat": np.asarray(balance.q_hat(*(column[n] for n in
                                                     ("mu", "s", "h", "F", "nu"))), float)}


def _balance(result):
    draws = {n: _every(np.asarray(result.posterior[n], float).ravel(), _CURVE_DRAWS)
             for n in result.free}
    against = "h" if "h" in result.free else "s"
    fixed = {n: float(getattr(p, "value", np.nan)) for n, p in result.study.parameters.items()}
    if against == "h":
        x = np.linspace(0.0, 1.0, 101)
    elif "s" in result.free:
        prior_s = _finite(result.prior.get("s", draws["s"]))
        low = np.quantile(np.concatenate([prior_s, draws["s"]]), 0.005)
        x = np.geomspace(max(low, 1e-6), 1.0, 121)
    else:
        x = np.geomspace(max(fixed["s"] / 30, 1e-6), min(1.0, fixed["s"] * 30), 121)
    bands = _observed_bands(result)
    targets = sorted({band[0] for band in bands}) or ["q_hat"]
    curves = _balance_curves(result, draws, against, x, targets)
    level = _level(result)
    figure, axes = _panels(1, 1, 5.6, 3.6, right=0.3)
    ax = axes[0, 0]
    values = [np.array([b[2] for b in bands])]
    for number, (target, curve) in enumerate(curves.items()):
        colour = ("tab:blue", "tab:purple", "tab:green")[number % 3]
        with np.errstate(all="ignore"), _quiet():
            lower, median, upper = np.nanquantile(np.where(curve > 0, curve, np.nan),
                                                  [(1 - level) / 2, 0.5, (1 + level) / 2],
                                                  axis=0)
        name = _TARGET_LEGEND.get(target, target)
        ax.fill_between(x, lower, upper, color=colour, alpha=0.2, lw=0,
                        label=f"{name}: {round(100 * level)} % band over posterior draws")
        ax.plot(x, median, color=colour, lw=1.8, label=f"{name}: posterior median")
        values.append(np.concatenate([lower, upper]))
        derived = _finite(result.derived.get(target, []))
        if derived.size:
            at = np.median(draws[against]) if against in draws else fixed[against]
            ax.plot([at], [np.median(derived)], marker="o", ms=7, color=colour,
                    markeredgecolor="black", ls="none", label=f"{name}: posterior median point")
    values = _finite(np.concatenate(values))
    values = values[values > 0]
    floor = float(values.min()) / 3 if values.size else 1e-12
    for number, (_, lower, upper, legend) in enumerate(bands):
        ax.axhspan(max(lower, floor), upper, alpha=0.25, lw=0, label=legend,
                   color=("tab:orange", "tab:red", "tab:brown", "tab:olive")[number % 4])
    if values.size and values.max() / values.min() > 10:
        ax.set_yscale("log")
    if against == "s":
        ax.set_xscale("log")
        ax.set_xlabel(f"{axis_label('s')}; h fixed at {fixed.get('h', np.nan):g}", fontsize=9)
    else:
        ax.set_xlabel(axis_label("h"), fontsize=9)
        ax.set_xlim(0.0, 1.0)
    ax.set_ylabel(axis_label("q_hat"), fontsize=9)
    ax.legend(fontsize=7, loc="best" if len(bands) < 3 else "upper left", framealpha=0.8)
    _tidy(ax)
    _title(figure, f"Mutation-selection balance: exact q_hat against {against}", result)
    return figure


# ---------------------------------------------------------------- 5. predictive


def _predictive(result):
    checks = list(result.summary.get("predictive", []))
    observations = list(result.study.observations)
    n = len(result.replicated)
    columns = min(3, max(n, 1))
    figure, axes = _panels(max(1, math.ceil(n / columns)), columns, 2.8, 1.9, left=0.7,
                           top=0.85, wgap=0.7, hgap=1.05)
    axes = axes.ravel()
    for i, (ax, replicated) in enumerate(zip(axes, result.replicated)):
        check = checks[i] if i < len(checks) else {}
        obs = observations[i] if i < len(observations) else None
        observed = check.get("observed", obs.statistic() if obs is not None else None)
        values = _finite(replicated)
        if values.size:
            low, high = float(values.min()), float(values.max())
            if observed is not None and np.isfinite(observed):
                low, high = min(low, float(observed)), max(high, float(observed))
            integer = np.all(values == np.round(values)) and high - low < 60
            bins = (np.arange(low - 0.5, high + 1.5) if integer
                    else np.linspace(low, high if high > low else low + 1, 41))
            _histogram(ax, values, bins, color="tab:green", alpha=0.6, label="replicated")
        else:
            ax.text(0.5, 0.5, "no finite replicates", ha="center", transform=ax.transAxes)
        if observed is not None:
            ax.axvline(float(observed), color="black", lw=1.8, label="observed")
        p_value = check.get("p_value")
        p_text = "p = n/a" if p_value is None or not np.isfinite(p_value) else f"p = {p_value:.3g}"
        label = check.get("label") or getattr(obs, "label", f"observation {i + 1}")
        ax.set_title(f"{label}\n{check.get('kind') or getattr(obs, 'kind', '')}, {p_text}",
                     fontsize=8)
        ax.set_xlabel(check.get("statistic") or getattr(obs, "statistic_name", "statistic"),
                      fontsize=8)
        ax.set_ylabel("predictive draws", fontsize=8)
        if i == 0:
            ax.legend(fontsize=7, loc="upper right", framealpha=0.8)
        _tidy(ax, 7)
    for ax in axes[n:]:
        ax.set_visible(False)
    if n == 0:
        axes[0].set_visible(True)
        _no_data(axes[0], "no observations")
    _title(figure, "Posterior predictive checks (two-sided p-values)", result)
    return figure
