"""report.md and the short terminal summary of an estimate."""

from __future__ import annotations

from infer.core.text import CAUTION, CAUTION_LINE, shown
from infer.reporting.classic_estimates import direct_indirect_lines
from infer.reporting.labels import (
    fmt_contraction,
    fmt_count,
    fmt_level,
    fmt_percent,
    model_assumptions,
    overdominant,
    parameter_meanings,
)
from infer.reporting.labels import fmt_value as fmt
from infer.jobs.estimate.warnings import (
    POOR_FIT_BELOW,
    estimate_warnings,
    poorly_reproduced,
    read_with_care,
)

__all__ = ["report_markdown", "terminal_summary"]

_DERIVED = {
    "q_hat": "equilibrium allele frequency among newborns",
    "q_male": "allele frequency among newborn sons",
    "q_female": "allele frequency among daughters' X chromosomes",
    "load": "mutation load, 1 - mean fitness",
    "s_mean": "selection averaged over the sexes, (s_male + s_female)/2",
    "load_male": "mutation load in sons",
    "load_female": "mutation load in daughters",
    "affected_dominant": "affected fraction of newborns if dominant (Aa + aa)",
    "affected_recessive": "affected fraction of newborns if recessive (aa)",
    "affected_male": "affected fraction of newborn sons",
    "q_mean_drift": "mean allele frequency under drift (Wright's density)",
    "q_median_drift": "median allele frequency under drift",
    "mu_female": "mutation rate in the female germ line, 3 mu/(2 + alpha)",
    "mu_male": "mutation rate in the male germ line, alpha·mu_female",
}
_DRIFT_MEANING = {
    "q_hat": "deterministic balance frequency (ignores drift; not what a drift study "
             "expects to see)",
    "q_median_drift": "median over draws of Wright's per-draw median (0 when most mass "
                      "is at 0)",
}


def _stat(value, entry: dict) -> str:
    """A statistic as a whole number when the replicates are counts."""
    if value is None:
        return "—"
    return fmt_count(value) if entry.get("integer") else fmt(value)


def drift_lines(d: dict, pct: str) -> list[str]:
    """The report's section on Wright's stationary distribution (a drift study)."""
    lines = ["### Allele frequency under drift (Wright's stationary distribution)", "",
             "Over the posterior, Wright's distribution at constant Ne (Wright 1931; 1937) "
             "gives the allele frequency a drift study expects to see:", ""]
    rows = [["mean frequency", fmt(d["mean"]),
             f"{fmt(d['mean_lower'])} – {fmt(d['mean_upper'])} (of the per-draw means)"],
            ["frequency (median of the predictive distribution)", fmt(d["median"]),
             f"{fmt(d['lower'])} – {fmt(d['upper'])} (central {pct})"],
            ["share below one copy in the population, x < 1/(2Ne)",
             fmt_percent(d["below_one_copy"], 1), ""]]
    for sample in d["samples"]:
        absent = sample["p_absent"]
        rows.append([f"P(absent from a sample of {fmt_count(sample['sample'])} allele copies, "
                     f"the size of \"{sample['label']}\")", fmt(absent["mean"]),
                     f"{fmt(absent['lower'])} – {fmt(absent['upper'])} (over draws)"])
        rows.append([f"P(frequency ≥ observed {fmt(sample['observed_frequency'])}, "
                     f"{fmt_count(sample['copies'])}/{fmt_count(sample['sample'])})",
                     fmt(sample["p_at_least_observed"]),
                     f"± {fmt(sample['p_at_least_observed_se'], 2)} (Monte Carlo)"])
    lines += _table(["quantity", "value", "interval"], rows)
    if d["mostly_at_zero"]:
        lines += ["", f"Most of the mass is at 0: in {fmt_percent(d['below_one_copy'], 0)} of "
                  "the predictive distribution the allele has fewer than one copy in the "
                  "population, that is, it is usually absent and comes and goes by new "
                  "mutation and drift; when present it can be far more common than the "
                  "deterministic balance value. Read the mean and the probabilities above, "
                  "not the median."]
    return lines


