"""Simulation-based calibration of qhat's posteriors (Talts et al. 2018, arXiv:1804.06788).

For each study (its priors, its observation kinds and sample sizes) draw the free
parameters from the prior, simulate data of the study's shape at those values, fit, and
record the posterior distribution function at the truth (the normalised rank of the
truth among posterior draws). Prints the coverage of the 50 %, 90 % and 95 % central
intervals and a chi-square test of uniformity of the ranks (20 bins), and saves rank
histograms with the 99 % band of a uniform histogram.

Fits: the exact posterior by nested quadrature (``infer.inference.exact``; one to three
free parameters) for the first ``--grid-replicates`` replicates of each setting, and the
emcee sampler run to convergence (default settings) for the first ``--sampler``. Where
both are run the sampler's draws are the quadrature's ``hint`` (its search box then
reaches a posterior in the prior's far tail). A quadrature that did not settle within
its evaluation cap is left out of the "exact" rows; the output says how many were.
A sampler run that stops with an error is counted and left out of the "sampler" rows.

``--replicates``, ``--sampler`` and ``--grid-replicates`` take a count for every setting
and/or ``STEM=N`` for one study file (``kestrel-ne-free=30``).

Usage:
    .venv/bin/python benchmarks/calibration.py                 # demo studies, 500 replicates
    .venv/bin/python benchmarks/calibration.py --replicates 100 --sampler 50
    .venv/bin/python benchmarks/calibration.py --studies benchmarks/studies/ridge-3.toml \\
        --replicates 200 --sampler 50 --table calibration-ridge.md
Results: benchmarks/results/<--table> (default calibration.md) and calibration-<study>.png
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from infer.files.study import load_study  # noqa: E402
from infer.inference.calibration import (  # noqa: E402
    coverage,
    draw_truth,
    posterior_cdf_at_truth,
    rank_band,
    simulate_study,
    uniformity_p_value,
)
from infer.inference.exact import exact_posterior  # noqa: E402
from infer.inference.sampling import run_to_convergence  # noqa: E402
from infer.model.posterior import Model  # noqa: E402

LEVELS = (0.5, 0.9, 0.95)
BINS = 20


def calibrate(study, grid: int, sampler: int, rng: np.random.Generator,
              max_evaluations: int | None = None) -> dict:
    """Ranks of the truth per free parameter, from the quadrature and from the sampler.

    Replicate i is fitted exactly if i < ``grid`` and with the sampler if i < ``sampler``.
    Each replicate's sampler gets a generator of its own, so the truths and data do not
    depend on which fits are run.

    Returns
    -------
    dict
        ``exact`` and ``sampler``: name -> ranks; ``unsettled``: name -> ranks of the
        quadratures that did not settle (left out of ``exact``); ``failed``: messages of
        sampler runs that stopped with an error; ``not_converged``: sampler runs that hit
        the step cap (kept); ``seconds``: wall time of each fit kind.
    """
    model = Model(study)
    names = list(model.free)
    out = {"exact": {n: [] for n in names}, "sampler": {n: [] for n in names},
           "unsettled": {n: [] for n in names}, "failed": [], "not_converged": 0,
           "seconds": {"exact": 0.0, "sampler": 0.0}}
    for i in range(max(grid, sampler)):
        truth = draw_truth(model, rng)
        data = simulate_study(study, truth, rng)
        sampler_rng = np.random.default_rng(int(rng.integers(2**63)))
        fit_model = Model(data)
        hint = None
        if i < sampler:
            t0 = time.perf_counter()
            try:
                run = run_to_convergence(fit_model, fit_model.initial_points,
                                         fit_model.ndim, sampler_rng)
            except (ValueError, FloatingPointError) as error:
                out["failed"].append(f"replicate {i}: {type(error).__name__}: {error}")
                run = None
            out["seconds"]["sampler"] += time.perf_counter() - t0
            if run is not None:
                out["not_converged"] += not run.converged
                params, _ = fit_model.to_parameters(run.z.reshape(-1, fit_model.ndim))
                for n in names:
                    out["sampler"][n].append(posterior_cdf_at_truth(params[n], truth[n]))
                hint = run.z.reshape(-1, fit_model.ndim)
        if i < grid:
            t0 = time.perf_counter()
            exact = exact_posterior(fit_model, study.interval, hint=hint,
                                    max_evaluations=max_evaluations)
            out["seconds"]["exact"] += time.perf_counter() - t0
            target = out["exact"] if exact.settled else out["unsettled"]
            for n in names:
                target[n].append(exact.cdf_at(n, truth[n]))
    for key in ("exact", "sampler", "unsettled"):
        out[key] = {n: np.array(v) for n, v in out[key].items()}
    return out


def plot_ranks(name: str, ranks: dict, path: Path) -> None:
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    fig = Figure(figsize=(4.2 * len(ranks), 3.4))
    for k, (param, u) in enumerate(ranks.items()):
        ax = fig.add_subplot(1, len(ranks), k + 1)
        lo, hi = rank_band(len(u), BINS)
        ax.axhspan(lo, hi, color="0.85", label="99 % band (uniform ranks)")
        ax.axhline(len(u) / BINS, color="0.4", lw=1)
        ax.hist(u, bins=BINS, range=(0, 1), color="tab:blue", alpha=0.8,
                label="replicates")
        ax.set_xlabel(f"normalised rank of the true {param}")
        ax.set_ylabel("replicates per bin")
        ax.set_title(f"{param}: {len(u)} replicates")
        ax.legend(fontsize=7, loc="lower center")
    fig.suptitle(f"Simulation-based calibration: {name}", fontsize=10)
    fig.tight_layout()
    fig.savefig(path, dpi=100)


def _counts(parser: argparse.ArgumentParser, option: str, tokens, default):
    """``[N] [STEM=N ...]`` -> (count for every setting, {stem: count})."""
    common, per_study = default, {}
    for token in tokens or []:
        stem, _, value = token.rpartition("=")
        try:
            count = int(value)
        except ValueError:
            count = -1
        if count < 0:
            parser.error(f"{option}: {token!r} is not a count N or STEM=N (N >= 0)")
        if stem:
            per_study[stem] = count
        else:
            common = count
    return common, per_study


def _row(stem, model, fit, param, u) -> str:
    cov = [f"{100 * coverage(u, level):.1f}" for level in LEVELS]
    p = uniformity_p_value(u, BINS) if len(u) >= 5 * BINS else float("nan")
    return (f"| {stem} | {model} | {fit} | {param} | {len(u)} | " + " | ".join(cov)
            + f" | {p:.3f} |")


def _notes(stem: str, result: dict, grid: int, sampler: int) -> list[str]:
    unsettled = len(next(iter(result["unsettled"].values())))
    seconds = result["seconds"]
    notes = [f"{stem}: quadrature {grid} replicates ({seconds['exact']:.0f} s), "
             f"{unsettled} did not settle and are left out of the exact rows; "
             f"sampler {sampler} replicates ({seconds['sampler']:.0f} s), "
             f"{len(result['failed'])} stopped with an error (left out), "
             f"{result['not_converged']} hit the step cap (kept)."]
    if unsettled:
        merged = {n: np.concatenate([result["exact"][n], u])
                  for n, u in result["unsettled"].items()}
        notes.append(f"{stem}: with the unsettled replicates included, 95 % coverage "
                     + ", ".join(f"{n} {100 * coverage(u, 0.95):.1f}"
                                 for n, u in merged.items()) + ".")
    notes += [f"{stem}: sampler {message}" for message in result["failed"]]
    return notes


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--replicates", type=int, default=500,
                        help="replicates per setting fitted by quadrature (default 500)")
    parser.add_argument("--grid-replicates", nargs="*", metavar="[STEM=]N",
                        help="quadrature replicates, overriding --replicates for all "
                             "settings (N) or one study file (STEM=N)")
    parser.add_argument("--sampler", nargs="*", metavar="[STEM=]N",
                        help="first replicates also fitted with the emcee sampler "
                             "(N for all settings, STEM=N for one; default 0)")
    parser.add_argument("--max-evaluations", type=int, default=None,
                        help="evaluation cap of each quadrature (default: exact_posterior's)")
    parser.add_argument("--studies", nargs="*", help="study files (default: the demo studies)")
    parser.add_argument("--seed", type=int, default=1804)
    parser.add_argument("--out", default=str(ROOT / "benchmarks" / "results"))
    parser.add_argument("--table", default="calibration.md",
                        help="file name of the Markdown table in --out")
    args = parser.parse_args()
    grid_all, grid_by = _counts(parser, "--grid-replicates", args.grid_replicates,
                                args.replicates)
    sampler_all, sampler_by = _counts(parser, "--sampler", args.sampler, 0)
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    paths = [Path(p) for p in args.studies] if args.studies else [
        p for p in sorted((ROOT / "data_demo").glob("*.toml")) if not p.stem.startswith("claim-")]
    unknown = (set(grid_by) | set(sampler_by)) - {p.stem for p in paths}
    if unknown:
        parser.error(f"no study file named {sorted(unknown)[0]!r} among --studies")
    rng = np.random.default_rng(args.seed)
    lines = ["| study | model | fit | parameter | replicates | 50 % | 90 % | 95 % | "
             "uniformity p |", "|---|---|---|---|---|---|---|---|---|"]
    notes = []
    print(lines[0])
    start = time.perf_counter()
    for path in paths:
        study = load_study(path)
        grid = grid_by.get(path.stem, grid_all)
        sampler = sampler_by.get(path.stem, sampler_all)
        result = calibrate(study, grid, sampler, rng, args.max_evaluations)
        for fit in ("exact", "sampler"):
            for param, u in result[fit].items():
                if len(u):
                    lines.append(_row(path.stem, study.model, fit, param, u))
                    print(lines[-1], flush=True)
        ranks = result["exact"] if grid else result["sampler"]
        if len(next(iter(ranks.values()))):
            plot_ranks(path.stem, ranks, out / f"calibration-{path.stem}.png")
        for note in _notes(path.stem, result, grid, sampler):
            notes.append(note)
            print("  " + note, flush=True)
    total = time.perf_counter() - start
    print(f"  (wall time {total:.0f} s)", flush=True)
    command = " ".join(["benchmarks/calibration.py", *sys.argv[1:]])
    (out / args.table).write_text(
        f"Simulation-based calibration ({command}; seed {args.seed}; "
        f"wall time {total / 60:.1f} min).\n"
        "Coverage of central intervals in %; uniformity: chi-square p-value of 20-bin "
        "rank histograms (nan under 100 replicates). Fit \"exact\": nested quadrature, "
        "unsettled replicates left out; \"sampler\": emcee to convergence.\n\n"
        + "\n".join(lines) + "\n\n" + "\n".join(f"- {n}" for n in notes) + "\n",
        encoding="utf-8")


if __name__ == "__main__":
    main()
