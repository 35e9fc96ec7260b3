"""Findings from the trade's knowledge: approximations, drift, measured mutation rates.

The authors' approximation against the exact root and its rare-allele range; the
deterministic balance where drift dominates (4Ne q_hat small); the claimed and the
implied mu against the per-locus and per-nucleotide rates measured in humans (sources
beside the ranges below); and the classic alternative explanations when balance with a
measured rate cannot explain the data.
"""

from __future__ import annotations

import math

from infer.jobs.check.findings import Finding, claimed_text, fmt_small, signed_percent
from infer.core.text import fmt
from infer.files.claim import Claim
from infer.model.balance_state import BalanceState
from infer.model.observations.kinds import KINDS

__all__ = [
    "approximation_findings",
    "drift_findings",
    "trade_findings",
    "alternative_explanations",
    "observed_frequency",
    "overdominance_advantage",
    "is_human",
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
                                    f"(relative error {signed_percent(error, 1)}).", details))
        else:
            findings.append(Finding("note", "approximation-in-range",
                                    f"{used} is within its range here: {fmt(value)} against "
                                    f"the exact {fmt(exact)} (relative error "
                                    f"{signed_percent(error)}).", details))
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
                        f"frequency has mean {fmt(st['mean'])} and median "
                        f"{fmt_small(st['median'])}, "
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
                 f"{fmt_small(st['median'])}"
                 + (" (most of the mass is at 0: the allele is usually absent)"
                    if st["median"] < 1 / (2 * v["Ne"]) else ""))
    severity = "error" if copies < DRIFT_ERROR else "warning"
    return [Finding(severity, "drift-dominates",
                    f"The deterministic balance is used where 4Ne q_hat = {fmt(copies)} "
                    f"(Ne = {fmt(v['Ne'])}, q_hat = {fmt(implied['q_hat'])}) is below "
                    f"{DRIFT_WARNING:g}: drift, not the balance, sets the frequency{extra}.",
                    details)]


# ------------------------------------------------------------- the trade's knowledge


HUMAN = ("human", "humans", "homo sapiens", "man")


def is_human(claim: Claim) -> bool:
    """True when the claim is about humans (``[claimed] species`` absent or human)."""
    return claim.species is None or claim.species.strip().lower() in HUMAN


def _ranges(claim: Claim):
    assumed = "" if claim.species else " (the claim names no species: human assumed)"
    if claim.mu_scale == "nucleotide":
        return (PER_NUCLEOTIDE_RANGE, NUCLEOTIDE_MARGIN,
                "human per-nucleotide rates (about 1e-8 to 3e-8 per generation: "
                f"Nachman & Crowell 2000; Kong et al. 2012){assumed}")
    return (PER_LOCUS_RANGE, TRADE_MARGIN,
            "per-locus rates measured for human disease loci (about 1e-6 to 1e-4: Morton, "
            "Crow & Muller 1956; achondroplasia ~2e-5, Oberklaid et al. 1979; Duchenne "
            f"6.3e-5, Yasuda & Kondo 1980; NF1 ~1e-4){assumed}")


def trade_findings(claim: Claim, from_data: dict) -> list[Finding]:
    """Compare the claimed and the implied mu with the measured mutation rates.

    The implied mu is left out under a ``[history]`` (the frequency today is the
    history's, not the balance's).

    Parameters
    ----------
    claim : infer.files.claim.Claim
    from_data : dict
        The intervals implied by the data (:func:`infer.jobs.check.intervals.implied_intervals`).

    Returns
    -------
    list of Finding
    """
    if not is_human(claim):
        return [Finding("note", "no-reference-mutation-rate",
                        f"No built-in range of mutation rates applies to {claim.species}: the "
                        "ranges qhat knows were measured in humans (per locus about 1e-6 to "
                        "1e-4, per nucleotide about 1e-8); compare mu = "
                        f"{fmt(claim.values['mu'])} with rates published for that group.",
                        {"species": claim.species, "mu": claim.values["mu"]})]
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
    # under a [history] the frequency today is the history's: the rate the data need at
    # equilibrium says nothing about the claim
    implied = from_data.get("mu", {}) if claim.study.history is None else {}
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


