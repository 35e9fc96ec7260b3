"""A disk-backed store of per-chunk arrays for ``qhat batch`` (memory flat in the loci)."""

from __future__ import annotations

import pickle
import tempfile
from pathlib import Path

import numpy as np

__all__ = ["ChunkStore"]


class ChunkStore:
    """Disk-backed ``index -> array`` mapping in a private temporary folder.

    Keeps the drift model's per-chunk log-likelihoods between the two empirical-Bayes
    passes of :func:`infer.jobs.batch.run.analyse` without holding them in memory. Use as a
    context manager. Without ``folder`` it makes a private temporary folder that goes
    away on exit; a given ``folder`` is used as it is and left to its maker. ``prefix``
    starts the file names, so that two stores can share a folder. Arrays are kept as
    ``.npy`` files, anything else (the blocks of a loci file read) pickled.
    """

    def __init__(self, folder: str | Path | None = None, prefix: str = ""):
        #: a caller's folder is the caller's to remove; our own goes away on exit
        self._own = None if folder is not None else tempfile.TemporaryDirectory(
            prefix="qhat-batch-")
        self._path = Path(folder) if folder is not None else Path(self._own.name)
        self._prefix = prefix

    def __setitem__(self, index, value):
        if isinstance(value, np.ndarray):
            np.save(self._path / f"{self._prefix}{int(index)}.npy", np.asarray(value))
        else:   # any other object (a block of loci read) is pickled: our own private file
            with open(self._path / f"{self._prefix}{int(index)}.pickle", "wb") as handle:
                pickle.dump(value, handle, protocol=pickle.HIGHEST_PROTOCOL)

    def __getitem__(self, index):
        stem = self._path / f"{self._prefix}{int(index)}"
        if stem.with_name(stem.name + ".pickle").exists():
            with open(stem.with_name(stem.name + ".pickle"), "rb") as handle:
                return pickle.load(handle)
        return np.load(stem.with_name(stem.name + ".npy"))

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        if self._own is not None:
            self._own.cleanup()
