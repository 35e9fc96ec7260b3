"""Findings on the reported observations and statements against a claim.

:func:`observation_finding` compares each observation with the value the claim
implies through the two-sided posterior predictive p-value of its statistic (exact
binomial or log-normal tails, Wright's density under the drift model, predictive
draws otherwise); :func:`statement_findings` compares each stated incidence, carrier
frequency, allele frequency or load with the implied value.
"""

from __future__ import annotations

import math

import numpy as np

from infer.jobs.check.findings import Finding
from infer.jobs.check.implied import drift_moments
from infer.core.stats import log_binomial, two_sided_p_value
from infer.core.text import fmt
from infer.files.claim import Claim

__all__ = ["statement_findings", "observation_finding", "SIMULATED_DRAWS", "DRIFT_TAIL_TERMS"]

#: predictive draws for statistics without a closed-form distribution
SIMULATED_DRAWS = 20_000
#: largest number of counts summed for an exact tail under the drift model
DRIFT_TAIL_TERMS = 2000


def _statement_target(claim: Claim, name: str) -> str:
    if name == "incidence":
        return f"incidence_{claim.mode}"
    if name == "load" and claim.inheritance == "x-linked":
        return "load_male"
    return {"q": "q_hat"}.get(name, name)


def statement_findings(claim: Claim, implied: dict, threshold: float) -> list[Finding]:
    """Compare each stated quantity with the value the claimed parameters imply.

    Parameters
    ----------
    claim : infer.files.claim.Claim
    implied : dict
        The implied quantities (:func:`infer.jobs.check.implied.implied_values`).
    threshold : float
        Not used: statements are judged by the claim's rounding tolerance.

    Returns
    -------
    list of Finding
        ``statement-agrees`` notes, ``statement-mismatch`` warnings or errors.
    """
    findings = []
    drift_model = claim.study.model == "drift"
    for name, statement in claim.statements.items():
        target = _statement_target(claim, name)
        source = (implied.get("propagated", implied.get("stationary", {})) if drift_model
                  else implied)
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
        if "history" in implied:  # today's value under the history, the balance beside
            at_balance = implied["equilibrium"]
            balance = (at_balance.get("stationary", {}).get(key, at_balance.get(target))
                       if drift_model else at_balance.get(target))
            details["under"] = "the stated history, today"
            details["equilibrium"] = balance
            text = (f"The paper states {name.replace('_', ' ')} {fmt(statement.value)}; under "
                    f"the stated history the claimed parameters imply {fmt(value)} today "
                    f"(ratio stated/implied {fmt(ratio)}; at equilibrium it would be "
                    f"{fmt(balance)})")
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


def _tails(observation, state, rng) -> tuple[float, float, str]:
    """(P(T <= t), P(T >= t)) averaged over the rows of ``state``, and the method.

    The kind's exact tails where its statistic has a closed form
    (:meth:`~infer.model.observations.base.Observation.predictive_tails`), else
    ``SIMULATED_DRAWS`` predictive draws.
    """
    tails = observation.predictive_tails(state)
    if tails is not None:
        return tails
    repeat = max(1, SIMULATED_DRAWS // state.n)
    replicated = observation.simulate(state.tile(repeat), rng)
    p_value = two_sided_p_value(replicated, observation.statistic())
    return p_value / 2, p_value / 2, "simulated"


def _drift_tails(claim: Claim, observation, law=None) -> tuple[float, float, float]:
    """Exact tails under Wright's density for a frequency count (point claim).

    P(T = k) = E_phi[Binomial(k; n, f(x))], f the kind's share of trials that count
    (:class:`~infer.model.observations.share.FrequencyStatistic`), summed over the
    shorter side of t (at most ``DRIFT_TAIL_TERMS`` terms). Returns (lower, upper,
    expected); NaN for a kind that is not an observed share. Given ``law`` (a
    :class:`~infer.core.history.distribution.FrequencyDistribution` of one row: a
    ``[history]``'s distribution at the sampling time), phi is that distribution.
    """
    from infer.core.drift import stationary as drift

    v = claim.values
    statistic = observation.frequency_statistic()
    if statistic is None:
        return math.nan, math.nan, math.nan
    t, n = statistic.count, statistic.trials
    if law is not None and not np.all(np.isfinite(law.masses)):
        return math.nan, math.nan, math.nan  # the carried distribution is not defined
    if law is None:
        moments = drift_moments(claim)
        m, second = moments["mean"], moments["sd"] ** 2 + moments["mean"] ** 2
    else:
        m = float(law.mean[0])
        second = float(law.expectation(law.points * law.points)[0])
    expected = statistic.expected_count(m, second)
    below = t <= n - t
    k = np.arange(0, t + 1) if below else np.arange(t, n + 1)
    if k.size > DRIFT_TAIL_TERMS:
        return math.nan, math.nan, expected
    rows = k.size

    def log_sample(x):
        return log_binomial(k[:, None], n, np.clip(statistic.share(x), 0.0, 1.0))

    if law is None:
        log_p = drift.log_expectation(log_sample, np.full(rows, v["Ne"]), v["mu"], v["s"],
                                      v["h"], v["nu"])
    else:  # one row's masses broadcast over the counts k
        log_p = law.log_expectation(log_sample(law.points))
    pmf = np.exp(log_p)
    side = float(min(1.0, pmf.sum()))
    other = float(min(1.0, max(0.0, 1.0 - side + pmf[-1 if below else 0])))
    return (side, other, expected) if below else (other, side, expected)


def observation_finding(claim, index, observation, rows_state, uncertain, rng, threshold,
                        implied, generations_ago=None, drift_law=None):
    """Judge one reported observation by its two-sided predictive p-value under the claim.

    Parameters
    ----------
    claim : infer.files.claim.Claim
    index : int
        The observation's place in the file, counted from 1.
    observation : infer.model.observations.base.Observation
    rows_state : infer.model.balance_state.BalanceState
        The claim (one row) or draws from its stated uncertainty.
    uncertain : bool
        Whether ``rows_state`` holds draws from the claim's uncertainty.
    rng : numpy.random.Generator
    threshold : float
        p-values below it are errors, below 5 x threshold warnings.
    implied : dict
        Gains the comparison record under ``implied["observations"]``.
    generations_ago : int, optional
        Under a ``[history]``: when the observation was sampled; ``rows_state`` is then
        the history's state at that time (recorded and named in the message).
    drift_law : FrequencyDistribution, optional
        Under a ``[history]`` and ``model = "drift"``: the point claim's distribution at
        that time, which a frequency count's tails are integrated over.

    Returns
    -------
    Finding
    """
    where = f'observations[{index}] "{observation.label}"'
    t = observation.statistic()
    drift_count = claim.study.model == "drift" and observation.depends_on_frequency
    if drift_count:
        lower, upper, expected = _drift_tails(claim, observation, drift_law)
        method = ("Wright's stationary density" if drift_law is None else
                  "the distribution carried through the stated history")
        rows = "point claim"
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
    when = ""
    if generations_ago is not None:
        record["generations_ago"] = generations_ago
        at = float(np.median(np.asarray(rows_state.q, dtype=float)) if drift_law is None
                   else drift_law.mean[0])
        record["q_then"] = at
        when = (f" under the stated history today (q {fmt(at)})" if generations_ago == 0
                else f" under the stated history at its sampling time, {generations_ago} "
                     f"generations ago (q then {fmt(at)})")
    implied["observations"].append(record)
    text = (f"{where}: observed {fmt(t)}, the claim implies {fmt(expected)}{when} "
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
