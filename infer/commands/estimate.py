"""``qhat estimate STUDY.toml``: the posterior of a study, written as a report folder."""

from __future__ import annotations

import sys
from pathlib import Path

from infer.commands import options as checks

__all__ = ["EXIT_NOT_CONVERGED", "add_arguments", "run", "progress_printer", "default_out",
           "print_warnings"]

#: the estimate finished and its folder is written, but it did not converge or an exact
#: posterior disagrees with it (docs/command-line.md, 'Exit status')
EXIT_NOT_CONVERGED = 4


def add_arguments(parser) -> None:
    """Register the options of ``qhat estimate``."""
    checks.accept_negative_numbers(parser)
    parser.add_argument("study", metavar="STUDY.toml", help="the study file (TOML)")
    parser.add_argument("--out", metavar="DIR",
                        help="report folder (default: reports/<study file name>)")
    parser.add_argument("--seed", metavar="N",
                        help="random seed, a whole number >= 0 (overrides [sampler] seed)")
    parser.add_argument("--force", action="store_true", help="replace an existing folder")
    parser.add_argument("--json", action="store_true", help="print summary.json to stdout")
    parser.add_argument("--quiet", action="store_true",
                        help="no progress on stderr (warnings are still printed)")
    parser.epilog = ("Exit status 0 when done, 2 for bad input, 4 when the report is written "
                     "but the sampler did not converge or an exact check disagrees. Each "
                     "warning is a line 'qhat: warning: ...' on stderr, with or without "
                     "--quiet and --json.")


def progress_printer(quiet: bool):
    """A progress callback writing to stderr when it is a terminal, else None."""
    if quiet or not sys.stderr.isatty():
        return None

    def show(steps: int, max_steps: int) -> None:
        print(f"\rqhat: sampling, {steps} steps per ensemble (cap {max_steps})",
              end="", file=sys.stderr, flush=True)

    return show


def print_warnings(summary: dict, stream=None) -> None:
    """One ``qhat: warning: ...`` line on stderr for each warning of the estimate."""
    from infer.core.text import shown
    from infer.jobs.estimate.warnings import estimate_warnings

    stream = stream or sys.stderr
    for warning in estimate_warnings(summary):
        print(f"qhat: warning: {shown(warning)}", file=stream)


def default_out(study_path: str) -> Path:
    """reports/<file-name-safe stem of the study file>."""
    from infer.reporting.folder import safe_name

    return Path("reports") / safe_name(Path(study_path).stem, "study")


def run(args) -> int:
    """Run ``qhat estimate``."""
    from infer.reporting.folder import terminate_as_interrupt
    from infer.reporting.plot_process import PlotProcess

    args.seed = checks.seed(args.seed)
    # matplotlib is imported in a second process while this one reads the study and samples
    with terminate_as_interrupt(), PlotProcess() as plotter:
        result, out = _estimate_into_folder(args, plotter)
    # warnings first: a closed stdout below must not swallow them
    print_warnings(result.summary)
    if args.json:
        from infer.reporting.jsonout import dumps

        sys.stdout.write(dumps(result.summary))
    else:
        from infer.reporting.markdown import terminal_summary

        print(terminal_summary(result, out))
    from infer.jobs.estimate.warnings import read_with_care

    return EXIT_NOT_CONVERGED if read_with_care(result.summary) else 0


def _estimate_into_folder(args, plotter):
    """Read and check the study and the destination, sample, write the report folder."""
    from infer.files.study import load_study
    from infer.reporting.folder import check_destination, out_path

    study = load_study(args.study)
    out = out_path(args.out) or default_out(args.study)
    check_destination(out, args.force)   # creates reports/ if needed; locks the folder
    show = progress_printer(args.quiet)
    from infer.jobs.estimate.pipeline import estimate
    from infer.reporting.report import write_report

    result, timing = estimate(study, seed=args.seed, progress=show)
    if show:
        print(file=sys.stderr)
    write_report(result, out, force=args.force, timing=timing, plotter=plotter)
    return result, out
