"""The report folder, table, JSON document and terminal text of ``qhat forecast``.

Renders a :class:`~infer.jobs.forecast.run.ForecastResult`
(docs/reports.md, 'The forecast report folder'): ``forecast.csv`` (one row per
generation: median and the 2.5, 25, 75 and 97.5 % points over posterior draws of q and
of the incidence),
``forecast.json`` (schema ``forecast``), ``forecast.png`` (the fan plot), ``report.md``
and ``report.html``, written atomically (:func:`infer.reporting.folder.atomic_folder`).
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from infer.core.text import CAUTION, CAUTION_LINE, caution_sentence, fmt, shown
from infer.reporting.folder import atomic_folder
from infer.reporting.html import report_html
from infer.reporting.jsonout import dumps, versioned

__all__ = ["FORECAST_FILES", "forecast_document", "forecast_csv", "forecast_markdown",
           "text_summary", "write_forecast_report"]

#: the files of a forecast folder (besides the .qhat-output marker)
FORECAST_FILES = ("forecast.csv", "forecast.json", "forecast.png", "report.md",
                  "report.html")
#: rows of the forecast shown in report.md and on the terminal (the CSV has them all)
SHOWN_ROWS = 11
_AFFECTED = {"dominant": "Aa and aa", "recessive": "aa",
             "x-linked-male": "hemizygous sons"}


def _column(p: float) -> str:
    return "median" if p == 0.5 else f"p{100 * p:g}"


def _points(result, which: str, t: int) -> dict:
    values = getattr(result, which)[t]
    return {f"{p:g}": float(v) for p, v in zip(result.probabilities, values, strict=True)}


def forecast_document(result) -> dict:
    """The object of forecast.json and of ``qhat forecast --json`` (schema ``forecast``)."""
    return versioned({
        "caution": CAUTION_LINE,
        "command": "qhat forecast",
        "report": str(result.report),
        "title": result.title,
        "inheritance": result.inheritance,
        "model": "deterministic",
        "mode": result.mode,
        "incidence_of": result.incidence_of,
        "generations": int(result.generations[-1]),
        "changes": dict(result.changes),
        "values": result.values,
        "draws": result.draws,
        "draws_without_equilibrium": result.draws_without_equilibrium,
        "probabilities": list(result.probabilities),
        "first_change": result.first_change,
        "equilibrium_after": result.equilibrium_after,
        "table": [{"generation": int(t), "q": _points(result, "q", i),
                   "incidence": _points(result, "incidence", i)}
                  for i, t in enumerate(result.generations)],
    })


def forecast_csv(result) -> str:
    """forecast.csv: generation, then q's and the incidence's quantile columns."""
    order = sorted(range(len(result.probabilities)),
                   key=lambda j: (result.probabilities[j] != 0.5, result.probabilities[j]))
    header = ["generation"] + [f"{what}_{_column(result.probabilities[j])}"
                               for what in ("q", "incidence") for j in order]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for i, t in enumerate(result.generations):
        writer.writerow([int(t)] + [repr(float(getattr(result, what)[i, j]))
                                    for what in ("q", "incidence") for j in order])
    return buffer.getvalue()


def _shown_rows(result) -> list[int]:
    last = len(result.generations) - 1
    if last < SHOWN_ROWS:
        return list(range(last + 1))
    step = last / (SHOWN_ROWS - 1)
    return sorted({round(k * step) for k in range(SHOWN_ROWS)})


def _interval(result, which: str, i: int) -> tuple[str, str]:
    points = dict(zip(result.probabilities, getattr(result, which)[i], strict=True))
    middle = fmt(points.get(0.5))
    low, high = points.get(0.025), points.get(0.975)
    return middle, (f"{fmt(low)} – {fmt(high)}" if low is not None and high is not None
                    else "—")


def _change_text(result) -> str:
    if not result.changes:
        return "nothing (every draw stays at its equilibrium)"
    return ", ".join(f"{name} from {fmt(result.values[name]['before'])} to {fmt(value)}"
                     + ("" if result.values[name]["fixed"] else " (median before)")
                     for name, value in result.changes.items())


def _table(result) -> list[str]:
    rows = ["| generation | q (median) | q (95 % of draws) | incidence (median) | "
            "incidence (95 % of draws) |", "|---|---|---|---|---|"]
    for i in _shown_rows(result):
        q, q_range = _interval(result, "q", i)
        incidence, incidence_range = _interval(result, "incidence", i)
        rows.append(f"| {int(result.generations[i])} | {q} | {q_range} | {incidence} | "
                    f"{incidence_range} |")
    return rows


def _after_text(result) -> str:
    after = result.equilibrium_after
    if not after.get("q"):
        return ("Under the changed values no draw has a stable equilibrium: the frequency "
                "keeps rising" + (" (with s = 0 only back mutation, nu > 0, would stop it)"
                                  if result.changes.get("s") == 0 else "") + ".")
    q = after["q"]
    return (f"Under the changed values {100 * after['share']:.0f} % of the draws have a "
            f"stable equilibrium, q = {fmt(q.get('0.5'))} (95 % of draws "
            f"{fmt(q.get('0.025'))} – {fmt(q.get('0.975'))}); the forecast approaches it "
            "at the pace of the table.")


def forecast_markdown(result, plot: str | None) -> str:
    """The text of report.md.

    Parameters
    ----------
    result : infer.jobs.forecast.run.ForecastResult
    plot : str or None
        File name of the fan plot inside the folder.
    """
    generations = int(result.generations[-1])
    lines = [f"# Forecast: {result.title}", "", CAUTION, "",
             f"From the estimate report `{result.report}` ({result.inheritance}, "
             f"affected: {_AFFECTED[result.mode]}, {result.mode}); "
             f"{result.draws} posterior draws projected {generations} generations ahead"
             + (f" ({result.draws_without_equilibrium} draws without a stable equilibrium "
                "left out)" if result.draws_without_equilibrium else "") + ".", "",
             f"**Changed from now on:** {_change_text(result)}.", "",
             "## What is assumed", "",
             "- Generation 0 is the present: each draw's newborns at that draw's exact "
             "equilibrium under the report's values.",
             "- The changed values act from now: on the selection of the present "
             "generation, on every gamete made from now, and on the inbreeding and "
             "penetrance of every generation born from now.",
             "- The deterministic life cycle (docs/model.md, 'Life cycle'): no drift, a "
             "population large and constant, nothing else changing. The intervals are the "
             "spread of the posterior draws, not of chance in a finite population.",
             f"- Incidence: the affected share of {result.incidence_of} (penetrance x the "
             "affected genotypes).", "",
             "## Forecast", ""]
    lines += _table(result)
    first = result.first_change
    lines += ["", f"In the first generation q changes by {fmt(first.get('q'))} and the "
              f"incidence by {fmt(first.get('incidence'))} (medians over draws). "
              + _after_text(result), ""]
    if plot:
        lines += [f"![Forecast of q and incidence]({plot})", "",
                  "Lines: median over draws; dark band: 50 %; light band: 95 %.", ""]
    lines += ["## Files", "",
              "- `forecast.csv`: every generation, median and 2.5, 25, 75, 97.5 % points "
              "of q and of the incidence.",
              "- `forecast.json`: the same with the settings (schema `forecast`).", "",
              CAUTION, ""]
    return "\n".join(shown(line) for line in lines)


def text_summary(result, out: Path | None = None) -> str:
    """What ``qhat forecast`` prints on the terminal."""
    generations = int(result.generations[-1])
    lines = [f"Forecast: {shown(result.title)}",
             f"{result.draws} posterior draws, {generations} generations, affected "
             f"{_AFFECTED[result.mode]} ({result.mode}); changed: {_change_text(result)}",
             f"{'generation':>10}  {'q median':>10}  {'q 95 %':>21}  {'incidence':>10}  "
             f"{'incidence 95 %':>21}"]
    for i in _shown_rows(result):
        q, q_range = _interval(result, "q", i)
        incidence, incidence_range = _interval(result, "incidence", i)
        lines.append(f"{int(result.generations[i]):>10}  {q:>10}  {q_range:>21}  "
                     f"{incidence:>10}  {incidence_range:>21}")
    if out is not None:
        lines.append(f"report: {out}")
    lines.append(caution_sentence())
    return "\n".join(lines)


def write_forecast_report(result, out: Path, *, force: bool = False) -> Path:
    """Write forecast.csv, forecast.json, forecast.png, report.md and report.html.

    Parameters
    ----------
    result : infer.jobs.forecast.run.ForecastResult
    out : pathlib.Path
        The report folder; refused if it exists, unless ``force``.
    force : bool, optional
        Replace an existing report folder qhat wrote.

    Returns
    -------
    pathlib.Path
        ``out``.
    """
    from infer.reporting.plots.forecast import DPI, FORECAST_PLOT, forecast_figure
    from infer.reporting.plots.save import save_figures

    out = Path(out)
    with atomic_folder(out, force=force) as folder:
        (folder / "forecast.csv").write_text(forecast_csv(result), encoding="utf-8")
        (folder / "forecast.json").write_text(dumps(forecast_document(result)),
                                              encoding="utf-8")
        save_figures(lambda: {FORECAST_PLOT: forecast_figure(result)}, folder, dpi=DPI)
        text = forecast_markdown(result, FORECAST_PLOT)
        (folder / "report.md").write_text(text, encoding="utf-8")
        html = report_html(text, {FORECAST_PLOT: (folder / FORECAST_PLOT).read_bytes()})
        (folder / "report.html").write_text(html, encoding="utf-8")
    return out
