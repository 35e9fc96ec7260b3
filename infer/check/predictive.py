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
from scipy import special

from infer.check.findings import Finding
from infer.check.implied import drift_moments
from infer.core import balance
from infer.core.text import fmt
from infer.estimate.results import two_sided_p_value
from infer.files.claim import Claim
from infer.model.balance_state import State

__all__ = ["statement_findings", "observation_finding", "SIMULATED_DRAWS", "DRIFT_TAIL_TERMS"]

#: predictive draws for statistics without a closed-form distribution
SIMULATED_DRAWS = 20_000
#: largest number of counts summed for an exact tail under the drift model
DRIFT_TAIL_TERMS = 2000


def _log_binomial_pmf(k, n, p):
    """Log of C(n, k) p^k (1-p)^(n-k), broadcasting k and p."""
    k = np.asarray(k, dtype=float)
    return (special.gammaln(n + 1.0) - special.gammaln(k + 1.0) - special.gammaln(n - k + 1.0)
            + special.xlogy(k, p) + special.xlog1py(n - k, -p))


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
        The implied quantities (:func:`infer.check.implied.implied_values`).
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
    from infer.core.drift import stationary as drift

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
    moments = drift_moments(claim)
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


def observation_finding(claim, index, observation, rows_state, uncertain, rng, threshold,
                        implied):
    """Judge one reported observation by its two-sided predictive p-value under the claim.

    Parameters
    ----------
    claim : infer.files.claim.Claim
    index : int
        The observation's place in the file, counted from 1.
    observation : infer.model.observations.kinds.Observation
    rows_state : infer.model.balance_state.State
        The claim (one row) or draws from its stated uncertainty.
    uncertain : bool
        Whether ``rows_state`` holds draws from the claim's uncertainty.
    rng : numpy.random.Generator
    threshold : float
        p-values below it are errors, below 5 x threshold warnings.
    implied : dict
        Gains the comparison record under ``implied["observations"]``.

    Returns
    -------
    Finding
    """
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
