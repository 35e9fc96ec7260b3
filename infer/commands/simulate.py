"""``qhat simulate``: Wright–Fisher forward simulation under the qhat life cycle.

Runs many replicate populations at once (selection on zygotes, mutation in gametes,
binomial sampling of 2Ne genes), each started at the deterministic equilibrium or at
``--q0``, drops a burn-in, and reports the time-averaged mean, sd
and quantiles of q beside Wright's stationary density (when --nu > 0). The options are
checked by :func:`infer.commands.options.simulate_options`; the figure is
:mod:`infer.reporting.plots.simulation`.
"""

from __future__ import annotations

import sys

from infer.commands import options as checks

__all__ = ["add_arguments", "run", "MAX_VALUES", "PROBABILITIES"]

#: recorded frequencies kept in memory (replicates × kept generations)
MAX_VALUES = checks.SIMULATE_MAX_VALUES
PROBABILITIES = (0.025, 0.25, 0.5, 0.75, 0.975)
#: library argument -> option name, where they differ
OPTION = {"burn_in": "--burn-in", "initial": "--q0"}


def add_arguments(parser) -> None:
    """Register the options of ``qhat simulate``."""
    checks.accept_negative_numbers(parser)
    add = parser.add_argument
    add("--Ne", required=True, metavar="N", help="effective population size (2Ne genes)")
    add("--mu", required=True, metavar="M", help="forward mutation rate A->a per gene")
    add("--s", required=True, metavar="S", help="selection coefficient (aa fitness 1-s)")
    add("--h", required=True, metavar="H", help="dominance (Aa fitness 1-hs)")
    add("--nu", default=0.0, metavar="NU", help="back mutation rate a->A (default 0)")
    add("--q0", default=None, metavar="Q",
        help="starting frequency of every replicate (default: the deterministic "
             "equilibrium)")
    add("--replicates", default=200, metavar="N", help="independent populations (default 200)")
    add("--generations", default=20_000, metavar="N",
        help="generations in total (default 20000)")
    add("--burn-in", default=None, metavar="N",
        help="generations dropped at the start (default a fifth)")
    add("--thin", default=1, metavar="N", help="keep every THIN-th generation (default 1)")
    add("--seed", default=None, metavar="N", help="seed of the random generator")
    checks.add_json(parser, "the results")
    checks.add_quiet(parser)
    add("--plot", metavar="FILE.png", default=None, help="draw trajectories and the histogram")
    add("--history", metavar="FILE.toml", default=None,
        help="run the [history] of FILE (a study file, or one with only [history]) from "
             "Wright's stationary density (or --q0) to the present, --Ne ... --nu being the "
             "present-day values; the replicates' frequencies today are compared with the "
             "distribution qhat propagates through the same history (--generations, "
             "--burn-in, --thin and --plot are not used)")


def run(args) -> int:
    """Run ``qhat simulate``: simulate, summarise, print, and optionally plot."""
    if args.history is not None:
        return _run_history(args)
    checks.simulate_options(args)
    if args.plot is not None:
        from infer.reporting.folder import check_file

        check_file(args.plot)
    import numpy as np

    from infer.core.drift import stationary as drift
    from infer.core.wright_fisher import wright_fisher
    from infer.errors import InputError

    seed = args.seed if args.seed is not None else int(np.random.SeedSequence().entropy % 2**63)
    bar = _progress_bar(args)
    try:
        result = wright_fisher(
            args.Ne,
            args.mu,
            args.s,
            args.h,
            args.nu,
            rng=np.random.default_rng(seed),
            replicates=args.replicates,
            generations=args.generations,
            burn_in=args.burn_in,
            thin=args.thin,
            initial=args.q0,
            probabilities=PROBABILITIES,
            progress=None if bar is None else bar.advance,
        )
    except InputError as error:
        option = OPTION.get(error.field, f"--{error.field}")
        raise checks.option_error(option, error.message) from None
    finally:
        if bar is not None:
            bar.close()
    wright = None
    if args.nu > 0 and args.mu > 0:
        summary = drift.stationary_summary(args.Ne, args.mu, args.s, args.h, args.nu)
        wright = {key: float(value) for key, value in summary.items()}
    document = {
        "Ne": args.Ne,
        "genes": result.genes,
        "mu": args.mu,
        "s": args.s,
        "h": args.h,
        "nu": args.nu,
        "q0": args.q0,
        "replicates": args.replicates,
        "generations": args.generations,
        "burn_in": args.burn_in,
        "thin": args.thin,
        "seed": seed,
        "mean": result.mean,
        "mean_standard_error": result.mean_standard_error if args.replicates > 1 else None,
        "sd": result.sd,
        "quantiles": {f"{p:g}": value for p, value in result.quantiles.items()},
        "wright": wright,
        "wright_note": None
        if wright
        else "Wright's stationary density needs --nu > 0 and --mu > 0",
    }
    if args.plot is not None:
        from infer.reporting.folder import file_error
        from infer.reporting.plots.simulation import write_simulation_plot

        try:
            write_simulation_plot(result, args, wright, args.plot)
        except OSError as error:
            raise file_error(error, args.plot) from None
        print(f"wrote {args.plot}", file=sys.stderr)
    if args.json:
        from infer.reporting.jsonout import dumps, versioned

        sys.stdout.write(dumps(versioned(document)))
    else:
        _print_text(document)
    return 0


