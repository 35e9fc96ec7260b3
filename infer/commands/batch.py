"""``qhat batch``: per-locus heterozygous selection (s_het) for many loci at once.

Reads a loci CSV (columns in ``infer.files.loci``), computes every locus's posterior of
s_het by exact quadrature (``infer.batch.run``), and writes a report folder: loci.csv,
summary.json and three PNG figures. ``--jobs N`` runs chunks of loci in N local
processes; ``--scheduler ADDRESS`` on a dask.distributed cluster. The chunks, and so
the results, are the same whichever way the work runs.
"""

from __future__ import annotations

import contextlib
import math
import sys
import time

from infer.core.text import caution_sentence

__all__ = ["add_arguments", "run"]

MODELS = ("deterministic", "drift")
PRIORS = ("log-uniform", "empirical")


def add_arguments(parser) -> None:
    """Register the options of ``qhat batch``."""
    parser.add_argument("loci", metavar="LOCI.csv",
                        help="columns locus, observed, sampled, mu [, mu_lower, mu_upper]")
    parser.add_argument("--out", required=True, metavar="DIR", help="report folder to write")
    parser.add_argument("--model", choices=MODELS, default="deterministic",
                        help="deterministic balance (default) or Wright's drift density")
    parser.add_argument("--Ne", type=float, metavar="N", help="effective size (drift model)")
    parser.add_argument("--nu", type=float, default=1e-8,
                        help="back-mutation rate (drift model; default 1e-8)")
    parser.add_argument("--prior", choices=PRIORS, default="log-uniform",
                        help="shared prior on s_het: log-uniform (default) or a log-normal "
                        "fitted to all loci (empirical Bayes)")
    parser.add_argument("--s-low", type=float, default=1e-5, help="lower bound of s_het (1e-5)")
    parser.add_argument("--s-high", type=float, default=0.5, help="upper bound of s_het (0.5)")
    parser.add_argument("--grid-points", type=int, default=400,
                        help="log-spaced grid nodes of s_het (400)")
    parser.add_argument("--interval", type=float, default=0.95, help="credible level (0.95)")
    parser.add_argument("--mu-level", type=float, default=0.95,
                        help="level of the mu_lower..mu_upper intervals in the file (0.95)")
    parser.add_argument("--jobs", type=int, default=1, metavar="N", help="local processes")
    parser.add_argument("--scheduler", metavar="ADDRESS",
                        help="dask.distributed scheduler address (needs qhat[dist])")
    parser.add_argument("--chunk-size", type=int, default=512, metavar="N",
                        help="loci per chunk (512); memory grows with it, not with the file")
    parser.add_argument("--skip-bad-rows", action="store_true",
                        help="leave bad rows out, listing each one, instead of stopping")
    parser.add_argument("--force", action="store_true", help="replace an existing --out")
    parser.add_argument("--quiet", action="store_true", help="no progress bar or summary line")


def _check_options(args):
    from infer.errors import InputError

    def bad(option, message):
        raise InputError(message, source=option)

    finite = {"--s-low": args.s_low, "--s-high": args.s_high, "--interval": args.interval,
              "--mu-level": args.mu_level, "--nu": args.nu}
    for option, value in finite.items():
        if not math.isfinite(value):
            bad(option, f"{value} is not a finite number")
    if not 0 < args.s_low < args.s_high:
        bad("--s-low", f"{args.s_low:g} must be positive and below --s-high {args.s_high:g}")
    if args.s_high > 0.5:
        bad("--s-high", f"{args.s_high:g} is above 0.5 (aa fitness 1 - 2 s_het would be negative)")
    if not 0 < args.interval < 1:
        bad("--interval", f"{args.interval:g} is not between 0 and 1")
    if not 0 < args.mu_level < 1:
        bad("--mu-level", f"{args.mu_level:g} is not between 0 and 1")
    if args.grid_points < 20:
        bad("--grid-points", f"{args.grid_points} is fewer than 20")
    if args.jobs < 1:
        bad("--jobs", f"{args.jobs} is less than 1")
    if args.chunk_size < 1:
        bad("--chunk-size", f"{args.chunk_size} is less than 1")
    if args.scheduler and args.jobs != 1:
        bad("--jobs", "give either --jobs or --scheduler, not both")
    if args.model == "drift":
        if args.Ne is None:
            bad("--Ne", "the drift model needs --Ne")
        if not (math.isfinite(args.Ne) and args.Ne > 0):
            bad("--Ne", f"{args.Ne:g} is not a positive number")
        if not 0 < args.nu < 1:
            bad("--nu", f"{args.nu:g} must be in (0, 1) for Wright's density")
    elif args.Ne is not None:
        bad("--Ne", "--Ne applies only with --model drift")


