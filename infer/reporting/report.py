"""Write the report folder of an estimate (DESIGN.md section 5)."""

from __future__ import annotations

from pathlib import Path

from infer.reporting.folder import atomic_folder
from infer.reporting.jsonout import dumps
from infer.reporting.markdown import report_markdown

__all__ = ["write_report"]


def write_report(result, out: Path, force: bool = False, timing: dict | None = None) -> Path:
    """Write summary.json, report.md, posterior.nc and the plots into ``out`` atomically.

    Parameters
    ----------
    result : infer.results.EstimateResult
    out : pathlib.Path
        The report folder; refused if it exists, unless ``force``.
    timing : dict, optional
        Wall times, written to ``timing.json`` and the report (not to summary.json, which
        depends on the seed alone).
    """
    from infer.reporting.netcdf import write_netcdf
    from infer.reporting.plots import write_plots

    out = Path(out)
    with atomic_folder(out, force=force) as folder:
        (folder / "summary.json").write_text(dumps(result.summary), encoding="utf-8")
        if timing is not None:
            (folder / "timing.json").write_text(dumps(timing), encoding="utf-8")
        write_netcdf(result, folder / "posterior.nc", getattr(result, "log_prob", None))
        plots = write_plots(result, folder)
        (folder / "report.md").write_text(report_markdown(result, plots, timing),
                                          encoding="utf-8")
    return out
