"""The plot process (infer/reporting/plot_process.py) draws what this process would draw.

The reference is the in-process writer, ``infer.reporting.plots.figures.write_plots``, on the same
result: the child must write the same files, byte for byte (Agg rendering is
deterministic), and must leave nothing running or printed when it is not used.
"""

from __future__ import annotations

import subprocess
import sys
import tomllib

import pytest

from infer.jobs.estimate.pipeline import estimate
from infer.files.study import parse_study
from infer.inference.sampling import SamplerSettings
from infer.reporting.plot_process import PlotProcess
from infer.reporting.plots.figures import PLOT_FILES, write_plots

STUDY = """
title = "Test: a recessive disorder in an invented valley"
inheritance = "autosomal"
[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s = { prior = "uniform", low = 0.0, high = 1.0 }
h = 0.0
[[observations]]
label = "newborn screening"
kind = "affected"
affected = 30
total = 250_000
mode = "recessive"
"""


@pytest.fixture(scope="module")
def result():
    study = parse_study(tomllib.loads(STUDY), source="test.toml")
    fitted, _ = estimate(study, seed=3, settings=SamplerSettings(target_ess=200), grid=False)
    return fitted


def test_child_writes_the_same_files_as_this_process(result, tmp_path):
    (tmp_path / "child").mkdir()
    (tmp_path / "here").mkdir()
    with PlotProcess() as plotter:
        written = plotter.write(result, tmp_path / "child")
    assert written == PLOT_FILES, (
        f"the plot process wrote {written}, expected {PLOT_FILES}; failure: {plotter.failure}")
    here = write_plots(result, tmp_path / "here")
    assert here == PLOT_FILES, f"write_plots wrote {here}, expected {PLOT_FILES}"
    for name in PLOT_FILES.values():
        child = (tmp_path / "child" / name).read_bytes()
        # PNG signature (W3C PNG specification 2003, 5.2)
        assert child.startswith(b"\x89PNG\r\n\x1a\n"), f"{name} from the child is not a PNG"
        assert child == (tmp_path / "here" / name).read_bytes(), (
            f"{name}: the child's PNG differs from this process's (Agg output is deterministic)")


def test_unused_plot_process_exits_quietly():
    # not the qhat command line (conftest.run_qhat) but the plot child's own entry point
    done = subprocess.run([sys.executable, "-m", "infer.reporting.plot_process"],
                          input=b"", capture_output=True, timeout=120)
    got = (done.returncode, done.stdout, done.stderr)
    assert got == (0, b"", b""), (
        f"a plot process given no work must exit 0 silently; got (status, stdout, stderr) {got}")


def test_close_stops_the_child_and_write_then_reports_failure(result, tmp_path):
    plotter = PlotProcess()
    plotter.close()
    assert plotter._process.poll() is not None, "close() must end the child process"
    written = plotter.write(result, tmp_path)
    assert written is None, (
        f"write after close must report failure (None) so the caller draws the plots itself; "
        f"got {written}")
    left = list(tmp_path.iterdir())
    assert left == [], f"a closed plot process wrote {left}"


def test_a_failing_child_reports_one_line_and_none(result, tmp_path):
    missing = tmp_path / "no such folder"
    with PlotProcess() as plotter:
        written = plotter.write(result, missing)
        assert written is None, f"writing into a missing folder must fail (None); got {written}"
    assert plotter._process.returncode == 1, (
        f"a failing child must exit 1; exited {plotter._process.returncode}")
    assert plotter.failure.startswith("plot process: FileNotFoundError"), (
        f"the failure must name the exception; got {plotter.failure!r}")
    assert "\n" not in plotter.failure, f"the failure must be one line: {plotter.failure!r}"


def test_a_result_that_cannot_be_pickled_is_drawn_here(result, tmp_path):
    import dataclasses

    unpicklable = dataclasses.replace(result)
    unpicklable.extra = lambda: None  # local lambdas do not pickle
    with PlotProcess() as plotter:
        written = plotter.write(unpicklable, tmp_path)
        assert written is None, f"an unpicklable result must fail (None); got {written}"
    assert plotter.failure.startswith("the result cannot be sent to the plot process"), (
        f"the failure must say the result cannot be sent; got {plotter.failure!r}")
    left = list(tmp_path.iterdir())
    assert left == [], f"nothing may be written for an unpicklable result; found {left}"
