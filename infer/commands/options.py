"""Validation of every command's options, with one wording and one error shape.

Options reach the commands as the text the user typed (no argparse ``type=``), and the
functions here turn them into numbers, check their ranges and how they combine, and
raise :class:`~infer.errors.InputError` with the option as its source. The command line
prints that as one line and exits with status 2 before anything is written::

    qhat: error: --mu: 'abc' is not a number
    qhat: error: --s: 1.5 is above 1
    qhat: error: --s: 0 must be above 0
    qhat: error: --replicates: 0 must be at least 1
    qhat: error: --inheritance: 'y-linked' is not one of autosomal, x-linked

A value is quoted as typed; text that is not a number is quoted with ``'...'``. The
module imports only the standard library (``qhat --help`` stays fast).
"""

from __future__ import annotations

import math
import os
import re
from typing import Any, NamedTuple

from infer.core.choices import INHERITANCES, MODELS
from infer.errors import InputError

__all__ = [
    "Range",
    "QUIET_HELP",
    "add_json",
    "add_quiet",
    "accept_negative_numbers",
    "option_error",
    "option_name",
    "number",
    "option_choice",
    "png_path",
    "convert",
    "equilibrium_options",
    "simulate_options",
    "SIMULATE_MAX_VALUES",
    "SIMULATE_MAX_NE",
    "SIMULATE_MAX_WORK",
    "SIMULATE_GENERATION_COST",
    "simulate_work",
    "check_threshold",
    "batch_options",
    "BATCH_PRIORS",
    "BATCH_MAX_GRID_POINTS",
    "BATCH_MIN_MU_LEVEL",
    "seed",
]

#: recorded frequencies ``qhat simulate`` keeps in memory (replicates x kept generations)
SIMULATE_MAX_VALUES = 50_000_000
#: largest ``qhat simulate --Ne`` (2Ne genes below 2**53, exact in float64)
SIMULATE_MAX_NE = 1e15
#: one generation costs about as much as this many more replicates (Python overhead per
#: generation, about 40 us, over about 110 ns per replicate-generation; measured)
SIMULATE_GENERATION_COST = 400
#: the most work ``qhat simulate`` accepts, in replicate-generations: generations x
#: (replicates + SIMULATE_GENERATION_COST); about 10 minutes at 110 ns each
SIMULATE_MAX_WORK = 5_000_000_000
#: largest ``qhat batch --grid-points`` (work per locus grows with its square)
BATCH_MAX_GRID_POINTS = 5_000
#: smallest ``qhat batch --mu-level`` (the log-normal spread of mu grows as 1 / z)
BATCH_MIN_MU_LEVEL = 0.5
#: the shared priors on s_het that ``qhat batch`` offers
BATCH_PRIORS = ("log-uniform", "empirical")

# "-1e-5", "-.5", "-2": values, not options (argparse alone knows only "-1" and "-.5")
_NEGATIVE_NUMBER = re.compile(r"^-(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")


#: what ``-q/--quiet`` means for every command (docs/command-line.md,
#: 'Progress, -q/--quiet and --json')
QUIET_HELP = "no progress on stderr, results only (warnings are still printed)"


def add_quiet(parser) -> None:
    """Register ``-q/--quiet`` with the one meaning every command gives it."""
    parser.add_argument("-q", "--quiet", action="store_true", help=QUIET_HELP)


def add_json(parser, what: str) -> None:
    """Register ``--json``: print ``what`` (one JSON document) on stdout instead of text."""
    parser.add_argument("--json", action="store_true",
                        help=f"print {what} as one JSON document on stdout instead of text")


def accept_negative_numbers(parser) -> None:
    """Let values such as ``-1e-5`` reach the range checks, so the message names them."""
    if hasattr(parser, "_negative_number_matcher"):
        parser._negative_number_matcher = _NEGATIVE_NUMBER


def option_error(option: str, message: str) -> InputError:
    """The error for a bad option: ``--option: message`` (exit status 2)."""
    return InputError(message, source=option)


