"""Text, Markdown, JSON and the report folder of ``qhat compare``.

Renders a :class:`infer.jobs.compare.run.CompareResult`; computes nothing. The folder
(``report.md``, ``report.html``, ``compare.json``) is written atomically through
:mod:`infer.reporting.folder`; every rendering carries the caution.
"""

from __future__ import annotations

import math
from pathlib import Path

from infer.core.text import CAUTION, CAUTION_LINE, caution_sentence, fmt, shown
from infer.inference.evidence import strength
from infer.reporting.folder import atomic_folder
from infer.reporting.jsonout import dumps, versioned

__all__ = ["compare_document", "text_report", "compare_markdown", "write_compare_report",
           "COMPARE_FILES"]

COMPARE_FILES = ("report.md", "report.html", "compare.json")


def _estimate(model) -> dict:
    e = model.estimate
    if e is None:
        return {"log_evidence": -math.inf, "error": math.nan, "method": None,
                "evaluations": 0, "settled": True}
    return {"log_evidence": e.log_evidence, "error": e.error, "method": e.method,
            "evaluations": e.evaluations, "settled": e.settled}


def compare_document(result) -> dict:
    """The JSON document (``compare.json`` and ``--json``), with the versions first."""
    models = []
    for m in result.models:
        p = result.probabilities[m.name]
        models.append({"name": m.name, "description": m.description, "free": list(m.free),
                       "priors": dict(m.priors), **_estimate(m),
                       "log10_bayes_factor": p["log10_bayes_factor"],
                       "prior_probability": p["prior_probability"],
                       "posterior_probability": p["posterior_probability"],
                       "fitted": m.fitted})
    return versioned({
        "title": result.title, "source": result.source, "interval": result.interval,
        "seed": result.seed, "models": models, "ranking": list(result.ranking),
        "skipped": dict(result.skipped),
        "sensitivity": [{"model": r.model, "parameter": r.parameter, "factor": r.factor,
                         "prior": r.prior, "log_evidence": r.log_evidence, "error": r.error,
                         "posterior_probability": r.posterior_probability}
                        for r in result.sensitivity],
        "caution": CAUTION_LINE,
    })


def _best_against(result) -> list[str]:
    """Sentences: the leader's Bayes factor against each other model, in words."""
    by_name = {m.name: m for m in result.models}
    leader = result.ranking[0]
    lines = []
    for name in result.ranking[1:]:
        gap = (by_name[leader].log_evidence - by_name[name].log_evidence) / math.log(10)
        shown_gap = "infinite" if not math.isfinite(gap) else f"10^{gap:.2f}"
        lines.append(f"{leader} against {name}: Bayes factor {shown_gap} "
                     f"({strength(gap)}; Kass & Raftery 1995)")
    return lines


def _fitted_text(model) -> str:
    parts = []
    for name, q in model.fitted.items():
        parts.append(f"{name} {fmt(q['median'])} ({fmt(q['lower'])} to {fmt(q['upper'])})")
    return "; ".join(parts)


def text_report(result, out: Path | None = None) -> str:
    """The terminal summary of ``qhat compare``."""
    lines = [f"qhat compare: {shown(result.title)}", f"  study file: {shown(result.source)}", ""]
    width = max(len(m.name) for m in result.models) + 2
    lines.append(f"  {'model':<{width}}{'log evidence':>14}  {'± error':>9}  {'method':<10}"
                 f"{'prior':>7}  {'posterior':>9}")
    for name in result.ranking:
        m = next(x for x in result.models if x.name == name)
        e, p = _estimate(m), result.probabilities[name]
        lines.append(f"  {name:<{width}}{fmt(e['log_evidence'], 6):>14}  {fmt(e['error'], 2):>9}"
                     f"  {e['method'] or '—':<10}{fmt(p['prior_probability']):>7}  "
                     f"{fmt(p['posterior_probability']):>9}")
    lines.append("")
    lines += [f"  {line}" for line in _best_against(result)]
    for m in result.models:
        if m.fitted:
            lines.append(f"  fitted under {m.name}: {_fitted_text(m)}")
    for row in result.sensitivity:
        lines.append(f"  sensitivity: {row.model} with {row.parameter} ~ {row.prior}: "
                     f"posterior probability {fmt(row.posterior_probability, 4)}")
    for name, reason in result.skipped.items():
        lines.append(f"  not weighed: {name}: {reason}")
    unsettled = [m.name for m in result.models if m.estimate and not m.estimate.settled]
    if unsettled:
        lines.append(f"  warning: the evidence of {', '.join(unsettled)} did not settle to its "
                     "tolerance; read its error")
    if out is not None:
        lines.append(f"  report: {shown(str(out / 'report.md'))}")
    lines += ["", caution_sentence()]
    return "\n".join(lines)


