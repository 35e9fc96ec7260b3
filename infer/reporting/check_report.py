"""Render a :class:`~infer.jobs.check.run.CheckResult`: terminal text, report.md, check.json.

:func:`text_report` is what ``qhat check`` prints, :func:`check_markdown` the text of
report.md, :func:`check_document` the JSON object of ``--json`` and check.json, and
:func:`write_check_report` writes the report folder (report.md, report.html, check.json
and the balance plot of :mod:`infer.reporting.plots.claim_balance`) atomically.
"""

from __future__ import annotations

import math
from pathlib import Path

from infer.core.text import CAUTION, caution_sentence, fmt, shown
from infer.reporting.folder import atomic_folder
from infer.reporting.html import report_html
from infer.reporting.jsonout import dumps, versioned
from infer.reporting.labels import fmt_count, fmt_value
from infer.reporting.plots.claim_balance import claim_balance_figure
from infer.reporting.plots.save import save_figures

__all__ = ["CHECK_FILES", "text_report", "check_markdown", "check_document",
           "write_check_report"]

#: files of a check report folder, in the order they are listed
CHECK_FILES = ("report.md", "report.html", "check.json", "balance.png")
_LABELS = {"error": "ERROR", "warning": "WARNING", "note": "note"}
_DPI = 100


def check_document(result) -> dict:
    """The JSON object of ``qhat check --json`` and check.json.

    Parameters
    ----------
    result : infer.jobs.check.run.CheckResult

    Returns
    -------
    dict
        ``{schema_version, qhat_version, consistent, findings, implied}``; every finding
        with the computation behind it (schema ``check`` of :mod:`infer.reporting.schemas`).
        A claim with a ``[history]`` adds ``history``: the table and the sentences
        saying which history was assumed.
    """
    document = {"consistent": result.consistent}
    record = result.implied.get("history")
    if record is not None:
        document["history"] = {"history": record["history"],
                               "description": record["description"]}
    return versioned({**document, "findings": [f.as_dict() for f in result.findings],
                      "implied": result.implied})


def _claimed_lines(claim) -> list[str]:
    parts = []
    for name, value in claim.values.items():
        if name in claim.study.defaulted or (name == "Ne" and not math.isfinite(value)):
            continue
        text = f"{name} = {fmt(value)}"
        if name in claim.intervals:
            lower, upper = claim.intervals[name]
            text += f" (authors' 95 % interval {fmt(lower)} to {fmt(upper)})"
        parts.append(text)
    return parts


def _implied_lines(result) -> list[str]:
    """The quantities the claim implies, under the model the findings use.

    Under ``model = "drift"`` the frequency is Wright's stationary distribution (as in
    the observation findings), the deterministic q_hat shown for comparison; an
    incidence is shown only for the claimed mode (every mode stays in check.json).
    """
    implied, claim = result.implied, result.claim
    names = (["q_male", "q_female", "q_hat", "load_male", "new_mutation_share"]
             if claim.inheritance == "x-linked" else
             ["q_hat", "carrier_frequency", "incidence_dominant", "incidence_recessive", "load"])
    names = [n for n in names if not n.startswith("incidence_") or n == f"incidence_{claim.mode}"]
    if "history" in implied:  # the balance's new-mutation share has no value under a history
        names = [n for n in names if n != "new_mutation_share"]
    band = implied.get("uncertainty", {})
    lines = []
    history = implied.get("history")
    propagated = implied.get("propagated")
    if propagated is not None:  # drift under a [history]: its distribution today
        compared = history["compared"]
        lines.append(f"under drift through the stated history (Ne today = "
                     f"{fmt(claim.values['Ne'])}) mean frequency today "
                     f"{fmt_value(propagated['mean'])}, median {fmt_value(propagated['median'])}"
                     f", {fmt_value(propagated['lower'])} to {fmt_value(propagated['upper'])}"
                     f" [Wright's stationary mean {fmt(compared['q_hat']['equilibrium'])}]")
        for name in ("carrier_frequency", f"incidence_{claim.mode}", "load"):
            if name in propagated and name in names:
                lines.append(f"{name} today = {fmt_value(propagated[name])} [equilibrium "
                             f"{fmt(compared[name]['equilibrium'])}]")
        lines.append(f"(deterministic q today = {fmt(implied.get('q_hat'))}, ignoring drift)")
        return lines
    stationary = implied.get("stationary")
    if stationary is not None:
        lines.append(f"under Wright's stationary density (Ne = {fmt(claim.values['Ne'])}) "
                     f"mean frequency {fmt_value(stationary['mean'])}, median "
                     f"{fmt_value(stationary['median'])}, {fmt_value(stationary['lower'])} to "
                     f"{fmt_value(stationary['upper'])}")
        for name in ("carrier_frequency", f"incidence_{claim.mode}", "load"):
            if name in stationary and name in names:
                lines.append(f"{name} = {fmt_value(stationary[name])}")
        lines.append(f"(deterministic q_hat = {fmt(implied.get('q_hat'))}, ignoring drift)")
        return lines
    for name in names:
        shown_name = f"{name} today" if history is not None else name
        text = f"{shown_name} = {fmt(implied.get(name))}"
        if name in band:
            text += f" ({fmt(band[name]['lower'])} to {fmt(band[name]['upper'])})"
        if history is not None and name in history["compared"]:
            text += f" [equilibrium {fmt(history['compared'][name]['equilibrium'])}]"
        lines.append(text)
    return lines


