"""``qhat check CLAIM.toml``: a consistency check of a paper's published numbers.

Do they fit together under mutation-selection balance?

Prints each finding with its severity; ``--json`` prints ``{consistent, findings,
implied}``; ``--out DIR`` writes ``report.md``, ``check.json`` and ``balance.png``
atomically. Exit status 0 when consistent, 3 when any finding is an error, 2 on bad input.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

from infer.core.text import caution_sentence

__all__ = ["add_arguments", "run", "text_report", "markdown_report", "balance_figure"]

EXIT_OK, EXIT_INCONSISTENT = 0, 3
_LABELS = {"error": "ERROR", "warning": "WARNING", "note": "note"}


def add_arguments(parser) -> None:
    """Register the options of ``qhat check``."""
    parser.add_argument("claim", metavar="CLAIM.toml", help="the claim file (TOML)")
    parser.add_argument("--json", action="store_true",
                        help="print {consistent, findings, implied} as JSON")
    parser.add_argument("--out", metavar="DIR", help="write report.md, check.json and "
                        "balance.png into this folder")
    parser.add_argument("--force", action="store_true", help="replace an existing folder")
    parser.add_argument("--threshold", default="0.01", metavar="P",
                        help="predictive p-values and evidence values below P are errors "
                        "(default 0.01)")


def _threshold(text: str) -> float:
    from infer.errors import InputError

    try:
        value = float(text)
    except ValueError:
        raise InputError(f"{text!r} is not a number", source="--threshold") from None
    if not 0.0 < value < 1.0 or math.isnan(value):
        raise InputError(f"{text} is not between 0 and 1", source="--threshold")
    return value


def run(args) -> int:
    """Run ``qhat check``."""
    from infer.files.claim import load_claim
    from infer.reporting.folder import check_destination, terminate_as_interrupt

    threshold = _threshold(args.threshold)
    claim = load_claim(args.claim)
    out = Path(args.out) if args.out else None
    if out is not None:
        check_destination(out, args.force)
    with terminate_as_interrupt():
        from infer.check.run import check_claim

        result = check_claim(claim, threshold=threshold)
        if out is not None:
            _write_folder(result, out, args.force)
    if args.json:
        from infer.reporting.jsonout import dumps

        sys.stdout.write(dumps(result.as_dict()))
    else:
        print(text_report(result, out))
    return EXIT_OK if result.consistent else EXIT_INCONSISTENT


# ------------------------------------------------------------------------ rendering


def _claimed_lines(claim) -> list[str]:
    from infer.core.text import fmt

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
    from infer.core.text import fmt

    implied, claim = result.implied, result.claim
    names = (["q_male", "q_female", "q_hat", "load_male", "new_mutation_share"]
             if claim.inheritance == "x-linked" else
             ["q_hat", "carrier_frequency", "incidence_dominant", "incidence_recessive", "load"])
    band = implied.get("uncertainty", {})
    lines = []
    for name in names:
        text = f"{name} = {fmt(implied.get(name))}"
        if name in band:
            text += f" ({fmt(band[name]['lower'])} to {fmt(band[name]['upper'])})"
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
    """The readable report printed on stdout."""
    claim = result.claim
    lines = [f"qhat check: {claim.title}", f"  claim file: {claim.path}"]
    if claim.reference:
        lines.append(f"  paper: {claim.reference}")
    lines.append(f"  {claim.inheritance}, {claim.study.model} model; claimed: "
                 + ", ".join(_claimed_lines(claim)))
    lines.append("  implied by the claim: " + ", ".join(_implied_lines(result)))
    lines.append("")
    for finding in result.findings:
        lines.append(f"{_LABELS[finding.severity]:<8} [{finding.code}] {finding.message}")
    lines += ["", _verdict(result)]
    if out is not None:
        lines.append(f"report: {out}/report.md")
    lines.append(caution_sentence())
    return "\n".join(lines)


def markdown_report(result, plot: str | None) -> str:
    """The text of report.md."""
    from infer.core.text import CAUTION, fmt

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
    lines += ["", "## What the claimed parameters imply (exact balance)", ""]
    lines += [f"- {text}" for text in _implied_lines(result)]
    if "stationary" in implied:
        st = implied["stationary"]
        lines.append(f"- Wright's stationary density: mean {fmt(st['mean'])}, median "
                     f"{fmt(st['median'])}, interval {fmt(st['lower'])} to {fmt(st['upper'])}")
    lines += ["", "## Observations against the claim", "",
              "| # | observation | observed | implied | observed/implied | p-value |",
              "|---|---|---|---|---|---|"]
    for o in implied["observations"]:
        lines.append(f"| {o['index']} | {o['label']} ({o['statistic']}) | {fmt(o['observed'])} "
                     f"| {fmt(o['implied'])} | {fmt(o['ratio'])} | {fmt(o['p_value'])} |")
    lines += ["", "Two-sided posterior predictive p-values of each observed statistic under "
              "the claim (its stated uncertainty included).", "",
              "## What the reported data imply, one parameter at a time", "",
              "| parameter | claimed | median | highest-density interval | evidence | held |",
              "|---|---|---|---|---|---|"]
    for name, r in implied["from_data"].items():
        if not r.get("informed"):
            lines.append(f"| {name} | {fmt(claim.values[name])} | the data do not inform it "
                         "| | | |")
        elif not r.get("possible"):
            lines.append(f"| {name} | {fmt(claim.values[name])} | no value makes the data "
                         "possible | | | |")
        else:
            lines.append(f"| {name} | {fmt(r['claimed'])} | {fmt(r['median'])} | "
                         f"{fmt(r['hpd_lower'])} – {fmt(r['hpd_upper'])} | "
                         f"{fmt(r['evidence'])} | {r['held']} |")
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
    return "\n".join(lines)


# ----------------------------------------------------------------------------- plot


def _plotted_quantity(claim):
    """(implied key, observed fraction, count, trials, label) for the first frequency datum."""
    x_linked = claim.inheritance == "x-linked"
    for o in claim.study.observations:
        if o.kind == "affected":
            key = "q_male" if o.mode == "x-linked-male" else f"incidence_{o.mode}"
            return key, o.affected, o.total, f"affected share of births ({o.mode})", o.penetrance
        if o.kind == "allele-count":
            key = {"male": "q_male", "female": "q_female"}.get(o.sex, "q_hat")
            return key, o.observed, o.sampled, "allele frequency", 1.0
        if o.kind == "genotype-count":
            return ("q_female" if x_linked else "q_hat", o.Aa + 2 * o.aa, 2 * o.total,
                    "allele frequency", 1.0)
    return "q_hat", None, None, "q_hat (equilibrium allele frequency)", 1.0


def balance_figure(result):
    """The implied quantity against mu (others claimed), with the observed band.

    Returns a matplotlib Figure not registered with pyplot.
    """
    import numpy as np
    from matplotlib.figure import Figure
    from scipy import special

    from infer.check.run import PER_LOCUS_RANGE, PER_NUCLEOTIDE_RANGE, implied_quantities
    from infer.model.balance_state import State

    claim = result.claim
    key, k, n, label, penetrance = _plotted_quantity(claim)
    mu = np.geomspace(1e-9, 1e-2, 241)
    params = {name: np.full(mu.size, value) for name, value in claim.values.items()}
    params["mu"] = mu
    with np.errstate(all="ignore"):
        state = State.deterministic(params, claim.inheritance)
        curve = penetrance * np.where(state.exists, implied_quantities(claim, state)[key], np.nan)
    figure = Figure(figsize=(6.4, 4.2), dpi=100)
    figure.subplots_adjust(left=0.13, right=0.97, bottom=0.13, top=0.88)
    ax = figure.subplots()
    low, high = PER_NUCLEOTIDE_RANGE if claim.mu_scale == "nucleotide" else PER_LOCUS_RANGE
    ax.axvspan(low, high, color="tab:green", alpha=0.12, lw=0,
               label=f"measured {claim.mu_scale} rates ({low:g} to {high:g})")
    ax.plot(mu, curve, color="tab:blue", lw=1.8,
            label=f"exact balance, {', '.join(f'{p} = {claim.values[p]:g}' for p in ('s', 'h'))}")
    claimed = penetrance * result.implied.get(key, np.nan)
    ax.plot([claim.values["mu"]], [claimed], "o", color="tab:red", ms=7, mec="black",
            label=f"claimed mu = {claim.values['mu']:.3g}")
    if n:
        tail = (1 - claim.study.interval) / 2
        lower = special.betaincinv(k, n - k + 1, tail) if k > 0 else 0.0
        upper = special.betaincinv(k + 1, n - k, 1 - tail) if k < n else 1.0
        ax.axhspan(max(lower, 1e-300), upper, color="tab:orange", alpha=0.3, lw=0,
                   label=f"observed {k}/{n} ({100 * claim.study.interval:g} % Clopper-Pearson)")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel("mu (per gene copy per generation)" if claim.mu_scale == "locus"
                  else "mu (per nucleotide per generation)", fontsize=9)
    ax.set_ylabel(label, fontsize=9)
    ax.legend(fontsize=7, loc="upper left", framealpha=0.85)
    ax.tick_params(labelsize=8)
    figure.suptitle(f"{claim.title}\nbalance under the claim (others held at claimed values)",
                    fontsize=9)
    return figure


def _write_folder(result, out: Path, force: bool) -> None:
    import matplotlib

    from infer.reporting.folder import atomic_folder
    from infer.reporting.jsonout import dumps

    matplotlib.use("Agg")
    with atomic_folder(out, force=force) as folder:
        (folder / "check.json").write_text(dumps(result.as_dict()), encoding="utf-8")
        with matplotlib.rc_context({"text.parse_math": False}):  # "$" in a title is text
            figure = balance_figure(result)
            figure.savefig(folder / "balance.png", dpi=100)
            figure.clear()
        (folder / "report.md").write_text(markdown_report(result, "balance.png"),
                                          encoding="utf-8")