def observed_frequency(claim: Claim) -> float | None:
    """The allele frequency the claim's first frequency observation measures, or None.

    Allele copies give k/n; affected births give the frequency through the share they
    measure (recessive: q = sqrt(share), dominant: q ~ share/2, affected sons: q_male),
    at the observation's penetrance.
    """
    for obs in claim.study.observations:
        st = obs.frequency_statistic()
        if st is None or st.trials <= 0 or st.scale <= 0:
            continue
        share = st.count / st.trials / st.scale
        if st.quantity in ("q_hat", "q_male", "q_female"):
            return share
        if st.quantity == "incidence_recessive":
            return math.sqrt(share)
        if st.quantity == "incidence_dominant":
            return share / 2
    return None


def overdominance_advantage(q: float, s2: float) -> float:
    """Selection s1 against AA that holds q with fitnesses 1-s1 (AA), 1 (Aa), 1-s2 (aa).

    The overdominant equilibrium is q = s1/(s1 + s2) (Fisher 1922, Proc. R. Soc. Edinb.
    42:321; common practice), so s1 = q s2 / (1 - q).
    """
    return q * s2 / (1.0 - q)


def _ratio_text(weighed: dict) -> str:
    """'evidence ratio against recurrent mutation at the claimed values 10^k (strength ...)'."""
    from infer.inference.evidence import strength

    ratio = weighed["log_evidence_ratio"] / math.log(10)
    lead = "evidence ratio against recurrent mutation at the claimed values"
    if not math.isfinite(ratio):
        return f"{lead} infinite (the claimed balance makes the data impossible)"
    side = "" if ratio >= 0 else " for the claimed balance"
    return f"{lead} 10^{ratio:.1f} ({strength(ratio)}{side}; Kass & Raftery 1995)"


def _interval_text(fitted: dict, scale: float = 1.0, digits: int = 3) -> str:
    return (f"{fmt(scale * fitted['median'], digits)} ({fmt(scale * fitted['lower'], digits)} "
            f"to {fmt(scale * fitted['upper'], digits)})")


def _heterozygote_advantage(claim: Claim, q: float | None):
    """(text, details, weighed or None, fallback score) of the overdominance alternative."""
    s = claim.values["s"]
    if q is None or not 0 < q < 1 or claim.inheritance != "autosomal" or s <= 0:
        return ("Heterozygote advantage (overdominance) could keep the allele more "
                "common than recurrent mutation can; carrier fitness or survival data "
                "would test it."), {}, None, 2.0
    s1 = overdominance_advantage(q, s)
    details = {"observed_frequency": q, "s_against_aa": s, "s1_needed": s1,
               "formula": "q = s1/(s1 + s2), fitnesses 1-s1 (AA), 1 (Aa), 1-s2 (aa)"}
    # a carrier advantage of a few per cent is the size seen where overdominance is
    # documented (common practice); a larger one is a less likely explanation
    score = 1.0 if s1 <= 0.05 else 2.5
    text = (f"Heterozygote advantage (overdominance) could hold the allele at the "
            f"observed frequency {fmt(q)}: with fitnesses 1-s1 (AA), 1 (Aa), 1-s2 "
            f"(aa) the equilibrium is q = s1/(s1+s2) (Fisher 1922), so with s2 = "
            f"s = {fmt(s)} carriers would need an advantage s1 = {fmt(s1)} over "
            "non-carriers")
    from infer.jobs.check.weighed import weigh_heterozygote_advantage

    weighed = weigh_heterozygote_advantage(claim)
    if weighed is not None:
        details["weighed"] = weighed
        text += (f". Fitted to the reported data (h ~ {weighed['prior']}, mu and s at their "
                 "claimed values, with mutation): an advantage of about "
                 f"{_interval_text(weighed['advantage'], 100, 2)} % holds the observed "
                 f"frequency; {_ratio_text(weighed)}")
    return text + "; carrier fitness or survival data would test it.", details, weighed, score


