"""report.md and the short terminal summary of an estimate."""

from __future__ import annotations

from infer.core.text import CAUTION, CAUTION_LINE, fmt
from infer.jobs.estimate.warnings import (
    POOR_FIT_BELOW,
    estimate_warnings,
    poorly_reproduced,
    read_with_care,
)

__all__ = ["report_markdown", "terminal_summary"]

_UNITS = {
    "mu": "per gene copy per generation",
    "s": "selection coefficient against aa",
    "h": "dominance of the deleterious allele",
    "F": "inbreeding coefficient",
    "nu": "back mutation per generation",
    "Ne": "effective population size",
    "alpha": "male/female mutation-rate ratio",
}

_DERIVED = {
    "q_hat": "equilibrium allele frequency among newborns",
    "q_male": "allele frequency among newborn sons",
    "q_female": "allele frequency among daughters' X chromosomes",
    "load": "mutation load, 1 - mean fitness",
    "load_male": "mutation load in sons",
    "load_female": "mutation load in daughters",
    "affected_dominant": "affected fraction of newborns if dominant (Aa + aa)",
    "affected_recessive": "affected fraction of newborns if recessive (aa)",
    "affected_male": "affected fraction of newborn sons",
    "q_mean_drift": "mean allele frequency under drift (Wright's density)",
    "q_median_drift": "median allele frequency under drift",
}


def _table(header: list[str], rows: list[list[str]]) -> list[str]:
    lines = ["| " + " | ".join(header) + " |", "|" + "---|" * len(header)]
    lines += ["| " + " | ".join(r) + " |" for r in rows]
    return lines


def report_markdown(result, plots: dict[str, str], timing: dict | None = None) -> str:
    """The text of report.md."""
    s = result.summary
    study = result.study
    pct = f"{100 * s['interval']:g} %"
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
              "- Life cycle: census at birth; selection on zygotes (AA 1, Aa 1-hs, aa 1-s), "
              "mutation in the germ line, random union of gametes"
              + (" with inbreeding F" if "F" in result.free or s["parameters"]["F"]["median"]
                 else "") + ".",
              "- Equilibrium is assumed: the allele frequency has settled at its balance "
              "value.", ""]
    for assumption in dict.fromkeys(o.assumption for o in study.observations if o.assumption):
        lines += [f"- {assumption}", ""]
    lines += ["Observations:", ""]
    lines += [f"{i + 1}. {o.describe()}" for i, o in enumerate(study.observations)]
    lines += ["", "Parameters (priors; *default* marks a value the study did not set):", ""]
    rows = []
    for name, p in s["parameters"].items():
        rows.append([name, _UNITS.get(name, ""), p["prior"] + (" *default*" if p["defaulted"]
                                                               else "")])
    lines += _table(["parameter", "meaning", "prior or fixed value"], rows)

    lines += ["", f"## Posterior ({pct} equal-tailed intervals)", ""]
    rows = []
    for name in result.free:
        p = s["parameters"][name]
        rows.append([name, fmt(p["median"]), f"{fmt(p['lower'])} – {fmt(p['upper'])}",
                     fmt(p["mean"]), fmt(p["sd"]),
                     f"{fmt(p['prior_lower'])} – {fmt(p['prior_upper'])}",
                     f"{p['contraction']:.2f}" if p["contraction"] is not None else "—",
                     f"{p['ess_bulk']:.0f}", f"{p['r_hat']:.4f}"])
    lines += _table(["parameter", "median", f"{pct} interval", "mean", "sd",
                     f"prior {pct}", "contraction", "bulk ESS", "R-hat"], rows)
    lines += ["", "Derived quantities:", ""]
    rows = [[k, _DERIVED.get(k, ""), fmt(v["median"]), f"{fmt(v['lower'])} – {fmt(v['upper'])}"]
            for k, v in s["derived"].items()]
    lines += _table(["quantity", "meaning", "median", f"{pct} interval"], rows)
    share = max((v.get("no_equilibrium_share", 0.0) for v in s["derived"].values()),
                default=0.0)
    if share > 0:
        lines += ["", f"In {100 * share:.1f} % of posterior draws there is no stable interior "
                  "equilibrium (mutation overwhelms selection)."]

    lines += ["", "## What the data identify", ""]
    lines += [f"- {t}" for t in s["identifiability"]]
    lines += ["", "`contraction` is 1 - posterior sd / prior sd on the sampling scale (log10 for "
              "log-scale priors): near 1 the data decide, near 0 the prior does."]

    if "drift_comparison" in s:
        c = s["drift_comparison"]
        lines += ["", "## Drift against the deterministic balance", "", c["statement"]]
        # only the parameters free under both models are compared (no Ne in the balance)
        rows = [[n, fmt(c["drift"][n]["median"]),
                 f"{fmt(c['drift'][n]['lower'])} – {fmt(c['drift'][n]['upper'])}",
                 fmt(c["deterministic"][n]["median"]),
                 f"{fmt(c['deterministic'][n]['lower'])} – {fmt(c['deterministic'][n]['upper'])}"]
                for n in c["deterministic"]]
        if rows:
            lines += [""] + _table(["parameter", "drift median", f"drift {pct}",
                                    "deterministic median", f"deterministic {pct}"], rows)

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
    rows = [[str(i + 1), p["label"], p["statistic"], fmt(p["observed"]),
             fmt(p["expected_median"]), fmt(p["p_value"])]
            for i, p in enumerate(s["predictive"])]
    lines += _table(["#", "observation", "statistic", "observed", "expected (median)",
                     "p-value"], rows)
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
    return "\n".join(lines)


def terminal_summary(result, out_path) -> str:
    """A few lines for the terminal after ``qhat estimate``."""
    s = result.summary
    pct = f"{100 * s['interval']:g}%"
    lines = [f"{result.study.title}"]
    for name in result.free:
        p = s["parameters"][name]
        lines.append(f"  {name:<6} {fmt(p['median']):>10}  {pct} {fmt(p['lower'])} – "
                     f"{fmt(p['upper'])}  contraction {p['contraction']:.2f}")
    q = s["derived"].get("q_hat")
    if q:
        lines.append(f"  q_hat  {fmt(q['median']):>10}  {pct} {fmt(q['lower'])} – "
                     f"{fmt(q['upper'])}")
    d = s["diagnostics"]
    lines.append("  converged" if d["converged"] else "  NOT CONVERGED: " + " ".join(d["messages"]))
    lines.append(f"  report: {out_path}/report.md")
    lines.append(f"  {CAUTION_LINE}")
    return "\n".join(lines)
