"""Each alternative explanation fitted to a claim's data and weighed against the claimed balance.

The claimed balance (recurrent mutation against selection at the claimed mu, s, h) has
no free parameter: its evidence is the likelihood of the reported data at the claimed
values. Each alternative keeps the claimed values and frees only what the alternative
adds, under a stated prior; its evidence is the likelihood averaged over that prior
(nested quadrature, :func:`infer.inference.evidence.quadrature_fit`, which also gives the
fitted quantiles), and the ratio of the two is the evidence ratio (a Bayes factor; Kass &
Raftery 1995, JASA 90:773):

* heterozygote advantage: h < 0 under the prior of ``qhat compare`` (uniform(-5, 0),
  :data:`infer.files.compare_table.DEFAULT_EXTRA_PRIORS`, or the claim's
  ``[alternatives]``), given also as Fisher's (1922) carrier advantage
  s1 = 1 - w_AA/w_Aa = -hs/(1 - hs);
* founder effect: a founding ``generations_ago`` generations ago (the claim's
  ``[alternatives] founder``) set the allele at q_founder (uniform(0, 0.5) unless given),
  carried to today by the deterministic life cycle (:mod:`infer.files.alternative_studies`);
* drift: Wright's stationary distribution at the claimed Ne (no free parameter: the
  likelihood of the data under the drift model at the claimed values);
* under-ascertainment: a registry completeness below 1, uniform(0.05, 1), for counts of
  affected people that read the study's completeness.

Each weigh function returns a dict (``log_evidence_ratio``, natural log of
Z_alternative / L_claim; ``fitted``; ``priors``) or None where the alternative does not
apply to the claim.
"""

from __future__ import annotations

import math
import numpy as np

from infer.files.alternative_studies import model_study
from infer.model.priors.parsing import Uniform

__all__ = ["claimed_log_likelihood", "weigh_heterozygote_advantage", "weigh_founder",
           "weigh_drift", "weigh_completeness", "COMPLETENESS_PRIOR"]

#: the prior on completeness when under-ascertainment is weighed: from nearly every
#: affected birth missed to none
COMPLETENESS_PRIOR = Uniform("completeness", 0.05, 1.0)
#: nu used for Wright's density when the claim's nu is 0 (as the drift model's default)
_DRIFT_NU = 1e-9


def _advantage(h: float, s: float) -> float:
    """Fisher's s1 (AA's deficit relative to Aa) of qhat's h < 0 at selection s."""
    return -h * s / (1.0 - h * s)


def _log_likelihood_at_values(study) -> float:
    from infer.model.posterior import Model

    model = Model(study)
    if model.ndim:
        return math.nan
    with np.errstate(all="ignore"):
        return float(model.log_posterior(np.zeros((1, 0)))[0])


def _applies(claim) -> bool:
    """Autosomal, deterministic, one s, some observation reads the frequency."""
    study = claim.study
    return (study.inheritance == "autosomal" and study.model == "deterministic"
            and not getattr(study, "sex_specific", False)
            and any(o.depends_on_frequency for o in study.observations))


def claimed_log_likelihood(claim) -> float:
    """Log-likelihood of the data at the claimed values (NaN: a parameter is free)."""
    return _log_likelihood_at_values(claim.study)


def _parse_variant(document: dict, source: str):
    """The alternative as a study, or None where a study of it is refused.

    A claim's data may be impossible under every draw of the alternative's prior (no
    stable balance at the claimed values, say): the check reports that elsewhere.
    """
    from infer.errors import InputError
    from infer.files.study import parse_study

    try:
        return parse_study(document, source=source, require_free=False)
    except InputError:
        return None


def _weigh(study, log_claimed: float, interval: float) -> dict | None:
    """Evidence of ``study`` (its free parameters fitted) against the claim's likelihood."""
    from infer.inference.evidence import quadrature_fit
    from infer.model.posterior import Model

    model = Model(study)
    if model.ndim == 0:
        log_evidence, fitted, error = _log_likelihood_at_values(study), {}, 0.0
    else:
        try:
            fit = quadrature_fit(model, interval)
        except ValueError:  # no mass anywhere: the alternative cannot produce the data
            return None
        log_evidence, fitted = fit.evidence.log_evidence, fit.quantiles
        error = fit.evidence.error
    if not math.isfinite(log_evidence):
        return None
    ratio = log_evidence - log_claimed if math.isfinite(log_claimed) else math.inf
    return {"log_evidence_ratio": ratio, "log_evidence": log_evidence, "error": error,
            "log_likelihood_claimed": log_claimed, "fitted": fitted,
            "priors": {name: study.parameters[name].describe() for name in model.free},
            "interval": interval}


