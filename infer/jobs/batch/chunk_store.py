"""A disk-backed store of per-chunk arrays for ``qhat batch`` (memory flat in the loci)."""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np

__all__ = ["ChunkStore"]


class ChunkStore:
    """Disk-backed ``index -> array`` mapping in a private temporary folder.

    Keeps the drift model's per-chunk log-likelihoods between the two empirical-Bayes
    passes of :func:`infer.jobs.batch.run.analyse` without holding them in memory. Use as a
    context manager; the folder goes away on exit.
    """

    def __init__(self):
        self._folder = tempfile.TemporaryDirectory(prefix="qhat-batch-")

    def __setitem__(self, index, array):
        np.save(Path(self._folder.name) / f"{int(index)}.npy", np.asarray(array))

    def __getitem__(self, index):
        return np.load(Path(self._folder.name) / f"{int(index)}.npy")

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self._folder.cleanup()
