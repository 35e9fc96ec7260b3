"""Findings from the trade's knowledge: approximations, drift, measured mutation rates.

The authors' approximation against the exact root and its rare-allele range; the
deterministic balance where drift dominates (4Ne q_hat small); the claimed and the
implied mu against the per-locus and per-nucleotide rates measured in humans (sources
beside the ranges below); and the classic alternative explanations when balance with a
measured rate cannot explain the data.
"""

from __future__ import annotations

import math

from infer.jobs.check.findings import Finding, claimed_text
from infer.core.text import fmt
from infer.files.claim import Claim
from infer.model.balance_state import BalanceState
from infer.model.observations.kinds import KINDS

__all__ = [
    "approximation_findings",
    "drift_findings",
    "trade_findings",
    "alternative_explanations",
    "PER_LOCUS_RANGE",
    "PER_NUCLEOTIDE_RANGE",
    "TRADE_MARGIN",
    "NUCLEOTIDE_MARGIN",
    "SINGLE_SITE_RATE",
    "DRIFT_WARNING",
    "DRIFT_ERROR",
    "RARE_WARNING",
    "RARE_ERROR",
]

# Per-locus mutation rates measured for human disease loci span about 1e-6 to 1e-4 per
# gene per generation: Morton, Crow & Muller 1956 (PNAS 42:855), 6-15e-6 per locus;
# haemophilia B ~4e-6 (several sources, see REFERENCES); achondroplasia 1.93e-5
# (Oberklaid et al. 1979, J. Med. Genet. 16:140); Duchenne muscular dystrophy 6.3e-5
# (Yasuda & Kondo 1980, J. Med. Genet. 17:106); neurofibromatosis type 1 ~1e-4, the
# highest commonly quoted (Crowe, Schull & Neel 1956, from memory).
PER_LOCUS_RANGE = (1e-6, 1e-4)
# Per nucleotide per generation in humans: ~2.5e-8 (Nachman & Crowell 2000, Genetics
# 156:297); 1.20e-8 (Kong et al. 2012, Nature 488:471).
PER_NUCLEOTIDE_RANGE = (1e-8, 3e-8)
#: a rate more than this factor beyond a measured range is an error, inside it a warning
TRADE_MARGIN = 2.0
#: per nucleotide the factor is wider: CpG transitions run ~10x the average (from memory)
NUCLEOTIDE_MARGIN = 10.0
#: below this a per-locus rate is under a single specified substitution (1/3 of the
#: lowest per-nucleotide rate, Kong et al. 2012)
SINGLE_SITE_RATE = PER_NUCLEOTIDE_RANGE[0] / 3
#: 4Ne q_hat below these: drift dominates (warning), the balance value misleads (error)
DRIFT_WARNING, DRIFT_ERROR = 1.0, 0.1
#: rare-allele approximations drop terms of order q: warning, error above these
RARE_WARNING, RARE_ERROR = 0.05, 0.2


def approximation_findings(claim: Claim, state: BalanceState, implied: dict) -> list[Finding]:
    """Judge the authors' approximation against the exact root and its rare-allele range.

    Parameters
    ----------
    claim : infer.files.claim.Claim
    state : infer.model.balance_state.BalanceState
        The claim's deterministic state.
    implied : dict
        The implied quantities (the exact ``q_hat`` or ``q_male``).

    Returns
    -------
    list of Finding
        Empty when the claim names no approximation.
    """
    from infer.core.approximations import autosomal_approximations, x_linked_approximations

    findings = []
    v = claim.values
    name = claim.approximation
    if name is not None:
        if name == "indirect":
            name = {"dominant": "mu/(hs)", "recessive": "sqrt(mu/s)",
                    "x-linked-male": "3mu/s"}[claim.mode]
        if claim.inheritance == "x-linked":
            table = x_linked_approximations(v["mu"], v["s"], v["h"], v["alpha"])
            exact = implied["q_male"]
        else:
            table = autosomal_approximations(v["mu"], v["s"], v["h"], v["F"])
            exact = implied["q_hat"]
        approx = table[name]
        value, error = float(approx.value), float(approx.relative_error)
        details = {"approximation": claim.approximation, "formula": approx.formula,
                   "value": value, "exact": exact, "relative_error": error,
                   "in_range": bool(approx.in_range), "range": approx.range_note}
        used = (f"The authors' {claim.approximation}"
                + (f" (the inverse of {name})" if claim.approximation == "indirect" else ""))
        if not math.isfinite(value):
            findings.append(Finding("error", "approximation-out-of-range",
                                    f"{used} has no finite value at the claimed "
                                    f"{claimed_text(claim, ('mu', 's', 'h'))}.", details))
        elif not bool(approx.in_range):
            severity = "error" if not 0.5 <= 1 + error <= 2 else "warning"
            findings.append(Finding(severity, "approximation-out-of-range",
                                    f"{used} is used outside its range ({approx.range_note}): "
                                    f"it gives {fmt(value)} against the exact {fmt(exact)} "
                                    f"(relative error {100 * error:+.1f} %).", details))
        else:
            findings.append(Finding("note", "approximation-in-range",
                                    f"{used} is within its range here: {fmt(value)} against "
                                    f"the exact {fmt(exact)} (relative error "
                                    f"{100 * error:+.2f} %).", details))
        findings += _rare_allele_finding(claim, implied)
    return findings


