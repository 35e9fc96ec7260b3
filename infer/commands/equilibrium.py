"""``qhat equilibrium``: exact balance, classic approximations, load and incidence for one locus.

Forward calculation only (no data): the exact stable equilibrium of DESIGN.md section 2,
each classic approximation with its relative error and range flag, the mutation load,
the expected fraction of newborns affected per mode and, with ``--Ne``, Wright's
stationary distribution. The module imports only the standard library at import time.
"""

from __future__ import annotations

import math
import os
import re
import sys
import tempfile

from infer.core.text import caution_sentence

__all__ = ["add_arguments", "run", "parse_options", "compute"]

INHERITANCE = ("autosomal", "x-linked")

#: option -> (lowest, lowest allowed?, highest, highest allowed?, default); None = unbounded
_BOUNDS = {
    "mu": (0.0, True, 1.0, False, None),
    "s": (0.0, False, 1.0, True, None),
    "h": (0.0, True, 1.0, True, None),
    "F": (0.0, True, 1.0, False, 0.0),
    "nu": (0.0, True, 1.0, False, 0.0),
    "alpha": (0.0, False, None, False, 1.0),
    "penetrance": (0.0, False, 1.0, True, 1.0),
    "Ne": (0.0, False, None, False, None),
    "interval": (0.0, False, 1.0, False, 0.95),
}


def add_arguments(parser) -> None:
    """Register the options of ``qhat equilibrium``."""
    add = parser.add_argument
    if hasattr(parser, "_negative_number_matcher"):
        # Let values such as "-1e-5" reach the range checks (argparse only knows "-1",
        # "-.5"), so the message names the option and the value.
        parser._negative_number_matcher = re.compile(r"^-(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")
    add("--mu", required=True, metavar="M", help="mutation rate A->a per gamete per generation")
    add("--s", required=True, metavar="S", help="selection coefficient against aa, in (0, 1]")
    add("--h", required=True, metavar="H", help="dominance coefficient, in [0, 1]")
    add("--F", metavar="F", help="inbreeding coefficient, in [0, 1) (default 0)")
    add("--nu", metavar="NU", help="back mutation rate a->A, in [0, 1) (default 0)")
    add("--inheritance", default="autosomal", metavar="MODE",
        help="autosomal (default) or x-linked")
    add("--alpha", metavar="A",
        help="x-linked: male-to-female mutation rate ratio (default 1); "
        "mu is the sex-averaged rate (2 mu_female + mu_male)/3")
    add("--penetrance", metavar="P", help="probability an affected genotype shows (default 1)")
    add("--json", action="store_true", help="print one JSON object instead of the table")
    add("--plot", metavar="FILE.png", help="draw q_hat against h with the approximations")
    add("--Ne", metavar="N", help="effective size: add Wright's stationary distribution "
        "(autosomal, F = 0, needs nu > 0)")
    add("--sample", metavar="N", help="with --Ne: probability the allele is absent "
        "from a sample of N allele copies")
    add("--interval", metavar="P", help="central interval of the stationary distribution "
        "(default 0.95)")


def _number(name: str, text):
    """Parse and range-check one numeric option, raising InputError naming it."""
    from infer.errors import InputError

    low, low_ok, high, high_ok, default = _BOUNDS[name]
    if text is None:
        return default
    option = f"--{name}"
    try:
        value = float(text)
    except (TypeError, ValueError):
        raise InputError(f"{text!r} is not a number", source=option) from None
    if not math.isfinite(value):
        raise InputError(f"{text} is not a finite number", source=option)
    if low is not None and (value < low or (value == low and not low_ok)):
        if value < 0 and low == 0:
            raise InputError(f"{text} is negative", source=option)
        raise InputError(f"{text} must be above {low:g}", source=option)
    if high is not None and value > high:
        raise InputError(f"{text} is above {high:g}", source=option)
    if high is not None and value == high and not high_ok:
        raise InputError(f"{text} must be below {high:g}", source=option)
    return value


