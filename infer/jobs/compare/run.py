"""Weigh a study's data under competing models: evidences, Bayes factors, model probabilities.

Each model (:mod:`infer.files.alternative_studies`) is the study with some priors replaced. Its
evidence p(data | model) comes from nested quadrature up to three free parameters and
from bridge sampling (Meng & Wong 1996) on the sampler's draws above
(:mod:`infer.inference.evidence`). Posterior model probabilities follow from the
evidences and the prior odds (default equal); the sensitivity rows repeat each model
with an extra parameter under that parameter's prior widened and narrowed by a factor
(default 2). Pure: returns a :class:`CompareResult`, writes nothing.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from infer.core.stats import central_quantiles
from infer.errors import InputError
from infer.files.compare_table import MODELS, CompareSettings
from infer.inference.evidence import (
    EvidenceEstimate,
    bridge_log_evidence,
    model_probabilities,
    quadrature_fit,
    quadrature_log_evidence,
)
from infer.inference.exact import MAX_DIMENSIONS
from infer.files.alternative_studies import model_study, scaled_prior
from infer.model.posterior import Model

__all__ = ["ModelEvidence", "SensitivityRow", "CompareResult", "compare_models",
           "DEFAULT_SEED", "FITTED_DRAWS"]

DEFAULT_SEED = 1
#: prior-weighted draws behind each model's fitted medians under quadrature
FITTED_DRAWS = 4000


@dataclass(frozen=True)
class ModelEvidence:
    """One model's evidence and fit.

    Attributes
    ----------
    name, description : str
    free : tuple of str
        Its free parameters.
    priors : dict
        Parameter -> the prior in words.
    estimate : EvidenceEstimate or None
        None where no value of the parameters makes the data possible (evidence 0).
    fitted : dict
        Parameter (and ``q_hat``) -> {"median", "lower", "upper"} of its posterior.
    """

    name: str
    description: str
    free: tuple[str, ...]
    priors: dict[str, str]
    estimate: EvidenceEstimate | None
    fitted: dict[str, dict[str, float]] = field(default_factory=dict)

    @property
    def log_evidence(self) -> float:
        """Natural log of p(data | model); -inf when the data are impossible under it."""
        return -math.inf if self.estimate is None else self.estimate.log_evidence


@dataclass(frozen=True)
class SensitivityRow:
    """One model re-weighed with one extra parameter's prior scaled.

    Attributes
    ----------
    model, parameter : str
    factor : float
        Width multiplied by this (> 1 widened, < 1 narrowed).
    prior : str
    log_evidence, error : float
    posterior_probability : float
        The model's posterior probability with this prior, the other models as weighed.
    """

    model: str
    parameter: str
    factor: float
    prior: str
    log_evidence: float
    error: float
    posterior_probability: float


@dataclass
class CompareResult:
    """What ``qhat compare`` found (rendered by :mod:`infer.reporting.compare_report`).

    Attributes
    ----------
    title, source : str
    interval : float
    models : list of ModelEvidence
        In the order asked for.
    skipped : dict
        Model -> why it does not apply to this study.
    prior_odds : dict
        Model -> prior probability.
    probabilities : dict
        Model -> {"log10_bayes_factor", "prior_probability", "posterior_probability"}.
    ranking : list of str
        Models by posterior probability, most probable first.
    sensitivity : list of SensitivityRow
    seed : int
    """

    title: str
    source: str
    interval: float
    models: list[ModelEvidence]
    skipped: dict[str, str]
    prior_odds: dict[str, float]
    probabilities: dict[str, dict[str, float]]
    ranking: list[str]
    sensitivity: list[SensitivityRow]
    seed: int
    settings: CompareSettings = field(default_factory=CompareSettings)


def _fitted_from(model: Model, z: np.ndarray, interval: float) -> dict:
    params, _ = model.to_parameters(z)
    fitted = {}
    for name in model.free:
        median, lower, upper = central_quantiles(params[name], interval)
        fitted[name] = {"median": median, "lower": lower, "upper": upper}
    from infer.model.balance_state import BalanceState

    with np.errstate(all="ignore"):
        state = BalanceState.deterministic(params, model.inheritance) if not model.drift else None
    if state is not None:
        median, lower, upper = central_quantiles(state.q, interval)
        fitted["q_hat"] = {"median": median, "lower": lower, "upper": upper}
    return fitted


def _sample(model: Model, rng: np.random.Generator, sampler: dict):
    from infer.inference.sampling import SamplerSettings, run_to_convergence

    keys = ("walkers", "ensembles", "max_steps")
    settings = SamplerSettings(**{k: sampler[k] for k in keys if k in (sampler or {})})
    return run_to_convergence(model, model.initial_points, model.ndim, rng, settings)


def _evidence(model: Model, method: str, rng, sampler: dict, interval: float,
              fit: bool = True):
    """(EvidenceEstimate or None, fitted) of one model."""
    if model.ndim == 0:
        # nothing to integrate: the evidence is the likelihood at the fixed values
        value = float(model.log_posterior(np.zeros((1, 0)))[0])
        return (EvidenceEstimate(value, 0.0, "fixed", 1, True) if math.isfinite(value)
                else None), {}
    use = method if method != "auto" else (
        "quadrature" if model.ndim <= MAX_DIMENSIONS else "bridge")
    if use == "quadrature" and model.ndim > MAX_DIMENSIONS:
        raise InputError(f'"quadrature" needs at most {MAX_DIMENSIONS} free parameters; this '
                         f"model has {model.ndim}", field="compare.method")
    if use == "quadrature":
        try:
            if not fit:
                return quadrature_log_evidence(model), {}
            weighed = quadrature_fit(model, interval)
        except ValueError:
            return None, {}
        return weighed.evidence, weighed.quantiles
    run = _sample(model, rng, sampler)
    z = run.z.reshape(-1, model.ndim)
    estimate = bridge_log_evidence(model.log_posterior, z, rng,
                                   log_density_at_draws=run.log_prob.ravel(),
                                   effective_size=float(np.min(run.ess_bulk)))
    return estimate, (_fitted_from(model, z, interval) if fit else {})


def compare_models(study, settings: CompareSettings | None = None,
                   seed: int | None = None) -> CompareResult:
    """Weigh the study's data under each model of ``settings``.

    Parameters
    ----------
    study : infer.files.study.Study
    settings : CompareSettings, optional
        Models, prior odds, extra priors, sensitivity factor, method (default: the
        defaults of :mod:`infer.files.compare_table`).
    seed : int, optional
        Seeds bridge sampling (default: the study's, else :data:`DEFAULT_SEED`).

    Returns
    -------
    CompareResult
    """
    settings = settings or CompareSettings()
    if seed is None:
        seed = study.seed if study.seed is not None else DEFAULT_SEED
    rng = np.random.default_rng(seed)
    found, skipped = [], {}
    for name in settings.models:
        extra = settings.extra_priors.get(name, {})
        variant = model_study(study, name, extra, settings.founder_generations)
        if isinstance(variant, str):
            skipped[name] = variant
            continue
        model = Model(variant)
        estimate, fitted = _evidence(model, settings.method, rng, study.sampler,
                                     study.interval)
        found.append(ModelEvidence(
            name=name, description=MODELS[name], free=tuple(model.free),
            priors={p: variant.parameters[p].describe() for p in model.free},
            estimate=estimate, fitted=fitted))
    if not found:
        raise InputError("none of the models asked for applies to this study: "
                         + "; ".join(f"{k}: {v}" for k, v in skipped.items()),
                         field="compare.models")
    log_z = {m.name: m.log_evidence for m in found}
    if not any(math.isfinite(v) for v in log_z.values()):
        raise InputError("the data are impossible under every model weighed",
                         field="observations")
    odds = {m.name: settings.prior_odds.get(m.name, 1.0) for m in found}
    probabilities = model_probabilities(log_z, odds)
    ranking = sorted(probabilities, key=lambda n: -probabilities[n]["posterior_probability"])
    rows = []
    for m in found:
        extra = settings.extra_priors.get(m.name, {})
        for parameter, prior in extra.items():
            for factor in (settings.sensitivity, 1.0 / settings.sensitivity):
                scaled = scaled_prior(prior, factor)
                variant = model_study(study, m.name, {**extra, parameter: scaled},
                                      settings.founder_generations)
                estimate, _ = _evidence(Model(variant), settings.method, rng, study.sampler,
                                        study.interval, fit=False)
                value = -math.inf if estimate is None else estimate.log_evidence
                shifted = model_probabilities({**log_z, m.name: value}, odds)
                rows.append(SensitivityRow(
                    model=m.name, parameter=parameter, factor=factor,
                    prior=scaled.describe(), log_evidence=value,
                    error=math.nan if estimate is None else estimate.error,
                    posterior_probability=shifted[m.name]["posterior_probability"]))
    total = sum(odds.values())
    return CompareResult(
        title=study.title, source=study.path, interval=study.interval, models=found,
        skipped=skipped, prior_odds={k: v / total for k, v in odds.items()},
        probabilities=probabilities, ranking=ranking, sensitivity=rows, seed=seed,
        settings=settings)
