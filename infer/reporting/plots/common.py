"""Axis labels and the drawing helpers shared by the report plots.

Figures are built with margins in inches (:func:`_panel_figure`) and few ticks
(:func:`_tidy`); values are put on each parameter's sampling scale (:func:`_scale`,
:func:`_to_scale`).  The underscored helpers are for :mod:`infer.reporting.plots.posterior`
and :mod:`infer.reporting.plots.fit` only.
"""

from __future__ import annotations

import math

import numpy as np

from infer.core.stats import central_tails
from infer.core.text import shown
from infer.reporting.plots.save import new_figure

__all__ = ["PARAMETER_LABELS", "DPI", "axis_label", "plain_log_formatters"]

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

#: resolution of the saved PNG files
DPI = 100


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


def plain_log_formatters():
    r"""(major, minor) tick formatters of a log axis that write plain text ("1e-05").

    Figures are drawn with ``text.parse_math`` off (:mod:`infer.reporting.plots.save`:
    user text stays literal), which would print matplotlib's default log tick labels,
    ``$\mathdefault{10^{-5}}$``, as they are. These choose the same ticks to label.
    """
    from matplotlib.ticker import LogFormatter

    return LogFormatter(), LogFormatter(labelOnlyBase=False)


def _panel_figure(rows, columns, width, height, *, left=0.85, right=0.25, top=0.8, bottom=0.6,
            wgap=0.9, hgap=0.95, **options):
    """Figure of rows x columns panels of width x height inches, margins in inches."""
    total_w = left + right + columns * width + (columns - 1) * wgap
    total_h = top + bottom + rows * height + (rows - 1) * hgap
    figure = new_figure(figsize=(total_w, total_h), dpi=DPI)
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
    study_title = shown(getattr(result.study, "title", "") or "")
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


def _marked_interval(result, name: str, draws: np.ndarray) -> tuple[float, float]:
    entry = result.summary.get("parameters", {}).get(name, {})
    bounds = _to_scale([entry.get("lower", np.nan), entry.get("upper", np.nan)],
                       _scale(result, name))
    if np.all(np.isfinite(bounds)):
        return float(bounds[0]), float(bounds[1])
    if not draws.size:
        return (np.nan, np.nan)
    low, high = np.quantile(draws, central_tails(_level(result)))
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
