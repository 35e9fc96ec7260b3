"""Write the report folder of an estimate (docs/reports.md, 'The estimate report folder')."""

from __future__ import annotations

import time
from pathlib import Path

from infer.reporting.folder import atomic_folder
from infer.reporting.html import report_html
from infer.reporting.jsonout import dumps, versioned
from infer.reporting.markdown import report_markdown

__all__ = ["estimate_document", "write_report"]


def estimate_document(result) -> dict:
    """The object of summary.json and of ``qhat estimate --json``.

    ``result.summary`` with ``schema_version`` and ``qhat_version`` first (schema
    ``estimate-summary`` of :mod:`infer.reporting.schemas`).
    """
    return versioned(result.summary)


def write_report(result, out: Path, force: bool = False, timing: dict | None = None,
                 plotter=None) -> Path:
    """Write summary.json, report.md, report.html, posterior.nc and the plots into ``out``.

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult
    out : pathlib.Path
        The report folder; refused if it exists, unless ``force``.
    timing : dict, optional
        Wall times, written to ``timing.json`` and the report (not to summary.json, which
        depends on the seed alone).
    plotter : infer.reporting.plot_process.PlotProcess, optional
        A child process, started earlier, that draws the plots while this process writes
        the rest; without one (or if it fails) the plots are drawn here.
    """
    out = Path(out)
    with atomic_folder(out, force=force) as folder:
        try:
            _write_into(result, folder, timing, plotter)
        except BaseException:
            if plotter is not None:  # no child may write into a folder being removed
                plotter.close()
            raise
    return out


def _write_into(result, folder: Path, timing: dict | None, plotter) -> None:
    """Every file of the report folder, the plots drawn by ``plotter`` when it can."""
    from infer.reporting.netcdf import write_netcdf

    started = time.perf_counter()
    if plotter is not None:  # the child draws while this process writes the rest
        plotter.start(result, folder)
    (folder / "summary.json").write_text(dumps(estimate_document(result)), encoding="utf-8")
    write_netcdf(result, folder / "posterior.nc", getattr(result, "log_prob", None))
    plots = plotter.write(result, folder) if plotter is not None else None
    drawn_by = "plot process"
    if plots is None:
        from infer.reporting.plots.figures import write_plots

        if plotter is not None:  # a child that failed must not draw beside this process
            plotter.close()
        plots = write_plots(result, folder)
        drawn_by = "this process" if plotter is None else f"this process ({plotter.failure})"
    if timing is not None:
        timing = dict(timing, plot_seconds=time.perf_counter() - started,
                      plots_drawn_by=drawn_by)
        (folder / "timing.json").write_text(dumps(versioned(timing)), encoding="utf-8")
    text = report_markdown(result, plots, timing)
    (folder / "report.md").write_text(text, encoding="utf-8")
    images = {name: (folder / name).read_bytes() for name in plots.values()}
    (folder / "report.html").write_text(report_html(text, images), encoding="utf-8")
