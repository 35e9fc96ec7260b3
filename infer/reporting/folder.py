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


def check_destination(out: Path, force: bool, option: str = "--out") -> None:
    """Refuse an existing destination unless forced, and a destination that is a file."""
    if out.exists() and not out.is_dir():
        raise InputError(f"{out} exists and is not a folder", source=option)
    if out.exists() and not force:
        raise InputError(f"{out} already exists; use --force to replace it", source=option)
    parent = out.resolve().parent
    if not parent.is_dir():
        raise InputError(f"the folder {parent} does not exist", source=option)


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
            os.rename(temporary, out)
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