def _verdict(result) -> str:
    errors, warnings = result.count("error"), result.count("warning")
    if result.consistent:
        return (f"consistent: no error-level finding ({warnings} warning(s)) at threshold "
                f"{result.threshold:g}")
    return (f"INCONSISTENT: {errors} error(s), {warnings} warning(s) at threshold "
            f"{result.threshold:g} (exit status 3)")


def text_report(result, out: Path | None = None) -> str:
    """The readable report ``qhat check`` prints on stdout.

    Parameters
    ----------
    result : infer.jobs.check.run.CheckResult
    out : pathlib.Path, optional
        The report folder written, named on the last lines.

    Returns
    -------
    str
    """
    claim = result.claim
    lines = [f"qhat check: {claim.title}", f"  claim file: {claim.path}"]
    if claim.reference:
        lines.append(f"  paper: {claim.reference}")
    lines.append(f"  {claim.inheritance}, {claim.study.model} model; claimed: "
                 + ", ".join(_claimed_lines(claim)))
    if "history" in result.implied:
        lines.append("  history: " + " ".join(result.implied["history"]["description"]))
    lines.append(("  implied under the stated history: " if "history" in result.implied
                  else "  implied by the claim: ") + ", ".join(_implied_lines(result)))
    lines.append("")
    for finding in result.findings:
        lines.append(f"{_LABELS[finding.severity]:<8} [{finding.code}] {finding.message}")
    lines += ["", _verdict(result)]
    if out is not None:
        lines.append(f"report: {out}/report.md")
    lines.append(caution_sentence())
    return "\n".join(shown(line) for line in lines)   # user text escaped


def _from_data_rows(result) -> list[str]:
    claim = result.claim
    rows = []
    for name, r in result.implied["from_data"].items():
        if not r.get("informed"):
            rows.append(f"| {name} | {fmt(claim.values[name])} | the data do not inform it "
                        "| | | |")
        elif not r.get("possible"):
            rows.append(f"| {name} | {fmt(claim.values[name])} | no value makes the data "
                        "possible | | | |")
        else:
            rows.append(f"| {name} | {fmt(r['claimed'])} | {fmt(r['median'])} | "
                        f"{fmt(r['hpd_lower'])} – {fmt(r['hpd_upper'])} | "
                        f"{fmt(r['evidence'])} | {r['held']} |")
    return rows


