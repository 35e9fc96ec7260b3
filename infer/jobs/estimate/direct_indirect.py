"""The classic direct and indirect estimates of mu, and their ratio (summary ``direct_indirect``).

Where a study has new-mutation cases, affected births and fertility data of one mode,
mu can be estimated twice without the balance model's full machinery:

* **direct** (new-mutation cases alone): mu = S / (2·N·pen) for a dominant disorder
  (either parent's gamete may carry the new mutation), mu = S·(2 + alpha) / (3·N·pen)
  from S new-mutation sons among N male births (a son's new mutation is his mother's,
  mu_female = 3 mu / (2 + alpha)); the direct method (Vogel & Motulsky, *Human Genetics*).
* **indirect** (incidence and fertility, at equilibrium): mu = (1 − f)·x / 2 for a
  dominant, mu = (1 − f)·x / 3 for an X-linked disorder in males, with x the incidence
  among births (carriers: affected births / penetrance) and f the fertility of affected
  people relative to the reference (Haldane 1935, J. Genet. 31:317, the indirect method).

Their ratio, indirect / direct, is near 1 when the population is at balance and the
fertility data measure the whole of selection: the classic check. Each estimate reads
only its own sub-likelihood: the binomial rates get their Jeffreys posteriors,
Beta(k + 1/2, n − k + 1/2) (Jeffreys 1946, Proc. R. Soc. A 186:453), and f the Jeffreys
posterior of the conditional binomial share of the children (docs/model.md, fertility);
the intervals are central quantiles of Monte Carlo draws, the point estimates the closed
forms at the observed counts. A ``registry`` gives both estimates from one likelihood: its
affected share a and the new-mutation share of its affected births (parents known) are
drawn, and the new-mutation rate is their product, so its cases stay a subset of its
affected births and the ratio (dominant: (1 − f) / the new-mutation share) is not
widened by counting them twice.
"""

from __future__ import annotations

import math

import numpy as np

from infer.model.observations.classic import ClassicCounts, classic_counts
from infer.model.observations.fertility import observed_relative_fertility

__all__ = ["DRAWS", "direct_indirect", "direct_estimate", "indirect_estimate",
           "summarise_direct_indirect"]

#: Monte Carlo draws behind each interval
DRAWS = 20_000


def direct_estimate(cases: float, exposure: float, mode: str, alpha=1.0):
    """Haldane's direct method: mu from new-mutation cases among births.

    Parameters
    ----------
    cases : float or ndarray
        New-mutation cases (or draws of cases per birth times births).
    exposure : float
        Births × penetrance.
    mode : {"dominant", "x-linked-male"}
    alpha : float or ndarray
        Male-to-female mutation rate ratio (x-linked-male only).
    """
    rate = np.asarray(cases, dtype=float) / exposure
    if mode == "dominant":
        return rate / 2.0
    return rate * (2.0 + np.asarray(alpha, dtype=float)) / 3.0


def indirect_estimate(f, incidence, mode: str, penetrance: float = 1.0):
    """Haldane's indirect method: mu = P·(1 − f)·x / 2 (dominant) or / 3 (x-linked-male).

    x the genotype's incidence, f the affected people's relative fertility and P their
    penetrance: non-penetrant carriers are not selected, so the genotype loses P·(1 − f)
    (P = 1 is the textbook formula).
    """
    divisor = 2.0 if mode == "dominant" else 3.0
    return (penetrance * (1.0 - np.asarray(f, dtype=float))
            * np.asarray(incidence, dtype=float) / divisor)


def _number(value) -> float | None:
    value = float(value)
    return value if math.isfinite(value) else None


def _interval(draws: np.ndarray, interval: float) -> dict:
    tails = [(1 - interval) / 2, 0.5, (1 + interval) / 2]
    lo, med, hi = np.quantile(draws[np.isfinite(draws)], tails)
    return {"median": float(med), "lower": float(lo), "upper": float(hi)}


def _statement(ratio: dict, pct: str) -> str:
    held = ratio["lower"] <= 1.0 <= ratio["upper"]
    head = (f"The {pct} interval of the ratio indirect / direct "
            f"({ratio['lower']:.3g} – {ratio['upper']:.3g}) ")
    if held:
        return head + ("holds 1: incidence and fertility imply the mutation rate the "
                       "new-mutation cases show, as balance with selection through fertility "
                       "alone expects.")
    if ratio["upper"] < 1.0:
        return head + ("lies below 1: the new-mutation cases show more mutation than incidence "
                       "and fertility imply (selection beyond fertility, an incidence missed "
                       "by ascertainment, or a population not at balance).")
    return head + ("lies above 1: incidence and fertility imply more mutation than the "
                   "new-mutation cases show (familial cases counted as new, fertility "
                   "overstating selection, or a population not at balance).")


