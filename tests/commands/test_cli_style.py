"""One command-line style (docs/command-line.md, 'Progress, -q/--quiet and --json';
docs/reports.md, 'JSON documents'): every command takes ``--json`` and ``-q/--quiet``;
progress is a tqdm bar on stderr, drawn only on a terminal, with a time estimate for
sampling too; the same inputs give a byte-identical batch summary.json (wall times live
in timing.json).

What ``--json`` prints is validated against the shipped schemas in
tests/test_json_schema.py, which also checks that ``-q`` leaves stderr empty.
"""

from __future__ import annotations

import io
import json
import re
import time

import numpy as np
import pytest
from conftest import DEMO, FakeTerminal, call_qhat_on_terminal

from infer.commands import options
from infer.commands.estimate import SamplingProgress, progress_printer


_run = call_qhat_on_terminal


def _loci(path, rows: int = 40):
    """The first ``rows`` loci of the invented demo file."""
    lines = (DEMO / "batch_loci.csv").read_text(encoding="utf-8").splitlines()[: rows + 1]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _subcommands():
    import argparse

    from infer.cli import build_parser

    for action in build_parser()._actions:
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    raise AssertionError("qhat's parser has no subcommands")


# ------------------------------------------------------------------ the options


def test_every_command_takes_json_and_q_quiet_with_one_meaning():
    commands = _subcommands()
    assert set(commands) == {"equilibrium", "estimate", "check", "batch", "simulate", "forecast",
                             "compare", "demo"}
    for name, parser in commands.items():
        found = {tuple(a.option_strings): a for a in parser._actions}
        assert ("--json",) in found, f"qhat {name} has no --json"
        assert ("-q", "--quiet") in found, f"qhat {name} has no -q/--quiet"
        assert found[("-q", "--quiet")].help == options.QUIET_HELP, (
            f"qhat {name} -q says {found[('-q', '--quiet')].help!r}; every command must say "
            f"{options.QUIET_HELP!r}")


# ------------------------------------------------------------------ progress


def test_no_progress_when_quiet_or_not_a_terminal():
    assert progress_printer(True, FakeTerminal()) is None, "-q must turn progress off"
    assert progress_printer(False, io.StringIO()) is None, "no progress into a file or pipe"
    assert isinstance(progress_printer(False, FakeTerminal()), SamplingProgress)


def test_sampling_bar_counts_ess_with_a_time_estimate_and_few_redraws():
    """The bar's total is the target ESS and it advances with the ESS reported; once the
    ESS grows, tqdm's rate gives a remaining time (``<00:01``, not ``<?``). A thousand
    step reports within a moment redraw the line at most a few times."""
    terminal = FakeTerminal()
    bar = SamplingProgress(terminal, target=1000)
    start = terminal.getvalue().count("\r")
    for steps in range(1000):
        bar(steps, 40_000)
    redraws = terminal.getvalue().count("\r") - start
    assert redraws <= 3, f"{redraws} redraws for 1000 quick step reports (at most 4 a second)"
    for ess in (200, 400):
        time.sleep(SamplingProgress.EVERY + 0.05)
        bar.ess(ess, 1000)
    bar.close()
    text = terminal.getvalue()
    last = text.replace("\n", "\r").rstrip("\r").rsplit("\r", 1)[-1]
    assert "ESS 400/1000" in last and "step 999/40000" in last, f"last line {last!r}"
    assert re.search(r"<\d\d:\d\d", last), f"no remaining time once the ESS grows: {last!r}"


