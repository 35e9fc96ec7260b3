"""The estimate pipeline as one library call: study -> model -> sampler -> results.

``qhat estimate`` is a thin wrapper around :func:`estimate` and
:func:`infer.reporting.report.write_report`; a Python user gets the same results.
"""

from __future__ import annotations

import time
from collections.abc import Callable

import numpy as np

from infer.jobs.estimate.results import EstimateResult, summarise
from infer.inference.sampling import SamplerSettings, run_to_convergence
from infer.model.posterior import Model

__all__ = ["DEFAULT_SEED", "MAX_EXACT_DIMENSIONS", "estimate", "sampler_settings"]

#: free parameters up to which the exact posterior (nested quadrature) checks the sampler
MAX_EXACT_DIMENSIONS = 3
#: seed used when neither the command line nor the study gives one (same study, same report)
DEFAULT_SEED = 20261202


def sampler_settings(study) -> SamplerSettings:
    """Sampler settings from the study's optional ``[sampler]`` table."""
    keys = ("walkers", "ensembles", "max_steps", "target_ess")
    given = {k: study.sampler[k] for k in keys if k in (study.sampler or {})}
    return SamplerSettings(**given)


def _free_values(model, z: np.ndarray) -> np.ndarray:
    """The free parameters on their own scale, (n, ndim), of unconstrained rows ``z``."""
    params, _ = model.to_parameters(z)
    return np.column_stack([params[name] for name in model.free])


def estimate(study, seed: int | None = None, settings: SamplerSettings | None = None,
             progress: Callable[[int, int], None] | None = None,
             grid: bool = True) -> tuple[EstimateResult, dict]:
    """Sample the posterior of a study to convergence and summarise it.

    Parameters
    ----------
    study : infer.files.study.Study
    seed : int, optional
        Overrides the study's ``[sampler] seed``; default :data:`DEFAULT_SEED`.
    settings : SamplerSettings, optional
        Overrides the study's ``[sampler]`` table.
    progress : callable, optional
        ``progress(steps, max_steps)`` after each block of steps.
    grid : bool
        Compute the exact quadrature cross-check when there are at most
        :data:`MAX_EXACT_DIMENSIONS` free parameters; ``summary["diagnostics"]["verified"]``
        is then True or False (None without it), and a disagreement makes the run not
        converged.

    Returns
    -------
    (EstimateResult, dict)
        The results, and timings ``{"seconds", "sampling_seconds", "grid_seconds"}``
        (kept out of the summary so that the same seed gives the same summary).
    """
    started = time.perf_counter()
    if seed is None:
        seed = study.seed if study.seed is not None else DEFAULT_SEED
    rng = np.random.default_rng(seed)
    model = Model(study)
    settings = settings or sampler_settings(study)
    run = run_to_convergence(model, model.initial_points, model.ndim, rng, settings, progress,
                             constrain=lambda z: _free_values(model, z))
    grid_result, grid_seconds = None, 0.0
    if grid and model.ndim <= MAX_EXACT_DIMENSIONS:
        from infer.inference.exact import exact_posterior

        t0 = time.perf_counter()
        grid_result = exact_posterior(model, study.interval, hint=run.z.reshape(-1, model.ndim))
        grid_seconds = time.perf_counter() - t0
    result = summarise(model, run, rng, grid=grid_result, seed=seed)
    if study.model == "drift":
        from infer.jobs.estimate.drift_comparison import compare_drift_with_deterministic

        result.summary["drift_comparison"] = compare_drift_with_deterministic(
            study, result.posterior, rng, settings=settings)
    if getattr(study, "history", None) is not None:
        from infer.jobs.estimate.history_comparison import compare_history_with_equilibrium

        result.summary["history_comparison"] = compare_history_with_equilibrium(
            study, result.posterior, rng, settings=settings)
    result.log_prob = run.log_prob
    timing = {"seconds": time.perf_counter() - started, "sampling_seconds": run.seconds,
              "grid_seconds": grid_seconds}
    return result, timing
