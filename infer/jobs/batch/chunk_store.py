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
    context manager. Without ``folder`` it makes a private temporary folder that goes
    away on exit; a given ``folder`` is used as it is and left to its maker.
    """

    def __init__(self, folder: str | Path | None = None):
        #: a caller's folder is the caller's to remove; our own goes away on exit
        self._own = None if folder is not None else tempfile.TemporaryDirectory(
            prefix="qhat-batch-")
        self._path = Path(folder) if folder is not None else Path(self._own.name)

    def __setitem__(self, index, array):
        np.save(self._path / f"{int(index)}.npy", np.asarray(array))

    def __getitem__(self, index):
        return np.load(self._path / f"{int(index)}.npy")

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        if self._own is not None:
            self._own.cleanup()