@contextlib.contextmanager
def _executor(args):
    """Yield a ``map``-like function running chunks locally, in processes, or on dask."""
    from infer.errors import InputError

    if args.scheduler:
        try:
            from dask.distributed import Client
        except ImportError:
            raise InputError("dask.distributed is not installed: install qhat[dist]",
                             source="--scheduler") from None
        try:
            client = Client(args.scheduler, timeout="20s")
        except (OSError, TimeoutError, ValueError) as error:
            raise InputError(f"cannot reach the scheduler at {args.scheduler} ({error})",
                             source="--scheduler") from None

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
        context.set_forkserver_preload(["infer.batch.run", "scipy.special", "scipy.interpolate"])
        with ProcessPoolExecutor(max_workers=args.jobs, mp_context=context) as pool:
            yield lambda function, tasks: pool.map(function, tasks)
    else:
        yield map


def _prior_curve(prior, settings):
    import numpy as np

    u = settings.log_s
    density = np.exp(prior.log_density(u))
    mass = np.trapezoid(density, u)
    return u / math.log(10), density / mass * math.log(10)


def _summary(args, table, result, flags, timings, mu_sigma):
    import numpy as np

    from infer.core.text import CAUTION_LINE as CAUTION

    loci, settings = result.loci, result.settings
    counts = {key: {"count": int(np.sum((loci["flags"] & bit) > 0)), "meaning": meaning}
              for bit, (key, meaning) in sorted(flags.items())}
    medians = loci["median"][np.isfinite(loci["median"])]
    fitted = None
    if result.fitted is not None:
        f = result.fitted
        fitted = {"family": "log-normal", "median": f.prior.median, "sigma": f.prior.sigma,
                  "se_log_median": f.se_log_median, "se_log_sigma": f.se_log_sigma,
                  "at_search_edge": f.at_search_edge, "search": f.search,
                  "log_marginal_likelihood": f.log_marginal,
                  "log_marginal_likelihood_log_uniform": f.log_marginal_uniform,
                  "log_bayes_factor_vs_log_uniform": f.log_marginal - f.log_marginal_uniform}
    return {
        "caution": CAUTION,
        "command": "qhat batch",
        "input": {"file": table.source, "loci": len(table.names),
                  "loci_with_mu_interval": int(np.sum(mu_sigma > 0)),
                  "skipped_rows": table.skipped, "ignored_columns": table.ignored_columns},
        "model": {
            "name": settings.model,
            "convention": "s_het = h*s with h = 1/2: Aa fitness 1 - s_het, aa 1 - 2 s_het; "
                          "q_hat = mu / (s_het (1 + mu)) exactly (deterministic balance)",
            "likelihood": "k ~ Binomial(n, q_hat)" if settings.model == "deterministic"
            else "k ~ Binomial(n, x), x from Wright's stationary density",
            "Ne": settings.Ne, "nu": settings.nu if settings.model == "drift" else None,
            "mu_uncertainty": f"log-normal with median mu and the {args.mu_level:g} central "
                              "interval mu_lower..mu_upper, integrated out",
        },
        "settings": {"s_low": settings.s_low, "s_high": settings.s_high,
                     "grid_points": settings.grid_points, "grid_step_log": settings.step,
                     "interval": settings.interval, "mu_level": args.mu_level,
                     "kernel_half_width": settings.half_width, "chunk_size": args.chunk_size},
        "prior": {"requested": args.prior, "used": result.prior.describe(),
                  "family": result.prior.family, "low": settings.s_low, "high": settings.s_high,
                  "fitted": fitted},
        "log_marginal_likelihood": result.log_marginal,
        "expected_count": "n x the posterior median of q_hat" if settings.model == "deterministic"
        else "n x E[x] under Wright's density at the posterior median of s_het",
        "flags": counts,
        "medians_across_loci": {f"q{int(p * 100):02d}": float(np.quantile(medians, p))
                                for p in (0.05, 0.25, 0.5, 0.75, 0.95)} if medians.size else {},
        "execution": {"jobs": args.jobs, "scheduler": args.scheduler, "chunks": result.chunks},
        "timings": timings,
        "files": ["loci.csv", "summary.json", "medians.png", "observed_vs_expected.png",
                  "prior.png"],
    }


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
    from infer.batch import run as batch
    from infer.files import loci as batch_io

    table = batch_io.read_loci(args.loci, skip_bad_rows=args.skip_bad_rows)
    for skipped in table.skipped:
        print(f"qhat: warning: {table.source}: {batch_io.describe_skipped(skipped)}",
              file=sys.stderr)
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
        with _executor(args) as map_chunks, batch_io.ChunkStore() as store:
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
    summary = _summary(args, table, result, batch.FLAGS, timings, mu_sigma)
    curve = _prior_curve(result.prior, result.settings)
    batch_io.write_report(out, table, result, summary, batch.FLAGS, curve, force=args.force)
    if not args.quiet:
        flagged = sum(v["count"] for v in summary["flags"].values())
        print(f"qhat batch: {len(table.names)} loci -> {out} ({result.prior.describe()}; "
              f"{flagged} flags; {time.perf_counter() - started:.1f} s). "
              f"{caution_sentence()}")
    return 0