def weigh_heterozygote_advantage(claim) -> dict | None:
    """The fitted heterozygote advantage and its evidence ratio against the claim.

    Returns
    -------
    dict or None
        As :func:`_weigh`, plus ``h`` and ``advantage`` ({median, lower, upper} at the
        claim's interval) and ``prior``; None where it does not apply (not autosomal or
        not deterministic, selection by sex, no observation that depends on the
        frequency, a free parameter in the claim) or no h < 0 makes the data possible.
    """
    log_claimed = claimed_log_likelihood(claim)
    if not _applies(claim) or math.isnan(log_claimed):
        return None
    prior = claim.alternatives.extra_priors["heterozygote-advantage"]["h"]
    study = model_study(claim.study, "heterozygote-advantage", {"h": prior})
    weighed = _weigh(study, log_claimed, claim.study.interval)
    if weighed is None:
        return None
    h = weighed["fitted"]["h"]
    s = float(claim.values["s"])
    # s1 falls as h rises towards 0: the interval's ends swap
    advantage = {"median": _advantage(h["median"], s), "lower": _advantage(h["upper"], s),
                 "upper": _advantage(h["lower"], s)}
    return {**weighed, "h": h, "advantage": advantage, "prior": prior.describe()}


def weigh_founder(claim) -> dict | None:
    """The founder frequency that explains the data, and its evidence ratio.

    Applies where the claim's ``[alternatives] founder`` gives the founding's age and the
    claim states no ``[history]`` of its own (autosomal, deterministic, one s).

    Returns
    -------
    dict or None
        As :func:`_weigh`, plus ``q_founder`` ({median, lower, upper}), ``generations_ago``
        and ``prior``.
    """
    generations = claim.alternatives.founder_generations
    log_claimed = claimed_log_likelihood(claim)
    if (generations is None or not _applies(claim) or math.isnan(log_claimed)
            or claim.study.history is not None):
        return None
    prior = claim.alternatives.extra_priors["founder"]["q_founder"]
    from infer.errors import InputError

    try:
        study = model_study(claim.study, "founder", {"q_founder": prior}, generations)
    except InputError:  # refused as a study: as in _parse_variant
        return None
    if isinstance(study, str):
        return None
    weighed = _weigh(study, log_claimed, claim.study.interval)
    if weighed is None:
        return None
    return {**weighed, "q_founder": weighed["fitted"]["q_founder"],
            "generations_ago": int(generations), "prior": prior.describe()}


def weigh_drift(claim) -> dict | None:
    """The data under Wright's stationary distribution at the claimed Ne, against the claim.

    Applies where the claim states a finite Ne for an autosomal locus with F = 0 and
    checks it under the deterministic model (no history). Nothing is fitted: the ratio is
    L_drift / L_claim at the claimed values (nu = 1e-9 where the claim's is 0, the drift
    model's default).

    Returns
    -------
    dict or None
        As :func:`_weigh`, plus ``Ne``.
    """
    from infer.files.study import study_document

    values = claim.values
    log_claimed = claimed_log_likelihood(claim)
    if (not _applies(claim) or math.isnan(log_claimed) or not math.isfinite(values["Ne"])
            or values["F"] != 0 or claim.study.history is not None):
        return None
    document = study_document(claim.study)
    document["model"] = "drift"
    document["parameters"]["Ne"] = values["Ne"]
    if not document["parameters"].get("nu"):
        document["parameters"]["nu"] = _DRIFT_NU
    study = _parse_variant(document, claim.study.path)
    if study is None:
        return None
    weighed = _weigh(study, log_claimed, claim.study.interval)
    if weighed is None:
        return None
    return {**weighed, "Ne": values["Ne"]}


def weigh_completeness(claim) -> dict | None:
    """The registry completeness that reconciles the counts, and its evidence ratio.

    Applies where some count of affected people reads the study's completeness (it fixes
    none of its own), the claim fixes completeness at 1 and gives no interval for it, and
    the alternative keeps every claimed value but lets completeness range over
    :data:`COMPLETENESS_PRIOR`.

    Returns
    -------
    dict or None
        As :func:`_weigh`, plus ``completeness`` ({median, lower, upper}) and ``prior``.
    """
    from infer.files.study import study_document

    study = claim.study
    log_claimed = claimed_log_likelihood(claim)
    if (math.isnan(log_claimed) or study.parameters["completeness"].value != 1.0
            or "completeness" in claim.intervals or study.history is not None):
        return None
    if not any(getattr(o, "completeness", "absent") is None
               and "completeness" in getattr(o, "ascertainment", ()) for o in study.observations):
        return None
    document = study_document(study)
    document["parameters"]["completeness"] = COMPLETENESS_PRIOR.as_dict()
    variant = _parse_variant(document, study.path)
    if variant is None:
        return None
    weighed = _weigh(variant, log_claimed, study.interval)
    if weighed is None:
        return None
    return {**weighed, "completeness": weighed["fitted"]["completeness"],
            "prior": COMPLETENESS_PRIOR.describe()}
