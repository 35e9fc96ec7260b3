"""``qhat equilibrium``: exact balance, classic approximations, load and incidence for one locus.

Forward calculation only (no data): the exact stable equilibrium of docs/model.md,
each classic approximation with its relative error and range flag, the mutation load,
the expected fraction of newborns affected per mode and, with ``--Ne``, Wright's
stationary distribution. The module imports only the standard library at import time.
"""

from __future__ import annotations

import math
import sys

from infer.commands import options as checks
from infer.core.choices import AUTOSOMAL_MODES, INHERITANCES
from infer.core.text import caution_sentence

__all__ = ["add_arguments", "run", "parse_options", "compute", "render_table"]


def add_arguments(parser) -> None:
    """Register the options of ``qhat equilibrium`` (checked by :func:`parse_options`)."""
    checks.accept_negative_numbers(parser)
    add = parser.add_argument
    add("--mu", required=True, metavar="M", help="mutation rate A->a per gamete per generation")
    add("--s", metavar="S", help="selection coefficient against aa, in [0, 1] "
        "(0 only with --Ne: the neutral stationary distribution)")
    add("--h", metavar="H", help="dominance coefficient: Aa has fitness 1 - hs; in [0, 1], "
        "or (autosomal, no --Ne) h < 0 for a heterozygote fitter than both homozygotes "
        "and h > 1 for one less fit than aa, with 1 - hs >= 0")
    add("--w-AA", dest="w_AA", metavar="W", help="instead of --s and --h: the three "
        "genotype fitnesses on any common scale (autosomal), w_aa < w_AA; mapped to "
        "s = 1 - w_aa/w_AA, h = (1 - w_Aa/w_AA)/s")
    add("--w-Aa", dest="w_Aa", metavar="W", help="heterozygote fitness (with --w-AA, --w-aa)")
    add("--w-aa", dest="w_aa", metavar="W", help="fitness of aa (with --w-AA, --w-Aa)")
    add("--F", metavar="F", help="inbreeding coefficient, in [0, 1) (default 0)")
    add("--nu", metavar="NU", help="back mutation rate a->A, in [0, 1) (default 0)")
    add("--inheritance", default="autosomal", metavar="MODE",
        help=f"{' or '.join(INHERITANCES)} (default autosomal)")
    add("--alpha", metavar="A",
        help="x-linked: male-to-female mutation rate ratio (default 1); "
        "mu is the sex-averaged rate (2 mu_female + mu_male)/3")
    add("--penetrance", metavar="P", help="probability an affected genotype shows (default 1)")
    checks.add_json(parser, "the results")
    checks.add_quiet(parser)
    add("--plot", metavar="FILE.png", help="draw q_hat against h with the approximations")
    add("--Ne", metavar="N", help="effective size: add Wright's stationary distribution "
        "(autosomal, F = 0, needs nu > 0)")
    add("--sample", metavar="N", help="with --Ne: probability the allele is absent "
        "from a sample of N allele copies")
    add("--interval", metavar="P", help="central interval of the stationary distribution "
        "(default 0.95)")


def parse_options(args) -> dict:
    """Validate the command-line options; return a dict of plain Python values.

    See :func:`infer.commands.options.equilibrium_options`.

    Raises
    ------
    infer.errors.InputError
        For the first bad option, naming it and its value (``--s: 1.5 is above 1``).
    """
    options = checks.equilibrium_options(args)
    _fitness_options(args, options)
    if options["s"] == 0 and options["Ne"] is None:
        raise checks.option_error(
            "--s", f"{args.s} needs --Ne (and --nu > 0): without selection there is no "
            "mutation-selection balance; with --Ne it is Wright's neutral distribution")
    if options["inheritance"] == "x-linked":
        from infer.core.x_linked import germ_line_rate_problem

        problem = germ_line_rate_problem(options["mu"], options["alpha"])
        if problem is not None:
            raise checks.option_error("--mu", problem.replace("alpha =", "--alpha"))
    return options


