"""Heterozygote advantage fitted to a claim's data and weighed against the claimed balance.

The claimed balance (recurrent mutation against selection at the claimed mu, s, h) has
no free parameter: its evidence is the likelihood of the reported data at the claimed
values. The alternative keeps the claimed mu and s and gives h the heterozygote-advantage
prior of ``qhat compare`` (uniform(-5, 0), :data:`infer.files.compare_table.DEFAULT_EXTRA_PRIORS`):
its evidence is the likelihood averaged over that prior (nested quadrature,
:func:`infer.inference.evidence.quadrature_log_evidence`), and the ratio of the two is
the evidence ratio (a Bayes factor; Kass & Raftery 1995, JASA 90:773). The fitted h is
also given as Fisher's (1922) carrier advantage s1 = 1 - w_AA/w_Aa = -hs/(1 - hs).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from infer.files.compare_table import DEFAULT_EXTRA_PRIORS

__all__ = ["weigh_heterozygote_advantage"]


def _advantage(h: float, s: float) -> float:
    """Fisher's s1 (AA's deficit relative to Aa) of qhat's h < 0 at selection s."""
    return -h * s / (1.0 - h * s)


def weigh_heterozygote_advantage(claim) -> dict | None:
    """The fitted heterozygote advantage and its evidence ratio against the claim.

    Returns
    -------
    dict or None
        ``log_evidence_ratio`` (natural log of Z_advantage / L_claim), ``h`` and
        ``advantage`` ({median, lower, upper} at the claim's interval), ``prior``; None
        where it does not apply (not autosomal or not deterministic, selection by sex,
        no observation that depends on the frequency, a free parameter in the claim) or
        no h < 0 makes the data possible.
    """
    from infer.inference.evidence import quadrature_log_evidence
    from infer.inference.exact import exact_posterior
    from infer.model.posterior import Model

    study = claim.study
    if (study.inheritance != "autosomal" or study.model != "deterministic"
            or getattr(study, "sex_specific", False)
            or not any(o.depends_on_frequency for o in study.observations)):
        return None
    claimed = Model(study)
    if claimed.ndim:
        return None
    with np.errstate(all="ignore"):
        log_claimed = float(claimed.log_posterior(np.zeros((1, 0)))[0])
    prior = DEFAULT_EXTRA_PRIORS["heterozygote-advantage"]["h"]
    model = Model(replace(study, parameters={**study.parameters, "h": prior}))
    try:
        evidence = quadrature_log_evidence(model)
        grid = exact_posterior(model, study.interval, tolerance=1e-2)
    except ValueError:
        return None
    h = dict(grid.quantiles["h"])
    s = float(claim.values["s"])
    # s1 falls as h rises towards 0: the interval's ends swap
    advantage = {"median": _advantage(h["median"], s), "lower": _advantage(h["upper"], s),
                 "upper": _advantage(h["lower"], s)}
    ratio = evidence.log_evidence - log_claimed if math.isfinite(log_claimed) else math.inf
    return {"log_evidence_ratio": ratio, "log_evidence": evidence.log_evidence,
            "log_likelihood_claimed": log_claimed, "h": h, "advantage": advantage,
            "prior": prior.describe(), "interval": study.interval}
