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

from infer.estimate.pipeline import estimate
from infer.reporting.plot_process import PlotProcess
from infer.reporting.plots.figures import PLOT_FILES, write_plots
from infer.inference.sampling import SamplerSettings
from infer.files.study import parse_study

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
    assert written == PLOT_FILES
    assert write_plots(result, tmp_path / "here") == PLOT_FILES
    for name in PLOT_FILES.values():
        child = (tmp_path / "child" / name).read_bytes()
        assert child.startswith(b"\x89PNG\r\n\x1a\n")  # PNG specification (W3C 2003), 5.2
        assert child == (tmp_path / "here" / name).read_bytes(), name


def test_unused_plot_process_exits_quietly():
    done = subprocess.run([sys.executable, "-m", "infer.reporting.plot_process"],
                          input=b"", capture_output=True, timeout=120)
    assert (done.returncode, done.stdout, done.stderr) == (0, b"", b"")


def test_close_stops_the_child_and_write_then_reports_failure(result, tmp_path):
    plotter = PlotProcess()
    plotter.close()
    assert plotter._process.poll() is not None
    assert plotter.write(result, tmp_path) is None  # the caller then draws the plots itself
    assert list(tmp_path.iterdir()) == []


def test_a_failing_child_reports_one_line_and_none(result, tmp_path):
    missing = tmp_path / "no such folder"
    with PlotProcess() as plotter:
        assert plotter.write(result, missing) is None
    assert plotter._process.returncode == 1
    assert plotter.failure.startswith("plot process: FileNotFoundError")
    assert "\n" not in plotter.failure


def test_a_result_that_cannot_be_pickled_is_drawn_here(result, tmp_path):
    import dataclasses

    unpicklable = dataclasses.replace(result)
    unpicklable.extra = lambda: None  # local lambdas do not pickle
    with PlotProcess() as plotter:
        assert plotter.write(unpicklable, tmp_path) is None
    assert plotter.failure.startswith("the result cannot be sent to the plot process")
    assert list(tmp_path.iterdir()) == []
