"""A reviewer's consistency check of published numbers (``qhat check``).

:func:`check_claim` takes a validated :class:`~infer.files.claim.Claim` and returns a
:class:`CheckResult`: a list of :class:`Finding` (severity ``"error"``, ``"warning"`` or
``"note"``, a code, one sentence with the numbers, and the computation behind it), the
quantities the claimed parameters imply, and ``consistent`` (no error-level finding).
Nothing here prints or touches files.

Findings (``code``: what raises it):

* ``no-equilibrium``: the claimed parameters have no stable interior balance.
* ``history-assumed``: under a ``[history]``, which history was assumed and the
  frequency and incidence today beside their equilibrium values
  (:mod:`infer.jobs.check.under_history`); the observations are then judged at their
  sampling times, the statements against today's values, and the approximation and
  drift findings say they concern the equilibrium.
* ``observation-mismatch`` / ``observation-agrees``: each reported observation against
  the value the claim implies, with the two-sided posterior predictive p-value of the
  observed statistic under the claim (its stated uncertainty included): error below
  ``threshold``, warning below 5 x threshold. Tail probabilities are exact binomial (or
  log-normal) sums averaged over draws from the claim, so p-values far below 1/draws are
  resolved; other statistics use predictive draws and ``infer.core.stats.two_sided_p_value``
  (Gelman, Meng & Stern 1996, Statistica Sinica 6:733).
* ``statement-mismatch`` / ``statement-agrees``: a stated incidence, carrier frequency,
  allele frequency or load against the value the claimed parameters imply.
* ``claimed-outside-implied`` / ``implied-interval`` / ``no-implied-value``: the interval
  of mu, s and h the reported data imply with the other parameters held at their claimed
  values (exact grid posterior under wide priors, ``infer.files.claim.WIDE_PRIORS``), and the
  posterior mass where the density (on the sampling scale) is no higher than at the
  claimed value -- the evidence value of Pereira & Stern (1999, Entropy 1:99, "Evidence
  and credibility: full Bayesian significance test for precise hypotheses"; from memory).
  It behaves at the ends of a support (s = 1, h = 0), where an equal-tailed test cannot.
* ``approximation-out-of-range`` / ``approximation-in-range``,
  ``frequency-too-high-for-approximation``, ``drift-dominates``: the formula the authors
  used against the exact root; the deterministic balance where 4Ne q_hat is small.
* ``mutation-rate-outside-measured``, ``implied-mutation-rate-outside-measured``: mu
  (claimed, or implied by the data) against the human rates measured (see the ranges in
  :mod:`infer.jobs.check.trade`); ``no-reference-mutation-rate`` for another species.
* ``possible-heterozygote-advantage``, ``possible-drift-or-founder-effect``,
  ``possible-ascertainment``, ``possible-non-equilibrium``: the alternative
  explanations, as ranked notes tailored to the data (quantified where the model can),
  when balance with a measured mutation rate cannot explain the data.

The findings are made in :mod:`infer.jobs.check.predictive` (observations, statements),
:mod:`infer.jobs.check.intervals` (intervals implied by the data) and
:mod:`infer.jobs.check.trade` (approximations, drift, measured rates, alternatives); the
implied quantities in :mod:`infer.jobs.check.implied`, the balance curve against mu in
:mod:`infer.jobs.check.balance_curve`. Each name is imported from the module that defines
it; the renderers are in :mod:`infer.reporting.check_report`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

from infer.jobs.check.balance_curve import ClaimBalanceCurve, claim_balance_curve
from infer.jobs.check.findings import SEVERITIES, Finding, claimed_text
from infer.jobs.check.implied import implied_values
from infer.jobs.check.intervals import implied_intervals
from infer.jobs.check.predictive import observation_finding, statement_findings
from infer.jobs.check.under_history import (
    claim_states,
    drift_laws,
    history_finding,
    history_record,
    law_summary,
    mark_equilibrium_findings,
    observation_times,
    point_rows,
)
from infer.jobs.check.trade import (
    alternative_explanations,
    approximation_findings,
    drift_findings,
    trade_findings,
)
from infer.core.stats import sd_of_interval, sigma_of_log
from infer.files.claim import Claim
from infer.model.balance_state import BalanceState
from infer.model.priors.parsing import SUPPORT

__all__ = ["CLAIM_DRAWS", "CheckResult", "check_claim"]

#: draws from the claim's stated uncertainty
CLAIM_DRAWS = 4000


@dataclass
class CheckResult:
    """Everything ``qhat check`` renders.

    Attributes
    ----------
    claim : infer.files.claim.Claim
    consistent : bool
        True when no finding is an error.
    findings : list of Finding
        Errors first, then warnings, then notes (each in the order found).
    implied : dict
        Quantities the claim implies (``q_hat``, ``load``, incidences, ...), their
        intervals under the claim's uncertainty, each observation's comparison and the
        parameter intervals implied by the data (``from_data``). Under a ``[history]``
        the quantities are today's under it, with ``equilibrium`` (the same at the exact
        balance) and ``history`` (:func:`infer.jobs.check.under_history.history_record`).
    threshold : float
        The p-value below which a finding is an error.
    balance_curve : infer.jobs.check.balance_curve.ClaimBalanceCurve
        The quantity the first frequency observation measures against mu, the other
        parameters held at their claimed values, with that observation's interval.
    """

    claim: Claim
    consistent: bool
    findings: list[Finding]
    implied: dict
    threshold: float
    balance_curve: ClaimBalanceCurve

    def count(self, severity: str) -> int:
        """Number of findings of one severity."""
        return sum(f.severity == severity for f in self.findings)


def check_claim(claim: Claim, *, threshold: float = 0.01, draws: int = CLAIM_DRAWS) -> CheckResult:
    """Check whether a paper's numbers fit together under mutation-selection balance.

    Parameters
    ----------
    claim : infer.files.claim.Claim
        A validated claim (:func:`infer.files.claim.load_claim`).
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
    point = point_rows(claim)
    sampled = _claim_draws(claim, rng, draws) if claim.intervals else None
    findings: list[Finding] = []
    history = claim.study.history
    laws = {}
    with np.errstate(all="ignore"):
        state = BalanceState.deterministic(point, claim.inheritance)
        rows = state if sampled is None else BalanceState.deterministic(sampled, claim.inheritance)
        equilibrium = implied_values(claim, state, rows if sampled is not None else None)
        if history is None:
            implied, point_at, rows_at = equilibrium, {0: state}, {0: rows}
        else:
            # today's values under the history; the equilibrium kept beside for comparison
            point_at = claim_states(claim, point)
            rows_at = point_at if sampled is None else claim_states(claim, sampled)
            implied = implied_values(claim, point_at[0],
                                     rows_at[0] if sampled is not None else None)
            if claim.study.model == "drift":  # the distribution carried through the history
                laws = drift_laws(claim)
                del implied["stationary"]
                implied["propagated"] = law_summary(laws[0], claim.study.interval,
                                                    claim.values["s"], claim.values["h"])
            implied["equilibrium"] = equilibrium
            implied["history"] = history_record(claim, point_at, implied, equilibrium)
            findings.append(history_finding(claim, implied))
        if not bool(point_at[0].exists[0]):
            findings.append(Finding(
                "error", "no-equilibrium",
                f"The claimed parameters ({claimed_text(claim, ('mu', 's', 'h'))}) have no "
                "stable mutation-selection balance: mutation overwhelms selection"
                + (" (before the stated history's oldest epoch)." if history is not None
                   else "."),
                {"parameters": claim.values}))
        implied["observations"] = []
        times = observation_times(claim)
        for index, observation in enumerate(claim.study.observations, start=1):
            # a frequency kind is judged at its sampling time, the others today
            reads = observation.depends_on_frequency
            t = times[index - 1] if reads else 0
            findings.append(observation_finding(
                claim, index, observation, rows_at[t], sampled is not None, rng, threshold,
                implied, generations_ago=t if history is not None and reads else None,
                drift_law=laws.get(t) if reads else None))
        findings += statement_findings(claim, implied, threshold)
        from_data, data_findings = implied_intervals(claim, threshold)
        implied["from_data"] = from_data
        findings += data_findings
        # the authors' formula and drift against the balance: judged at equilibrium
        judged = (approximation_findings(claim, state, equilibrium)
                  + drift_findings(claim, state, equilibrium))
        findings += mark_equilibrium_findings(judged) if history is not None else judged
        findings += trade_findings(claim, from_data)
        findings += alternative_explanations(findings, implied, claim)
    order = {s: i for i, s in enumerate(SEVERITIES)}
    findings.sort(key=lambda f: order[f.severity])
    consistent = not any(f.severity == "error" for f in findings)
    return CheckResult(claim, consistent, findings, implied, threshold,
                       claim_balance_curve(claim, implied))


