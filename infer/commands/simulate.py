"""``qhat simulate``: Wright–Fisher forward simulation under the qhat life cycle.

Runs many replicate populations at once (selection on zygotes, mutation in gametes,
binomial sampling of 2Ne genes), drops a burn-in, and reports the time-averaged mean, sd
and quantiles of q beside Wright's stationary density (when --nu > 0).
"""

from __future__ import annotations

import json
import math
import os
import sys
import tempfile

MAX_VALUES = 50_000_000  # recorded frequencies kept in memory (replicates × kept generations)
PROBABILITIES = (0.025, 0.25, 0.5, 0.75, 0.975)
OPTION = {"burn_in": "--burn-in"}  # library argument -> option name, where they differ


def add_arguments(parser) -> None:
    """Register the options of ``qhat simulate``."""
    parser.add_argument(
        "--Ne", type=float, required=True, help="effective population size (2Ne genes)"
    )
    parser.add_argument(
        "--mu", type=float, required=True, help="forward mutation rate A->a per gene"
    )
    parser.add_argument(
        "--s", type=float, required=True, help="selection coefficient (aa fitness 1-s)"
    )
    parser.add_argument("--h", type=float, required=True, help="dominance (Aa fitness 1-hs)")
    parser.add_argument("--nu", type=float, default=0.0, help="back mutation rate a->A (default 0)")
    parser.add_argument(
        "--replicates", type=int, default=200, help="independent populations (default 200)"
    )
    parser.add_argument(
        "--generations", type=int, default=20_000, help="generations in total (default 20000)"
    )
    parser.add_argument(
        "--burn-in",
        type=int,
        default=None,
        help="generations dropped at the start (default a fifth)",
    )
    parser.add_argument(
        "--thin", type=int, default=1, help="keep every THIN-th generation (default 1)"
    )
    parser.add_argument("--seed", type=int, default=None, help="seed of the random generator")
    parser.add_argument("--json", action="store_true", help="print one JSON object")
    parser.add_argument(
        "--plot", metavar="FILE.png", default=None, help="draw trajectories and the histogram"
    )


def _fail(field, message):
    from infer.errors import InputError

    return InputError(message, source="qhat simulate", field=field)


def _validate(args):
    for name in ("Ne", "mu", "s", "h", "nu"):
        value = getattr(args, name)
        if not math.isfinite(value):
            raise _fail(f"--{name}", f"{value} is not a finite number")
    if args.Ne <= 0 or round(2 * args.Ne) < 1:
        raise _fail("--Ne", f"{args.Ne:g} is not a positive size (2Ne must be at least 1 gene)")
    for name in ("mu", "s", "h"):
        value = getattr(args, name)
        if not 0 <= value <= 1:
            raise _fail(f"--{name}", f"{value:g} is not in [0, 1]")
    if not 0 <= args.nu < 1:
        raise _fail("--nu", f"{args.nu:g} is not in [0, 1)")
    if args.replicates < 1:
        raise _fail("--replicates", f"{args.replicates} is not at least 1")
    if args.generations < 1:
        raise _fail("--generations", f"{args.generations} is not at least 1")
    if args.burn_in is None:
        args.burn_in = args.generations // 5
    if not 0 <= args.burn_in < args.generations:
        raise _fail("--burn-in", f"{args.burn_in} is not in [0, {args.generations})")
    if args.thin < 1:
        raise _fail("--thin", f"{args.thin} is not at least 1")
    if args.seed is not None and args.seed < 0:
        raise _fail("--seed", f"{args.seed} is not a whole number >= 0")
    kept = -(-(args.generations - args.burn_in) // args.thin)
    if args.replicates * kept > MAX_VALUES:
        raise _fail(
            "--replicates",
            f"{args.replicates} replicates x {kept} kept generations is more than "
            f"{MAX_VALUES} values; "
            "use --thin or fewer replicates",
        )
    if args.plot is not None:
        folder = os.path.dirname(os.path.abspath(args.plot))
        if not args.plot.lower().endswith(".png"):
            raise _fail("--plot", f"{args.plot} does not end in .png")
        if not os.path.isdir(folder):
            raise _fail("--plot", f"{args.plot}: folder {folder} does not exist")


def run(args) -> int:
    """Run ``qhat simulate``: simulate, summarise, print, and optionally plot."""
    _validate(args)
    import numpy as np

    from infer.core.drift import stationary as drift
    from infer.core.wright_fisher import wright_fisher
    from infer.errors import InputError

    seed = args.seed if args.seed is not None else int(np.random.SeedSequence().entropy % 2**63)
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
            probabilities=PROBABILITIES,
        )
    except InputError as error:
        raise _fail(OPTION.get(error.field, f"--{error.field}"), error.message) from None
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
        _plot(result, args, wright)
    if args.json:
        print(json.dumps(document, indent=2))
    else:
        _print_text(document)
    return 0


def _print_text(doc):
    se = doc["mean_standard_error"]
    print(
        f"Wright-Fisher simulation: Ne = {doc['Ne']:g} ({doc['genes']} genes), mu = {doc['mu']:g}, "
        f"s = {doc['s']:g}, h = {doc['h']:g}, nu = {doc['nu']:g}"
    )
    print(
        f"{doc['replicates']} replicates x {doc['generations']} generations, "
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


def figure(result, args, wright):
    """Trajectories (left) and the long-run histogram over Wright's density (right)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    import numpy as np

    from infer.core.drift import stationary as drift

    fig, (left, right) = plt.subplots(1, 2, figsize=(11, 4.2))
    shown = result.trajectories[: min(10, len(result.trajectories))]
    for row in shown:
        left.plot(result.generations, row, lw=0.7)
    left.set_xlabel("generation")
    left.set_ylabel("frequency q of the deleterious allele")
    left.set_title(f"{len(shown)} of {args.replicates} trajectories")
    pooled = result.trajectories.ravel()
    top = max(float(np.quantile(pooled, 0.999)), 2 / result.genes)
    bins = np.linspace(0, top, 60)
    right.hist(pooled, bins=bins, density=True, alpha=0.5, label="simulated (after burn-in)")
    if wright:
        x = np.linspace(top / 2000, top, 400)
        right.plot(
            x,
            drift.stationary_density(x, args.Ne, args.mu, args.s, args.h, args.nu),
            color="black",
            label="Wright's stationary density",
        )
    right.set_xlabel("frequency q")
    right.set_ylabel("probability density")
    right.set_title("long-run distribution")
    right.legend()
    fig.tight_layout()
    return fig


def _plot(result, args, wright):
    import matplotlib.pyplot as plt

    fig = figure(result, args, wright)
    folder = os.path.dirname(os.path.abspath(args.plot))
    handle, temporary = tempfile.mkstemp(suffix=".png", dir=folder)
    os.close(handle)
    try:
        fig.savefig(temporary, dpi=110)
        os.replace(temporary, args.plot)
    except BaseException:
        if os.path.exists(temporary):
            os.remove(temporary)
        raise
    finally:
        plt.close(fig)
    print(f"wrote {args.plot}", file=sys.stderr)
