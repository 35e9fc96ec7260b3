"""The competing explanations as studies: each is the study with some priors replaced.

Used by ``qhat compare`` (every model weighed by its evidence) and ``qhat check`` (each
alternative to a claimed balance that the data allow, fitted and weighed).

* ``balance``: the study as written (mutation-selection balance, its own priors).
* ``heterozygote-advantage``: the same data and priors, except h, which takes the
  model's prior on h < 0 (default uniform(-5, 0), infer/files/compare_table.py): the
  heterozygote fitter than both homozygotes, a balanced polymorphism (Fisher 1922) with
  mutation. Built for the autosomal deterministic model with one s (the general-fitness
  balance of infer/core/balance.py); elsewhere the model does not apply.

* ``founder``: the same data under a history (infer/core/history) in which a founder
  event ``generations_ago`` generations ago set the allele at ``q_founder`` (the model's
  prior, default uniform(0, 0.5)), carried to today by the deterministic life cycle with
  the study's mu, s and h: a founder effect, no equilibrium assumed. Built for autosomal
  studies under the deterministic model that state no history of their own.
"""

from __future__ import annotations

from dataclasses import replace

from infer.core.supports import EXTENDED_SUPPORT
from infer.model.priors.parsing import Uniform

__all__ = ["model_study", "scaled_prior"]


def model_study(study, name: str, extra_priors: dict, founder_generations: int | None = None):
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
    if name == "founder":
        return _founder_study(study, extra_priors, founder_generations)
    raise ValueError(f"unknown model {name!r}")


def _founder_study(study, extra_priors: dict, generations: int | None):
    """The study with a founder event (q_founder free) ``generations`` ago, or a reason."""
    if generations is None:
        return ("give the founding's age: founder = { generations_ago = N } (generations) "
                "in [compare] of a study or [alternatives] of a claim")
    if study.inheritance != "autosomal" or study.model != "deterministic":
        return ("built for autosomal loci under the deterministic model only "
                f"(this study: {study.inheritance}, {study.model})")
    if getattr(study, "history", None) is not None:
        return "the study states a [history] of its own"
    if getattr(study, "sex_specific", False):
        return "not built for selection that differs between the sexes"
    from infer.files.study import parse_study, study_document

    document = study_document(study)
    document["parameters"]["q_founder"] = extra_priors["q_founder"].as_dict()
    # with the founders' frequency given, their number does not enter the deterministic
    # recursion (infer/core/history/deterministic.py); one founder passes every check
    document["history"] = {"founder": {"founders": 1, "generations_ago": int(generations),
                                       "frequency": "q_founder"}}
    return parse_study(document, source=study.path)


def scaled_prior(prior, factor: float):
    """A uniform prior with its width times ``factor``, anchored at the end nearer 0.

    The heterozygote-advantage prior uniform(low, high <= 0) keeps ``high`` (the
    boundary with ordinary balance) and moves ``low``, clipped to the range h may take
    (:data:`infer.core.supports.EXTENDED_SUPPORT`). The founder model's q_founder keeps
    its lower end and moves the upper one, clipped at 1.
    """
    if prior.parameter == "q_founder":
        width = prior.high - prior.low
        return Uniform(prior.parameter, prior.low, min(prior.low + factor * width, 1.0))
    lowest = EXTENDED_SUPPORT.get(prior.parameter, (-float("inf"), 0.0))[0]
    width = prior.high - prior.low
    return Uniform(prior.parameter, max(prior.high - factor * width, lowest), prior.high)