def option_name(dest: str) -> str:
    """``--burn-in`` for the argparse destination ``burn_in``."""
    return "--" + dest.replace("_", "-")


class Range(NamedTuple):
    """What a numeric option accepts.

    Attributes
    ----------
    low, high : float or None
        Ends of the range (None: unbounded).
    low_open, high_open : bool
        True when the end itself is refused.
    whole : bool
        Whole numbers only (returned as int).
    note : str
        Said after a value above ``high`` (why the bound is there).
    low_note : str
        Said after a value below ``low`` (why the bound is there).
    """

    low: float | None = None
    high: float | None = None
    low_open: bool = False
    high_open: bool = False
    whole: bool = False
    note: str = ""
    low_note: str = ""


def _typed(value: Any) -> str:
    """The value as the user typed it (numbers from a program in their shortest form)."""
    if isinstance(value, float):
        return f"{value:g}"
    return str(value)


def number(value: Any, option: str, accepted: Range | None = None) -> float | int | None:
    """One numeric option, converted and range-checked; None stays None.

    Parameters
    ----------
    value : str, int, float or None
        The text typed (or a number, from a program or an argparse default).
    option : str
        The option, ``"--mu"``, named in the error.
    accepted : Range, optional
        The accepted range (default: any finite number).

    Returns
    -------
    float, int or None
        ``int`` when ``accepted.whole``.

    Raises
    ------
    infer.errors.InputError
        ``'abc' is not a number``, ``nan is not a finite number``, ``2.5 is not a whole
        number``, ``-1 is negative``, ``0 must be above 0``, ``0 must be at least 1``,
        ``1.5 is above 1``, ``1 must be below 1``.
    """
    if value is None:
        return None
    accepted = accepted or Range()
    shown = _typed(value)
    if isinstance(value, bool):
        raise option_error(option, f"{value!r} is not a number")
    try:
        parsed = float(value)
    except (TypeError, ValueError):
        raise option_error(option, f"{shown!r} is not a number") from None
    if not math.isfinite(parsed):
        raise option_error(option, f"{shown} is not a finite number")
    if accepted.whole and parsed != math.floor(parsed):
        raise option_error(option, f"{shown} is not a whole number")
    low, high = accepted.low, accepted.high
    if low is not None and (parsed < low or (parsed == low and accepted.low_open)):
        if parsed < 0 <= low:
            raise option_error(option, f"{shown} is negative")
        relation = "above" if accepted.low_open else "at least"
        note = f" {accepted.low_note}" if accepted.low_note else ""
        raise option_error(option, f"{shown} must be {relation} {low:g}{note}")
    if high is not None and parsed > high:
        note = f" {accepted.note}" if accepted.note else ""
        raise option_error(option, f"{shown} is above {high:g}{note}")
    if high is not None and parsed == high and accepted.high_open:
        raise option_error(option, f"{shown} must be below {high:g}")
    if accepted.whole:
        try:
            return int(value)
        except (TypeError, ValueError):   # "1e3" or "12.0": whole, written as a float
            return int(parsed)
    return parsed


def option_choice(value: str, option: str, allowed) -> str:
    """One of a fixed set of names: ``'y-linked' is not one of autosomal, x-linked``."""
    if value not in allowed:
        raise option_error(option, f"{value!r} is not one of {', '.join(allowed)}")
    return value


def png_path(value: str | None, option: str = "--plot") -> str | None:
    """A PNG file to write: it must end in .png and its folder must exist."""
    if value is None:
        return None
    if not value.lower().endswith(".png"):
        raise option_error(option, f"{value} must end in .png")
    folder = os.path.dirname(os.path.abspath(value))
    if not os.path.isdir(folder):
        raise option_error(option, f"{value}: folder {folder} does not exist")
    return value


def convert(args, ranges: dict[str, Range]) -> None:
    """Convert and check the numeric options named in ``ranges``, in place on ``args``."""
    for dest, accepted in ranges.items():
        setattr(args, dest, number(getattr(args, dest, None), option_name(dest), accepted))


