"""Does the history matter? The posterior under the study's [history] beside the equilibrium one.

A founder event, a bottleneck or a change of selection can leave an allele far from its
balance value for many generations (the approach to a new balance takes of the order of
1/(h·s) generations for a partly dominant allele and far longer for a recessive; common
practice, e.g. Crow & Kimura 1970, An Introduction to Population Genetics Theory, ch. 6).
This module refits the study at equilibrium (same model, priors and observations, less the
history and what only the history reads: q_founder, sampling times) and states how much the
answer changes, as :mod:`infer.jobs.estimate.drift_comparison` does for drift.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from infer.core.history.describe import describe_history
from infer.core.history.describe import history_summary as history_document
from infer.core.text import fmt
from infer.files.history import HISTORY_PARAMETERS
from infer.jobs.estimate.drift_comparison import (
    _and,
    _deterministic_quantiles,
    _posterior_quantiles,
    _relative_change,
)

__all__ = ["HISTORY_ONLY", "CHANGE", "equilibrium_twin", "describe_history",
           "history_document", "compare_history_with_equilibrium"]

#: relative change of a median or interval end (log scale when positive) that counts
CHANGE = 0.2
#: parameters only a history reads
HISTORY_ONLY = frozenset(HISTORY_PARAMETERS)



def equilibrium_twin(study):
    """The same study with no history: the population at its equilibrium today."""
    parameters = {k: v for k, v in study.parameters.items() if k not in HISTORY_ONLY}
    return dataclasses.replace(study, parameters=parameters, history=None, sampled={})


#: posterior draws (at most) behind the frequency today under the history
FREQUENCY_DRAWS = 400


def frequency_today(study, posterior: dict, rng) -> dict:
    """The mean allele frequency today under the history, over posterior draws.

    Deterministic: the history's frequency today; drift: the mean of the propagated
    distribution today. Median and central interval at the study's level.
    """
    from infer.core.history.distribution import history_distributions
    from infer.core.stats import central_quantiles
    from infer.model.posterior import Model

    model = Model(study)
    total = min((np.size(posterior[n]) for n in model.free), default=1)
    keep = rng.choice(total, size=min(total, FREQUENCY_DRAWS), replace=False)
    params = model.complete({n: np.ravel(posterior[n])[keep] for n in model.free}, keep.size)
    with np.errstate(all="ignore"):
        if model.drift:
            q = history_distributions(study.history, params, times=(0,))[0].mean
        else:
            q = model.state(params).q
    med, lo, hi = central_quantiles(np.asarray(q, dtype=float), study.interval)
    return {"median": med, "lower": lo, "upper": hi}


def compare_history_with_equilibrium(study, posterior: dict, rng, settings=None) -> dict:
    """Compare the posterior under the study's history with the equilibrium posterior.

    Parameters
    ----------
    study : infer.files.study.Study
        A study with a ``history``.
    posterior : dict
        name -> posterior draws of the free parameters under the history.
    rng : numpy.random.Generator
    settings : infer.inference.sampling.SamplerSettings, optional
        Settings of the equilibrium refit when it is sampled (three or more free
        parameters; fewer use the exact quadrature).

    Returns
    -------
    dict
        ``history`` (:func:`history_document`), ``description`` (sentences),
        ``equilibrium`` and ``with_history`` (per compared parameter: median and
        interval), ``changes`` (largest relative change per compared parameter),
        ``left_out`` (parameters only the history has), ``frequency_today`` (median and
        interval of the mean frequency today under the history, :func:`frequency_today`),
        ``history_matters`` (bool) and ``statement``.
    """
    twin = equilibrium_twin(study)
    with_history = _posterior_quantiles(posterior, study.free, study.interval)
    compared = [n for n in study.free if n in twin.free]
    try:
        equilibrium = (_deterministic_quantiles(twin, rng, settings, near=posterior)
                       if compared else {})
    except RuntimeError:  # no starting point: the data are impossible at equilibrium
        equilibrium = {}
    compared = [n for n in compared if n in equilibrium]
    changes = {n: max(_relative_change(with_history[n][k], equilibrium[n][k])
                      for k in ("median", "lower", "upper")) for n in compared}
    differ = [n for n, c in changes.items() if c > CHANGE]
    left = [n for n in study.free if n in HISTORY_ONLY]
    parts = []
    if left:
        parts.append(f"At equilibrium there is no {_and(left)}; it is left out of the "
                     "comparison.")
    if not compared:
        parts.append("No parameter is free both with and without the history"
                     + ("" if equilibrium or not study.free else
                        ", or the data are impossible at equilibrium") + ".")
    elif differ:
        parts.append("The history changes the answer: the posterior of " + _and(differ)
                     + " moves by more than 20 % (median or interval end) when the "
                     "population is assumed to be at equilibrium, so an equilibrium "
                     "analysis would give wrong bounds.")
    else:
        parts.append("The history barely moves the posterior (every median and interval end "
                     "within 20 %): the equilibrium answer is close here.")
    today = frequency_today(study, posterior, rng)
    parts.append(f"Under the history the allele's mean frequency today is {fmt(today['median'])} "
                 f"({fmt(today['lower'])} – {fmt(today['upper'])}).")
    return {"history": history_document(study.history, study.sampled),
            "frequency_today": today,
            "description": describe_history(study.history, study.sampled),
            "equilibrium": equilibrium, "with_history": {n: with_history[n] for n in compared},
            "changes": changes, "left_out": left, "history_matters": bool(differ) or not
            compared, "statement": " ".join(parts)}
