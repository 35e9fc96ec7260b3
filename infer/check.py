"""A reviewer's consistency check of published numbers (``qhat check``).

:func:`check_claim` takes a validated :class:`~infer.claims.Claim` and returns a
:class:`CheckResult`: a list of :class:`Finding` (severity ``"error"``, ``"warning"`` or
``"note"``, a code, one sentence with the numbers, and the computation behind it), the
quantities the claimed parameters imply, and ``consistent`` (no error-level finding).
Nothing here prints or touches files.

Findings (``code``: what raises it):

* ``no-equilibrium``: the claimed parameters have no stable interior balance.
* ``observation-mismatch`` / ``observation-agrees``: each reported observation against
  the value the claim implies, with the two-sided posterior predictive p-value of the
  observed statistic under the claim (its stated uncertainty included): error below
  ``threshold``, warning below 5 x threshold. Tail probabilities are exact binomial (or
  log-normal) sums averaged over draws from the claim, so p-values far below 1/draws are
  resolved; other statistics use predictive draws and ``infer.results.two_sided_p_value``
  (Gelman, Meng & Stern 1996, Statistica Sinica 6:733).
* ``statement-mismatch`` / ``statement-agrees``: a stated incidence, carrier frequency,
  allele frequency or load against the value the claimed parameters imply.
* ``claimed-outside-implied`` / ``implied-interval`` / ``no-implied-value``: the interval
  of mu, s and h the reported data imply with the other parameters held at their claimed
  values (exact grid posterior under wide priors, ``infer.claims.WIDE_PRIORS``), and the
  posterior mass where the density (on the sampling scale) is no higher than at the
  claimed value -- the evidence value of Pereira & Stern (1999, Entropy 1:99, "Evidence
  and credibility: full Bayesian significance test for precise hypotheses"; from memory).
  It behaves at the ends of a support (s = 1, h = 0), where an equal-tailed test cannot.
* ``approximation-out-of-range`` / ``approximation-in-range``,
  ``frequency-too-high-for-approximation``, ``drift-dominates``: the formula the authors
  used against the exact root; the deterministic balance where 4Ne q_hat is small.
* ``mutation-rate-outside-measured``, ``implied-mutation-rate-outside-measured``: mu
  (claimed, or implied by the data) against the rates measured (see the ranges below).
* ``possible-heterozygote-advantage``, ``possible-drift-or-founder-effect``,
  ``possible-ascertainment``, ``possible-non-equilibrium``: the classic alternative
  explanations, as notes, when balance with a measured mutation rate cannot explain
  the data.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np
from scipy import special

from infer import balance
from infer.claims import WIDE_PRIORS, Claim
from infer.observations import x_linked_daughter_genotypes
from infer.priors import SUPPORT
from infer.reporting.markdown import fmt
from infer.results import two_sided_p_value
from infer.state import State

__all__ = [
    "Finding",
    "CheckResult",
    "check_claim",
    "implied_quantities",
    "PER_LOCUS_RANGE",
    "PER_NUCLEOTIDE_RANGE",
    "TRADE_MARGIN",
    "SEVERITIES",
]

SEVERITIES = ("error", "warning", "note")

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
#: draws from the claim's stated uncertainty
CLAIM_DRAWS = 4000
#: predictive draws for statistics without a closed-form distribution
SIMULATED_DRAWS = 20_000
#: largest number of counts summed for an exact tail under the drift model
DRIFT_TAIL_TERMS = 2000
#: grid points per pass for the drift model (each costs a quadrature of Wright's density)
DRIFT_GRID_POINTS = 401
_Z975 = 1.959963984540054


@dataclass(frozen=True)
class Finding:
    """One finding of a check.

    Attributes
    ----------
    severity : str
        ``"error"`` (the numbers do not fit: exit status 3), ``"warning"`` or ``"note"``.
    code : str
        Stable identifier (see the module docstring).
    message : str
        One sentence with the numbers.
    details : dict
        The computation behind it (JSON-ready numbers and text).
    """

    severity: str
    code: str
    message: str
    details: dict = field(default_factory=dict)

    def as_dict(self) -> dict:
        """The finding for JSON."""
        return {"severity": self.severity, "code": self.code, "message": self.message,
                "details": self.details}


@dataclass
class CheckResult:
    """Everything ``qhat check`` renders.

    Attributes
    ----------
    claim : infer.claims.Claim
    consistent : bool
        True when no finding is an error.
    findings : list of Finding
        Errors first, then warnings, then notes (each in the order found).
    implied : dict
        Quantities the claim implies (``q_hat``, ``load``, incidences, ...), their
        intervals under the claim's uncertainty, each observation's comparison and the
        parameter intervals implied by the data (``from_data``).
    threshold : float
        The p-value below which a finding is an error.
    """

    claim: Claim
    consistent: bool
    findings: list[Finding]
    implied: dict
    threshold: float

    def as_dict(self) -> dict:
        """``{consistent, findings, implied}`` for ``--json``."""
        return {"consistent": self.consistent,
                "findings": [f.as_dict() for f in self.findings],
                "implied": self.implied}

    def count(self, severity: str) -> int:
        """Number of findings of one severity."""
        return sum(f.severity == severity for f in self.findings)


# ---------------------------------------------------------------------------- engine


def check_claim(claim: Claim, *, threshold: float = 0.01, draws: int = CLAIM_DRAWS) -> CheckResult:
    """Check whether a paper's numbers fit together under mutation-selection balance.

    Parameters
    ----------
    claim : infer.claims.Claim
        A validated claim (:func:`infer.claims.load_claim`).
    threshold : float, optional
        Predictive p-values and evidence values below it are errors (default 0.01).
    draws : int, optional
        Draws from the claim's stated uncertainty (used when it gives intervals).

    Returns
    -------
    CheckResult
    """
    if not 0.0 < threshold < 1.0:
        raise ValueError("threshold must be in (0, 1)")
    rng = np.random.default_rng(claim.seed)
    point = {k: np.array([v]) for k, v in claim.values.items()}
    sampled = _claim_draws(claim, rng, draws) if claim.intervals else None
    findings: list[Finding] = []
    with np.errstate(all="ignore"):
        state = State.deterministic(point, claim.inheritance)
        rows = state if sampled is None else State.deterministic(sampled, claim.inheritance)
        implied = _implied(claim, state, rows if sampled is not None else None)
        if not bool(state.exists[0]):
            findings.append(Finding(
                "error", "no-equilibrium",
                f"The claimed parameters ({_claimed_text(claim, ('mu', 's', 'h'))}) have no "
                "stable mutation-selection balance: mutation overwhelms selection.",
                {"parameters": claim.values}))
        implied["observations"] = []
        for index, observation in enumerate(claim.study.observations, start=1):
            findings.append(_observation_finding(claim, index, observation, rows,
                                                 sampled is not None, rng, threshold, implied))
        findings += _statement_findings(claim, implied, threshold)
        from_data, data_findings = _implied_intervals(claim, threshold)
        implied["from_data"] = from_data
        findings += data_findings
        findings += _approximation_findings(claim, state, implied)
        findings += _drift_findings(claim, state, implied)
        findings += _trade_findings(claim, from_data)
        findings += _alternatives(findings, implied)
    order = {s: i for i, s in enumerate(SEVERITIES)}
    findings.sort(key=lambda f: order[f.severity])
    consistent = not any(f.severity == "error" for f in findings)
    return CheckResult(claim, consistent, findings, implied, threshold)


def _claimed_text(claim: Claim, names) -> str:
    return ", ".join(f"{n} = {fmt(claim.values[n])}" for n in names)


def _claim_draws(claim: Claim, rng, n: int) -> dict[str, np.ndarray]:
    """Draws from the claim: log-normal (mu, Ne, alpha) or normal (the rest), truncated.

    The authors' (lower, upper) is read as a central 95 % interval around the claimed
    value: sigma = (g(upper) - g(lower)) / (2 x 1.96) with g = log or identity.
    """

    out = {k: np.full(n, v) for k, v in claim.values.items()}
    for name, (lower, upper) in claim.intervals.items():
        value = claim.values[name]
        low, high = SUPPORT[name]
        if name in ("mu", "Ne", "alpha"):
            sigma = (math.log(upper) - math.log(lower)) / (2 * _Z975)
            b = (math.log(high) - math.log(value)) / sigma if high < np.inf else np.inf
            out[name] = value * np.exp(sigma * _truncated_normal(rng, n, -np.inf, b))
        else:
            sd = (upper - lower) / (2 * _Z975)
            a, b = (low - value) / sd, (high - value) / sd
            out[name] = np.clip(value + sd * _truncated_normal(rng, n, a, b), low, high)
    return out


def _truncated_normal(rng, n: int, a: float, b: float) -> np.ndarray:
    """Standard normal draws truncated to [a, b], by the inverse distribution function."""
    lo, hi = special.ndtr(a), special.ndtr(b)
    return special.ndtri(lo + rng.random(n) * (hi - lo))


def _log_binomial_pmf(k, n, p):
    """log C(n, k) p^k (1-p)^(n-k), broadcasting k and p."""
    k = np.asarray(k, dtype=float)
    return (special.gammaln(n + 1.0) - special.gammaln(k + 1.0) - special.gammaln(n - k + 1.0)
            + special.xlogy(k, p) + special.xlog1py(n - k, -p))


# ------------------------------------------------------------------ implied values


def implied_quantities(claim: Claim, state: State) -> dict[str, np.ndarray]:
    """Frequencies, load and incidence of each row of a deterministic state.

    Keys: ``q_hat``, ``load``, ``carrier_frequency`` and ``incidence_<mode>``; X-linked
    also ``q_male``, ``q_female``, ``load_male``, ``load_female``, ``new_mutation_share``.
    """
    p = state.params
    if claim.inheritance == "x-linked":
        b = state.balance
        _, carriers, _ = x_linked_daughter_genotypes(state.q_male, state.q_female, p["F"])
        return {"q_hat": state.q, "q_male": state.q_male, "q_female": state.q_female,
                "load": np.asarray(b.load_male), "load_male": np.asarray(b.load_male),
                "load_female": np.asarray(b.load_female),
                "new_mutation_share": np.asarray(b.new_mutation_share),
                "carrier_frequency": carriers,
                "incidence_x-linked-male": state.q_male}
    q = state.q
    _, carriers, _ = balance.genotype_frequencies(q, p["F"])
    return {"q_hat": q, "load": balance.load(q, p["s"], p["h"], p["F"]),
            "carrier_frequency": carriers,
            "incidence_dominant": balance.affected_fraction("dominant", q, p["F"]),
            "incidence_recessive": balance.affected_fraction("recessive", q, p["F"])}


def _drift_moments(claim: Claim) -> dict:
    """Wright's stationary mean, median, interval and the implied averages (F = 0)."""
    from infer import drift

    v = claim.values
    summary = drift.stationary_summary(v["Ne"], v["mu"], v["s"], v["h"], v["nu"],
                                       claim.study.interval)
    m = float(summary["mean"])
    second = float(summary["sd"]) ** 2 + m * m  # E[x^2]
    out = {k: float(val) for k, val in summary.items()}
    out.update({"carrier_frequency": 2 * (m - second),
                "incidence_dominant": 2 * m - second, "incidence_recessive": second,
                "load": v["s"] * (2 * v["h"] * (m - second) + second)})
    return out