def parse_options(args) -> dict:
    """Validate the command-line options; return a dict of plain Python values.

    Raises
    ------
    infer.errors.InputError
        For the first bad option, naming it and its value (``--s: 1.5 is above 1``).
    """
    from infer.errors import InputError

    options = {name: _number(name, getattr(args, name, None)) for name in _BOUNDS}
    inheritance = args.inheritance
    if inheritance not in INHERITANCE:
        raise InputError(f"{inheritance!r} is not one of {', '.join(INHERITANCE)}",
                         source="--inheritance")
    options["inheritance"] = inheritance
    if inheritance == "autosomal" and args.alpha is not None:
        raise InputError(f"{args.alpha} applies to x-linked loci only", source="--alpha")
    options["sample"] = None
    if args.sample is not None:
        if options["Ne"] is None:
            raise InputError(f"{args.sample} needs --Ne", source="--sample")
        try:
            sample = int(args.sample)
        except ValueError:
            raise InputError(f"{args.sample!r} is not a whole number", source="--sample") from None
        if sample < 1:
            raise InputError(f"{args.sample} must be at least 1", source="--sample")
        options["sample"] = sample
    if options["Ne"] is not None:
        if inheritance != "autosomal":
            raise InputError("the drift model covers autosomal loci only", source="--Ne")
        if options["F"] > 0:
            raise InputError(f"the drift model needs F = 0, not {args.F}", source="--Ne")
        if options["nu"] == 0:
            raise InputError("Wright's stationary distribution needs back mutation: "
                             "give --nu > 0", source="--Ne")
    elif args.interval is not None:
        raise InputError(f"{args.interval} needs --Ne", source="--interval")
    options["plot"] = args.plot
    if args.plot is not None:
        folder = os.path.dirname(os.path.abspath(args.plot))
        if not os.path.isdir(folder):
            raise InputError(f"folder {folder} does not exist", source="--plot")
        if not args.plot.lower().endswith(".png"):
            raise InputError(f"{args.plot} must end in .png", source="--plot")
    return options


def _regime(exists: bool, q: float | None, nu: float) -> str:
    if not exists:
        return ("no stable interior equilibrium: mutation overwhelms selection and the "
                "deleterious allele goes to fixation")
    if q is not None and q > 0.5 and nu > 0:
        return ("mutation overwhelms selection: the deleterious allele is common, held "
                "below fixation only by back mutation")
    return "mutation-selection balance"


def compute(options: dict) -> dict:
    """Every reported quantity for one locus, as a JSON-ready dict (NaN -> None later)."""
    import numpy as np

    from infer.core import approximations, balance

    mu, s, h, F, nu = (options[k] for k in ("mu", "s", "h", "F", "nu"))
    penetrance = options["penetrance"]
    result = {"inheritance": options["inheritance"],
              "parameters": {"mu": mu, "s": s, "h": h, "F": F, "nu": nu,
                             "penetrance": penetrance}}
    if options["inheritance"] == "autosomal":
        exact = balance.autosomal_balance(mu, s, h, F, nu)
        exists, q = bool(exact.exists), float(exact.q_hat)
        result.update(q_hat=q, exists=exists, mean_fitness=float(exact.mean_fitness),
                      load=float(exact.load))
        found = approximations.autosomal_approximations(mu, s, h, F)
        affected = {mode: float(balance.affected_fraction(mode, q, F, penetrance))
                    for mode in ("dominant", "recessive")}
        affected["x-linked-male"] = None
    else:
        alpha = options["alpha"]
        exact = balance.x_linked_balance(mu, s, h, F, nu, alpha)
        exists = bool(exact.exists)
        mu_f, mu_m = balance.sex_specific_rates(mu, alpha)
        q_male, q_female = float(exact.q_male), float(exact.q_female)
        y = 2.0 * q_female - q_male
        load_male, load_female = float(exact.load_male), float(exact.load_female)
        result["parameters"]["alpha"] = alpha
        result.update(q_hat=float(exact.q_hat), exists=exists, q_male=q_male,
                      q_female=q_female, sperm_frequency=y,
                      load=0.5 * (load_male + load_female), load_male=load_male,
                      load_female=load_female,
                      new_mutation_share=float(exact.new_mutation_share),
                      mu_female=float(mu_f), mu_male=float(mu_m))
        q = result["q_hat"]
        found = approximations.x_linked_approximations(mu, s, h, alpha)
        _, het, hom = balance.daughter_genotype_frequencies(q_male, y, F)
        affected = {"dominant": penetrance * float(het + hom),
                    "recessive": penetrance * float(hom),
                    "x-linked-male": float(balance.affected_fraction(
                        "x-linked-male", q_male, penetrance=penetrance))}
    result["regime"] = _regime(exists, q if exists else None, nu)
    result["approximations"] = {
        name: {"value": float(a.value), "relative_error": float(a.relative_error),
               "in_range": bool(a.in_range), "formula": a.formula, "range_note": a.range_note}
        for name, a in found.items()
    }
    result["affected"] = affected
    if options["Ne"] is not None:
        result.update(_stationary(options))
    result = {k: (None if isinstance(v, float) and not np.isfinite(v) else v)
              for k, v in result.items()}
    return result


