"""Tests of how many local processes ``qhat batch --jobs N`` runs in
(infer/commands/batch.py ``local_processes``): the choice rule, not its timing (the
crossover it encodes is measured by benchmarks/batch.py --crossover-only)."""

from __future__ import annotations

import numpy as np
import pytest

from infer.commands import batch as command
from infer.jobs.batch import run as batch


def _settings(model="deterministic", sigma=0.3, grid_points=400):
    base = batch.BatchSettings(model=model, Ne=1e4 if model == "drift" else None,
                               grid_points=grid_points)
    return batch.with_half_width(base, np.array([sigma]), np.array([10.0]))


def _work(loci, settings):
    return loci * settings.grid_points * (2 * settings.half_width + 1)


def test_small_deterministic_batch_runs_in_one_process():
    settings = _settings()
    small = int(command.SERIAL_WORK // _work(1, settings)) - 1
    assert command.local_processes(2, small, settings, 512) == 1, (
        f"{small} loci are below SERIAL_WORK: one process expected")


def test_large_deterministic_batch_uses_what_was_asked():
    settings = _settings()
    large = int(command.SERIAL_WORK // _work(1, settings)) + 1
    assert command.local_processes(2, large, settings, 512) == 2, (
        f"{large} loci reach SERIAL_WORK: --jobs 2 expected to run 2 processes")


def test_the_threshold_counts_work_not_loci():
    """A finer grid and wider mu kernels make each locus dearer: fewer loci then reach the
    threshold (work = loci x S x (2J + 1), as infer.jobs.batch.run.WORK_PER_CALL counts)."""
    coarse, fine = _settings(), _settings(sigma=1.0, grid_points=2000)
    loci = int(command.SERIAL_WORK // _work(1, coarse)) // 4
    assert command.local_processes(2, loci, coarse, 512) == 1, "default grid: one process"
    assert command.local_processes(2, loci, fine, 512) == 2, (
        "the same loci on a grid of 2,000 with sigma 1 exceed SERIAL_WORK: 2 processes")


@pytest.mark.parametrize("model", ["deterministic", "drift"])
def test_never_more_processes_than_chunks(model, monkeypatch):
    monkeypatch.setattr(command, "SERIAL_WORK", 0.0)
    settings = _settings(model)
    assert command.local_processes(4, 1500, settings, 512) == 3, "3 chunks of 512: 3 processes"
    assert command.local_processes(4, 100, settings, 512) == 1, "one chunk: one process"
    assert command.local_processes(1, 10**6, settings, 512) == 1, "--jobs 1 stays one process"


def test_drift_batch_is_not_held_to_the_deterministic_threshold():
    settings = _settings("drift")
    assert command.local_processes(2, 1024, settings, 512) == 2, (
        "a drift batch of 2 chunks: 2 processes (its chunks are seconds of work each)")


def test_help_says_so(capsys):
    from infer.cli import main

    with pytest.raises(SystemExit):
        main(["batch", "--help"])
    text = " ".join(capsys.readouterr().out.split())
    assert "runs in one process" in text and "--jobs" in text, (
        "qhat batch --help must say when --jobs N runs in one process")
