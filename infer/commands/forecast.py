"""``qhat forecast REPORT_DIR --generations N [--set s=0 ...]``: the coming generations.

Reads the report folder of ``qhat estimate``, projects every posterior draw from its
equilibrium under the changed values (:func:`infer.jobs.forecast.run.forecast`) and
writes a report folder (:func:`infer.reporting.forecast_report.write_forecast_report`).
Options are checked here with :mod:`infer.commands.options` before any work: one line,
exit status 2, naming the option and the value.
"""

from __future__ import annotations

import contextlib
import sys
from pathlib import Path

from infer.commands import options as checks
from infer.core.choices import AUTOSOMAL_MODES

__all__ = ["add_arguments", "run", "parse_changes", "default_out"]

#: what each job field is called on the command line
OPTION = {"generations": "--generations", "mode": "--mode"}


def add_arguments(parser) -> None:
    """Register the options of ``qhat forecast``."""
    checks.accept_negative_numbers(parser)
    add = parser.add_argument
    add("report", metavar="REPORT_DIR", help="a report folder written by qhat estimate")
    add("--generations", required=True, metavar="N",
        help="generations to project, from 1 to 10000")
    add("--set", action="append", default=[], metavar="NAME=VALUE", dest="changes",
        help="a value changed from now on: s, h, mu, F, nu, alpha or penetrance "
             "(repeat for several; e.g. --set s=0 when a treatment restores fertility)")
    add("--mode", default=None, metavar="MODE",
        help="affected genotypes of an autosomal locus, dominant or recessive (default: "
             "what the report says)")
    add("--out", metavar="DIR", help="report folder (default: REPORT_DIR-forecast)")
    add("--force", action="store_true", help="replace an existing folder")
    checks.add_json(parser, "forecast.json")
    checks.add_quiet(parser)


def parse_changes(items) -> dict[str, float]:
    """``["s=0", "mu=2e-5"]`` -> ``{"s": 0.0, "mu": 2e-05}``, each name and value checked.

    Raises
    ------
    infer.errors.InputError
        ``--set: 's0' is not NAME=VALUE``, ``--set: 'Ne' is not one of ...``,
        ``--set s: 1.5 is above 1``, ``--set: s is given twice``.
    """
    from infer.jobs.forecast.changes import CHANGEABLE

    changes = {}
    for item in items:
        name, equals, value = str(item).partition("=")
        name, value = name.strip(), value.strip()
        if not equals or not name or not value:
            raise checks.option_error("--set", f"{item!r} is not NAME=VALUE (e.g. s=0)")
        checks.option_choice(name, "--set", tuple(CHANGEABLE))
        if name in changes:
            raise checks.option_error("--set", f"{name} is given twice")
        bounds = CHANGEABLE[name]
        changes[name] = checks.number(value, f"--set {name}", checks.Range(
            bounds.low, bounds.high, bounds.low_open, bounds.high_open))
    return changes


@contextlib.contextmanager
def _as_options():
    """A job's error about one of its settings, as the error of the option that set it."""
    from infer.errors import InputError

    try:
        yield
    except InputError as error:
        if error.source is None and error.field:
            option = OPTION.get(error.field, f"--set {error.field}")
            raise checks.option_error(option, error.message) from None
        raise


def default_out(report: str) -> Path:
    """REPORT_DIR-forecast, beside the report folder."""
    path = Path(report)
    name = path.resolve().name if path.name in ("", ".", "..") else path.name
    return path.parent / f"{name}-forecast"


def run(args) -> int:
    """Run ``qhat forecast``."""
    from infer.jobs.forecast.run import MAX_GENERATIONS

    generations = checks.number(args.generations, "--generations", checks.Range(
        low=1, high=MAX_GENERATIONS, whole=True,
        note="(a deterministic projection that far says more about the model than the "
             "population)"))
    changes = parse_changes(args.changes)
    if args.mode is not None:
        checks.option_choice(args.mode, "--mode", AUTOSOMAL_MODES)
    from infer.jobs.forecast.changes import check_changes
    from infer.jobs.forecast.run import forecast, resolve_mode
    from infer.jobs.forecast.source import read_report
    from infer.reporting.folder import check_destination, out_path, terminate_as_interrupt
    from infer.reporting.forecast_report import (
        forecast_document,
        text_summary,
        write_forecast_report,
    )

    source = read_report(args.report)
    if source.trusted is False:
        print(f"qhat: warning: the estimate in {args.report} did not converge or disagrees "
              "with its exact cross-check (its report.md says why); the forecast carries "
              "its draws forward as they are", file=sys.stderr)
    with _as_options():   # what depends on the report, before the destination is taken
        check_changes(changes, source.inheritance)
        resolve_mode(source, args.mode)
    out = out_path(args.out) or default_out(args.report)
    read = Path(args.report).resolve()
    if Path(out).resolve() == read or read in Path(out).resolve().parents:
        raise checks.option_error("--out", f"{out} is the report folder being read, or "
                                  "inside it; name another folder")
    check_destination(out, args.force)
    with _as_options():
        result = forecast(source, generations, changes, mode=args.mode)
    with terminate_as_interrupt():
        write_forecast_report(result, out, force=args.force)
    if args.json:
        from infer.reporting.jsonout import dumps

        sys.stdout.write(dumps(forecast_document(result)))
    else:
        print(text_summary(result, out))
    return 0