def _fitness_options(args, options: dict) -> None:
    """--s and --h, or the three fitnesses; h outside [0, 1] only where it is built.

    The fitnesses map onto qhat's scale AA = 1 (:func:`infer.core.balance.fitness_coefficients`).
    """
    given = [name for name in ("w_AA", "w_Aa", "w_aa") if getattr(args, name, None) is not None]
    if given:
        for name in ("s", "h"):
            if options[name] is not None:
                raise checks.option_error(f"--{name}", f"{getattr(args, name)}: give either "
                                          "--s and --h or the three fitnesses, not both")
        for name in ("w_AA", "w_Aa", "w_aa"):
            if name not in given:
                raise checks.option_error(f"--w-{name[2:]}", "missing: the fitnesses come "
                                          "as three, --w-AA, --w-Aa and --w-aa")
        w = {name: checks.number(getattr(args, name), f"--w-{name[2:]}", checks.Range(0.0))
             for name in ("w_AA", "w_Aa", "w_aa")}
        if w["w_AA"] == 0:
            raise checks.option_error("--w-AA", f"{args.w_AA} must be above 0")
        if w["w_aa"] >= w["w_AA"]:
            raise checks.option_error(
                "--w-aa", f"{args.w_aa} is not below --w-AA {args.w_AA}: qhat writes a for "
                "the allele whose homozygote is less fit (swap the labels; equal "
                "homozygotes leave h undefined on the scale 1, 1 - hs, 1 - s)")
        options["s"] = (w["w_AA"] - w["w_aa"]) / w["w_AA"]
        options["h"] = (w["w_AA"] - w["w_Aa"]) / (w["w_AA"] - w["w_aa"])
        options["fitnesses"] = w
    else:
        for name in ("s", "h"):
            if options[name] is None:
                raise checks.option_error(f"--{name}", "missing: give --s and --h, or the "
                                          "three fitnesses --w-AA, --w-Aa, --w-aa")
    h, s = options["h"], options["s"]
    if not 0.0 <= h <= 1.0:
        if options["inheritance"] != "autosomal" or options["Ne"] is not None:
            where = "--Ne" if options["inheritance"] == "autosomal" else "--inheritance"
            raise checks.option_error(
                "--h", f"{h:g} is outside [0, 1]; h < 0 and h > 1 are built for the "
                f"autosomal deterministic balance only (not with {where})")
        if h * s > 1.0:
            raise checks.option_error(
                "--h", f"{h:g} with s = {s:g} gives the heterozygote the fitness "
                f"1 - hs = {1.0 - h * s:g}, below 0")


def _regime(exists: bool, q: float | None, nu: float, s: float, h: float = 0.0) -> str:
    if s == 0:
        return "no selection: neutral balance of forward and back mutation, mu/(mu + nu)"
    if not exists:
        return ("no stable interior equilibrium: mutation overwhelms selection and the "
                "deleterious allele goes to fixation")
    if h < 0:
        return ("heterozygote advantage: a balanced polymorphism held by the fitter "
                "heterozygote (overdominance), with mutation")
    if q is not None and q > 0.5 and nu > 0:
        return ("mutation overwhelms selection: the deleterious allele is common, held "
                "below fixation only by back mutation")
    if h > 1:
        return ("mutation-selection balance, the heterozygote less fit than aa "
                "(underdominance)")
    return "mutation-selection balance"


def compute(options: dict) -> dict:
    """Every reported quantity for one locus, as a dict (a value that does not apply is None).

    A quantity without a value where it applies (q_hat with no stable equilibrium) is NaN,
    which the JSON output writes as ``"nan"`` (docs/reports.md, 'JSON documents').
    """
    from infer.core import approximations, balance

    mu, s, h, F, nu = (options[k] for k in ("mu", "s", "h", "F", "nu"))
    penetrance = options["penetrance"]
    result = {"inheritance": options["inheritance"],
              "parameters": {"mu": mu, "s": s, "h": h, "F": F, "nu": nu,
                             "penetrance": penetrance}}
    if options["inheritance"] == "autosomal":
        exact = balance.autosomal_balance(mu, s, h, F, nu, any_dominance=True)
        exists, q = bool(exact.exists), float(exact.q_hat)
        if "fitnesses" in options:
            result["fitnesses"] = dict(options["fitnesses"])
        result.update(q_hat=q, exists=exists, mean_fitness=float(exact.mean_fitness),
                      load=float(exact.load))
        found = approximations.autosomal_approximations(mu, s, h, F)
        affected = {mode: float(balance.affected_fraction(mode, q, F, penetrance))
                    for mode in AUTOSOMAL_MODES}
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
    result["regime"] = _regime(exists, q if exists else None, nu, s, h)
    result["approximations"] = {
        name: {"value": float(a.value), "relative_error": float(a.relative_error),
               "in_range": bool(a.in_range), "formula": a.formula, "range_note": a.range_note}
        for name, a in found.items()
    }
    result["affected"] = affected
    if options["Ne"] is not None:
        result.update(_stationary(options))
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
        load_label = ("genetic load (1 - mean fitness / heterozygote's)" if p["h"] < 0
                      else "mutation load (1 - mean fitness)")
        rows += [("exact equilibrium q_hat", result["q_hat"]),
                 ("mean fitness", result["mean_fitness"]),
                 (load_label, result["load"])]
    width = max(len(r[0]) for r in rows) + 2
    lines += [f"{label:<{width}}{_format(value, 10)}" for label, value in rows]
    if math.isfinite(result["load"]) and p["mu"] > 0:
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


def run(args) -> int:
    """Run ``qhat equilibrium``; return the exit status."""
    options = parse_options(args)
    if options["plot"] is not None:
        from infer.reporting.folder import check_file

        check_file(options["plot"])
    result = compute(options)
    if options["plot"] is not None:
        from infer.reporting.folder import file_error
        from infer.reporting.plots.equilibrium import write_equilibrium_plot

        try:
            write_equilibrium_plot(options, options["plot"])
        except OSError as error:
            raise file_error(error, options["plot"]) from None
    if args.json:
        from infer.reporting.jsonout import dumps, versioned

        sys.stdout.write(dumps(versioned(result)))
    else:
        sys.stdout.write(render_table(result))
    return 0