def _table(header: list[str], rows: list[list[str]]) -> list[str]:
    lines = ["| " + " | ".join(header) + " |", "|" + "---|" * len(header)]
    lines += ["| " + " | ".join(r) + " |" for r in rows]
    return lines


def _comparison(c: dict, title: str, first: tuple, second: tuple, pct: str,
                over: str) -> list[str]:
    """A section comparing two fits: its statement, then medians and intervals side by side.

    ``first`` and ``second`` are (key in ``c``, column label); rows are the parameters of
    ``c[over]``.
    """
    lines = ["", f"## {title}", "", c["statement"]]

    def cells(key, name):
        entry = c[key][name]
        return [fmt(entry["median"]), f"{fmt(entry['lower'])} – {fmt(entry['upper'])}"]

    rows = [[name, *cells(first[0], name), *cells(second[0], name)] for name in c[over]]
    if rows:
        lines += [""] + _table(["parameter", f"{first[1]} median", f"{first[1]} {pct}",
                                f"{second[1]} median", f"{second[1]} {pct}"], rows)
    return lines


def report_markdown(result, plots: dict[str, str], timing: dict | None = None) -> str:
    """The text of report.md."""
    s = result.summary
    study = result.study
    pct = fmt_level(s["interval"])
    care = read_with_care(s)
    lines = [f"**{care[0]} — read with care:** {care[1]}", ""] if care else []
    lines += [f"# {study.title}", "", CAUTION, ""]
    diag = s["diagnostics"]
    warnings = estimate_warnings(s)
    if warnings:
        lines += ["> **Warnings** (`qhat estimate` prints each on stderr):", ">"]
        lines += [f"> - {w[0].upper() + w[1:]}." for w in warnings]
        lines += [""]
    lines += ["## Data and assumptions", "",
              f"- Inheritance: **{study.inheritance}**; model: **{study.model}** "
              + ("(deterministic mutation-selection balance, infinite population)"
                 if study.model == "deterministic"
                 else "(Wright's stationary distribution: mutation, selection and drift)"),
              ("- Life cycle: census at birth; selection on zygotes (AA 1, Aa 1-hs, aa 1-s), "
               if not getattr(study, "sex_specific", False) else
               "- Life cycle: census at birth; selection on zygotes by sex (males AA 1, "
               "Aa 1-h·s_male, aa 1-s_male; females likewise with s_female), sperm and eggs "
               "at their own frequencies, ")
              + "mutation in the germ line, random union of gametes"
              + (" with inbreeding F" if "F" in result.free or s["parameters"]["F"]["median"]
                 else "") + "."]
    if "history_comparison" in s:  # a [history] replaces the equilibrium assumption
        today = ("q_hat below is the frequency it gives today" if study.model != "drift"
                 else "q_hat below is the deterministic balance value; the frequency today "
                 "is in 'The history against equilibrium'")
        lines += ["- A population history is assumed instead of equilibrium today "
                  f"(the study's [history]; {today}):"]
        lines += [f"  - {text}" for text in s["history_comparison"]["description"]] + [""]
    else:
        lines += [f"- {text}" for text in model_assumptions(study.model)] + [""]
    for assumption in dict.fromkeys(o.assumption for o in study.observations if o.assumption):
        lines += [f"- {assumption}", ""]
    lines += ["Observations:", ""]
    lines += [f"{i + 1}. {o.describe()}" for i, o in enumerate(study.observations)]
    lines += ["", "Parameters (priors; *default* marks a value the study did not set):", ""]
    rows = []
    meanings = parameter_meanings(study.inheritance, s["parameters"])
    for name, p in s["parameters"].items():
        rows.append([name, meanings.get(name, ""), p["prior"] + (" *default*" if p["defaulted"]
                                                               else "")])
    lines += _table(["parameter", "meaning", "prior or fixed value"], rows)

    lines += ["", f"## Posterior ({pct} equal-tailed intervals)", ""]
    rows = []
    for name in result.free:
        p = s["parameters"][name]
        rows.append([name, fmt(p["median"]), f"{fmt(p['lower'])} – {fmt(p['upper'])}",
                     fmt(p["mean"]), fmt(p["sd"]),
                     f"{fmt(p['prior_lower'])} – {fmt(p['prior_upper'])}",
                     fmt_contraction(p["contraction"]),
                     f"{p['ess_bulk']:.0f}", f"{p['r_hat']:.4f}"])
    lines += _table(["parameter", "median", f"{pct} interval", "mean", "sd",
                     f"prior {pct}", "contraction", "bulk ESS", "R-hat"], rows)
    if "drift_frequency" in s:
        lines += [""] + drift_lines(s["drift_frequency"], pct)
    lines += ["", "Derived quantities" + (" (per posterior draw; under drift q_hat is the "
                                          "deterministic value, for comparison)"
                                          if "drift_frequency" in s else "") + ":", ""]
    meaning = dict(_DERIVED, **(_DRIFT_MEANING if "drift_frequency" in s else {}))
    if "history_comparison" in s:
        meaning["q_hat"] = ("allele frequency among today's newborns under the history"
                            if study.model != "drift" else
                            "deterministic balance frequency at today's values (not the "
                            "history's: its frequency today is under 'The history against "
                            "equilibrium')")
    if overdominant(s["parameters"]):
        meaning["load"] = ("genetic load, 1 - mean fitness relative to the fittest genotype "
                           "(the heterozygote): segregational and mutational")
    rows = [[k, meaning.get(k, ""), fmt(v["median"]), f"{fmt(v['lower'])} – {fmt(v['upper'])}"]
            for k, v in s["derived"].items()]
    lines += _table(["quantity", "meaning", "median", f"{pct} interval"], rows)
    share = max((v.get("no_equilibrium_share", 0.0) for v in s["derived"].values()),
                default=0.0)
    if share > 0:
        lines += ["", f"In {fmt_percent(share, 1)} of posterior draws there is no stable interior "
                  "equilibrium (mutation overwhelms selection)."]

    lines += ["", "## What the data identify", ""]
    lines += [f"- {t}" for t in s["identifiability"]]
    lines += ["", "`contraction` is 1 - posterior sd / prior sd on the sampling scale (log10 for "
              "log-scale priors): near 1 the data decide, near 0 the prior does."]
    lines += direct_indirect_lines(s, pct)

    if "drift_comparison" in s:
        # only the parameters free under both models are compared (no Ne in the balance)
        lines += _comparison(s["drift_comparison"], "Drift against the deterministic balance",
                             ("drift", "drift"), ("deterministic", "deterministic"), pct,
                             over="deterministic")
    if "history_comparison" in s:
        lines += _comparison(s["history_comparison"], "The history against equilibrium",
                             ("with_history", "history"), ("equilibrium", "equilibrium"), pct,
                             over="with_history")

    lines += ["", "## Diagnostics", ""]
    taus = ", ".join(f"{k} {v:.1f}" for k, v in diag["autocorr_time"].items())
    lines += [f"- Converged: **{'yes' if diag['converged'] else 'NO'}** (every free parameter "
              "needs bulk ESS >= 1000, split R-hat < 1.01 across ensembles and chains longer "
              "than 50 autocorrelation times).",
              f"- {diag['ensembles']} independently started ensembles of {diag['walkers']} "
              f"walkers, {diag['steps']} steps each, burn-in {diag['burn_in']}, thinned by "
              f"{diag['thin']}: {diag['draws']} kept draws.",
              f"- Integrated autocorrelation time (steps): {taus}."]
    if "grid" in s:
        g = s["grid"]
        worst = {k: max(e["relative_difference"] for e in v.values())
                 for k, v in g["parameters"].items()}
        verified = diag.get("verified")
        if verified is None:
            verdict = "could not be checked against"
        else:
            verdict = "agrees with" if verified else "DISAGREES with"
        lines.append(f"- Exact cross-check: the sampler {verdict} the exact posterior "
                     f"(nested quadrature, {g['evaluations']:,} evaluations, "
                     f"{'settled' if g['settled'] else 'NOT settled'}); largest relative "
                     "difference of median or interval end: "
                     + ", ".join(f"{k} {100 * v:.2f} %" for k, v in worst.items())
                     + ". Agreement is judged in probability, within Monte Carlo error.")
    if timing:
        lines.append(f"- Wall time: {timing['seconds']:.1f} s "
                     f"(sampling {timing['sampling_seconds']:.1f} s).")

    lines += ["", "## Posterior predictive checks", ""]
    rows = [[str(i + 1), p["label"], p["statistic"], _stat(p["observed"], p),
             _stat(p.get("predictive_median"), p),
             f"{_stat(p.get('predictive_lower'), p)} – {_stat(p.get('predictive_upper'), p)}",
             fmt(p["p_value"])]
            for i, p in enumerate(s["predictive"])]
    lines += _table(["#", "observation", "statistic", "observed", "predictive median",
                     "95 % predictive interval", "p-value"], rows)
    lines += ["", "The predictive median and interval are those of the statistic replicated "
              "from the fitted model (new data of the same size)"
              + (", the frequency drawn from Wright's distribution for each draw"
                 if "drift_frequency" in s else "") + "."]
    bad = [p["label"] for p in poorly_reproduced(s)]
    lines += ["", (f"Observations the model reproduces poorly (p < {POOR_FIT_BELOW:g}): "
                   + ", ".join(bad) + ". Balance may not explain them.") if bad else
              "Every observation is within what the fitted model reproduces "
              f"(p >= {POOR_FIT_BELOW:g})."]

    lines += ["", "## Plots", ""]
    titles = {"marginals": "Prior and posterior marginals", "pairs": "Pairs",
              "trace": "Traces", "balance": "Balance curve",
              "predictive": "Posterior predictive vs observed"}
    for key, name in plots.items():
        lines += [f"### {titles.get(key, key)}", "", f"![{titles.get(key, key)}]({name})", ""]
    lines += ["## Files", "", "- `summary.json`: every number above, machine-readable.",
              "- `posterior.nc`: arviz DataTree (posterior, prior, log_likelihood, "
              "posterior_predictive, observed_data).", "", CAUTION, ""]
    return "\n".join(shown(line) for line in lines)   # user text escaped


