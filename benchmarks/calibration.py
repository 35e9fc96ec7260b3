"""Simulation-based calibration of qhat's posteriors (Talts et al. 2018, arXiv:1804.06788).

For each demo study (its priors, its observation kinds and sample sizes) and each model
(deterministic, drift): draw the free parameters from the prior, simulate data of the
study's shape at those values, fit, and record the posterior distribution function at the
truth (the normalised rank of the truth among posterior draws). Prints the coverage of
the 50 %, 90 % and 95 % central intervals and a chi-square test of uniformity of the ranks
(20 bins), and saves rank histograms with the 99 % band of a uniform histogram.

Fits use the exact grid posterior (every demo study has two free parameters); with
``--sampler N`` the first N replicates of each setting are also fitted with the emcee
sampler to convergence, and their coverage is printed beside.

Usage:
    .venv/bin/python benchmarks/calibration.py                 # full run, 500 replicates
    .venv/bin/python benchmarks/calibration.py --replicates 100 --sampler 50
Results: benchmarks/results/calibration.md and calibration-<study>.png
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from infer.inference.calibration import (  # noqa: E402
    coverage,
    draw_truth,
    posterior_cdf_at_truth,
    rank_band,
    simulate_study,
    uniformity_p_value,
)
from infer.inference.grid import grid_posterior  # noqa: E402
from infer.model.posterior import Model  # noqa: E402
from infer.files.study import load_study  # noqa: E402

LEVELS = (0.5, 0.9, 0.95)
BINS = 20
#: grid points per axis per pass: the rank needs ~1e-3 accuracy, not the report's
GRID_POINTS = 151
DRIFT_GRID_POINTS = 61  # each drift evaluation is a quadrature over Wright's density


def calibrate(study, replicates: int, sampler: int, rng: np.random.Generator) -> dict:
    """Ranks u (per free parameter) from the grid, and from the sampler for a subset."""
    model = Model(study)
    u_grid = {n: [] for n in model.free}
    u_sampler = {n: [] for n in model.free}
    for i in range(replicates):
        truth = draw_truth(model, rng)
        data = simulate_study(study, truth, rng)
        fit_model = Model(data)
        points = DRIFT_GRID_POINTS if study.model == "drift" else GRID_POINTS
        grid = grid_posterior(fit_model, study.interval, points=points)
        for n in model.free:
            u_grid[n].append(grid.cdf_at(n, truth[n]))
        if i < sampler:
            from infer.inference.sampling import run_to_convergence

            run = run_to_convergence(fit_model, fit_model.initial_points, fit_model.ndim, rng)
            params, _ = fit_model.to_parameters(run.z.reshape(-1, fit_model.ndim))
            for n in model.free:
                u_sampler[n].append(posterior_cdf_at_truth(params[n], truth[n]))
    return {"grid": {n: np.array(v) for n, v in u_grid.items()},
            "sampler": {n: np.array(v) for n, v in u_sampler.items()}}


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


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--replicates", type=int, default=500)
    parser.add_argument("--sampler", type=int, default=0,
                        help="replicates per setting also fitted with the emcee sampler")
    parser.add_argument("--studies", nargs="*", help="study files (default: the demo studies)")
    parser.add_argument("--seed", type=int, default=1804)
    parser.add_argument("--out", default=str(ROOT / "benchmarks" / "results"))
    args = parser.parse_args()
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    paths = [Path(p) for p in args.studies] if args.studies else [
        p for p in sorted((ROOT / "data_demo").glob("*.toml")) if not p.stem.startswith("claim-")]
    rng = np.random.default_rng(args.seed)
    lines = ["| study | model | fit | parameter | replicates | 50 % | 90 % | 95 % | "
             "uniformity p |", "|---|---|---|---|---|---|---|---|---|"]
    print(lines[0])
    for path in paths:
        study = load_study(path)
        t0 = time.perf_counter()
        result = calibrate(study, args.replicates, args.sampler, rng)
        seconds = time.perf_counter() - t0
        for fit, ranks in result.items():
            for param, u in ranks.items():
                if len(u) == 0:
                    continue
                cov = [f"{100 * coverage(u, level):.1f}" for level in LEVELS]
                p = uniformity_p_value(u, BINS) if len(u) >= 5 * BINS else float("nan")
                row = (f"| {path.stem} | {study.model} | {fit} | {param} | {len(u)} | "
                       + " | ".join(cov) + f" | {p:.3f} |")
                lines.append(row)
                print(row, flush=True)
        plot_ranks(path.stem, result["grid"], out / f"calibration-{path.stem}.png")
        print(f"  ({path.stem}: {seconds:.0f} s)", flush=True)
    (out / "calibration.md").write_text(
        "Simulation-based calibration (benchmarks/calibration.py, "
        f"--replicates {args.replicates} --sampler {args.sampler} --seed {args.seed}).\n"
        "Coverage of central intervals in %; uniformity: chi-square p-value of 20-bin "
        "rank histograms.\n\n" + "\n".join(lines) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
