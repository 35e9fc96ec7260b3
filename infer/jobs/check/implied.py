"""Quantities a claim implies: frequencies, load, incidences and their intervals.

:func:`implied_quantities` evaluates the exact deterministic balance row by row;
:func:`drift_moments` gives Wright's stationary summary for the drift model; and
:func:`implied_values` gathers both, with intervals under the claim's stated
uncertainty, for :class:`~infer.jobs.check.run.CheckResult`.
"""

from __future__ import annotations

import math

import numpy as np

from infer.core import balance
from infer.core.stats import central_tails
from infer.files.claim import Claim
from infer.model.balance_state import BalanceState
from infer.model.observations.base import x_linked_daughter_genotypes

__all__ = ["implied_quantities", "drift_moments", "moment_averages", "implied_values"]


def implied_quantities(claim: Claim, state: BalanceState) -> dict[str, np.ndarray]:
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
                # the balance's share of affected sons with a new mutation; NaN under a
                # [history], whose states carry no such share
                "new_mutation_share": np.asarray(getattr(b, "new_mutation_share",
                                                         np.full(state.n, np.nan))),
                "carrier_frequency": carriers,
                "incidence_x-linked-male": state.q_male}
    q = state.q
    _, carriers, _ = balance.genotype_frequencies(q, p["F"])
    return {"q_hat": q, "load": balance.load(q, p["s"], p["h"], p["F"]),
            "carrier_frequency": carriers,
            "incidence_dominant": balance.affected_fraction("dominant", q, p["F"]),
            "incidence_recessive": balance.affected_fraction("recessive", q, p["F"])}


def drift_moments(claim: Claim) -> dict:
    """Wright's stationary mean, median, interval and the implied averages (F = 0)."""
    from infer.core.drift import stationary as drift

    v = claim.values
    summary = drift.stationary_summary(v["Ne"], v["mu"], v["s"], v["h"], v["nu"],
                                       claim.study.interval)
    out = {k: float(val) for k, val in summary.items()}
    out.update(moment_averages(out["mean"], out["sd"], v["s"], v["h"]))
    return out


def moment_averages(mean: float, sd: float, s: float, h: float) -> dict:
    """Carrier frequency, incidences and load averaged over a frequency distribution (F = 0).

    Each is a polynomial of degree two in x under Hardy-Weinberg proportions (2x(1 - x),
    2x - x², x², s(2h·x(1 - x) + x²)), so its mean needs only E[x] and E[x²] = sd² + mean².
    """
    second = sd * sd + mean * mean  # E[x^2]
    return {"carrier_frequency": 2 * (mean - second),
            "incidence_dominant": 2 * mean - second, "incidence_recessive": second,
            "load": s * (2 * h * (mean - second) + second)}


def implied_values(claim: Claim, state: BalanceState, sampled) -> dict:
    """Implied quantities at the claim, their intervals over ``sampled`` draws if given."""
    implied = {name: float(value[0]) for name, value in implied_quantities(claim, state).items()}
    if claim.study.model == "drift":
        implied["stationary"] = drift_moments(claim)
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
                lower, upper = np.quantile(finite, central_tails(level))
                implied["uncertainty"][name] = {"lower": float(lower), "upper": float(upper)}
    return implied
