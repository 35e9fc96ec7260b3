"""``qhat batch``: per-locus heterozygous selection (s_het) for many loci at once.

Reads a loci CSV (columns in ``infer.files.loci``), computes every locus's posterior of
s_het by exact quadrature (``infer.jobs.batch.run``), gathers a ``BatchReport``
(``infer.jobs.batch.report``) and writes a report folder (``infer.reporting.batch_report``):
loci.csv, summary.json, timing.json, report.md, report.html and three PNG figures; it
prints a one-line summary, or with ``--json`` summary.json. ``--jobs N`` runs chunks of
loci in N local processes; ``--scheduler ADDRESS`` on a dask.distributed cluster. The
chunks, and so the results, are the same whichever way the work runs.
"""

from __future__ import annotations

import contextlib
import os
import sys
import time

from infer.commands import options as checks
from infer.core.choices import MODELS
from infer.core.text import caution_sentence, shown

__all__ = ["add_arguments", "run", "local_processes", "SERIAL_WORK"]

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
    add("--jobs", default=1, metavar="N",
        help="local processes, at most; a deterministic batch too small to gain from them "
        "(below about 18,000 loci on the default grid) runs in one process, which is "
        "faster there, and no batch uses more processes than it has chunks")
    add("--scheduler", metavar="ADDRESS",
        help="dask.distributed scheduler address (needs qhat[dist])")
    add("--chunk-size", default=512, metavar="N",
        help="loci per chunk (512); memory grows with it, not with the file")
    add("--skip-bad-rows", action="store_true",
        help="leave bad rows out, listing each one, instead of stopping")
    add("--force", action="store_true", help="replace an existing --out")
    checks.add_json(parser, "summary.json")
    checks.add_quiet(parser)


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


#: multiply-adds of a deterministic batch (loci x S x (2J + 1), as
#: ``infer.jobs.batch.run.WORK_PER_CALL`` counts them) below which it runs in one process
#: whatever --jobs asks: starting the workers (a forkserver importing numpy and scipy,
#: then the workers) costs more than a second core saves. benchmarks/batch.py
#: --crossover-only measures it: on the 2-core machine (shared with other work) one
#: process was faster up to 10,000 loci of the default grid (S = 400, J = 67 for mu
#: intervals of sigma 0.3: 54,000 a locus), the two took as long at 20,000 and two were
#: faster at 40,000; this is about 18,500 loci.
SERIAL_WORK = 1.0e9