def _stationary(options: dict) -> dict:
    """Wright's stationary distribution via ``infer.core.drift.stationary`` (imported only here)."""
    from infer.errors import InputError

    try:
        from infer.core.drift import stationary as drift
    except ImportError:
        drift = None
    if drift is None or not hasattr(drift, "stationary_summary"):
        raise InputError("the drift model is not available in this build", source="--Ne")
    args = (options["Ne"], options["mu"], options["s"], options["h"], options["nu"])
    summary = drift.stationary_summary(*args, interval=options["interval"])
    out = {"stationary": {key: float(summary[key]) for key in ("mean", "median", "lower", "upper")},
           "interval": options["interval"], "Ne": options["Ne"]}
    if "sd" in summary:
        out["stationary"]["sd"] = float(summary["sd"])
    if options["sample"] is not None:
        out["sample"] = options["sample"]
        out["probability_absent"] = float(drift.probability_absent(options["sample"], *args))
    return out


def _format(value, digits: int = 4, sign: str = "") -> str:
    if isinstance(value, bool):
        return "yes" if value else "no"
    if value is None or not math.isfinite(value):
        return "—"
    return f"{value:{sign}.{digits}g}"


def render_table(result: dict) -> str:
    """The readable text table of ``qhat equilibrium``."""
    p = result["parameters"]
    head = ", ".join(f"{k} = {v:g}" for k, v in p.items())
    lines = [f"qhat equilibrium ({result['inheritance']}): {head}", ""]
    rows = []
    if result["inheritance"] == "x-linked":
        rows += [("q_male (newborn sons = eggs)", result["q_male"]),
                 ("q_female (newborn daughters)", result["q_female"]),
                 ("q_hat (all X chromosomes)", result["q_hat"]),
                 ("mutation load, sons", result["load_male"]),
                 ("mutation load, daughters", result["load_female"]),
                 ("affected sons with a new maternal mutation", result["new_mutation_share"])]
    else:
        rows += [("exact equilibrium q_hat", result["q_hat"]),
                 ("mean fitness", result["mean_fitness"]),
                 ("mutation load (1 - mean fitness)", result["load"])]
    width = max(len(r[0]) for r in rows) + 2
    lines += [f"{label:<{width}}{_format(value, 10)}" for label, value in rows]
    if result["load"] is not None and p["mu"] > 0:
        lines.append(f"{'load / mu':<{width}}{result['load'] / p['mu']:.4f}")
    lines += [f"{'regime':<{width}}{result['regime']}", ""]
    target = "q_male" if result["inheritance"] == "x-linked" else "q_hat"
    lines.append(f"approximations (of {target})")
    table = [("name", "value", "rel. error", "in range", "valid when")]
    for name, a in result["approximations"].items():
        error = _format(a["relative_error"], 3, "+")
        table.append((name, _format(a["value"], 6), error, _format(a["in_range"]),
                      a["range_note"]))
    widths = [max(len(row[i]) for row in table) for i in range(4)]
    for row in table:
        cells = "  ".join(c.ljust(w) for c, w in zip(row[:4], widths, strict=True))
        lines.append("  " + cells + "  " + row[4])
    lines += ["", f"affected newborns (penetrance {p['penetrance']:g})"]
    labels = {"dominant": "dominant (Aa + aa)", "recessive": "recessive (aa)",
              "x-linked-male": "x-linked, among male births"}
    if result["inheritance"] == "x-linked":
        labels["dominant"] += ", daughters"
        labels["recessive"] += ", daughters"
    for mode, value in result["affected"].items():
        if value is not None:
            lines.append(f"  {labels[mode]:<36}{_format(value, 6)}")
    if "stationary" in result:
        st = result["stationary"]
        lines += ["", f"Wright's stationary distribution (Ne = {result['Ne']:g}, "
                  f"{100 * result['interval']:g}% central interval)",
                  f"  mean {_format(st['mean'], 6)}, median {_format(st['median'], 6)}, "
                  f"interval {_format(st['lower'], 6)} to {_format(st['upper'], 6)}"]
        if "probability_absent" in result:
            lines.append(f"  probability the allele is absent from {result['sample']} "
                         f"copies: {_format(result['probability_absent'], 6)}")
    lines += ["", caution_sentence()]
    return "\n".join(lines) + "\n"