def _rare_allele_finding(claim: Claim, implied: dict) -> list[Finding]:
    """A stated or implied frequency too high for a rare-allele approximation."""
    candidates = {"implied q_hat": implied.get("q_hat", math.nan)}
    if claim.inheritance == "x-linked":
        candidates["implied q_male"] = implied.get("q_male", math.nan)
    for name, statement in claim.statements.items():
        if name in ("q", "q_male"):
            candidates[f"stated {name}"] = statement.value
        elif name == "carrier_frequency":
            candidates["stated carrier frequency / 2"] = statement.value / 2
        elif name == "incidence":
            candidates["q from the stated incidence"] = (
                math.sqrt(statement.value) if claim.mode == "recessive"
                else statement.value / 2 if claim.mode == "dominant" else statement.value)
    finite = {k: v for k, v in candidates.items() if math.isfinite(v)}
    if not finite:
        return []
    which, q = max(finite.items(), key=lambda kv: kv[1])
    if q <= RARE_WARNING:
        return []
    severity = "error" if q > RARE_ERROR else "warning"
    return [Finding(severity, "frequency-too-high-for-approximation",
                    f"The {which} is {fmt(q)}, too high for the rare-allele approximation "
                    f"{claim.approximation}, which drops terms of order q (limit "
                    f"{RARE_WARNING:g}).", {"frequencies": finite, "largest": which,
                                            "limit_warning": RARE_WARNING,
                                            "limit_error": RARE_ERROR})]


def drift_findings(claim: Claim, state: BalanceState, implied: dict) -> list[Finding]:
    """Flag the deterministic balance where drift dominates (4Ne q_hat small).

    Parameters
    ----------
    claim : infer.files.claim.Claim
    state : infer.model.balance_state.BalanceState
    implied : dict
        The implied quantities (``q_hat``, ``four_Ne_q_hat``, ``stationary``).

    Returns
    -------
    list of Finding
        A ``drift-model-used`` note, a ``drift-dominates`` finding, or nothing.
    """
    v = claim.values
    if not math.isfinite(v["Ne"]) or not math.isfinite(implied["q_hat"]):
        return []
    copies = implied["four_Ne_q_hat"]
    details = {"Ne": v["Ne"], "q_hat": implied["q_hat"], "four_Ne_q_hat": copies}
    can_drift = claim.inheritance == "autosomal" and v["F"] == 0
    if claim.study.model == "drift":
        st = implied["stationary"]
        details["stationary"] = st
        return [Finding("note", "drift-model-used",
                        f"Under Wright's stationary density (Ne = {fmt(v['Ne'])}) the allele "
                        f"frequency has mean {fmt(st['mean'])} and median {fmt(st['median'])}, "
                        f"against the deterministic q_hat = {fmt(implied['q_hat'])} "
                        f"(4Ne q_hat = {fmt(copies)}).", details)]
    if copies >= DRIFT_WARNING:
        return []
    extra = ""
    if can_drift:
        from infer.core.drift import stationary as drift

        nu = max(v["nu"], 1e-9)  # Wright's density needs nu > 0; 1e-9 is the drift default
        st = {k: float(x) for k, x in drift.stationary_summary(
            v["Ne"], v["mu"], v["s"], v["h"], nu, claim.study.interval).items()}
        details["stationary"], details["nu_used"] = st, nu
        extra = (f"; under drift the stationary mean is {fmt(st['mean'])} and the median "
                 f"{fmt(st['median'])}")
    severity = "error" if copies < DRIFT_ERROR else "warning"
    return [Finding(severity, "drift-dominates",
                    f"The deterministic balance is used where 4Ne q_hat = {fmt(copies)} "
                    f"(Ne = {fmt(v['Ne'])}, q_hat = {fmt(implied['q_hat'])}) is below "
                    f"{DRIFT_WARNING:g}: drift, not the balance, sets the frequency{extra}.",
                    details)]


# ------------------------------------------------------------- the trade's knowledge


def _ranges(claim: Claim):
    if claim.mu_scale == "nucleotide":
        return (PER_NUCLEOTIDE_RANGE, NUCLEOTIDE_MARGIN,
                "per-nucleotide rates measured in humans (about 1e-8 to 3e-8 per generation: "
                "Nachman & Crowell 2000; Kong et al. 2012)")
    return (PER_LOCUS_RANGE, TRADE_MARGIN,
            "per-locus rates measured for human disease loci (about 1e-6 to 1e-4: Morton, "
            "Crow & Muller 1956; achondroplasia ~2e-5, Oberklaid et al. 1979; Duchenne "
            "6.3e-5, Yasuda & Kondo 1980; NF1 ~1e-4)")


