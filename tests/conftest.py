"""What every test folder shares: the repository paths and the one way to run ``qhat``.

Test modules import these names directly (``from conftest import DEMO, run_qhat``): the
test folders have no ``__init__.py``, so pytest's default "prepend" import mode puts this
folder on ``sys.path`` before it collects anything below it.

- :func:`run_qhat` runs ``python -m infer ...`` in a fresh interpreter (exit status,
  stdout and stderr exactly as a user sees them).
- :func:`call_qhat` runs :func:`infer.cli.main` in this process and reads what it printed
  through pytest's ``capsys`` (fast; lets a test patch the library).
- :func:`qhat_command` is the argument list both of the above stand for, for tests that
  need :class:`subprocess.Popen` themselves (a terminal, a signal mid-run).
"""

from __future__ import annotations

import contextlib
import dataclasses
import io
import os
import subprocess
import sys
from collections.abc import Mapping, Sequence
from pathlib import Path

import pytest

__all__ = [
    "DEMO",
    "ROOT",
    "TIMEOUT",
    "QhatRun",
    "call_qhat",
    "qhat_command",
    "run_python",
    "run_qhat",
]

#: the repository checkout (the folder holding ``infer/`` and ``data_demo/``)
ROOT = Path(__file__).resolve().parents[1]
#: the invented demo scenarios shipped with qhat
DEMO = ROOT / "data_demo"
#: seconds a child process may take before the test fails (a full fit with plots takes
#: a few seconds on the 2-core machine; the margin covers a loaded machine)
TIMEOUT = 600


@dataclasses.dataclass(frozen=True, repr=False)
class QhatRun:
    """What a child process did: its command, exit status and the text it printed."""

    args: tuple[str, ...]
    returncode: int
    stdout: str
    stderr: str

    def __str__(self) -> str:
        """The command, its exit status and its output, for an assertion message."""
        return (f"`{' '.join(self.args)}` exited {self.returncode}\n--- stderr ---\n"
                f"{self.stderr}--- stdout (first 4000 characters) ---\n{self.stdout[:4000]}")

    def __repr__(self) -> str:
        """Short form for pytest's assertion rewriting (the message holds the output)."""
        return f"QhatRun(`{' '.join(self.args)}` -> exit {self.returncode})"


def qhat_command(*args) -> list[str]:
    """``[python, -m, infer, *args]`` with every argument turned into text."""
    return [sys.executable, "-m", "infer", *map(str, args)]


def _run(command: list[str], shown: tuple[str, ...], *, cwd, env, stdin, timeout) -> QhatRun:
    done = subprocess.run(
        command,
        cwd=cwd,
        env=None if env is None else {**os.environ, **env},
        input=stdin,
        stdin=subprocess.DEVNULL if stdin is None else None,
        capture_output=True,
        text=True,
        timeout=timeout,
    )
    return QhatRun(shown, done.returncode, done.stdout, done.stderr)


def run_qhat(*args, cwd: str | os.PathLike | None = None, env: Mapping[str, str] | None = None,
             stdin: str | None = None, timeout: float = TIMEOUT) -> QhatRun:
    """Run ``qhat *args`` as ``python -m infer`` in a child process and wait for it.

    Parameters
    ----------
    *args
        The command line after ``qhat`` (paths and numbers are turned into text).
    cwd
        Working folder of the child (default: the test's own).
    env
        Variables *added* to this process's environment for the child.
    stdin
        Text fed to the child's standard input (default: none, as from ``/dev/null``).
    timeout
        Seconds before :class:`subprocess.TimeoutExpired` fails the test.
    """
    shown = ("qhat", *map(str, args))
    return _run(qhat_command(*args), shown, cwd=cwd, env=env, stdin=stdin, timeout=timeout)


def run_python(code: str, *, cwd=None, env=None, timeout: float = TIMEOUT) -> QhatRun:
    """Run ``python -c code`` in a fresh interpreter (for import-cost checks)."""
    shown = ("python", "-c", "<code>")
    return _run([sys.executable, "-c", code], shown, cwd=cwd, env=env, stdin=None,
                timeout=timeout)


def call_qhat(argv: Sequence, capsys) -> tuple[int, str, str]:
    """Run :func:`infer.cli.main` on ``argv`` in this process: (status, stdout, stderr).

    A usage error that argparse turns into :class:`SystemExit` gives its exit code, as the
    command line would. ``capsys`` is pytest's fixture; whatever was captured before the
    call is discarded first.
    """
    from infer.cli import main

    capsys.readouterr()
    try:
        status = main([str(a) for a in argv])
    except SystemExit as stop:
        # sys.exit semantics: None is success, an int is the status, text means 1
        status = 0 if stop.code is None else stop.code if isinstance(stop.code, int) else 1
    captured = capsys.readouterr()
    return status, captured.out, captured.err


@pytest.fixture
def umask():
    """Set the process umask for one test and put the old one back afterwards."""
    previous = os.umask(0o022)
    os.umask(previous)

    def set_umask(value):
        """Set ``value`` and return the mode a new file gets under it."""
        os.umask(value)
        return 0o666 & ~value

    yield set_umask
    os.umask(previous)


class FakeTerminal(io.StringIO):
    """A standard error that says it is a terminal, so progress would be drawn on it."""

    def isatty(self):
        return True


def call_qhat_on_terminal(argv) -> tuple[int, str, str]:
    """``qhat argv`` in this process: (status, stdout, stderr), stderr a fake terminal."""
    from infer.cli import main

    printed, terminal = io.StringIO(), FakeTerminal()
    saved = sys.stderr
    sys.stderr = terminal
    try:
        with contextlib.redirect_stdout(printed):
            status = main([str(a) for a in argv])
    finally:
        sys.stderr = saved
    return status, printed.getvalue(), terminal.getvalue()
