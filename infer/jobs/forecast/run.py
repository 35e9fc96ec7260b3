"""``forecast``: allele frequency and incidence of every posterior draw, generations ahead.

The job reads an estimate report (:func:`~infer.jobs.forecast.source.read_report`),
starts each posterior draw at its own equilibrium, applies the changed values (for
instance s = 0 when a treatment restores fertility) and iterates the deterministic life
cycle (:mod:`~infer.jobs.forecast.project`). The result holds the quantiles over draws
at every generation; it draws and writes nothing (:mod:`infer.reporting.forecast_report`
renders it).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from infer.core.choices import AUTOSOMAL_MODES
from infer.errors import InputError
from infer.jobs.forecast.changes import check_changes
from infer.jobs.forecast.project import (
    equilibrium_state,
    frequency_and_incidence,
    trajectories,
)
from infer.jobs.forecast.source import LIFE_CYCLE, ForecastSource, read_report

__all__ = ["ForecastResult", "forecast", "PROBABILITIES", "MAX_GENERATIONS", "resolve_mode"]

#: the probabilities of the quantiles over draws: median, 50 % and 95 % central intervals
PROBABILITIES = (0.025, 0.25, 0.5, 0.75, 0.975)
#: the longest forecast: a deterministic projection far beyond a few hundred generations
#: says more about the model than about a population (and each generation costs a pass
#: over every draw)
MAX_GENERATIONS = 10_000


@dataclass(frozen=True)
class ForecastResult:
    """A forecast of every posterior draw of an estimate report.

    Attributes
    ----------
    title, report, inheritance, mode : str
        The study's title, the report folder read, the inheritance and the affected
        genotypes (``dominant``: Aa and aa; ``recessive``: aa; ``x-linked-male``:
        hemizygous sons).
    changes : dict of str to float
        The values changed from generation 0 on.
    values : dict of str to dict
        Each life-cycle parameter: ``before`` (the report's median over the draws used),
        ``after`` (the same, changed or not), ``fixed`` (held fixed by the study),
        ``changed``.
    generations : numpy.ndarray
        0, 1, ..., N (0 is the present, at equilibrium).
    probabilities : tuple of float
        The probabilities of the quantile columns.
    q, incidence : numpy.ndarray
        (N + 1, len(probabilities)) quantiles over draws of the allele frequency among
        newborns (all X chromosomes for an X-linked locus) and of the affected share of
        births (of male births for an X-linked locus).
    draws : int
        Posterior draws projected.
    draws_without_equilibrium : int
        Draws of the report left out because they have no stable equilibrium to start
        from.
    first_change : dict of str to float
        Median over draws of the change in ``q`` and ``incidence`` in generation 1.
    equilibrium_after : dict
        Where the changed values lead: ``share`` of the draws with a stable equilibrium
        under them, and the quantiles of that equilibrium's q (``None`` when no draw has
        one, as when s = 0).
    """

    title: str
    report: str
    inheritance: str
    mode: str
    changes: dict
    values: dict
    generations: np.ndarray
    probabilities: tuple
    q: np.ndarray
    incidence: np.ndarray
    draws: int
    draws_without_equilibrium: int
    first_change: dict
    equilibrium_after: dict = field(default_factory=dict)

    @property
    def incidence_of(self) -> str:
        """What the incidence is a share of: ``births`` or ``male births``."""
        return "male births" if self.inheritance == "x-linked" else "births"


def resolve_mode(source: ForecastSource, mode: str | None) -> str:
    """The affected genotypes: given, or what the report says.

    An autosomal report names its mode through its pooled counts
    (``direct_indirect.mode``), or by holding h fixed at 1 (dominant) or 0 (recessive);
    otherwise the mode must be given.

    Raises
    ------
    infer.errors.InputError
        ``field="mode"``: an unknown mode, a mode that does not fit the inheritance, or
        none given where the report does not say.
    """
    if source.inheritance == "x-linked":
        if mode not in (None, "x-linked-male"):
            raise InputError(f"{mode!r}: an x-linked report forecasts affected sons "
                             "(x-linked-male)", field="mode")
        return "x-linked-male"
    if mode is not None:
        if mode not in AUTOSOMAL_MODES:
            raise InputError(f"{mode!r} is not one of {', '.join(AUTOSOMAL_MODES)}",
                             field="mode")
        return mode
    if source.mode in AUTOSOMAL_MODES:
        return source.mode
    if "h" in source.fixed:
        h = float(source.draws["h"][0])
        if h == 1.0:
            return "dominant"
        if h == 0.0:
            return "recessive"
    raise InputError("the report does not say which genotypes are affected; give "
                     f"{' or '.join(AUTOSOMAL_MODES)}", field="mode")


def _check_generations(generations) -> int:
    if isinstance(generations, bool) or not float(generations).is_integer():
        raise InputError(f"{generations!r} is not a whole number", field="generations")
    generations = int(generations)
    if generations < 1:
        raise InputError(f"{generations} must be at least 1", field="generations")
    if generations > MAX_GENERATIONS:
        raise InputError(f"{generations} is above {MAX_GENERATIONS} (a deterministic "
                         "projection that far says more about the model than the "
                         "population)", field="generations")
    return generations


def _interval(values: np.ndarray, probabilities) -> dict | None:
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return None
    points = np.quantile(finite, probabilities)
    return {f"{p:g}": float(v) for p, v in zip(probabilities, points, strict=True)}


def forecast(report, generations: int, changes: dict | None = None, *,
             mode: str | None = None, probabilities=PROBABILITIES) -> ForecastResult:
    """Project every posterior draw of an estimate report ``generations`` ahead.

    Parameters
    ----------
    report : str, os.PathLike or ForecastSource
        The report folder of ``qhat estimate`` (or its draws, already read).
    generations : int
        Generations to project, 1 to :data:`MAX_GENERATIONS`.
    changes : dict, optional
        New values of any of ``s, h, mu, F, nu, alpha, penetrance``, in force from
        generation 0 on (``{"s": 0.0}``: selection stops). None or empty: nothing
        changes, and every draw stays at its equilibrium.
    mode : {"dominant", "recessive"}, optional
        Affected genotypes of an autosomal locus, when the report does not say
        (:func:`resolve_mode`).
    probabilities : sequence of float
        Probabilities of the quantiles over draws.

    Returns
    -------
    ForecastResult

    Raises
    ------
    infer.errors.InputError
        A bad report folder (naming the file), an unknown or out-of-range change
        (``field`` the name), bad ``generations`` or ``mode``, a drift-model report.
    """
    source = report if isinstance(report, ForecastSource) else read_report(report)
    if source.model != "deterministic":
        raise InputError(f"{source.model!r}: the forecast follows the deterministic life "
                         "cycle and starts from the exact balance; a drift-model report is "
                         "not forecast", source=f"{source.folder}/summary.json",
                         field="model")
    generations = _check_generations(generations)
    changes = check_changes(dict(changes or {}), source.inheritance)
    mode = resolve_mode(source, mode)
    probabilities = tuple(float(p) for p in probabilities)

    start_state, exists = equilibrium_state(source.inheritance, source.draws)
    kept = int(np.count_nonzero(exists))
    if kept == 0:
        raise InputError("no posterior draw has a stable equilibrium to start from",
                         source=source.folder)
    before = {name: np.asarray(source.draws[name], dtype=float)[exists]
              if name in source.draws else np.full(kept, np.nan) for name in LIFE_CYCLE}
    after = dict(before)
    for name, value in changes.items():
        after[name] = np.full(kept, value)
    after = _sexes_after(before, after, changes)

    q_points = np.empty((generations + 1, len(probabilities)))
    incidence_points = np.empty_like(q_points)
    first = {}
    start = None
    start_state = tuple(np.asarray(x)[exists] for x in start_state)
    for t, q, incidence in trajectories(source.inheritance, mode, before, after, generations,
                                        state=start_state):
        q_points[t] = np.quantile(q, probabilities)
        incidence_points[t] = np.quantile(incidence, probabilities)
        if t == 0:
            start = (q, incidence)
        elif t == 1:
            first = {"q": float(np.median(q - start[0])),
                     "incidence": float(np.median(incidence - start[1]))}

    state_after, exists_after = equilibrium_state(source.inheritance, after)
    q_after, _ = frequency_and_incidence(source.inheritance, mode, state_after, after["F"],
                                         after["penetrance"])
    equilibrium_after = {"share": float(np.mean(exists_after)),
                         "q": _interval(np.where(exists_after, q_after, np.nan),
                                        probabilities)}
    values = {name: {"before": float(np.median(before[name])),
                     "after": float(np.median(after[name])),
                     "fixed": name in source.fixed, "changed": name in changes}
              for name in LIFE_CYCLE
              if not (np.isnan(before[name]).all() and np.isnan(after[name]).all())}
    return ForecastResult(
        title=source.title, report=source.folder, inheritance=source.inheritance,
        mode=mode, changes=changes, values=values,
        generations=np.arange(generations + 1), probabilities=probabilities,
        q=q_points, incidence=incidence_points, draws=kept,
        draws_without_equilibrium=source.size - kept, first_change=first,
        equilibrium_after=equilibrium_after)


def _sexes_after(before: dict, after: dict, changes: dict) -> dict:
    """Selection by sex after the change, consistent with s.

    ``s`` set on a report with selection by sex sets both sexes; ``s_male`` or
    ``s_female`` set on one without gives the other sex the report's s. With selection
    by sex, s is the mean of the two.
    """
    by_sex = "s_male" in changes or "s_female" in changes
    if "s" in changes and np.isfinite(before["s_male"]).any() and not by_sex:
        after["s_male"], after["s_female"] = after["s"], after["s"]
    if by_sex:
        for name in ("s_male", "s_female"):
            after[name] = np.where(np.isnan(after[name]), before["s"], after[name])
        after["s"] = 0.5 * (after["s_male"] + after["s_female"])
    return after
