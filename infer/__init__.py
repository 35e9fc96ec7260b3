"""qhat: mutation-selection balance inference.

The front door for Python users: everything the command line does, by name::

    import infer

    study = infer.parse_study({...})          # or infer.load_study("study.toml")
    result = infer.estimate(study)            # shows a table in Jupyter
    infer.write_report(result, "reports/my-study")
    result.to_datatree(); result.plot()
    infer.check(infer.load_claim("claim.toml")).consistent
    infer.batch("loci.csv")                   # a pandas DataFrame, one row per locus

Each name is imported from its home module the first time it is used (PEP 562), so
``import infer`` stays light and ``qhat --help`` starts fast. Results are research
estimates, not clinical or genetic-counselling results.

The jobs themselves live in ``infer.jobs`` (estimate, check, batch); the face's
``estimate``, ``check`` and ``batch`` are functions.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

#: face name -> (home module, name there)
_HOMES = {
    # files
    "load_study": ("infer.files.study", "load_study"),
    "parse_study": ("infer.files.study", "parse_study"),
    "study_document": ("infer.files.study", "study_document"),
    "load_claim": ("infer.files.claim", "load_claim"),
    "parse_claim": ("infer.files.claim", "parse_claim"),
    "read_loci": ("infer.files.loci", "read_loci"),
    # the jobs
    "write_report": ("infer.reporting.report", "write_report"),
    "check": ("infer.jobs.check.run", "check_claim"),
    "batch": ("infer.jobs.batch.frame", "batch_loci"),
    # equilibrium
    "q_hat": ("infer.core.balance", "q_hat"),
    "autosomal_balance": ("infer.core.balance", "autosomal_balance"),
    "x_linked_balance": ("infer.core.x_linked", "x_linked_balance"),
    "affected_fraction": ("infer.core.balance", "affected_fraction"),
    "autosomal_approximations": ("infer.core.approximations", "autosomal_approximations"),
    "x_linked_approximations": ("infer.core.approximations", "x_linked_approximations"),
    # drift
    "stationary_density": ("infer.core.drift.stationary", "stationary_density"),
    "stationary_summary": ("infer.core.drift.stationary", "stationary_summary"),
    "stationary_quantile": ("infer.core.drift.stationary", "stationary_quantile"),
    "log_binomial_probability": ("infer.core.drift.stationary", "log_binomial_probability"),
    "probability_absent": ("infer.core.drift.stationary", "probability_absent"),
    "simulate": ("infer.core.wright_fisher", "wright_fisher"),
    # forecasts
    "forecast": ("infer.jobs.forecast.run", "forecast"),
    # model comparison
    "compare": ("infer.jobs.compare.run", "compare_models"),
    "fitness_coefficients": ("infer.core.balance", "fitness_coefficients"),
    # errors
    "InputError": ("infer.errors", "InputError"),
}

__all__ = ["__version__", "estimate", *_HOMES]


def estimate(study, seed: int | None = None, *, settings=None, progress=None,
                   grid: bool = True):
    """Sample the posterior of a study to convergence: ``qhat estimate`` without the files.

    Parameters
    ----------
    study : infer.files.study.Study, dict, str or os.PathLike
        A study from :func:`parse_study` or :func:`load_study`; a dict is given to
        :func:`parse_study`, a path to :func:`load_study`.
    seed : int, optional
        Overrides the study's ``[sampler] seed`` (same seed, same summary as the command).
    settings : infer.inference.sampling.SamplerSettings, optional
        Overrides the study's ``[sampler]`` table.
    progress : callable, optional
        ``progress(steps, max_steps)`` after each block of steps.
    grid : bool
        Compute the exact quadrature cross-check (one or two free parameters).

    Returns
    -------
    infer.reporting.notebook.EstimateReport
        The :class:`~infer.jobs.estimate.results.EstimateResult` (``.summary`` is summary.json)
        with ``.to_datatree()``, ``.plot()`` and ``.timing``; pass it to
        :func:`write_report` for the report folder.
    """
    from infer.jobs.estimate.pipeline import estimate as run_estimate
    from infer.files.study import Study, load_study, parse_study
    from infer.reporting.notebook import EstimateReport

    if isinstance(study, dict):
        study = parse_study(study)
    elif not isinstance(study, Study):
        study = load_study(study)
    result, timing = run_estimate(study, seed=seed, settings=settings, progress=progress, grid=grid)
    return EstimateReport.from_result(result, timing)


def __getattr__(name: str):
    """Import a face name from its home module on first use (PEP 562)."""
    if name in _HOMES:
        module, attribute = _HOMES[name]
        value = getattr(importlib.import_module(module), attribute)
        globals()[name] = value   # later look-ups skip this function
        return value
    raise AttributeError(f"module 'infer' has no attribute {name!r}")


def __dir__() -> list[str]:
    """The face names (``__all__``) and whatever is already loaded."""
    return sorted(set(globals()) | set(__all__))
