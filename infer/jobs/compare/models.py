"""The competing models of ``qhat compare``: each is the study with some priors replaced.

* ``balance``: the study as written (mutation-selection balance, its own priors).
* ``heterozygote-advantage``: the same data and priors, except h, which takes the
  model's prior on h < 0 (default uniform(-5, 0), infer/files/compare_table.py): the
  heterozygote fitter than both homozygotes, a balanced polymorphism (Fisher 1922) with
  mutation. Built for the autosomal deterministic model with one s (the general-fitness
  balance of infer/core/balance.py); elsewhere the model does not apply.

A founder (population-history) model is not built yet.
"""

from __future__ import annotations

from dataclasses import replace

from infer.core.supports import EXTENDED_SUPPORT
from infer.model.priors.parsing import Uniform

__all__ = ["model_study", "scaled_prior"]


def model_study(study, name: str, extra_priors: dict):
    """The study under model ``name``, or the reason the model does not apply (a str).

    Parameters
    ----------
    study : infer.files.study.Study
    name : str
        A model of :data:`infer.files.compare_table.MODELS`.
    extra_priors : dict
        Parameter -> Prior replacing the study's under this model.
    """
    if name == "balance":
        return study
    if name == "heterozygote-advantage":
        if study.inheritance != "autosomal" or study.model != "deterministic":
            return ("built for autosomal loci under the deterministic model only "
                    f"(this study: {study.inheritance}, {study.model})")
        if getattr(study, "sex_specific", False):
            return "not built for selection that differs between the sexes"
        return replace(study, parameters={**study.parameters, **extra_priors})
    raise ValueError(f"unknown model {name!r}")


def scaled_prior(prior, factor: float):
    """A uniform prior with its width times ``factor``, anchored at the end nearer 0.

    The heterozygote-advantage prior uniform(low, high <= 0) keeps ``high`` (the
    boundary with ordinary balance) and moves ``low``, clipped to the range h may take
    (:data:`infer.core.supports.EXTENDED_SUPPORT`).
    """
    lowest = EXTENDED_SUPPORT.get(prior.parameter, (-float("inf"), 0.0))[0]
    width = prior.high - prior.low
    return Uniform(prior.parameter, max(prior.high - factor * width, lowest), prior.high)