def _founder_effect(claim: Claim, direction: str):
    """(text, details, weighed or None, fallback score) of the founder alternative."""
    from infer.jobs.check.weighed import weigh_founder

    weighed = weigh_founder(claim)
    if weighed is None:
        word = "raised the allele above" if direction == "excess" else "left the allele below"
        text = (f"A founder effect could have {word} its balance value; a founding time "
                "in the claim file ([alternatives] founder = { generations_ago = N }) lets "
                "qhat check weigh it, and frequencies in neighbouring populations would "
                "test it.")
        return text, {}, None, 2.0
    text = (f"A founder event {weighed['generations_ago']} generations ago could explain the "
            f"data with a founder frequency of about {_interval_text(weighed['q_founder'])}, "
            f"q_founder ~ {weighed['prior']} carried to today by the deterministic life "
            f"cycle at the claimed mu, s and h; {_ratio_text(weighed)}; frequencies in "
            "neighbouring populations and the founders' origin would test it.")
    return text, {"weighed": weighed}, weighed, 2.0


def _drift(claim: Claim, q: float | None, direction: str):
    """(text, details, weighed or None, fallback score) of the drift alternative."""
    from infer.jobs.check.weighed import weigh_drift

    if direction == "excess":
        text = ("Drift could have raised the allele in this population above its balance "
                "value; frequencies in neighbouring populations would test it")
    else:
        text = ("Drift could hold the allele below its balance value in a small "
                "population; the drift model (model = \"drift\" with Ne) gives the "
                "spread to expect")
    details, score = {}, 2.0
    chance = _drift_chance(claim, q, direction, claim.seed)
    if chance is not None:
        details = {"Ne": claim.values["Ne"], "probability": chance, "observed_frequency": q}
        word = "at least" if direction == "excess" else "at most"
        text += (f" (under Wright's stationary density with Ne = {fmt(claim.values['Ne'])} "
                 f"the chance of a frequency {word} the observed {fmt(q)} is "
                 f"{fmt(chance, 2)})")
        score = 0.5 if chance >= 0.05 else 3.0
    weighed = weigh_drift(claim)
    if weighed is not None:
        details["weighed"] = weighed
        text += (f"; the reported data under Wright's stationary distribution at the "
                 f"claimed values (Ne = {fmt(weighed['Ne'])}): {_ratio_text(weighed)}")
    return text + ".", details, weighed, score


def _ascertainment(claim: Claim | None, direction: str):
    """(text, details, weighed or None, fallback score) of the ascertainment alternative."""
    if direction == "excess":
        return ("Ascertainment could inflate the observed frequency (cases collected through "
                "clinics or affected families rather than all births); a population-based "
                "count would test it."), {}, None, 1.5
    from infer.jobs.check.weighed import weigh_completeness

    weighed = weigh_completeness(claim) if claim is not None else None
    text = ("Under-ascertainment could lower the observed frequency (missed, miscarried "
            "or undiagnosed cases, reduced penetrance)")
    if weighed is None:
        return text + "; a complete population count would test it.", {}, None, 1.5
    text += (f": a registry completeness of about {_interval_text(weighed['completeness'])}, "
             f"completeness ~ {weighed['prior']} and the rest at the claimed values, would "
             f"reconcile the counts; {_ratio_text(weighed)}; a capture-recapture count or a "
             "complete population count would test it.")
    return text, {"weighed": weighed}, weighed, 1.5


def _drift_chance(claim: Claim, q: float | None, direction: str, rng_seed: int):
    """P(frequency beyond the observed) under Wright's density, or None (Ne unknown)."""
    v = claim.values
    if (q is None or not math.isfinite(v["Ne"]) or claim.inheritance != "autosomal"
            or v["F"] != 0):
        return None
    import numpy as np

    from infer.core.drift import stationary as drift

    n = 4000
    nu = max(v["nu"], 1e-9)  # Wright's density needs nu > 0; 1e-9 is the drift default
    with np.errstate(all="ignore"):
        x = drift.sample_stationary(np.random.default_rng(rng_seed), *(
            np.full(n, value) for value in (v["Ne"], v["mu"], v["s"], v["h"], nu)))
    beyond = x >= q if direction == "excess" else x <= q
    return float(np.mean(beyond))


def _rank_key(option) -> tuple:
    """Sort key: weighed alternatives the data favour first, then the untested ones.

    The favoured by their evidence ratio (largest first), the untested by their fallback
    score, then those the data weigh against.
    """
    _, _, _, weighed, score = option
    if weighed is None:
        return (1, score)
    ratio = weighed["log_evidence_ratio"]
    return (0, -ratio) if ratio > 0 else (2, -ratio)