def test_the_sampler_reports_its_ess_to_the_bar():
    """run_to_convergence calls ``progress.ess`` after each convergence check; the last
    value is the smallest bulk ESS the run reports (a 2-d Gaussian, which converges)."""
    from infer.inference.sampling import SamplerSettings, run_to_convergence

    def gaussian(z):
        ll = -0.5 * z ** 2
        return np.column_stack([ll.sum(axis=1), ll])

    class Recorder:
        def __init__(self):
            self.steps, self.ess_seen = [], []

        def __call__(self, steps, max_steps):
            self.steps.append((steps, max_steps))

        def ess(self, value, target):
            self.ess_seen.append((value, target))

    recorder = Recorder()
    settings = SamplerSettings(walkers=8, ensembles=2, target_ess=300)
    run = run_to_convergence(gaussian, lambda rng, n: rng.normal(size=(n, 2)), 2,
                             np.random.default_rng(3), settings, recorder)
    assert run.converged, run.messages
    assert recorder.ess_seen and all(t == 300 for _, t in recorder.ess_seen), recorder.ess_seen
    assert recorder.ess_seen[-1][0] == pytest.approx(float(np.min(run.ess_bulk))), (
        f"last ESS reported {recorder.ess_seen[-1][0]} vs the run's {np.min(run.ess_bulk)}")
    assert recorder.steps[-1] == (run.steps, settings.max_steps), recorder.steps[-1]


def test_estimate_draws_the_bar_on_a_terminal_and_erases_it_when_interrupted(monkeypatch,
                                                                           tmp_path):
    import infer.jobs.estimate.pipeline

    def estimate(study, seed=None, progress=None, **_):
        if progress is not None:
            progress(200, 40_000)
            progress.ess(500.0, 1000.0)
        raise KeyboardInterrupt

    monkeypatch.setattr(infer.jobs.estimate.pipeline, "estimate", estimate)
    study = tmp_path / "study.toml"
    study.write_text((DEMO / "island-dominant.toml").read_text(encoding="utf-8"))
    status, _, err = _run(["estimate", study, "--out", tmp_path / "report"])
    assert status == 130, f"an interrupt exits 130; got {status}: {err!r}"
    assert "qhat: sampling" in err and "step 200/40000" in err, f"no bar on the terminal: {err!r}"
    # interrupted: the bar's line is blanked, and the message takes its place
    assert err.endswith(" \rqhat: interrupted; nothing was written\n"), repr(err)
    status, _, err = _run(["estimate", study, "--out", tmp_path / "report", "-q"])
    assert status == 130 and err == "qhat: interrupted; nothing was written\n", (
        f"-q: no progress, only the message; got {err!r}")


@pytest.mark.parametrize("command", ["batch", "simulate"])
def test_batch_and_simulate_draw_a_bar_on_a_terminal(command, tmp_path):
    """Without -q a tqdm bar is drawn on a terminal (tests/test_json_schema.py: not with -q)."""
    args = {"batch": ["batch", _loci(tmp_path / "loci.csv"), "--out", tmp_path / "out"],
            "simulate": ["simulate", "--Ne", "50", "--mu", "1e-3", "--s", "0.1", "--h", "0.5",
                         "--replicates", "10", "--generations", "2000", "--seed", "1"]}
    status, _, err = _run(args[command])
    assert status == 0, err
    assert f"qhat {command}" in err and "100%" in err, f"no finished bar on stderr: {err!r}"


# ------------------------------------------------------------------ byte-identical summaries


def test_batch_twice_gives_a_byte_identical_summary(tmp_path):
    """The same loci file and options give the same summary.json, byte for byte; the wall
    times are in timing.json (docs/reports.md, 'qhat batch')."""
    loci = _loci(tmp_path / "loci.csv")
    for name in ("one", "two"):
        status, _, err = _run(["batch", loci, "--out", tmp_path / name, "-q"])
        assert status == 0, err
    first = (tmp_path / "one" / "summary.json").read_bytes()
    assert first == (tmp_path / "two" / "summary.json").read_bytes(), (
        "two runs on the same inputs wrote different summary.json files")
    assert b"seconds" not in first, "a wall time is still in summary.json"
    timing = json.loads((tmp_path / "one" / "timing.json").read_text(encoding="utf-8"))
    assert timing["compute_seconds"] >= 0 and timing["read_seconds"] >= 0, timing
    assert "timing.json" in json.loads(first)["files"], "summary.json must list timing.json"


def test_batch_json_prints_summary_json_and_nothing_else(tmp_path):
    status, out, err = _run(["batch", _loci(tmp_path / "loci.csv"), "--out",
                             tmp_path / "out", "--json", "-q"])
    assert status == 0 and err == "", err
    assert out == (tmp_path / "out" / "summary.json").read_text(encoding="utf-8"), (
        "--json must print summary.json exactly")