def _implied(claim: Claim, state: State, sampled) -> dict:
    implied = {name: float(value[0]) for name, value in implied_quantities(claim, state).items()}
    if claim.study.model == "drift":
        implied["stationary"] = _drift_moments(claim)
    if claim.values["Ne"] < math.inf:
        implied["four_Ne_q_hat"] = 4 * claim.values["Ne"] * implied["q_hat"]
    if sampled is not None:
        level = claim.study.interval
        rows = sampled
        implied["uncertainty"] = {"level": level, "draws": int(rows.n),
                                  "no_equilibrium_share": float(np.mean(~rows.exists))}
        for name, values in implied_quantities(claim, rows).items():
            finite = np.asarray(values)[rows.exists]
            if finite.size:
                lower, upper = np.quantile(finite, [(1 - level) / 2, (1 + level) / 2])
                implied["uncertainty"][name] = {"lower": float(lower), "upper": float(upper)}
    return implied


def _statement_target(claim: Claim, name: str) -> str:
    if name == "incidence":
        return f"incidence_{claim.mode}"
    if name == "load" and claim.inheritance == "x-linked":
        return "load_male"
    return {"q": "q_hat"}.get(name, name)


def _statement_findings(claim: Claim, implied: dict, threshold: float) -> list[Finding]:
    findings = []
    drift_model = claim.study.model == "drift"
    for name, statement in claim.statements.items():
        target = _statement_target(claim, name)
        source = implied.get("stationary", {}) if drift_model else implied
        key = "mean" if drift_model and target == "q_hat" else target
        value = source.get(key, implied.get(target))
        band = implied.get("uncertainty", {}).get(target)
        ratio = statement.value / value if value and math.isfinite(value) else math.nan
        details = {"statement": name, "stated": statement.value, "stated_lower": statement.lower,
                   "stated_upper": statement.upper, "implied": value, "ratio": ratio,
                   "implied_interval": band, "tolerance": claim.tolerance,
                   "under": "Wright's stationary mean" if drift_model else "exact balance"}
        text = (f"The paper states {name.replace('_', ' ')} {fmt(statement.value)}; the claimed "
                f"parameters imply {fmt(value)} (ratio stated/implied {fmt(ratio)})")
        within = math.isfinite(ratio) and abs(math.log(ratio)) <= math.log1p(claim.tolerance)
        inside_band = band is not None and band["lower"] <= statement.value <= band["upper"]
        inside_stated = (statement.has_interval and value is not None
                         and statement.lower <= value <= statement.upper)
        if within or inside_band or inside_stated:
            findings.append(Finding("note", "statement-agrees", text + ".", details))
            continue
        overlap = statement.has_interval and band is not None and (
            statement.lower <= band["upper"] and band["lower"] <= statement.upper)
        severity = "warning" if overlap else "error"
        findings.append(Finding(severity, "statement-mismatch",
                                text + f", beyond the {100 * claim.tolerance:g} % allowed "
                                "for rounding.", details))
    return findings


