"""report.md of ``qhat batch``: the run's summary.json in words, with its figures.

:func:`batch_markdown` lays out the object of summary.json
(:func:`infer.reporting.batch_report.batch_document`), so every number it shows is the
one of summary.json; the per-locus rows stay in loci.csv. Wall times are left out, so
the same inputs give the same text.
"""

from __future__ import annotations

import re
from pathlib import PurePath

from infer.core.text import CAUTION, fmt
from infer.files.loci import describe_skipped

__all__ = ["batch_markdown"]

_FIGURES = {"medians.png": "Per-locus posterior medians of s_het",
            "observed_vs_expected.png": "Observed against expected allele copies",
            "prior.png": "The shared prior over the medians"}


def _code(text) -> str:
    """``text`` as a Markdown code span, whatever backticks it holds (CommonMark 6.1)."""
    text = str(text)
    fence = "`" * (max((len(run) for run in re.findall("`+", text)), default=0) + 1)
    pad = " " if text.startswith("`") or text.endswith("`") else ""
    return f"{fence}{pad}{text}{pad}{fence}"


def _cell(text) -> str:
    return str(text).replace("|", "\\|")


def batch_markdown(document: dict, figures=tuple(_FIGURES)) -> str:
    """The text of a batch report's report.md.

    Parameters
    ----------
    document : dict
        The object of summary.json (``batch_document(report)``).
    figures : sequence of str, optional
        File names of the figures in the folder, in the order shown.

    Returns
    -------
    str
    """
    source, model, settings = document["input"], document["model"], document["settings"]
    prior = document["prior"]
    level = f"{settings['interval'] * 100:g} %"
    lines = [f"# Batch: {_code(PurePath(source['file']).name)}", "", CAUTION, "",
             "## Data and model", "",
             f"- Loci file {_code(source['file'])}: {source['loci']} loci read, "
             f"{source['loci_with_mu_interval']} with an interval for mu.",
             f"- Model **{model['name']}**; likelihood `{model['likelihood']}`."]
    if model.get("Ne") is not None:
        lines.append(f"- Ne = {fmt(model['Ne'])}, nu = {fmt(model.get('nu'))}.")
    lines += [f"- Convention: {model['convention']}.",
              f"- Uncertain mu: {model['mu_uncertainty']}.",
              f"- Expected count: {document['expected_count']}."]
    if source["ignored_columns"]:
        lines.append("- Columns not read: "
                     + ", ".join(_code(c) for c in source["ignored_columns"]) + ".")
    skipped = source["skipped_rows"]
    if skipped:
        lines += [f"- {len(skipped)} rows skipped:", ""]
        lines += [f"  - {describe_skipped(row)}" for row in skipped]
    lines += ["", "### Assumptions", ""]
    lines += [f"- {text}" for text in model["assumptions"]]
    lines += ["", "## Prior", "", f"- Asked for: {prior['requested']}; used: {prior['used']} "
              f"(s_het from {fmt(prior['low'])} to {fmt(prior['high'])}).",
              f"- Log marginal likelihood, summed over loci: "
              f"{fmt(document['log_marginal_likelihood'], 6)}."]
    fitted = prior.get("fitted")
    if fitted:
        lines += ["", "| fitted | value | standard error (log) |", "|---|---|---|",
                  f"| median | {fmt(fitted['median'])} | {fmt(fitted['se_log_median'])} |",
                  f"| sigma | {fmt(fitted['sigma'])} | {fmt(fitted['se_log_sigma'])} |", "",
                  f"- Log Bayes factor against the log-uniform prior: "
                  f"{fmt(fitted['log_bayes_factor_vs_log_uniform'], 4)}"
                  + (" (the fit reached the edge of its search)." if fitted["at_search_edge"]
                     else ".")]
    lines += ["", f"## Posterior medians of s_het across loci ({level} intervals in "
              "loci.csv)", ""]
    quantiles = document["medians_across_loci"]
    if quantiles:
        lines += ["| " + " | ".join(quantiles) + " |", "|" + "---|" * len(quantiles),
                  "| " + " | ".join(fmt(v) for v in quantiles.values()) + " |"]
    else:
        lines.append("No locus has a posterior median.")
    lines += ["", "## Flags", "", "| flag | loci | meaning |", "|---|---|---|"]
    lines += [f"| `{name}` | {flag['count']} | {_cell(flag['meaning'])} |"
              for name, flag in document["flags"].items()]
    lines += ["", "## Settings", "", "| setting | value |", "|---|---|"]
    lines += [f"| {name} | {fmt(value, 4)} |" for name, value in settings.items()]
    execution = document["execution"]
    lines += ["", f"Ran in {execution['chunks']} chunks on "
              + (f"the dask scheduler {_code(execution['scheduler'])}."
                 if execution.get("scheduler") else f"{execution['jobs']} local process(es).")]
    if figures:
        lines += ["", "## Plots", ""]
        for name in figures:
            title = _FIGURES.get(name, name)
            lines += [f"### {title}", "", f"![{title}]({name})", ""]
    lines += ["## Files", "", "- `loci.csv`: one row per locus (median, interval, mean, "
              "expected count, flags).", "- `summary.json`: every number above, "
              "machine-readable.", "- `timing.json`: the wall times of the run.", "", CAUTION, ""]
    return "\n".join(lines)
