"""Model plots of a report: the balance curve against the data, predictive checks."""

from __future__ import annotations

import math

import numpy as np

from infer.core.stats import clopper_pearson
from infer.reporting.plots.common import (
    _every,
    _finite,
    _histogram,
    _level,
    _no_data,
    _panel_figure,
    _quiet,
    _tidy,
    _title,
    axis_label,
)

__all__ = ["balance_curve_figure", "predictive_figure"]

_TARGET_LEGEND = {"q_hat": "q_hat", "q_male": "q_male (newborn sons)",
                  "q_female": "q_female (daughters)"}
_CURVE_DRAWS = 300
_FIXED_DEFAULTS = {"F": 0.0, "nu": 0.0, "alpha": 1.0}


def _observed_bands(result) -> list[tuple[str, float, float, str]]:
    """(frequency compared, lower, upper, legend) per observed allele frequency.

    Each observation's share of allele copies
    (:meth:`~infer.model.observations.base.Observation.frequency_statistic`), with its
    95 % Clopper-Pearson interval; at an X-linked locus also the affected share of sons,
    which measures the frequency in sons (divided by the penetrance, ``scale``).
    """
    bands = []
    x_linked = result.study.inheritance == "x-linked"
    for obs in result.study.observations:
        statistic = obs.frequency_statistic()
        if statistic is None or statistic.trials <= 0:
            continue
        sons = x_linked and statistic.quantity == "q_male" and statistic.scale > 0
        if not (statistic.of_alleles or sons):
            continue
        k, n = statistic.count, statistic.trials
        lower, upper = clopper_pearson(k, n)
        scale = 1.0 if statistic.of_alleles else float(statistic.scale)
        bands.append((statistic.quantity, lower / scale, upper / scale,
                      f"observed {obs.label}: {k}/{n} (95 % Clopper-Pearson)"))
    return bands


def _at_median(result, draws, name):
    if name in draws:
        return float(np.median(draws[name]))
    return float(getattr(result.study.parameters.get(name), "value",
                         _FIXED_DEFAULTS.get(name, 0.0)))


def _stationary_band(result, draws, against, x, level):
    """Wright's stationary distribution along ``x`` at the posterior medians of the rest.

    Returns (lower, median, upper, mean) arrays (Wright 1931; 1937, via
    :mod:`infer.core.drift.stationary`).
    """
    from infer.core.drift import stationary as drift

    column = {n: np.full(x.size, _at_median(result, draws, n)) for n in
              ("Ne", "mu", "s", "h", "nu")}
    column[against] = np.asarray(x, float)
    args = [column[n] for n in ("Ne", "mu", "s", "h", "nu")]
    with np.errstate(all="ignore"):
        stats = drift.stationary_summary(*args, interval=level)
    return stats["lower"], stats["median"], stats["upper"], stats["mean"]


def _balance_curves(result, draws, against, x, targets):
    from infer.core import balance

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