# --------------------------------------------------------------- predictive checks


def _binomial_parts(observation, expected):
    """(trials, success probability per row) where the statistic is binomial, else None."""
    kind = observation.kind
    if kind == "affected":
        n = observation.total
    elif kind == "sporadic":
        n = observation.births
    elif kind == "allele-count":
        n = observation.sampled
    elif kind == "fertility":
        n = observation.total_children
    elif kind == "genotype-count" and observation.inheritance == "autosomal":
        n = 2 * observation.total  # allele copies of people in Hardy-Weinberg proportions
    else:
        return None
    return n, np.asarray(expected, dtype=float) / n if n else np.zeros_like(expected)


def _tails(observation, state, rng) -> tuple[float, float, str]:
    """(P(T <= t), P(T >= t)) averaged over the rows of ``state``, and the method."""
    t = observation.statistic()
    if observation.kind == "estimate":
        theta = np.asarray(state.params[observation.parameter], dtype=float)
        z = (math.log(t) - np.log(theta)) / observation.sigma
        lower = float(np.mean(special.ndtr(z)))
        return lower, 1.0 - lower, "log-normal"
    expected = observation.expected(state)
    parts = _binomial_parts(observation, expected)
    genotype_inbred = (observation.kind == "genotype-count"
                       and np.any(state.params["F"] > 0))
    if parts is not None and not genotype_inbred:
        n, p = parts
        good = np.isfinite(p)
        if not good.any():
            return math.nan, math.nan, "binomial"
        p = np.clip(p[good], 0.0, 1.0)
        # bdtr(k, n, p) = P(T <= k), bdtrc(k, n, p) = P(T > k) (scipy.special)
        upper = special.bdtrc(t - 1, n, p) if t >= 1 else np.ones_like(p)
        return (float(np.mean(special.bdtr(t, n, p))), float(np.mean(upper)), "binomial")
    repeat = max(1, SIMULATED_DRAWS // state.n)
    tiled = State(**{**state.__dict__,
                     "params": {k: np.tile(v, repeat) for k, v in state.params.items()},
                     "q": np.tile(state.q, repeat),
                     "q_male": None if state.q_male is None else np.tile(state.q_male, repeat),
                     "q_female": None if state.q_female is None else np.tile(state.q_female,
                                                                              repeat),
                     "exists": np.tile(state.exists, repeat), "balance": None})
    replicated = observation.simulate(tiled, rng)
    p_value = two_sided_p_value(replicated, t)
    return p_value / 2, p_value / 2, "simulated"


def _drift_tails(claim: Claim, observation) -> tuple[float, float, float]:
    """Exact tails under Wright's density for a frequency count (point claim).

    P(T = k) = E_phi[Binomial(k; n, f(x))], summed over the shorter side of t
    (at most ``DRIFT_TAIL_TERMS`` terms). Returns (lower, upper, expected).
    """
    from infer import drift

    v = claim.values
    t = int(observation.statistic())
    if observation.kind == "allele-count":
        n, f = observation.sampled, lambda x: x
    elif observation.kind == "genotype-count":
        n, f = 2 * observation.total, lambda x: x
    else:
        n = observation.total

        def f(x):
            return balance.affected_fraction(observation.mode, x, 0.0, observation.penetrance)
    moments = _drift_moments(claim)
    m, second = moments["mean"], moments["sd"] ** 2 + moments["mean"] ** 2
    expected = {"allele-count": n * m, "genotype-count": n * m}.get(observation.kind)
    if expected is None:
        share = (2 * m - second) if observation.mode == "dominant" else second
        expected = n * observation.penetrance * share
    below = t <= n - t
    k = np.arange(0, t + 1) if below else np.arange(t, n + 1)
    if k.size > DRIFT_TAIL_TERMS:
        return math.nan, math.nan, expected
    rows = k.size
    log_p = drift.log_expectation(
        lambda x: _log_binomial_pmf(k[:, None], n, np.clip(f(x), 0.0, 1.0)),
        np.full(rows, v["Ne"]), v["mu"], v["s"], v["h"], v["nu"])
    pmf = np.exp(log_p)
    side = float(min(1.0, pmf.sum()))
    other = float(min(1.0, max(0.0, 1.0 - side + pmf[-1 if below else 0])))
    return (side, other, expected) if below else (other, side, expected)


def _observation_finding(claim, index, observation, rows_state, uncertain, rng, threshold,
                         implied):
    where = f'observations[{index}] "{observation.label}"'
    t = observation.statistic()
    drift_count = claim.study.model == "drift" and observation.depends_on_frequency
    if drift_count:
        lower, upper, expected = _drift_tails(claim, observation)
        method, rows = "Wright's stationary density", "point claim"
    else:
        lower, upper, method = _tails(observation, rows_state, rng)
        values = np.asarray(observation.expected(rows_state), dtype=float)
        finite = values[np.isfinite(values)]
        expected = float(np.median(finite)) if finite.size else math.nan
        rows = f"{rows_state.n} draws from the claim" if uncertain else "point claim"
    p_value = min(1.0, 2.0 * min(lower, upper)) if math.isfinite(lower) else math.nan
    ratio = t / expected if expected else math.inf if t else math.nan
    record = {"index": index, "label": observation.label, "kind": observation.kind,
              "statistic": observation.statistic_name, "observed": t, "implied": expected,
              "ratio": ratio, "p_value": p_value, "lower_tail": lower, "upper_tail": upper,
              "method": method, "claim_uncertainty": rows}
    implied["observations"].append(record)
    text = (f"{where}: observed {fmt(t)}, the claim implies {fmt(expected)} "
            f"({observation.statistic_name}; ratio observed/implied {fmt(ratio)}); the "
            f"two-sided predictive p-value under the claim is {fmt(p_value)}")
    if not math.isfinite(p_value):
        return Finding("warning", "observation-unchecked",
                       f"{where}: the predictive probability could not be computed "
                       f"({method}); observed {fmt(t)}, implied {fmt(expected)}.", record)
    if p_value < threshold:
        return Finding("error", "observation-mismatch",
                       text + f", below the threshold {fmt(threshold)}.", record)
    if p_value < 5 * threshold:
        return Finding("warning", "observation-mismatch",
                       text + f", below {fmt(5 * threshold)} but above the threshold "
                       f"{fmt(threshold)}.", record)
    return Finding("note", "observation-agrees", text + ".", record)


# ------------------------------------------------------ intervals implied by the data


def _evidence(grid, name: str, claimed: float, level: float) -> tuple[float, tuple]:
    """Evidence value of the claimed value and the highest-density interval at ``level``.

    Works on the sampling scale (log10 for mu): mass per grid cell by the trapezoid
    rule, cells ordered by density; the evidence is the mass of cells whose density is
    no higher than the density at the claimed value (0 when the claimed value lies
    outside the zoomed grid, where the density is below e^-30 of its peak).
    """
    x = np.asarray(grid.axes[name], dtype=float)
    density = np.asarray(grid.marginal_density[name], dtype=float)
    log_scale = name == "mu"
    u = np.log10(x) if log_scale else x
    density_u = density * x * math.log(10) if log_scale else density
    mass = np.concatenate([[0.0], (density[1:] + density[:-1]) / 2 * np.diff(x)])
    mass = mass / mass.sum()
    cu = math.log10(claimed) if log_scale else claimed
    slack = 1e-6 * (u[-1] - u[0]) + 1e-9  # the grid stops 1e-10 of prior mass short of an end
    if u[0] - slack <= cu <= u[-1] + slack:
        at_claim = float(np.interp(cu, u, density_u))
    else:
        at_claim = 0.0
    evidence = float(mass[density_u <= at_claim].sum())
    if claimed in SUPPORT[name]:
        # at an end of the support (s = 1, h = 0 or 1) that mass is a single tail: doubled,
        # as a two-sided p-value doubles its smaller tail, so both read on one scale
        evidence = min(1.0, 2.0 * evidence)
    order = np.argsort(density_u)[::-1]
    keep = order[: int(np.searchsorted(np.cumsum(mass[order]), level)) + 1]
    lower, upper = float(x[keep].min()), float(x[keep].max())
    if not log_scale:  # the grid stops 1e-10 of prior mass short of a support end
        lower = 0.0 if lower < 1e-8 else lower
        upper = 1.0 if upper > 1 - 1e-8 else upper
    return evidence, (lower, upper)


def _implied_intervals(claim: Claim, threshold: float) -> tuple[dict, list[Finding]]:
    from infer.grid import grid_posterior
    from infer.model import Model

    study, level, model = claim.study, claim.study.interval, claim.study.model
    out, findings = {}, []
    points = DRIFT_GRID_POINTS if model == "drift" else None
    for name in ("mu", "s", "h"):
        others = _claimed_text(claim, [n for n in ("mu", "s", "h") if n != name])
        used = [o for o in study.observations if name in o.parameters_used(model)]
        prior = WIDE_PRIORS[name]
        if not used:
            out[name] = {"informed": False}
            continue
        single = replace(study, parameters={**study.parameters, name: prior}, observations=used)
        claimed = claim.values[name]
        try:
            grid = grid_posterior(Model(single), level, points=points)
        except ValueError:
            out[name] = {"informed": True, "possible": False, "prior": prior.describe()}
            findings.append(Finding(
                "error", "no-implied-value",
                f"No value of {name} under {prior.describe()} makes the reported data "
                f"possible with {others} held at their claimed values.", out[name]))
            continue
        evidence, (hpd_lower, hpd_upper) = _evidence(grid, name, claimed, level)
        q = grid.quantiles[name]
        record = {"informed": True, "possible": True, "claimed": claimed,
                  "median": q["median"], "lower": q["lower"], "upper": q["upper"],
                  "hpd_lower": hpd_lower, "hpd_upper": hpd_upper, "evidence": evidence,
                  "evidence_doubled_at_support_end": claimed in SUPPORT[name],
                  "level": level, "prior": prior.describe(),
                  "observations": [o.label for o in used], "held": others}
        out[name] = record
        pct = f"{100 * level:g} %"
        text = (f"With {others} held at their claimed values, the reported data imply {name} "
                f"= {fmt(q['median'])} ({pct} highest-density interval {fmt(hpd_lower)} to "
                f"{fmt(hpd_upper)}, prior {prior.describe()})")
        evidence_text = ("posterior mass no more probable than the claimed value "
                         f"{fmt(claimed)}: {fmt(evidence)}")
        if evidence >= 1.0 - level:
            findings.append(Finding("note", "implied-interval",
                                    f"{text}; the claimed {fmt(claimed)} lies inside it.", record))
            continue
        stated = claim.intervals.get(name)
        overlaps = stated is not None and stated[0] <= hpd_upper and hpd_lower <= stated[1]
        severity = "error" if evidence < threshold and not overlaps else "warning"
        findings.append(Finding(severity, "claimed-outside-implied",
                                f"{text}; the claimed {fmt(claimed)} lies outside it "
                                f"({evidence_text}"
                                + (", though the authors' interval overlaps it" if overlaps
                                   else "") + ").", record))
    return out, findings


# ---------------------------------------------------------- approximations and drift


def _approximation_findings(claim: Claim, state: State, implied: dict) -> list[Finding]:
    from infer.approximations import autosomal_approximations, x_linked_approximations

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
                                    f"{_claimed_text(claim, ('mu', 's', 'h'))}.", details))
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


def _drift_findings(claim: Claim, state: State, implied: dict) -> list[Finding]:
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
        from infer import drift

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


def _trade_findings(claim: Claim, from_data: dict) -> list[Finding]:
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


def _alternatives(findings: list[Finding], implied: dict) -> list[Finding]:
    """The classic alternatives, as possibilities, when balance cannot explain the data."""
    direction = None
    for f in findings:
        if f.code == "implied-mutation-rate-outside-measured" and f.severity != "note":
            direction = "excess" if f.details["direction"] == "above" else "deficit"
        elif f.code == "no-implied-value":
            ratios = [o["ratio"] for o in implied.get("observations", []) if
                      o["kind"] in ("affected", "allele-count", "genotype-count")
                      and math.isfinite(o["ratio"])]
            direction = direction or ("excess" if ratios and max(ratios) > 1 else "deficit")
    if direction is None:
        return []
    why = ("balance with a measured mutation rate does not explain the "
           + ("excess" if direction == "excess" else "shortfall") + " of the allele")
    return [Finding("note", code, text, {"because": why, "direction": direction})
            for code, text in _ALTERNATIVES[direction]]