def _claim_draws(claim: Claim, rng, n: int) -> dict[str, np.ndarray]:
    """Draws from the claim: log-normal (mu, Ne, alpha) or normal (the rest), truncated.

    The authors' (lower, upper) is read as a central 95 % interval around the claimed
    value: sigma = (g(upper) - g(lower)) / (2 x 1.96) with g = log or identity.
    """
    values = {**claim.values, **claim.history_values}
    out = {k: np.full(n, v) for k, v in values.items()}
    for name, (lower, upper) in claim.intervals.items():
        value = values[name]
        low, high = SUPPORT[name]
        if name in ("mu", "Ne", "alpha"):
            sigma = float(sigma_of_log(lower, upper))
            b = (math.log(high) - math.log(value)) / sigma if high < np.inf else np.inf
            out[name] = value * np.exp(sigma * _truncated_normal(rng, n, -np.inf, b))
        else:
            sd = float(sd_of_interval(lower, upper))
            a, b = (low - value) / sd, (high - value) / sd
            out[name] = np.clip(value + sd * _truncated_normal(rng, n, a, b), low, high)
    return out


def _truncated_normal(rng, n: int, a: float, b: float) -> np.ndarray:
    """Standard normal draws truncated to [a, b], by the inverse distribution function."""
    lo, hi = special.ndtr(a), special.ndtr(b)
    return special.ndtri(lo + rng.random(n) * (hi - lo))
