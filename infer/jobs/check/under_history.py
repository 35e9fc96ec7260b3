"""A claim checked under its ``[history]``: the states it implies and the words for it.

With a ``[history]`` (infer/files/history.py, the same table as a study's) the population
is at the exact balance only before the history's oldest epoch; the check reads the claim
at the frequency the exact life-cycle recursion carries to each time
(:func:`infer.model.history_likelihood.history_states`): today for the implied quantities
and the statements, each observation's own sampling time (``sampled``) for its
predictive p-value. The equilibrium values are kept beside, for comparison, and the
findings that concern only the equilibrium (the authors' approximation, drift against the
balance) say so. Under ``model = "drift"`` the point claim's allele-frequency distribution
is carried through the history instead (:func:`drift_laws`): its mean and averages today
(:func:`law_summary`) beside Wright's stationary ones, and each frequency count's exact
tails integrated over it at the count's sampling time; the draws of the claim's stated
uncertainty then keep the deterministic recursion (as the drift check without a history
keeps the point claim for Wright's density). Nothing here prints or touches files.
"""

from __future__ import annotations

import math

import numpy as np

from infer.core.history.describe import describe_history, history_summary
from infer.core.text import fmt
from infer.files.claim import Claim
from infer.jobs.check.findings import Finding
from infer.model.balance_state import BalanceState
from infer.model.history_likelihood import frequency_times, history_states, sampling_times

__all__ = ["EQUILIBRIUM_CODES", "observation_times", "claim_states", "history_record",
           "history_finding", "mark_equilibrium_findings", "point_rows", "COMPARED", "drift_laws",
           "law_summary"]

#: codes of findings that judge the equilibrium, whatever the history
EQUILIBRIUM_CODES = ("approximation-out-of-range", "approximation-in-range",
                     "frequency-too-high-for-approximation", "drift-dominates",
                     "drift-model-used")
#: implied quantities shown beside their equilibrium values
COMPARED = ("q_hat", "q_male", "q_female", "carrier_frequency", "incidence_dominant",
            "incidence_recessive", "incidence_x-linked-male", "load")


def drift_laws(claim: Claim) -> dict:
    """Under ``model = "drift"``: the point claim's frequency distribution at each time.

    The distribution the history carries from Wright's stationary density
    (:func:`infer.core.history.distribution.history_distributions`: the exact
    Wright–Fisher transition where 2Ne <= 200, the forward diffusion above), today and at
    every sampling time of a frequency observation; generations ago -> distribution.
    """
    from infer.core.history.distribution import history_distributions

    observations = claim.study.observations
    times = sorted({0, *frequency_times(observations, observation_times(claim))})
    return history_distributions(claim.study.history, point_rows(claim), times=times)


def law_summary(law, level: float, s: float, h: float) -> dict:
    """Mean, sd, median and central interval of one distribution, and the averages.

    The quantiles are those of the masses at their points (the first point whose
    cumulative mass reaches the probability); carrier frequency, incidences and load
    are their means over the distribution (:func:`infer.jobs.check.implied.moment_averages`).
    """
    from infer.jobs.check.implied import moment_averages

    points, masses = np.asarray(law.points[0], float), np.asarray(law.masses[0], float)
    order = np.argsort(points)
    points, masses = points[order], masses[order]
    total = masses.sum()
    mean = float(np.sum(points * masses) / total)
    sd = float(np.sqrt(max(np.sum((points - mean) ** 2 * masses) / total, 0.0)))
    cumulative = np.cumsum(masses) / total
    low, high = (1 - level) / 2, (1 + level) / 2

    def quantile(p):
        return float(points[min(int(np.searchsorted(cumulative, p)), points.size - 1)])

    out = {"mean": mean, "sd": sd, "median": quantile(0.5), "lower": quantile(low),
           "upper": quantile(high)}
    out.update(moment_averages(mean, sd, s, h))
    return out


def observation_times(claim: Claim) -> list[int]:
    """Generations ago each of the claim's observations was sampled (0 without a history)."""
    return sampling_times(claim.study.observations, claim.study.sampled or {})