class _Bar:
    """A tqdm bar over generations, fed ``advance(done, total)`` by the simulation."""

    def __init__(self, total: int):
        from tqdm import tqdm

        self.bar = tqdm(total=total, unit="generation", desc="qhat simulate", file=sys.stderr,
                        unit_scale=True)

    def advance(self, done: int, total: int) -> None:
        self.bar.update(done - self.bar.n)

    def close(self) -> None:
        self.bar.close()


def _progress_bar(args):
    """A progress bar on stderr when it is a terminal and --quiet is not given."""
    if args.quiet or not sys.stderr.isatty():
        return None
    return _Bar(int(args.generations))


def _print_text(doc):
    se = doc["mean_standard_error"]
    print(
        f"Wright-Fisher simulation: Ne = {doc['Ne']:g} ({doc['genes']} genes), mu = {doc['mu']:g}, "
        f"s = {doc['s']:g}, h = {doc['h']:g}, nu = {doc['nu']:g}"
    )
    print(
        f"{doc['replicates']} replicates x {doc['generations']} generations from "
        + ("the deterministic equilibrium" if doc["q0"] is None else f"q0 = {doc['q0']:g}")
        + ", "
        f"burn-in {doc['burn_in']}, "
        f"thin {doc['thin']}, seed {doc['seed']}"
    )
    print(
        f"time-averaged q: mean {doc['mean']:.6g}"
        + (f" (Monte Carlo s.e. {se:.2g})" if se else "")
        + f", sd {doc['sd']:.6g}"
    )
    print("quantiles: " + ", ".join(f"{p}: {v:.6g}" for p, v in doc["quantiles"].items()))
    if doc["wright"]:
        w = doc["wright"]
        print(
            f"Wright's density: mean {w['mean']:.6g}, median {w['median']:.6g}, "
            f"95% interval {w['lower']:.6g} to {w['upper']:.6g}"
        )
    else:
        print(doc["wright_note"])



def _run_history(args) -> int:
    """``qhat simulate --history FILE``: replicates of a history against its propagation.

    The replicates are :func:`infer.core.history.simulate.simulate_history`; the
    distribution is :func:`infer.core.history.distribution.history_distributions`, the
    one the drift model's likelihood integrates over (docs/files.md, 'History').
    """
    import numpy as np

    from infer.core.history.distribution import history_distributions
    from infer.core.history.simulate import simulate_history
    from infer.files.history import load_history

    checks.convert(args, checks.SIMULATE_NUMBERS)
    values = {"Ne": args.Ne, "mu": args.mu, "s": args.s, "h": args.h, "nu": args.nu}
    history = load_history(args.history, values)
    if args.replicates * max(history.length, 1) > checks.SIMULATE_MAX_WORK:
        raise checks.option_error("--replicates", f"{args.replicates} replicates x "
                                  f"{history.length} generations is more than "
                                  f"{checks.SIMULATE_MAX_WORK:.0e} replicate-generations")
    if args.q0 is None and not (args.nu > 0 and args.mu > 0):
        raise checks.option_error("--nu", f"{args.nu:g}: the history starts from Wright's "
                                  "stationary density, which needs --nu > 0 and --mu > 0; "
                                  "or give --q0")
    seed = args.seed if args.seed is not None else int(np.random.SeedSequence().entropy % 2**63)
    rng = np.random.default_rng(seed)
    replicates = simulate_history(rng, history, values, args.replicates, times=(0,),
                                  start=args.q0)[0]
    quantiles = {f"{p:g}": float(v) for p, v in
                 zip(PROBABILITIES, np.quantile(replicates, PROBABILITIES), strict=True)}
    propagated = None
    if args.q0 is None:
        law = history_distributions(history, {k: np.array([float(v)])
                                              for k, v in values.items()}, times=(0,))[0]
        mean = float(law.mean[0])
        second = float(law.expectation(law.points ** 2)[0])
        propagated = {"mean": mean, "sd": float(np.sqrt(max(second - mean * mean, 0.0)))}
    document = {
        **values, "genes": int(round(2 * args.Ne)), "q0": args.q0, "history": args.history,
        "generations": history.length, "burn_in": 0, "thin": 1,
        "replicates": args.replicates, "seed": seed,
        "mean": float(np.mean(replicates)),
        "mean_standard_error": float(np.std(replicates, ddof=1) / np.sqrt(args.replicates))
        if args.replicates > 1 else None,
        "sd": float(np.std(replicates)), "quantiles": quantiles, "propagated": propagated,
        "wright": None, "wright_note": "a history: the frequencies today, not a time average; "
                                       "compared with the propagated distribution",
    }
    if args.json:
        from infer.reporting.jsonout import dumps, versioned

        sys.stdout.write(dumps(versioned(document)))
        return 0
    se = document["mean_standard_error"]
    print(f"Wright-Fisher replicates of the history in {args.history}: {history.length} "
          f"generations to today; present-day Ne = {args.Ne:g}, mu = {args.mu:g}, "
          f"s = {args.s:g}, h = {args.h:g}, nu = {args.nu:g}")
    print(f"{args.replicates} replicates from "
          + ("Wright's stationary density" if args.q0 is None else f"q0 = {args.q0:g}")
          + f", seed {seed}")
    print(f"q today: mean {document['mean']:.6g}"
          + (f" (Monte Carlo s.e. {se:.2g})" if se else "") + f", sd {document['sd']:.6g}")
    print("quantiles: " + ", ".join(f"{p}: {v:.6g}" for p, v in quantiles.items()))
    if propagated is not None:
        print(f"propagated by qhat through the same history: mean {propagated['mean']:.6g}, "
              f"sd {propagated['sd']:.6g}")
    return 0