def write_plot(options: dict, path: str) -> None:
    """Draw q_hat against h in [0, 1] with the approximations and where each fails.

    The file is written to a temporary name in the same folder and renamed into place.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    import numpy as np

    from infer.core import approximations, balance

    mu, s, F, nu = (options[k] for k in ("mu", "s", "F", "nu"))
    h = np.linspace(0.0, 1.0, 501)
    if options["inheritance"] == "autosomal":
        exact = balance.autosomal_balance(mu, s, h, F, nu).q_hat
        found = approximations.autosomal_approximations(mu, s, h, F)
        ylabel = r"equilibrium frequency $\hat{q}$ of the deleterious allele"
    else:
        exact = balance.x_linked_balance(mu, s, h, F, nu, options["alpha"]).q_male
        found = approximations.x_linked_approximations(mu, s, h, options["alpha"])
        ylabel = r"equilibrium frequency among sons, $\hat{q}_{male}$"
    figure, (top, strip) = plt.subplots(
        2, 1, sharex=True, figsize=(7.0, 5.6), gridspec_kw={"height_ratios": [4, 1.2]}
    )
    top.plot(h, exact, color="black", linewidth=2.2, label="exact (this life cycle)")
    colours = plt.rcParams["axes.prop_cycle"].by_key()["color"]
    for row, (name, a) in enumerate(found.items()):
        colour = colours[row % len(colours)]
        top.plot(h, np.where(a.in_range, a.value, np.nan), color=colour, linewidth=1.3,
                 label=f"{name}")
        top.plot(h, np.where(a.in_range, np.nan, a.value), color=colour, linewidth=1.0,
                 linestyle=":")
        strip.fill_between(h, row, row + 0.8, where=~a.in_range, color=colour, alpha=0.45,
                           step="mid", linewidth=0)
    top.axvline(options["h"], color="grey", linewidth=0.8, linestyle="--")
    top.set_yscale("log")
    finite = exact[np.isfinite(exact)]
    if finite.size:
        top.set_ylim(finite.min() / 3.0, min(1.0, finite.max() * 3.0))
    top.set_ylabel(ylabel)
    top.legend(fontsize=8, loc="best", title="solid: in range; dotted: outside", title_fontsize=8)
    sex = " (x-linked)" if options["inheritance"] == "x-linked" else ""
    top.set_title(f"Mutation-selection balance{sex}: mu = {mu:g}, s = {s:g}, F = {F:g}, "
                  f"nu = {nu:g}", fontsize=10)
    strip.set_yticks([row + 0.4 for row in range(len(found))], list(found), fontsize=7)
    strip.set_ylim(-0.1, len(found))
    strip.set_ylabel("outside range", fontsize=8)
    strip.set_xlabel("dominance coefficient h")
    strip.set_xlim(0.0, 1.0)
    figure.tight_layout()
    folder = os.path.dirname(os.path.abspath(path))
    handle, temporary = tempfile.mkstemp(suffix=".png", dir=folder)
    os.close(handle)
    try:
        figure.savefig(temporary, dpi=120)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(temporary, 0o666 & ~umask)
        os.replace(temporary, path)
    finally:
        plt.close(figure)
        if os.path.exists(temporary):
            os.unlink(temporary)


def run(args) -> int:
    """Run ``qhat equilibrium``; return the exit status."""
    options = parse_options(args)
    result = compute(options)
    if options["plot"] is not None:
        write_plot(options, options["plot"])
    if args.json:
        from infer.reporting.jsonout import dumps

        sys.stdout.write(dumps(result))
    else:
        sys.stdout.write(render_table(result))
    return 0
