"""The forecast job: allele frequency and incidence over the coming generations.

:func:`~infer.jobs.forecast.run.forecast` reads an estimate report folder
(:mod:`~infer.jobs.forecast.source`), checks the changed values
(:mod:`~infer.jobs.forecast.changes`), projects every posterior draw forward with the
deterministic life cycle (:mod:`~infer.jobs.forecast.project`) and returns a
:class:`~infer.jobs.forecast.run.ForecastResult`; :mod:`infer.reporting.forecast_report`
renders it.
"""