def seed(value: Any, option: str = "--seed") -> int | None:
    """A random seed: a whole number >= 0, or None."""
    return number(value, option, Range(low=0, whole=True))


# ------------------------------------------------------------------ qhat equilibrium

#: option -> (accepted range, default)
EQUILIBRIUM_NUMBERS: dict[str, tuple[Range, float | None]] = {
    "mu": (Range(0.0, 1.0, high_open=True), None),
    "s": (Range(0.0, 1.0), None),  # s = 0 only with --Ne (commands/equilibrium.py)
    "h": (Range(), None),  # any finite h with 1 - hs >= 0 (commands/equilibrium.py)
    "F": (Range(0.0, 1.0, high_open=True), 0.0),
    "nu": (Range(0.0, 1.0, high_open=True), 0.0),
    "alpha": (Range(0.0, None, low_open=True), 1.0),
    "penetrance": (Range(0.0, 1.0, low_open=True), 1.0),
    "Ne": (Range(0.0, None, low_open=True), None),
    "interval": (Range(0.0, 1.0, low_open=True, high_open=True), 0.95),
}


def equilibrium_options(args) -> dict:
    """Every option of ``qhat equilibrium`` as a plain Python value.

    Raises
    ------
    infer.errors.InputError
        For the first bad option, naming it and its value (``--s: 1.5 is above 1``).
    """
    options = {}
    for name, (accepted, default) in EQUILIBRIUM_NUMBERS.items():
        if name in ("s", "h") and getattr(args, name, None) is None:
            options[name] = None  # given as fitnesses (commands/equilibrium.py)
            continue
        value = number(getattr(args, name, None), f"--{name}", accepted)
        options[name] = default if value is None else value
    inheritance = option_choice(args.inheritance, "--inheritance", INHERITANCES)
    options["inheritance"] = inheritance
    if inheritance == "autosomal" and args.alpha is not None:
        raise option_error("--alpha", f"{args.alpha} applies to x-linked loci only")
    options["sample"] = None
    if args.sample is not None:
        if options["Ne"] is None:
            raise option_error("--sample", f"{args.sample} needs --Ne")
        options["sample"] = number(args.sample, "--sample", Range(low=1, whole=True))
    if options["Ne"] is not None:
        if inheritance != "autosomal":
            raise option_error("--Ne", "the drift model covers autosomal loci only")
        if options["F"] > 0:
            raise option_error("--Ne", f"the drift model needs F = 0, not {args.F}")
        if options["nu"] == 0:
            raise option_error("--Ne", "Wright's stationary distribution needs back "
                               "mutation: give --nu > 0")
    elif args.interval is not None:
        raise option_error("--interval", f"{args.interval} needs --Ne")
    options["plot"] = png_path(args.plot)
    return options


# ------------------------------------------------------------------ qhat simulate

SIMULATE_NUMBERS = {
    "Ne": Range(0.0, SIMULATE_MAX_NE, low_open=True,
                note="(2Ne genes are drawn binomially each generation, and counts must stay "
                     "exact in float64, below 2**53; drift is negligible long before: use "
                     "qhat equilibrium)"),
    "mu": Range(0.0, 1.0),
    "s": Range(0.0, 1.0),
    "h": Range(0.0, 1.0),
    "nu": Range(0.0, 1.0, high_open=True),
    "q0": Range(0.0, 1.0),
    "replicates": Range(low=1, whole=True),
    "generations": Range(low=1, whole=True),
    "burn_in": Range(low=0, whole=True),
    "thin": Range(low=1, whole=True),
    "seed": Range(low=0, whole=True),
}