def claim_states(claim: Claim, params: dict) -> dict:
    """States of each row today and at every sampling time (generations ago -> state).

    Without a history: the exact balance, at time 0 only. With one: the history's
    deterministic states (:func:`infer.model.history_likelihood.history_states`), whose
    ``exists`` is False where no ancestral balance exists.
    """
    history = claim.study.history
    if history is None:
        return {0: BalanceState.deterministic(params, claim.inheritance)}
    observations = claim.study.observations
    times = sorted({0, *frequency_times(observations, observation_times(claim))})
    return history_states(history, params, claim.inheritance, times=times)


def _ratio(a, b) -> float:
    return a / b if b and math.isfinite(a) and math.isfinite(b) else math.nan


def history_record(claim: Claim, point_states: dict, implied: dict,
                   equilibrium: dict) -> dict:
    """What ``implied["history"]`` holds: the history, its words, the values it changes.

    Parameters
    ----------
    claim : infer.files.claim.Claim
    point_states : dict of int to BalanceState
        The point claim's states (:func:`claim_states`).
    implied, equilibrium : dict
        The implied quantities today under the history, and at equilibrium.
    """
    compared = {}
    # under drift: the propagated distribution's averages against Wright's stationary ones
    today_source = implied.get("propagated", implied)
    balance_source = equilibrium.get("stationary", equilibrium)
    for name in COMPARED:
        key = "mean" if name == "q_hat" and "propagated" in implied else name
        balance_key = "mean" if name == "q_hat" and "stationary" in equilibrium else name
        if key in today_source and balance_key in balance_source:
            today, balance = today_source[key], balance_source[balance_key]
            compared[name] = {"today": today, "equilibrium": balance,
                              "ratio": _ratio(today, balance)}
    return {"history": history_summary(claim.study.history, claim.study.sampled),
            "description": describe_history(claim.study.history, claim.study.sampled),
            "q_at": {str(t): float(state.q[0]) for t, state in sorted(point_states.items())},
            "compared": compared}


def history_finding(claim: Claim, implied: dict) -> Finding:
    """A note saying which history was assumed and what it changes against equilibrium."""
    record = implied["history"]
    key = "q_male" if claim.inheritance == "x-linked" else "q_hat"
    q = record["compared"].get(key, {})
    which = "q_male today" if key == "q_male" else "q today"
    if claim.study.model == "drift":
        which = "the mean q today (the distribution carried through it under drift)"
    words = " ".join(record["description"])
    text = (f"Under the stated history {which} = {fmt(q.get('today'))}; at equilibrium it "
            f"would be {fmt(q.get('equilibrium'))} (ratio {fmt(q.get('ratio'))}). "
            f"Assumed: {words}")
    if claim.mode is not None:
        name = f"incidence_{claim.mode}"
        incidence = record["compared"].get(name)
        if incidence is not None:
            text += (f" The {claim.mode} incidence today is {fmt(incidence['today'])} "
                     f"against {fmt(incidence['equilibrium'])} at equilibrium.")
    return Finding("note", "history-assumed", text, record)


def mark_equilibrium_findings(findings: list[Finding]) -> list[Finding]:
    """The approximation and drift findings, saying plainly they concern the equilibrium.

    Those findings judge the authors' formula against the exact balance and the balance
    against drift (4Ne q_hat); under a history neither is about today's frequency.
    """
    marked = []
    for f in findings:
        if f.code in EQUILIBRIUM_CODES:
            note = (" This concerns the equilibrium at the claimed values, not today's "
                    "frequency under the stated history.")
            f = Finding(f.severity, f.code, f.message + note,
                        {**f.details, "concerns": "equilibrium"})
        marked.append(f)
    return marked


def point_rows(claim: Claim) -> dict[str, np.ndarray]:
    """The point claim as one row: every life-cycle value and what the history reads."""
    return {k: np.array([v]) for k, v in {**claim.values, **claim.history_values}.items()}
