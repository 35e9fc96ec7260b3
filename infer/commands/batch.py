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
import os
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


#: seconds to connect to a scheduler and to hear its greeting
PROBE_SECONDS = 5.0
#: a dask greeting is a few hundred bytes; a first frame claiming more is not one
_GREETING_LIMIT = 1 << 20


def _probe_scheduler(address: str) -> None:
    """Refuse ``address`` unless a TCP peer there greets like a dask scheduler.

    A dask.distributed peer writes its handshake as soon as a connection opens: an
    8-byte native unsigned length, then that many bytes (``distributed.comm.tcp``).
    Anything else listening there (a web server waits silently; an SSH server sends
    text that reads as an exabyte length) is refused within :data:`PROBE_SECONDS`
    instead of hanging or allocating that length. Addresses of other transports
    (``tls://``, ``ucx://``, ...) are left to dask.
    """
    import socket
    import struct

    scheme, _, rest = address.rpartition("://")
    if scheme not in ("", "tcp"):
        return
    host, _, port = rest.rpartition(":")
    if not host:
        host, port = rest, "8786"
    host = host.strip("[]")
    if not port.isdigit() or not 0 < int(port) < 65536:
        raise checks.option_error("--scheduler", f"{address!r} has no valid port "
                                  "(use HOST:PORT or tcp://HOST:PORT)")
    problem = None
    try:
        with socket.create_connection((host, int(port)), timeout=PROBE_SECONDS) as probe:
            probe.settimeout(PROBE_SECONDS)
            greeting = b""
            while len(greeting) < 8:
                part = probe.recv(8 - len(greeting))
                if not part:
                    break
                greeting += part
    except TimeoutError:
        problem = f"nothing answered within {PROBE_SECONDS:g} s"
    except OSError as error:
        problem = error.strerror or str(error)
    else:
        if len(greeting) < 8:
            problem = "the connection was closed without a dask greeting"
        elif struct.unpack("Q", greeting)[0] > _GREETING_LIMIT:
            problem = "what answers there is not a dask scheduler"
    if problem is not None:
        raise checks.option_error("--scheduler", f"cannot reach a dask scheduler at "
                                  f"{address} ({problem})")


@contextlib.contextmanager
def _executor(args, scratch=None):
    """Yield a ``map``-like function running chunks locally, in processes, or on dask."""
    if args.scheduler:
        try:
            from dask.distributed import Client
        except ImportError:
            raise checks.option_error("--scheduler", "dask.distributed is not installed: "
                                      "install qhat[dist]") from None
        _probe_scheduler(args.scheduler)
        try:
            client = Client(args.scheduler, timeout="10s")
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
        if scratch is not None:   # the forkserver's socket folder, for a later clean-up
            from multiprocessing import util

            from infer.reporting.folder import note_work_path

            note_work_path(scratch, util.get_temp_dir())
        with ProcessPoolExecutor(max_workers=args.jobs, mp_context=context,
                                 initializer=watch_parent, initargs=(os.getpid(),)) as pool:
            yield lambda function, tasks: pool.map(function, tasks)
    else:
        yield map


def watch_parent(pid: int, every: float = 0.5) -> None:
    """In a worker process: end this process soon after process ``pid`` is gone.

    A ``kill -9`` of ``qhat batch`` gives its workers no signal (their parent is the
    forkserver, not qhat), and a worker blocked on a full result pipe would wait for
    ever; the forkserver in turn lives as long as any worker. A daemon thread polls
    ``pid`` and ends the worker when it has gone (or was replaced by another process).
    """
    import threading

    def watch():
        while True:
            time.sleep(every)
            try:
                os.kill(pid, 0)
            except ProcessLookupError:
                os._exit(1)
            except OSError:
                pass
            if os.getppid() == 1:      # orphaned: the forkserver is gone too
                os._exit(1)

    threading.Thread(target=watch, name="qhat-watch-parent", daemon=True).start()


def run(args) -> int:
    """Run ``qhat batch``."""
    from infer.reporting.folder import check_destination, out_path, terminate_as_interrupt

    started = time.perf_counter()
    _check_options(args)
    out = out_path(args.out)
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
    from infer.reporting.folder import work_folder

    try:
        with (work_folder("qhat-batch-") as scratch, _executor(args, scratch) as map_chunks,
              ChunkStore(scratch) as store):
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