def check_markdown(result, plot: str | None) -> str:
    """The text of report.md.

    Parameters
    ----------
    result : infer.jobs.check.run.CheckResult
    plot : str or None
        File name of the balance plot inside the folder, or None for no plot.

    Returns
    -------
    str
    """
    claim, implied = result.claim, result.implied
    lines = [f"# Check: {claim.title}", "", CAUTION, ""]
    if claim.reference:
        lines += [f"Paper: {claim.reference}", ""]
    lines += [f"**Verdict: {_verdict(result)}.**", "",
              "## The claim", "", f"- Inheritance **{claim.inheritance}**, model "
              f"**{claim.study.model}**; claim file `{claim.path}`.",
              "- Claimed: " + "; ".join(_claimed_lines(claim)) + "."]
    if claim.statements:
        lines.append("- Stated: " + "; ".join(
            f"{s.name} = {fmt(s.value)}" for s in claim.statements.values()) + ".")
    if claim.approximation:
        lines.append(f"- Formula used by the authors: `{claim.approximation}`.")
    if "history" in implied:
        lines.append("- History assumed: " + " ".join(implied["history"]["description"]))
    lines += ["", "## What the claimed parameters imply ("
              + ("Wright's stationary distribution" if "stationary" in implied
                 else "today, under the stated history; equilibrium values in brackets"
                 if "history" in implied else "exact balance") + ")", ""]
    lines += [f"- {text}" for text in _implied_lines(result)]
    lines += ["", "## Observations against the claim", ""]
    if not implied["observations"]:
        lines += ["The claim reports no observations: only its own arithmetic (stated "
                  "numbers against the claimed parameters) and the trade's ranges are "
                  "checked."]
    else:
        lines += ["| # | observation | observed | implied | observed/implied | p-value |",
                  "|---|---|---|---|---|---|"]
    for o in implied["observations"]:
        when = (f", sampled {o['generations_ago']} generations ago"
                if o.get("generations_ago") else "")
        lines.append(f"| {o['index']} | {o['label']} ({o['statistic']}{when}) | "
                     f"{fmt_count(o['observed'])} | {fmt_value(o['implied'])} | "
                     f"{fmt_value(o['ratio'])} | {fmt_value(o['p_value'])} |")
    lines += ["", "Two-sided posterior predictive p-values of each observed statistic under "
              "the claim (its stated uncertainty included).", "",
              "## What the reported data imply, one parameter at a time", "",
              "| parameter | claimed | median | highest-density interval | evidence | held |",
              "|---|---|---|---|---|---|"]
    lines += _from_data_rows(result)
    lines += ["", "Evidence: posterior mass (wide prior, others held at their claimed values) "
              "where the density is no higher than at the claimed value.", "", "## Findings", ""]
    for severity in ("error", "warning", "note"):
        chosen = [f for f in result.findings if f.severity == severity]
        if chosen:
            lines += [f"### {_LABELS[severity].capitalize()}s", ""]
            lines += [f"- `{f.code}`: {f.message}" for f in chosen]
            lines.append("")
    if plot:
        lines += ["## Balance curve", "", f"![Balance curve]({plot})", ""]
    lines += ["## Files", "", "- `check.json`: every finding with the computation behind it.",
              "", CAUTION, ""]
    return "\n".join(shown(line) for line in lines)   # user text escaped


def write_check_report(result, out: Path, *, force: bool = False) -> Path:
    """Write report.md, report.html, check.json and balance.png into ``out`` atomically.

    Parameters
    ----------
    result : infer.jobs.check.run.CheckResult
    out : pathlib.Path
        The report folder; refused if it exists, unless ``force``.
    force : bool, optional
        Replace an existing report folder.

    Returns
    -------
    pathlib.Path
        ``out``.
    """
    out = Path(out)
    plot = CHECK_FILES[-1]
    with atomic_folder(out, force=force) as folder:
        (folder / "check.json").write_text(dumps(check_document(result)), encoding="utf-8")
        save_figures(lambda: {plot: claim_balance_figure(result)}, folder, dpi=_DPI)
        text = check_markdown(result, plot)
        (folder / "report.md").write_text(text, encoding="utf-8")
        html = report_html(text, {plot: (folder / plot).read_bytes()})
        (folder / "report.html").write_text(html, encoding="utf-8")
    return out
