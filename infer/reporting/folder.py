"""Write a report folder atomically: into a hidden temporary sibling, then rename.

An interrupted run (an exception, SIGINT, or SIGTERM turned into an exception by
:func:`terminate_as_interrupt`) removes the temporary folder, so no half-written report
and no debris is left. An existing folder is replaced only with ``force=True``.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import signal
import tempfile
from collections.abc import Iterator
from pathlib import Path

from infer.errors import InputError

__all__ = ["atomic_folder", "check_destination", "terminate_as_interrupt", "safe_name"]


def safe_name(text: str, fallback: str = "report") -> str:
    """A file-name-safe slug of ``text`` (letters, digits, ``-``, ``_``); never a path."""
    slug = "".join(c if c.isalnum() or c in "-_" else "-" for c in str(text)).strip("-._")
    while "--" in slug:
        slug = slug.replace("--", "-")
    return slug[:80] or fallback


#: files that mark a folder as one qhat wrote (only such folders are replaced by --force)
REPORT_MARKERS = ("summary.json", "check.json", "report.md", "loci.csv")


def check_destination(out: Path, force: bool, option: str = "--out") -> None:
    """Refuse a destination that cannot safely become a report folder.

    Refused: a file; an existing folder without ``force``; with ``force``, a folder that
    is neither empty nor a qhat report; the current folder or one above it; a folder
    whose parent does not exist.
    """
    out = Path(out)
    resolved = out.resolve()
    here = Path.cwd().resolve()
    if resolved == here or resolved in here.parents or out.name in ("", ".", ".."):
        raise InputError(f"{out} is the current folder or above it; name a new folder",
                         source=option)
    if out.exists() and not out.is_dir():
        raise InputError(f"{out} exists and is not a folder", source=option)
    if out.exists() and not force:
        raise InputError(f"{out} already exists; use --force to replace it", source=option)
    if out.exists() and any(out.iterdir()) and not any(
            (out / marker).exists() for marker in REPORT_MARKERS):
        raise InputError(f"{out} is not a qhat report folder; refusing to replace it",
                         source=option)
    if not resolved.parent.is_dir():
        raise InputError(f"the folder {resolved.parent} does not exist", source=option)


@contextlib.contextmanager
def atomic_folder(out: Path, force: bool = False) -> Iterator[Path]:
    """Yield a temporary folder that becomes ``out`` when the block completes.

    Parameters
    ----------
    out : pathlib.Path
        The final folder.
    force : bool
        Replace an existing ``out``.
    """
    out = Path(out)
    check_destination(out, force)
    parent = out.resolve().parent
    temporary = Path(tempfile.mkdtemp(prefix=f".{out.name}.", suffix=".partial", dir=parent))
    try:
        yield temporary
        os.chmod(temporary, 0o755)
        if out.exists():
            retired = Path(tempfile.mkdtemp(prefix=f".{out.name}.", suffix=".old", dir=parent))
            os.rename(out, retired / "old")
            try:
                os.rename(temporary, out)
            except BaseException:
                os.rename(retired / "old", out)  # put the old report back
                shutil.rmtree(retired, ignore_errors=True)
                raise
            shutil.rmtree(retired, ignore_errors=True)
        else:
            os.rename(temporary, out)
    except BaseException:
        shutil.rmtree(temporary, ignore_errors=True)
        raise


@contextlib.contextmanager
def terminate_as_interrupt() -> Iterator[None]:
    """Within the block, SIGTERM raises KeyboardInterrupt so clean-up code runs."""

    def handler(signum, frame):
        raise KeyboardInterrupt

    try:
        previous = signal.signal(signal.SIGTERM, handler)
    except ValueError:  # not the main thread
        yield
        return
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)
