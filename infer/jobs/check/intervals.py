"""Intervals of the claim's parameters implied by the reported data, against its values.

Each parameter in turn -- mu, s and h; alpha at an X-linked locus; penetrance,
completeness and phenocopy where the claim states them and an observation reads them --
gets the exact posterior under a wide prior (``infer.files.claim.WIDE_PRIORS``) with the
others held at their claimed values; the claimed value is judged by its evidence value
(Pereira & Stern 1999) and the highest-density interval. Under a ``[history]`` the
posterior is the claim's study's, which carries the history and each observation's
sampling time (:class:`infer.model.posterior.Model` reads them), so the intervals are
those the data imply under the stated history.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from infer.jobs.check.findings import Finding, claimed_text
from infer.core.text import fmt
from infer.core.supports import ASCERTAINMENT, EXTENDED_SUPPORT
from infer.files.claim import OTHER_WIDE_PRIORS, REQUIRED_PARAMETERS, WIDE_PRIORS, Claim
from infer.model.priors.parsing import SUPPORT, LogUniform, Uniform

__all__ = ["implied_intervals"]


def _evidence(grid, name: str, claimed: float, level: float) -> tuple[float, tuple]:
    """Evidence value of the claimed value and the highest-density interval at ``level``.

    Works on the sampling scale (log10 for mu): mass per grid cell by the trapezoid
    rule, cells ordered by density; the evidence is the mass of cells whose density is
    no higher than the density at the claimed value (0 when the claimed value lies
    outside the zoomed grid, where the density is below e^-30 of its peak).
    """
    x = np.asarray(grid.axes[name], dtype=float)
    density = np.asarray(grid.marginal_density[name], dtype=float)
    log_scale = isinstance(_PRIORS.get(name), LogUniform)
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
        lower = 0.0 if 0 <= lower < 1e-8 else lower
        upper = 1.0 if 1 - 1e-8 < upper <= 1 else upper
    return evidence, (lower, upper)


_PRIORS = {**WIDE_PRIORS, **OTHER_WIDE_PRIORS}


#: an implied interval spanning more than this share of the prior's central range (on the
#: prior's scale) says the data barely inform the parameter
BARELY_INFORMED = 0.9


def _prior_share(prior, lower: float, upper: float, level: float) -> float:
    """Width of [lower, upper] over the prior's central ``level`` range (log10 if log-uniform)."""
    tails = np.array([(1 - level) / 2, (1 + level) / 2])
    plo, phi = (float(v) for v in prior.quantile(tails))
    if isinstance(prior, LogUniform):
        lower, upper = math.log10(max(lower, 1e-300)), math.log10(max(upper, 1e-300))
        plo, phi = math.log10(plo), math.log10(phi)
    return float((upper - lower) / (phi - plo)) if phi > plo else 0.0


def checked_parameters(claim: Claim) -> list[str]:
    """The parameters whose implied intervals are computed, in canonical order.

    mu, s and h always; alpha at an X-linked locus; an ascertainment parameter when the
    claim states it (not left to its default).
    """
    study = claim.study
    names = list(REQUIRED_PARAMETERS)
    if study.inheritance == "x-linked":
        names.append("alpha")
    names += [n for n in ASCERTAINMENT if n in _PRIORS and n not in study.defaulted]
    return names


def _reads(observation, name: str, model: str) -> bool:
    if name in ASCERTAINMENT:
        return name in observation.ascertainment and getattr(observation, name, None) is None
    return name in observation.parameters_used(model)


def implied_intervals(claim: Claim, threshold: float) -> tuple[dict, list[Finding]]:
    """Interval of each parameter implied by the data, the others at their claimed values.

    Parameters
    ----------
    claim : infer.files.claim.Claim
    threshold : float
        Evidence values below it are errors (unless the authors' interval overlaps).

    Returns
    -------
    from_data : dict
        Per parameter: the grid median, equal-tailed and highest-density intervals and
        the evidence value of the claimed value.
    findings : list of Finding
    """
    from infer.inference.exact import exact_posterior
    from infer.model.posterior import Model

    study, level, model = claim.study, claim.study.interval, claim.study.model
    out, findings = {}, []
    names = checked_parameters(claim)
    for name in names:
        others = claimed_text(claim, [n for n in names if n != name])
        used = [o for o in study.observations if _reads(o, name, model)]
        prior = _PRIORS[name]
        if name == "h" and not 0.0 <= claim.values["h"] <= 1.0:
            # a claimed heterozygote advantage (h < 0) or Aa below aa (h > 1): ask over the
            # whole range a study may give h (infer.core.supports.EXTENDED_SUPPORT)
            prior = Uniform("h", *EXTENDED_SUPPORT["h"])
        if not used:
            out[name] = {"informed": False}
            continue
        single = replace(study, parameters={**study.parameters, name: prior}, observations=used)
        claimed = claim.values[name]
        try:
            grid = exact_posterior(Model(single), level)
        except ValueError:
            out[name] = {"informed": True, "possible": False, "prior": prior.describe()}
            findings.append(Finding(
                "error", "no-implied-value",
                f"No value of {name} under {prior.describe()} makes the reported data "
                f"possible with {others} held at their claimed values"
                + (" under the stated history." if study.history is not None else "."),
                out[name]))
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
        if study.history is not None:  # the Model reads the history and sampling times
            record["under"] = "the stated history"
        pct = f"{100 * level:g} %"
        under = " under the stated history" if study.history is not None else ""
        text = (f"With {others} held at their claimed values{under}, the reported data imply "
                f"{name} "
                f"= {fmt(q['median'])} ({pct} highest-density interval {fmt(hpd_lower)} to "
                f"{fmt(hpd_upper)}, prior {prior.describe()})")
        evidence_text = ("posterior mass no more probable than the claimed value "
                         f"{fmt(claimed)}: {fmt(evidence)}")
        share = _prior_share(prior, hpd_lower, hpd_upper, level)
        record["prior_share"] = share
        if evidence >= 1.0 - level and share > BARELY_INFORMED:
            findings.append(Finding(
                "note", "implied-interval-uninformed",
                f"{text}: the data barely inform {name} (the interval spans "
                f"{100 * share:.0f} % of the prior's {pct} range), so the claimed "
                f"{fmt(claimed)} is neither supported nor contradicted by them.", record))
            continue
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