def alternative_explanations(findings: list[Finding], implied: dict,
                             claim: Claim | None = None) -> list[Finding]:
    """The alternatives, as ranked possibilities, when balance cannot explain the data.

    Each alternative the claim's data allow is fitted and weighed against the claimed
    balance (:mod:`infer.jobs.check.weighed`): heterozygote advantage (excess only), a
    founder effect (when the claim's ``[alternatives] founder`` gives its age), drift at
    the claimed Ne (Wright's stationary distribution; unless drift was modelled), and
    under-ascertainment through a registry completeness below 1 (deficit, counts of
    affected people); the others stay sentences that say what would test them. Ranked:
    alternatives the data favour by their evidence ratio, then the untested ones, then
    those the data weigh against. Each note carries ``rank`` (1 = most likely first) in
    its details, and a weighed one its fit under ``weighed``. A claim with a
    ``[history]`` gets none: it already explains the frequency by its history.
    """
    if claim is not None and claim.study.history is not None:
        return []
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
    observations = claim.study.observations if claim is not None else []
    statistics = [s for s in (o.frequency_statistic() for o in observations) if s is not None]
    counts_cases = not statistics or any(not s.of_alleles for s in statistics)
    drift_modelled = claim is not None and claim.study.model == "drift"
    q = observed_frequency(claim) if claim is not None else None
    options = []  # (code, text, details, weighed or None, fallback score)
    if direction == "excess":
        if claim is not None:
            options.append(("possible-heterozygote-advantage",
                            *_heterozygote_advantage(claim, q)))
        else:
            options.append(("possible-heterozygote-advantage",
                            "Heterozygote advantage (overdominance) could keep the allele "
                            "more common than recurrent mutation can; carrier fitness or "
                            "survival data would test it.", {}, None, 2.0))
    if claim is not None:
        options.append(("possible-founder-effect", *_founder_effect(claim, direction)))
    if not drift_modelled and claim is not None:
        options.append(("possible-drift", *_drift(claim, q, direction)))
    if counts_cases:
        options.append(("possible-ascertainment", *_ascertainment(claim, direction)))
    options.append(("possible-non-equilibrium",
                    "The population may not be at equilibrium (for example selection "
                    + ("recently relaxed by treatment, or a recent admixture"
                       if direction == "excess" else
                       "recently strengthened, or a recent expansion")
                    + "); the balance value assumes it has settled. A [history] in the claim "
                    "file (selection changed k generations ago, say) checks the claim under "
                    "it.", {}, None, 4.0))
    options.sort(key=_rank_key)
    options = _against_the_next(options)
    return [Finding("note", code, f"({rank}) {text}",
                    {"because": why, "direction": direction, "rank": rank, **details})
            for rank, (code, text, details, _, _) in enumerate(options, start=1)]


#: what each alternative is called when another is weighed against it
_NAMES = {"possible-heterozygote-advantage": "heterozygote advantage",
          "possible-founder-effect": "the founder event", "possible-drift": "drift",
          "possible-ascertainment": "under-ascertainment"}


def _against_the_next(options: list) -> list:
    """The first weighed alternative also weighed against the next weighed one.

    How clear the ranking is: the ratio of the two evidences (Kass & Raftery 1995), in
    the text and as ``details.against_next`` (``alternative``, ``log10_ratio``).
    """
    from infer.inference.evidence import strength

    weighed = [i for i, option in enumerate(options) if option[3] is not None]
    if len(weighed) < 2:
        return options
    first, second = options[weighed[0]], options[weighed[1]]
    ratio = (first[3]["log_evidence"] - second[3]["log_evidence"]) / math.log(10)
    code, text, details, fit, score = first
    name = _NAMES[second[0]]
    text = (text.rstrip(".") + f"; against the next weighed alternative, {name}: 10^{ratio:.1f} "
            f"({strength(ratio)}; Kass & Raftery 1995).")
    details = {**details, "against_next": {"alternative": second[0], "log10_ratio": ratio}}
    return [(code, text, details, fit, score) if i == weighed[0] else option
            for i, option in enumerate(options)]
