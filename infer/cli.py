"""The ``qhat`` command line: parse arguments, call the library, render, set the exit code.

Each command lives in ``infer.commands.<name>`` with two functions,
``add_arguments(parser)`` and ``run(args) -> int``. Command modules import only the
standard library at module level, so ``qhat --help`` stays fast; heavy libraries are
imported inside ``run``.
"""

from __future__ import annotations

import argparse
import importlib
import os
import re
import signal
import sys

__all__ = ["main", "COMMANDS"]

#: command name -> one-line help
COMMANDS = {
    "equilibrium": "forward calculation: exact balance, approximations, load, incidence",
    "estimate": "posterior for mu, s, h from a study file, written as a report folder",
    "check": "a reviewer's consistency check of published numbers (exit 3 if inconsistent)",
    "batch": "many loci at once: per-locus heterozygous selection from allele counts",
    "simulate": "Wright-Fisher forward simulation under the same life cycle",
    "forecast": "allele frequency and incidence over the coming generations, per posterior draw",
    "compare": "a study's data weighed under competing models (balance, heterozygote "
               "advantage): evidences, Bayes factors",
    "demo": "run every invented scenario shipped with qhat and write their reports",
}

EXIT_OK, EXIT_INPUT, EXIT_INCONSISTENT = 0, 2, 3


class _Parser(argparse.ArgumentParser):
    """Argument parser whose usage errors are one line and exit status 2.

    argparse's ``argument --mu: expected one argument`` becomes ``--mu: expected one
    argument``, the shape of every other option error (:mod:`infer.commands.options`).
    """

    def error(self, message: str):  # noqa: D102 - argparse hook
        message = re.sub(r"^argument ([^:]+): ", r"\1: ", " ".join(message.split()))
        self.exit(EXIT_INPUT, f"qhat: error: {message}\n")


def build_parser() -> argparse.ArgumentParser:
    """Return the full argument parser (every command registered)."""
    from infer import __version__
    from infer.core.text import caution_sentence

    parser = _Parser(
        prog="qhat",
        description="Mutation-selection balance: infer mu, s and h from what was observed. "
        + caution_sentence(),
    )
    parser.add_argument("--version", action="version", version=f"qhat {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, help_text in COMMANDS.items():
        module = importlib.import_module(f"infer.commands.{name}")
        command_parser = sub.add_parser(name, help=help_text, description=help_text)
        module.add_arguments(command_parser)
        command_parser.set_defaults(_module=module)
    return parser


def _guard_streams() -> bool:
    """Make the standard streams safe to use; return False if stdout is closed.

    A closed descriptor 0, 1 or 2 is reopened on the null device, so no file this run
    opens can take its number (and catch output meant for the terminal). With stderr
    closed, error lines are dropped rather than printed on stdout. Text that the
    terminal's encoding cannot show is written with backslash escapes, not refused.
    """
    stdout_open = True
    for fd in (0, 1, 2):
        try:
            os.fstat(fd)
        except OSError:
            if fd == 1:
                stdout_open = False
            with_null = os.open(os.devnull, os.O_RDWR)
            if with_null != fd:
                os.dup2(with_null, fd)
                os.close(with_null)
    if sys.stderr is None:
        sys.stderr = open(os.devnull, "w")  # noqa: SIM115 - lives as long as the process
    if sys.stdout is None:
        sys.stdout = open(os.devnull, "w")  # noqa: SIM115
        stdout_open = False
    for stream in (sys.stdout, sys.stderr):
        reconfigure = getattr(stream, "reconfigure", None)
        if reconfigure is not None:
            try:
                reconfigure(errors="backslashreplace")
            except (ValueError, OSError):
                pass
    return stdout_open


def _os_error_line(error: OSError) -> str:
    where = error.filename or "standard output"
    return f"qhat: error: {where}: {error.strerror or error}"


def _silence_stdout() -> None:
    """Point stdout at the null device so the exit-time flush cannot fail again."""
    try:
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, sys.stdout.fileno())
        os.close(null)
    except (OSError, ValueError, AttributeError):
        pass


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit status.

    Bad input of any kind (``InputError``) ends as one line on stderr and status 2, and
    so does an operating system error at the boundary (a destination that cannot be
    written, a full disk, a standard output that cannot take the text).
    """
    stdout_open = _guard_streams()
    if hasattr(signal, "SIGXFSZ"):   # a file size limit: let the write fail, not the process
        try:
            signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        except ValueError:           # not the main thread: leave the disposition alone
            pass
    # figures are only ever written to files: never let a user's backend choice break them
    os.environ["MPLBACKEND"] = "Agg"
    argv = sys.argv[1:] if argv is None else list(argv)
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return EXIT_INPUT
    if not stdout_open:
        print("qhat: error: standard output is closed; nothing was done", file=sys.stderr)
        return EXIT_INPUT
    from infer.errors import InputError
    from infer.reporting import folder

    folder.set_command_line(argv)
    try:
        status = int(args._module.run(args) or 0)
        sys.stdout.flush()
        return status
    except InputError as error:
        print(f"qhat: error: {error}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        # a progress bar has ended or erased its own line (docs/command-line.md)
        print("qhat: interrupted; nothing was written", file=sys.stderr)
        return 130
    except BrokenPipeError:
        _silence_stdout()
        return EXIT_OK
    except OSError as error:
        if not error.filename:
            _silence_stdout()
        print(_os_error_line(error), file=sys.stderr)
        return EXIT_INPUT
    finally:
        folder.release_locks()
