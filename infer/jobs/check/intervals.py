"""Intervals of mu, s and h implied by the reported data, against the claimed values.

Each parameter in turn gets the exact grid posterior under a wide prior
(``infer.files.claim.WIDE_PRIORS``) with the others held at their claimed values; the
claimed value is judged by its evidence value (Pereira & Stern 1999) and the
highest-density interval.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from infer.jobs.check.findings import Finding, claimed_text
from infer.core.text import fmt
from infer.files.claim import WIDE_PRIORS, Claim
from infer.model.priors.parsing import SUPPORT

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


def implied_intervals(claim: Claim, threshold: float) -> tuple[dict, list[Finding]]:
    """Interval of mu, s and h implied by the data, the others held at their claimed values.

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
    for name in ("mu", "s", "h"):
        others = claimed_text(claim, [n for n in ("mu", "s", "h") if n != name])
        used = [o for o in study.observations if name in o.parameters_used(model)]
        prior = WIDE_PRIORS[name]
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
