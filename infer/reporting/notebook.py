"""An estimate result with its renderers attached, for Python and notebook users.

:class:`~infer.jobs.estimate.results.EstimateResult` is a data class of the estimate job,
which may not import a renderer (DEVELOPERS.md, "Layout"). :class:`EstimateReport` is
the same data with the two renderers a notebook wants as methods: the arviz DataTree
(:func:`infer.reporting.netcdf.to_datatree`) and the report figures
(:func:`infer.reporting.plots.figures.estimate_figures`). ``infer.estimate`` returns
one; :func:`infer.reporting.report.write_report` accepts it like any result.
"""

from __future__ import annotations

import dataclasses

from infer.jobs.estimate.results import EstimateResult

__all__ = ["EstimateReport"]


@dataclasses.dataclass(repr=False)
class EstimateReport(EstimateResult):
    """An :class:`~infer.jobs.estimate.results.EstimateResult` that can draw itself.

    Attributes
    ----------
    timing : dict or None
        Wall times of the run (``seconds``, ``sampling_seconds``, ``grid_seconds``); kept
        out of ``summary``, which depends on the seed alone.
    """

    timing: dict | None = None

    @classmethod
    def from_result(cls, result: EstimateResult, timing: dict | None = None) -> EstimateReport:
        """Wrap ``result`` (its arrays are shared, not copied)."""
        values = {f.name: getattr(result, f.name) for f in dataclasses.fields(EstimateResult)}
        return cls(**values, timing=timing)

    def to_datatree(self):
        """The arviz 1.x DataTree of this result: the groups ``write_report`` puts in posterior.nc.

        Returns
        -------
        xarray.DataTree
            ``posterior``, ``prior``, ``log_likelihood``, ``posterior_predictive``,
            ``observed_data`` and (when the log posterior was kept) ``sample_stats``.
            Importing arviz_base takes about half a second the first time.
        """
        from infer.reporting.netcdf import to_datatree

        return to_datatree(self, self.log_prob)

    def plot(self, which: str | None = None):
        """The report's figures (pyplot-free matplotlib Figures, nothing is saved).

        Parameters
        ----------
        which : str, optional
            One of ``"marginals"``, ``"pairs"``, ``"trace"``, ``"balance"``,
            ``"predictive"``; default all five.

        Returns
        -------
        matplotlib.figure.Figure or dict of str to Figure
            One figure, or every figure keyed as above. In Jupyter a figure shows itself
            once pyplot's inline backend is active; anywhere, ``figure.savefig(path)``.

        Raises
        ------
        ValueError
            ``which`` is not one of the names above.
        """
        import matplotlib

        from infer.reporting.plots import fit, posterior
        from infer.reporting.plots.figures import PLOT_FILES, estimate_figures

        drawers = {"marginals": posterior.marginals_figure, "pairs": posterior.pairs_figure,
                   "trace": posterior.trace_figure, "balance": fit.balance_curve_figure,
                   "predictive": fit.predictive_figure}
        if which is not None and which not in drawers:
            raise ValueError(f"which={which!r}: must be one of {', '.join(PLOT_FILES)}")
        # titles and labels carry user text: a "$" must not start matplotlib's maths parser
        with matplotlib.rc_context({"text.parse_math": False}):
            return estimate_figures(self) if which is None else drawers[which](self)