def direct_indirect(counts: ClassicCounts, alpha, rng: np.random.Generator,
                    interval: float = 0.95, draws: int = DRAWS) -> dict | None:
    """Both classic estimates of mu and their ratio, with intervals.

    Parameters
    ----------
    counts : ClassicCounts
        The pooled counts of one mode (:func:`~infer.model.observations.classic.classic_counts`).
    alpha : float or ndarray
        The male-to-female rate ratio, or draws of it (resampled; x-linked-male only).
    rng : numpy.random.Generator
    interval : float
        Probability of the central intervals.
    draws : int
        Monte Carlo draws.

    Returns
    -------
    dict or None
        ``mode``, ``interval``, ``draws``, ``nested`` (both from one registry);
        ``direct`` and ``indirect`` (``estimate`` at the
        observed counts, ``median``, ``lower``, ``upper``, ``formula``, ``observations``;
        the direct one also ``cases`` and ``births``, the indirect one ``incidence``,
        ``f``, ``f_lower``, ``f_upper``); ``ratio`` (indirect / direct: ``estimate``,
        ``median``, ``lower``, ``upper``) and ``statement``. None when the reference
        people had no children (f undefined).
    """
    c = counts
    if c.reference_children == 0 or c.affected_people == 0:
        return None
    alpha = np.ravel(np.asarray(alpha, dtype=float))
    alpha_draws = alpha[rng.integers(alpha.size, size=draws)]
    share = rng.beta(c.affected + 0.5, c.affected_births - c.affected + 0.5, size=draws)
    if c.nested:
        # one registry: affected share a, and the new-mutation share of the affected
        # whose parents are known (the two binomial factors of its likelihood)
        new_share = rng.beta(c.cases + 0.5, c.known_status - c.cases + 0.5, size=draws)
        rate = share * new_share
    else:
        rate = rng.beta(c.cases + 0.5, c.case_births - c.cases + 0.5, size=draws)
    # direct: the rate of new-mutation cases per birth
    direct = direct_estimate(rate * c.case_births, c.case_exposure, c.mode, alpha_draws)
    direct_point = direct_estimate(c.cases, c.case_exposure, c.mode, float(np.median(alpha)))
    # indirect: incidence among carriers and the relative fertility f
    incidence = share * c.affected_births / c.affected_exposure
    theta = rng.beta(c.affected_children + 0.5, c.reference_children + 0.5, size=draws)
    # X ~ Binomial(T, A w / (A w + R)) gives w = theta R / ((1 - theta) A)
    f = theta / (1.0 - theta) * c.reference_people / c.affected_people
    indirect = indirect_estimate(f, incidence, c.mode, c.fertility_penetrance)
    f_point = observed_relative_fertility(c.affected_people, c.affected_children,
                                          c.reference_people, c.reference_children)
    incidence_point = c.affected / c.affected_exposure
    indirect_point = indirect_estimate(f_point, incidence_point, c.mode,
                                        c.fertility_penetrance)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio_point = indirect_point / direct_point if direct_point > 0 else math.inf
    ratio = _interval(indirect / direct, interval)
    dominant = c.mode == "dominant"
    f_interval = _interval(f, interval)
    return {
        "mode": c.mode, "interval": interval, "draws": int(draws), "nested": bool(c.nested),
        "direct": {
            "estimate": float(direct_point), **_interval(direct, interval),
            "formula": ("mu = S / (2 N pen)" if dominant else "mu = S (2 + alpha) / (3 N pen)"),
            "cases": int(c.cases), "births": int(c.case_births),
            "observations": list(c.case_labels),
        },
        "indirect": {
            "estimate": float(indirect_point), **_interval(indirect, interval),
            "formula": "mu = (1 - f) x / 2" if dominant else "mu = (1 - f) x / 3",
            "incidence": float(incidence_point), "f": float(f_point),
            "f_lower": f_interval["lower"], "f_upper": f_interval["upper"],
            "observations": list(c.affected_labels + c.fertility_labels),
        },
        "ratio": {"estimate": _number(ratio_point), **ratio},
        "statement": _statement(ratio, f"{100 * interval:g} %"),
    }


def summarise_direct_indirect(observations, alpha, rng: np.random.Generator,
                              interval: float = 0.95) -> dict | None:
    """:func:`direct_indirect` of a study's observations, or None when it has not all three.

    Draws from a generator spawned from ``rng``, so the caller's stream is unchanged.
    """
    counts = classic_counts(observations)
    if counts is None:
        return None
    return direct_indirect(counts, alpha, rng.spawn(1)[0], interval)