def local_processes(requested: int, loci: int, settings, chunk_size: int) -> int:
    """Local processes a batch runs in: ``requested``, or fewer where more would be slower.

    One process for a deterministic batch of less than :data:`SERIAL_WORK` multiply-adds;
    never more processes than chunks (a drift batch's chunk is seconds of work, so it
    always uses what was asked up to that).
    """
    chunks = max(1, -(-loci // chunk_size))
    if settings.model == "deterministic":
        work = loci * settings.grid_points * (2 * settings.half_width + 1)
        if work < SERIAL_WORK:
            return 1
    return max(1, min(requested, chunks))


#: rows of the loci file read into one stored block (a whole number of chunks)
BLOCK_ROWS = 65536
#: chunks submitted ahead of the one being collected, per worker (memory flat in the loci)
AHEAD_PER_WORKER = 2


def bounded_map(submit, function, tasks, ahead):
    """``map`` over an executor keeping at most ``ahead`` tasks submitted and unfinished.

    ``Executor.map`` submits every task at once (holding every chunk in memory); this
    takes tasks from the iterator only as results are collected, in order. Tasks still
    pending when the caller stops are cancelled.
    """
    import collections

    pending = collections.deque()
    try:
        for task in tasks:
            pending.append(submit(function, task))
            if len(pending) >= ahead:
                yield _collect(pending.popleft())
        while pending:
            yield _collect(pending.popleft())
    finally:
        for future in pending:
            future.cancel()


def _collect(future):
    result = future.result()
    release = getattr(future, "release", None)   # a dask future frees its result
    if release is not None:
        release()
    return result


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
            # in submission order, so sums have a fixed order
            return bounded_map(lambda f, task: client.submit(f, task, pure=False), function,
                               tasks, AHEAD_PER_WORKER * 8)

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
        _start_forkserver_quietly()
        pool = ProcessPoolExecutor(max_workers=args.jobs, mp_context=context,
                                   initializer=watch_parent, initargs=(os.getpid(),))
        try:
            yield lambda function, tasks: bounded_map(pool.submit, function, tasks,
                                                      AHEAD_PER_WORKER * args.jobs)
        except BaseException:
            # interrupted (SIGTERM, Ctrl-C) or failed: end the workers now rather than
            # wait for the chunks they are computing (shutdown would wait for them)
            workers = list((getattr(pool, "_processes", None) or {}).values())
            pool.shutdown(wait=False, cancel_futures=True)
            for process in workers:
                process.terminate()
            for process in workers:
                process.join(timeout=1.0)
            _end_forkserver()     # it would still fork a worker asked for before the signal
            raise
        else:
            pool.shutdown(wait=True)
    else:
        yield map


def _start_forkserver_quietly() -> None:
    """Start the forkserver with its stderr on the null device.

    Workers are forked by the forkserver and inherit its standard streams. A worker
    requested just before an interrupt is forked after qhat has removed the pool's
    semaphores and fails while unpickling them; with the forkserver's stderr closed that
    failure stays silent, so an interrupted batch still prints its one line. A worker's
    own exceptions reach qhat through its futures, not through stderr.
    """
    from multiprocessing import forkserver

    saved, null = os.dup(2), os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(null, 2)
        forkserver.ensure_running()
    finally:
        os.dup2(saved, 2)
        os.close(saved)
        os.close(null)


def _end_forkserver() -> None:
    """End this process's multiprocessing forkserver, if it started one.

    A worker requested just before an interrupt (while the forkserver was still
    importing) would be forked after qhat has gone and fail noisily on its stderr.
    The forkserver's pid is private to multiprocessing, hence the guarded look-up.
    """
    import signal
    from multiprocessing import forkserver

    pid = getattr(getattr(forkserver, "_forkserver", None), "_forkserver_pid", None)
    if pid:
        try:
            os.kill(pid, signal.SIGTERM)
        except OSError:
            pass


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


def _loci_blocks(scan, store, mu_level):
    """The blocks of a streamed loci file as dicts of columns, mu's sigma added."""
    from infer.jobs.batch.run import mu_sigma_from_interval

    for index in range(scan.blocks):
        block = store[index]
        yield {"names": block.names, "observed": block.observed, "sampled": block.sampled,
               "mu": block.mu, "mu_lower": block.mu_lower, "mu_upper": block.mu_upper,
               "recessive": block.recessive,
               "mu_sigma": mu_sigma_from_interval(block.mu_lower, block.mu_upper, mu_level)}


def _run(args, out, started) -> int:
    """Read the loci, compute, write the report (inside ``terminate_as_interrupt``).

    The loci file is read once into a disk-backed store of blocks (validated whole
    before any work), then computed chunk by chunk with loci.csv written as the chunks
    finish: memory is flat in the number of loci.
    """
    from infer.errors import InputError
    from infer.reporting.folder import work_folder

    scratch = None
    try:
        with work_folder("qhat-batch-") as scratch:
            count, report = _in_work_folder(args, out, started, scratch)
    except OSError as error:      # the temporary store (a full disk, a file size limit)
        raise InputError(f"cannot write the temporary folder {scratch or ''}: "
                         f"{error.strerror or error}; nothing was written to {out}") from None
    if args.json:
        from infer.reporting.batch_report import batch_document
        from infer.reporting.jsonout import dumps

        sys.stdout.write(dumps(batch_document(report)))
    else:
        print(f"qhat batch: {count} loci -> {out} ({report.result.prior.describe()}; "
              f"{report.flagged} flags; {time.perf_counter() - started:.1f} s). "
              f"{caution_sentence()}")
    return 0


def _in_work_folder(args, out, started, scratch):
    """Read into a store in ``scratch``, compute, write; (loci, BatchReport)."""
    import numpy as np

    from infer.jobs.batch import run as batch
    from infer.jobs.batch.chunk_store import ChunkStore
    from infer.files.loci import describe_skipped, scan_loci

    block_rows = args.chunk_size * max(1, BLOCK_ROWS // args.chunk_size)
    with ChunkStore(scratch, prefix="loci-") as loci_store:
        scan = scan_loci(args.loci, loci_store, skip_bad_rows=args.skip_bad_rows,
                         block_rows=block_rows)
        for skipped in scan.skipped:
            print(f"qhat: warning: {shown(scan.source)}: {shown(describe_skipped(skipped))}",
                  file=sys.stderr)
        read_done = time.perf_counter()
        largest = max(float(np.max(b["mu_sigma"], initial=0.0))
                      for b in _loci_blocks(scan, loci_store, args.mu_level))
        settings = batch.with_half_width(
            batch.BatchSettings(model=args.model, Ne=args.Ne, nu=args.nu, s_low=args.s_low,
                                s_high=args.s_high, grid_points=args.grid_points,
                                interval=args.interval),
            np.array([largest]), np.array([scan.max_observed]))
        per_pass = -(-scan.count // args.chunk_size)
        if not args.scheduler:
            args.jobs = local_processes(args.jobs, scan.count, settings, args.chunk_size)
        report = _compute(args, out, scan, loci_store, scratch, settings, per_pass,
                          read_done - started)
    return scan.count, report


def _compute(args, out, scan, loci_store, scratch, settings, per_pass, read_seconds):
    """Both passes over the stored blocks, loci.csv written chunk by chunk; the report."""
    from infer.jobs.batch import run as batch
    from infer.jobs.batch.chunk_store import ChunkStore
    from infer.jobs.batch.report import BatchTally
    from infer.reporting.batch_report import open_batch_report

    def chunks():
        return batch.recut(_loci_blocks(scan, loci_store, args.mu_level), args.chunk_size)

    empirical = args.prior == "empirical"
    bar = None
    if not args.quiet and sys.stderr.isatty():
        from tqdm import tqdm

        bar = tqdm(total=per_pass * (2 if empirical else 1), unit="chunk", desc="qhat batch",
                   file=sys.stderr)
    progress = bar.update if bar else None
    computing = time.perf_counter()
    try:
        with (_executor(args, scratch) as map_chunks, ChunkStore(scratch) as store,
              BatchTally() as tally):
            coarse = store if empirical and settings.model == "drift" else None
            fitted, prior = None, batch.SHetPrior()
            if empirical:
                fitted = batch.fit_prior(chunks(), settings, map_chunks=map_chunks,
                                         progress=progress, store=coarse)
                prior = fitted.prior
            with open_batch_report(out, force=args.force) as written:
                for chunk, part in batch.posteriors(chunks(), settings, prior,
                                                    map_chunks=map_chunks, progress=progress,
                                                    store=coarse):
                    written.add(chunk, part)
                    tally.add(chunk["observed"], chunk["mu_sigma"], part)
                result = batch.BatchResult(loci=None, settings=settings, prior=prior,
                                           fitted=fitted, chunks=per_pass,
                                           log_marginal=tally.log_marginal)
                timings = {"read_seconds": round(read_seconds, 3),
                           "compute_seconds": round(time.perf_counter() - computing, 3)}
                report = tally.report(scan, result, requested_prior=args.prior,
                                      mu_level=args.mu_level, chunk_size=args.chunk_size,
                                      jobs=args.jobs, scheduler=args.scheduler,
                                      timings=timings)
                written.finish(report)
    finally:
        if bar is not None:
            bar.close()
    return report