def balance_curve_figure(result):
    """Exact q_hat against h (or s) over the posterior draws, with the observed frequencies.

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult

    Returns
    -------
    matplotlib.figure.Figure
    """
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
    x_linked = result.study.inheritance == "x-linked"
    # an X-linked study sees the frequency in sons (affected sons, hemizygous)
    targets = sorted({band[0] for band in bands}) or (["q_male"] if x_linked else ["q_hat"])
    curves = _balance_curves(result, draws, against, x, targets)
    level = _level(result)
    drift = result.study.model == "drift"
    # the curves are equilibria; a study with a [history] is fitted to the history instead
    history = getattr(result.study, "history", None) is not None
    # a drift panel carries up to nine legend entries: they go below the axes, off the data
    figure, axes = _panel_figure(1, 1, 5.6, 3.6, right=0.3,
                                 bottom=0.6 + (1.3 if drift else 0.0))
    ax = axes[0, 0]
    values = [np.array([b[2] for b in bands])]
    if drift:
        s_lower, s_median, s_upper, s_mean = _stationary_band(result, draws, against, x, level)
        values.append(np.concatenate([s_mean, s_upper]))
    for number, (target, curve) in enumerate(curves.items()):
        colour = ("tab:blue", "tab:purple", "tab:green")[number % 3]
        with np.errstate(all="ignore"), _quiet():
            lower, median, upper = np.nanquantile(np.where(curve > 0, curve, np.nan),
                                                  [(1 - level) / 2, 0.5, (1 + level) / 2],
                                                  axis=0)
        name = _TARGET_LEGEND.get(target, target)
        if drift:
            name = f"deterministic {name} (no drift)"
        if history:
            name = f"equilibrium {name} (no history)"
        ax.fill_between(x, lower, upper, color=colour, alpha=0.2, lw=0,
                        label=f"{name}: {round(100 * level)} % band over posterior draws")
        ax.plot(x, median, color=colour, lw=1.8, label=f"{name}: posterior median")
        values.append(np.concatenate([lower, upper]))
        derived = _finite(result.derived.get(target, []))
        if derived.size:
            at = np.median(draws[against]) if against in draws else fixed[against]
            point = (f"{_TARGET_LEGEND.get(target, target)} today under the history: posterior "
                     "median" if history and not drift else f"{name}: posterior median point")
            ax.plot([at], [np.median(derived)], marker="o", ms=7, color=colour,
                    markeredgecolor="black", ls="none", label=point)
    values = _finite(np.concatenate(values))
    values = values[values > 0]
    floor = float(values.min()) / 3 if values.size else 1e-12
    if drift:
        ne = _at_median(result, draws, "Ne")
        # below one copy in 2Ne genes the allele is absent: the band's floor is the axis
        one_copy = 1.0 / (2.0 * ne)
        floor = min(floor, one_copy / 3)
        ax.fill_between(x, np.maximum(np.nan_to_num(s_lower), floor),
                        np.maximum(np.nan_to_num(s_upper), floor), color="tab:gray",
                        alpha=0.25, lw=0, hatch="//",
                        label=f"Wright's stationary distribution: central "
                              f"{round(100 * level)} % (other parameters at posterior medians)")
        ax.plot(x, s_mean, color="black", lw=1.4, ls="--", label="Wright's stationary mean")
        ax.axhline(one_copy, color="tab:gray", lw=0.8, ls=":",
                   label=f"one copy in the population, 1/(2Ne) = {one_copy:.3g}")
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
    if drift and values.size:
        ax.set_ylim(floor, min(1.0, float(values.max()) * 3))
    ax.set_ylabel("deleterious allele frequency in newborn sons (q_male)" if targets == ["q_male"]
                  else axis_label("q_hat"), fontsize=9)
    if drift:
        ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.14), ncols=1,
                  frameon=False)
    else:
        ax.legend(fontsize=7, loc="best" if len(bands) < 3 else "upper left", framealpha=0.8)
    _tidy(ax)
    what = "q_male (frequency in newborn sons)" if targets == ["q_male"] else "q_hat"
    heading = (f"Drift and balance: Wright's stationary distribution and the deterministic "
               f"{what} against {against}" if drift
               else f"Mutation-selection balance: exact {what} against {against}")
    if history:
        heading = f"Equilibrium {what} against {against}, for comparison with the [history]"
    _title(figure, heading, result)
    return figure


# ---------------------------------------------------------------- 5. predictive


def predictive_figure(result):
    """Replicated statistic of each observation against the observed value.

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult

    Returns
    -------
    matplotlib.figure.Figure
    """
    checks = list(result.summary.get("predictive", []))
    observations = list(result.study.observations)
    n = len(result.replicated)
    columns = min(3, max(n, 1))
    figure, axes = _panel_figure(max(1, math.ceil(n / columns)), columns, 2.8, 1.9, left=0.7,
                           top=0.85, wgap=0.7, hgap=1.05)
    axes = axes.ravel()
    for i, (ax, replicated) in enumerate(zip(axes, result.replicated, strict=False)):
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