def simulate_options(args) -> None:
    """Check and convert the options of ``qhat simulate`` in place on ``args``.

    ``burn_in`` None becomes a fifth of the generations.

    Raises
    ------
    infer.errors.InputError
        For the first bad option, naming it and its value.
    """
    convert(args, SIMULATE_NUMBERS)
    if round(2 * args.Ne) < 1:
        raise option_error("--Ne", f"{_typed(args.Ne)} is too small: 2Ne must be at least "
                           "1 gene")
    if args.burn_in is None:
        args.burn_in = args.generations // 5
    if args.burn_in >= args.generations:
        raise option_error("--burn-in", f"{args.burn_in} must be below --generations "
                           f"{args.generations}")
    kept = -(-(args.generations - args.burn_in) // args.thin)
    if args.replicates * kept > SIMULATE_MAX_VALUES:
        raise option_error("--replicates", f"{args.replicates} replicates x {kept} kept "
                           f"generations is more than {SIMULATE_MAX_VALUES} values; use "
                           "--thin or fewer replicates")
    work = simulate_work(args.replicates, args.generations)
    if work > SIMULATE_MAX_WORK:
        raise option_error("--generations", f"{args.generations} generations of "
                           f"{args.replicates} replicates are about {work:.2g} "
                           "replicate-generations of work (each generation also costs "
                           f"as much as {SIMULATE_GENERATION_COST} replicates), more than "
                           f"the {SIMULATE_MAX_WORK:.0e} accepted (about 10 minutes); use "
                           "fewer generations or replicates")
    args.plot = png_path(args.plot)


def simulate_work(replicates: int, generations: int) -> int:
    """Work of a simulation in replicate-generations, the per-generation cost included."""
    return generations * (replicates + SIMULATE_GENERATION_COST)


# ------------------------------------------------------------------ qhat check

def check_threshold(value: Any) -> float:
    """The ``--threshold`` of ``qhat check``: a probability strictly between 0 and 1."""
    return number(value, "--threshold", Range(0.0, 1.0, low_open=True, high_open=True))


# ------------------------------------------------------------------ qhat batch

BATCH_NUMBERS = {
    "Ne": Range(0.0, None, low_open=True),
    "nu": Range(0.0, 1.0, high_open=True),
    "s_low": Range(0.0, None, low_open=True),
    "s_high": Range(0.0, 0.5, low_open=True,
                    note="(aa fitness 1 - 2 s_het would be negative)"),
    "grid_points": Range(low=20, high=BATCH_MAX_GRID_POINTS, whole=True,
                         note="(the work per locus grows with the square of the nodes, and "
                              "5000 already space ln s_het by 0.0022 over the default "
                              "range)"),
    "interval": Range(0.0, 1.0, low_open=True, high_open=True),
    "mu_level": Range(BATCH_MIN_MU_LEVEL, 1.0, high_open=True,
                      low_note="(each interval is read as a log-normal spread "
                               "ln(mu_upper/mu_lower) / (2 z), z the level's normal "
                               "quantile, 0.67 at 0.5; as the level falls to 0, z falls "
                               "to 0 and the spread, with the mu grid, grows without "
                               "bound)"),
    "jobs": Range(low=1, whole=True),
    "chunk_size": Range(low=1, whole=True),
}


def batch_options(args) -> None:
    """Check and convert the options of ``qhat batch`` in place on ``args``.

    Raises
    ------
    infer.errors.InputError
        For the first bad option, naming it and its value.
    """
    args.model = option_choice(args.model, "--model", MODELS)
    args.prior = option_choice(args.prior, "--prior", BATCH_PRIORS)
    convert(args, BATCH_NUMBERS)
    if not args.s_low < args.s_high:
        raise option_error("--s-low", f"{_typed(args.s_low)} must be below --s-high "
                           f"{_typed(args.s_high)}")
    if args.scheduler and args.jobs != 1:
        raise option_error("--jobs", "give either --jobs or --scheduler, not both")
    if args.model == "drift":
        if args.Ne is None:
            raise option_error("--Ne", "the drift model needs --Ne")
        if args.nu == 0:
            raise option_error("--nu", f"{_typed(args.nu)} must be above 0 for Wright's "
                               "density")
    elif args.Ne is not None:
        raise option_error("--Ne", "--Ne applies only with --model drift")
