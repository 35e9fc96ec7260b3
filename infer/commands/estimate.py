"""``qhat estimate STUDY.toml``: the posterior of a study, written as a report folder."""

from __future__ import annotations

import sys
from pathlib import Path

from infer.commands import options as checks

__all__ = ["EXIT_NOT_CONVERGED", "add_arguments", "run", "progress_printer",
           "SamplingProgress", "default_out", "print_warnings"]

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
    checks.add_json(parser, "summary.json")
    checks.add_quiet(parser)
    parser.epilog = ("Exit status 0 when done, 2 for bad input, 4 when the report is written "
                     "but the sampler did not converge or an exact check disagrees. Each "
                     "warning is a line 'qhat: warning: ...' on stderr, with or without "
                     "--quiet and --json.")


def progress_printer(quiet: bool, stream=None):
    """A progress callback drawing a bar on stderr when it is a terminal, else None."""
    stream = sys.stderr if stream is None else stream
    if quiet or not stream.isatty():
        return None
    return SamplingProgress(stream)


def _columns(stream, fallback: int = 80) -> int:
    """Width of the terminal behind ``stream``; ``fallback`` when it reports none (0).

    A pseudo-terminal opened without a size reports 0 x 0, which tqdm would take as no
    room for the bar (its height is given as 24 for the same reason).
    """
    import os

    try:
        columns = os.get_terminal_size(stream.fileno()).columns
    except (AttributeError, ValueError, OSError):
        columns = 0
    return min(columns, 120) if columns > 0 else fallback


class SamplingProgress:
    """The sampler's progress as a tqdm bar over the bulk effective sample size.

    The sampler calls it as ``progress(steps, max_steps)`` after each block of steps (the
    steps per ensemble and the cap, ``step 420/40000``, are shown after the bar) and
    calls :meth:`ess` after each convergence check with the smallest bulk ESS over the
    free parameters and its target; the bar advances with the ESS, so tqdm's rate gives
    the time left. The line is first drawn at the first report (after the first block of
    steps) and redrawn at most every :data:`EVERY` seconds.
    """

    #: least seconds between two redraws
    EVERY = 0.25

    def __init__(self, stream, target: float | None = None):
        if target is None:
            from infer.inference.sampling import SamplerSettings

            target = SamplerSettings().target_ess
        self.stream, self.target = stream, float(target)
        self.bar = None   # drawn at the first report, inside the run
        self._shown = 0.0

    def _open(self, postfix: str = ""):
        import time

        from tqdm import tqdm

        self._shown = time.monotonic()
        self.bar = tqdm(total=self.target, desc="qhat: sampling", file=self.stream,
                        postfix=postfix, mininterval=self.EVERY, ncols=_columns(self.stream),
                        nrows=24,
                        bar_format="{desc} {percentage:3.0f}%|{bar}| ESS {n:.0f}/{total:.0f} "
                                   "[{elapsed}<{remaining}{postfix}]")
        return self.bar

    def __call__(self, steps: int, max_steps: int) -> None:
        """After a block: show the steps per ensemble and the cap."""
        import time

        postfix = f"step {steps}/{max_steps}"
        if self.bar is None:
            self._open(postfix)
            return
        self.bar.set_postfix_str(postfix, refresh=False)
        now = time.monotonic()
        if now - self._shown >= self.EVERY:
            self._shown = now
            self.bar.refresh()

    def ess(self, ess_bulk: float, target: float) -> None:
        """After a convergence check: advance the bar to the smallest bulk ESS."""
        bar = self.bar or self._open()
        if float(target) != bar.total:
            bar.total = float(target)
        reached = min(float(ess_bulk), bar.total)
        if reached > bar.n:
            bar.update(reached - bar.n)

    def close(self, finished: bool = True) -> None:
        """End the bar: kept on its line when the run finished, erased when it did not."""
        if self.bar is not None:
            self.bar.leave = finished
            self.bar.close()


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
        from infer.reporting.report import estimate_document

        sys.stdout.write(dumps(estimate_document(result)))
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
    from infer.jobs.estimate.pipeline import estimate
    from infer.reporting.report import write_report

    finished, show = False, None
    try:
        show = progress_printer(args.quiet)   # drawn at the sampler's first report
        result, timing = estimate(study, seed=args.seed, progress=show)
        finished = True
    finally:
        if show is not None:
            show.close(finished)
    write_report(result, out, force=args.force, timing=timing, plotter=plotter)
    return result, out