def trade_findings(claim: Claim, from_data: dict) -> list[Finding]:
    """Compare the claimed and the implied mu with the measured mutation rates.

    Parameters
    ----------
    claim : infer.files.claim.Claim
    from_data : dict
        The intervals implied by the data (:func:`infer.jobs.check.intervals.implied_intervals`).

    Returns
    -------
    list of Finding
    """
    (low, high), margin, text = _ranges(claim)
    findings = []
    mu = claim.values["mu"]
    details = {"mu": mu, "scale": claim.mu_scale, "range": [low, high], "margin": margin}
    if mu > high or mu < low:
        above = mu > high
        far = mu > high * margin if above else mu < low / margin
        severity = "error" if far else "warning"
        if not above and claim.mu_scale == "locus":
            severity = "warning" if mu < SINGLE_SITE_RATE else "note"
        word = "above" if above else "below"
        tail = ("" if above or claim.mu_scale == "nucleotide" else
                "; plausible only for a small mutational target of a few nucleotides")
        findings.append(Finding(severity, "mutation-rate-outside-measured",
                                f"The claimed mu = {fmt(mu)} is {word} the {text}{tail}.",
                                {**details, "direction": word}))
    implied = from_data.get("mu", {})
    if implied.get("possible"):
        lower, upper, median = implied["hpd_lower"], implied["hpd_upper"], implied["median"]
        record = {**details, "implied_median": median, "implied_lower": lower,
                  "implied_upper": upper, "held": implied["held"]}
        lead = (f"With {implied['held']} held, the reported data need mu = {fmt(median)} "
                f"({fmt(lower)} to {fmt(upper)})")
        if median > high:
            severity = "error" if lower > high * margin else "warning"
            findings.append(Finding(severity, "implied-mutation-rate-outside-measured",
                                    f"{lead}, above the {text}.", {**record,
                                                                  "direction": "above"}))
        elif median < low:
            floor = SINGLE_SITE_RATE if claim.mu_scale == "locus" else low / margin
            severity = "warning" if upper < floor else "note"
            findings.append(Finding(severity, "implied-mutation-rate-outside-measured",
                                    f"{lead}, below the {text}.", {**record,
                                                                  "direction": "below"}))
    return findings


_ALTERNATIVES = {
    "excess": [
        ("possible-heterozygote-advantage",
         "Heterozygote advantage could keep the allele more common than recurrent mutation "
         "can (the hypothesis with data for cystic fibrosis, Romeo et al. 1989, Hum. Genet. "
         "84:1); carrier fitness or survival data would test it."),
        ("possible-drift-or-founder-effect",
         "Drift or a founder effect could have raised the allele in this population above "
         "its balance value; frequencies in neighbouring populations would test it."),
        ("possible-ascertainment",
         "Ascertainment could inflate the observed frequency (cases collected through "
         "clinics or affected families rather than all births); a population-based count "
         "would test it."),
        ("possible-non-equilibrium",
         "The population may not be at equilibrium (for example selection recently relaxed "
         "by treatment, or a recent admixture); the balance value assumes it has settled."),
    ],
    "deficit": [
        ("possible-ascertainment",
         "Under-ascertainment could lower the observed frequency (missed, miscarried or "
         "undiagnosed cases, reduced penetrance); a complete population count would test it."),
        ("possible-drift-or-founder-effect",
         "Drift could hold the allele below its balance value in a small population; the "
         "drift model (model = \"drift\" with Ne) gives the spread to expect."),
        ("possible-non-equilibrium",
         "The population may not be at equilibrium (for example selection recently "
         "strengthened, or a recent expansion); the balance value assumes it has settled."),
    ],
}


def alternative_explanations(findings: list[Finding], implied: dict) -> list[Finding]:
    """The classic alternatives, as possibilities, when balance cannot explain the data."""
    direction = None
    for f in findings:
        if f.code == "implied-mutation-rate-outside-measured" and f.severity != "note":
            direction = "excess" if f.details["direction"] == "above" else "deficit"
        elif f.code == "no-implied-value":
            ratios = [o["ratio"] for o in implied.get("observations", []) if
                      KINDS[o["kind"]].depends_on_frequency
                      and math.isfinite(o["ratio"])]
            direction = direction or ("excess" if ratios and max(ratios) > 1 else "deficit")
    if direction is None:
        return []
    why = ("balance with a measured mutation rate does not explain the "
           + ("excess" if direction == "excess" else "shortfall") + " of the allele")
    return [Finding("note", code, text, {"because": why, "direction": direction})
            for code, text in _ALTERNATIVES[direction]]