def terminal_summary(result, out_path) -> str:
    """A few lines for the terminal after ``qhat estimate``."""
    s = result.summary
    pct = fmt_level(s["interval"], space="")
    lines = [f"{result.study.title}"]
    width = max([6, *(len(name) for name in result.free)])
    for name in result.free:
        p = s["parameters"][name]
        lines.append(f"  {name:<{width}} {fmt(p['median']):>10}  {pct} {fmt(p['lower'])} – "
                     f"{fmt(p['upper'])}  contraction {fmt_contraction(p['contraction'])}")
    d = s.get("drift_frequency")
    q = s["derived"].get("q_hat")
    today = (s.get("history_comparison") or {}).get("frequency_today")
    if today and result.study.model == "drift":  # the history's, not the balance's
        lines.append(f"  {'q_today':<{width}} {fmt(today['median']):>10}  {pct} "
                     f"{fmt(today['lower'])} – {fmt(today['upper'])}  (mean under the "
                     "history)")
    elif d:
        lines.append(f"  drift: mean frequency {fmt(d['mean'])}, {pct} {fmt(d['lower'])} – "
                     f"{fmt(d['upper'])}" + ("; most mass at 0" if d["mostly_at_zero"] else ""))
        for sample in d["samples"][:1]:
            lines.append(f"         P(absent from {fmt_count(sample['sample'])} copies) "
                         f"{fmt(sample['p_absent']['mean'])}, P(frequency ≥ observed) "
                         f"{fmt(sample['p_at_least_observed'])}")
    elif q:
        sons = s["derived"].get("q_male")  # X-linked: the frequency the data see
        name, q = ("q_male", sons) if sons else ("q_hat", q)
        lines.append(f"  {name:<{width}} {fmt(q['median']):>10}  {pct} {fmt(q['lower'])} – "
                     f"{fmt(q['upper'])}" + ("  (in newborn sons)" if sons else ""))
    d = s["diagnostics"]
    lines.append("  converged" if d["converged"] else "  NOT CONVERGED: " + " ".join(d["messages"]))
    lines.append(f"  report: {out_path}/report.md")
    lines.append(f"  {CAUTION_LINE}")
    return "\n".join(shown(line) for line in lines)   # user text escaped
