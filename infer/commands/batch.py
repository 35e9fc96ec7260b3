"""``qhat batch``: per-locus heterozygous selection (s_het) for many loci at once.

Reads a loci CSV (columns in ``infer.files.loci``), computes every locus's posterior of
s_het by exact quadrature (``infer.jobs.batch.run``), gathers a ``BatchReport``
(``infer.jobs.batch.report``) and writes a report folder (``infer.reporting.batch_report``):
loci.csv, summary.json and three PNG figures. ``--jobs N`` runs chunks of loci in N local
processes; ``--scheduler ADDRESS`` on a dask.distributed cluster. The chunks, and so
the results, are the same whichever way the work runs.
"""

from __future__ import annotations

import contextlib
import sys
import time

from infer.commands import options as checks
from infer.core.choices import MODELS
from infer.core.text import caution_sentence

__all__ = ["add_arguments", "run"]

def add_arguments(parser) -> None:
    """Register the options of ``qhat batch`` (checked by :func:`_check_options`)."""
    checks.accept_negative_numbers(parser)
    add = parser.add_argument
    add("loci", metavar="LOCI.csv",
        help="columns locus, observed, sampled, mu [, mu_lower, mu_upper]")
    add("--out", required=True, metavar="DIR", help="report folder to write")
    add("--model", default="deterministic", metavar="MODEL",
        help=f"one of {', '.join(MODELS)}: the deterministic balance (default) or Wright's "
        "stationary density")
    add("--Ne", metavar="N", help="effective size (drift model)")
    add("--nu", default=1e-8, metavar="NU", help="back-mutation rate (drift model; default 1e-8)")
    add("--prior", default="log-uniform", metavar="PRIOR",
        help=f"shared prior on s_het, one of {', '.join(checks.BATCH_PRIORS)}: log-uniform "
        "(default) or empirical, a log-normal fitted to all loci (empirical Bayes)")
    add("--s-low", default=1e-5, metavar="S", help="lower bound of s_het (1e-5)")
    add("--s-high", default=0.5, metavar="S", help="upper bound of s_het (0.5)")
    add("--grid-points", default=400, metavar="N", help="log-spaced grid nodes of s_het (400)")
    add("--interval", default=0.95, metavar="P", help="credible level (0.95)")
    add("--mu-level", default=0.95, metavar="P",
        help="level of the mu_lower..mu_upper intervals in the file (0.95)")
    add("--jobs", default=1, metavar="N", help="local processes")
    add("--scheduler", metavar="ADDRESS",
        help="dask.distributed scheduler address (needs qhat[dist])")
    add("--chunk-size", default=512, metavar="N",
        help="loci per chunk (512); memory grows with it, not with the file")
    add("--skip-bad-rows", action="store_true",
        help="leave bad rows out, listing each one, instead of stopping")
    add("--force", action="store_true", help="replace an existing --out")
    add("--quiet", action="store_true", help="no progress bar or summary line")


def _check_options(args):
    """Convert and check the options in place (:func:`infer.commands.options.batch_options`)."""
    checks.batch_options(args)


@contextlib.contextmanager
def _executor(args):
    """Yield a ``map``-like function running chunks locally, in processes, or on dask."""
    if args.scheduler:
        try:
            from dask.distributed import Client
        except ImportError:
            raise checks.option_error("--scheduler", "dask.distributed is not installed: "
                                      "install qhat[dist]") from None
        try:
            client = Client(args.scheduler, timeout="20s")
        except (OSError, TimeoutError, ValueError) as error:
            raise checks.option_error("--scheduler", f"cannot reach the scheduler at "
                                      f"{args.scheduler} ({error})") from None

        def dask_map(function, tasks):
            futures = client.map(function, list(tasks), pure=False)
            for future in futures:      # in submission order, so sums have a fixed order
                yield future.result()
                future.release()

        try:
            yield dask_map
        finally:
            client.close()
    elif args.jobs > 1:
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor

        context = multiprocessing.get_context("forkserver")
        context.set_forkserver_preload(
            ["infer.jobs.batch.run", "scipy.special", "scipy.interpolate"])
        with ProcessPoolExecutor(max_workers=args.jobs, mp_context=context) as pool:
            yield lambda function, tasks: pool.map(function, tasks)
    else:
        yield map


def run(args) -> int:
    """Run ``qhat batch``."""
    from pathlib import Path

    from infer.reporting.folder import check_destination, terminate_as_interrupt

    started = time.perf_counter()
    _check_options(args)
    out = Path(args.out)
    check_destination(out, args.force)
    # SIGTERM (a cluster scheduler's kill) unwinds like Ctrl-C: the temporary chunk
    # store and the half-written report folder are removed
    with terminate_as_interrupt():
        return _run(args, out, started)


def _run(args, out, started) -> int:
    """Read the loci, compute, write the report (inside ``terminate_as_interrupt``)."""
    from infer.jobs.batch import run as batch
    from infer.jobs.batch.chunk_store import ChunkStore
    from infer.jobs.batch.report import summarise_batch
    from infer.files.loci import describe_skipped, read_loci
    from infer.reporting.batch_report import write_batch_report

    table = read_loci(args.loci, skip_bad_rows=args.skip_bad_rows)
    for skipped in table.skipped:
        print(f"qhat: warning: {table.source}: {describe_skipped(skipped)}", file=sys.stderr)
    read_done = time.perf_counter()
    mu_sigma = batch.mu_sigma_from_interval(table.mu_lower, table.mu_upper, args.mu_level)
    settings = batch.BatchSettings(model=args.model, Ne=args.Ne, nu=args.nu, s_low=args.s_low,
                                   s_high=args.s_high, grid_points=args.grid_points,
                                   interval=args.interval)
    chunks = -(-len(table.names) // args.chunk_size) * (2 if args.prior == "empirical" else 1)
    bar = None
    if not args.quiet and sys.stderr.isatty():
        from tqdm import tqdm

        bar = tqdm(total=chunks, unit="chunk", desc="qhat batch", file=sys.stderr)
    try:
        with _executor(args) as map_chunks, ChunkStore() as store:
            result = batch.analyse(table.observed, table.sampled, table.mu, mu_sigma, settings,
                                   prior=args.prior, chunk_size=args.chunk_size,
                                   map_chunks=map_chunks, progress=bar.update if bar else None,
                                   store=store)
    finally:
        if bar is not None:
            bar.close()
    computed = time.perf_counter()
    timings = {"read_seconds": round(read_done - started, 3),
               "compute_seconds": round(computed - read_done, 3)}
    report = summarise_batch(table, result, mu_sigma, requested_prior=args.prior,
                             mu_level=args.mu_level, chunk_size=args.chunk_size, jobs=args.jobs,
                             scheduler=args.scheduler, timings=timings)
    write_batch_report(report, out, force=args.force)
    if not args.quiet:
        print(f"qhat batch: {len(table.names)} loci -> {out} ({result.prior.describe()}; "
              f"{report.flagged} flags; {time.perf_counter() - started:.1f} s). "
              f"{caution_sentence()}")
    return 0
