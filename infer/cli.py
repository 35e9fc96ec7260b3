"""The ``qhat`` command line: parse arguments, call the library, render, set the exit code.

Each command lives in ``infer.commands.<name>`` with two functions,
``add_arguments(parser)`` and ``run(args) -> int``. Command modules import only the
standard library at module level, so ``qhat --help`` stays fast; heavy libraries are
imported inside ``run``.
"""

from __future__ import annotations

import argparse
import importlib
import re
import sys

__all__ = ["main", "COMMANDS"]

#: command name -> one-line help
COMMANDS = {
    "equilibrium": "forward calculation: exact balance, approximations, load, incidence",
    "estimate": "posterior for mu, s, h from a study file, written as a report folder",
    "check": "a reviewer's consistency check of published numbers (exit 3 if inconsistent)",
    "batch": "many loci at once: per-locus heterozygous selection from allele counts",
    "simulate": "Wright-Fisher forward simulation under the same life cycle",
    "demo": "run every scenario in data_demo/ and write their reports",
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


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit status.

    Bad input of any kind (``InputError``) ends as one line on stderr and status 2.
    """
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return EXIT_INPUT
    from infer.errors import InputError

    try:
        return int(args._module.run(args) or 0)
    except InputError as error:
        print(f"qhat: error: {error}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        if sys.stderr.isatty():
            print(file=sys.stderr)  # end a progress line drawn with carriage returns
        print("qhat: interrupted; nothing was written", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return EXIT_OK