def compare_markdown(result) -> str:
    """report.md of ``qhat compare``."""
    lines = [f"# {shown(result.title)}: competing explanations", "", CAUTION, "",
             f"Study file: `{shown(result.source)}`. Each model below is the study's data "
             "with the priors stated; its evidence is p(data | model), the likelihood "
             "averaged over the prior. Prior model probabilities are the stated prior odds "
             "(equal unless the `[compare]` table says otherwise).", "",
             "| rank | model | free parameters | log evidence | ± error | method | prior "
             "probability | posterior probability |", "|---|---|---|---|---|---|---|---|"]
    for rank, name in enumerate(result.ranking, start=1):
        m = next(x for x in result.models if x.name == name)
        e, p = _estimate(m), result.probabilities[name]
        lines.append(f"| {rank} | {name} | {', '.join(m.free)} | {fmt(e['log_evidence'], 6)} | "
                     f"{fmt(e['error'], 2)} | {e['method'] or '—'} | "
                     f"{fmt(p['prior_probability'], 4)} | {fmt(p['posterior_probability'], 4)} |")
    lines += ["", "## What the evidence says", ""]
    lines += [f"- {line}" for line in _best_against(result)]
    lines += ["", "## Models and priors", ""]
    for m in result.models:
        priors = ", ".join(f"{k} ~ {v}" for k, v in m.priors.items())
        lines.append(f"- **{m.name}**: {m.description}. Priors: {priors}.")
        if m.fitted:
            lines.append(f"  Fitted ({100 * result.interval:g} % central intervals): "
                         f"{_fitted_text(m)}.")
    if result.sensitivity:
        lines += ["", "## Sensitivity to the extra parameters' priors", "",
                  "| model | prior | log evidence | posterior probability |", "|---|---|---|---|"]
        for row in result.sensitivity:
            lines.append(f"| {row.model} | {row.parameter} ~ {row.prior} | "
                         f"{fmt(row.log_evidence, 6)} | {fmt(row.posterior_probability, 4)} |")
    skipped = result.skipped
    if skipped:
        lines += ["", "## Not weighed", ""]
        lines += [f"- {name}: {reason}" for name, reason in skipped.items()]
    lines += ["", "## Methods", "",
              "Evidence by nested quadrature up to three free parameters (error: the last "
              "refinement's move of log evidence), by bridge sampling (Meng & Wong 1996) on "
              "the sampler's draws above that (error: the Monte Carlo standard error of "
              "Frühwirth-Schnatter 2004). Bayes factors are ratios of evidences (Kass & "
              "Raftery 1995).", "", CAUTION, ""]
    return "\n".join(lines)


def write_compare_report(result, out: Path, *, force: bool = False) -> Path:
    """Write report.md, report.html and compare.json into ``out`` atomically."""
    from infer.reporting.html import report_html

    out = Path(out)
    with atomic_folder(out, force=force) as folder:
        (folder / "compare.json").write_text(dumps(compare_document(result)), encoding="utf-8")
        text = compare_markdown(result)
        (folder / "report.md").write_text(text, encoding="utf-8")
        (folder / "report.html").write_text(report_html(text, {}), encoding="utf-8")
    return out
