"""Speed of `qhat estimate` on each demo study, measured in one run.

For every study in data_demo/ this prints
- the wall seconds of the whole `qhat estimate` process (imports, sampling to
  convergence, grid cross-check, plots, netCDF), median of several runs;
- bulk ESS per second of sampling of the vectorised sampler (the minimum over free
  parameters, median of several runs);
- the same figure for a plain scalar-log-prob emcee run of the same model (one point at a
  time, emcee's default stretch move, fixed length), and the ratio;
- the seconds of the exact grid posterior where there are one or two free parameters.

Goals on the 2-core machine: >= 2,000 bulk ESS per second of sampling on a
two-parameter study, >= 10x the scalar version, a whole study in under 5 s.

Usage: .venv/bin/python benchmarks/estimate.py [--repeats 3]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]


def whole_process(study: Path, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        with tempfile.TemporaryDirectory() as tmp:
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-m", "infer", "estimate", str(study), "--out",
                            str(Path(tmp) / "r"), "--quiet"], check=True,
                           capture_output=True, cwd=ROOT)
            times.append(time.perf_counter() - t0)
    return statistics.median(times)


def vectorised_ess_rate(study, repeats: int) -> tuple[float, float]:
    from infer.model.posterior import Model
    from infer.inference.sampling import run_to_convergence

    rates, steps = [], []
    for seed in range(repeats):
        model = Model(study)
        run = run_to_convergence(model, model.initial_points, model.ndim,
                                 np.random.default_rng(seed))
        rates.append(run.ess_bulk.min() / run.seconds)
        steps.append(run.steps)
    return statistics.median(rates), statistics.median(steps)


def scalar_ess_rate(study, steps: int = 1500, walkers: int = 48) -> float:
    import emcee

    from infer.inference import diagnostics
    from infer.model.posterior import Model

    model = Model(study)
    rng = np.random.default_rng(0)

    def log_prob(z):
        return float(model.log_posterior(z[None, :])[0])

    p0 = model.initial_points(rng, walkers)
    sampler = emcee.EnsembleSampler(walkers, model.ndim, log_prob)
    sampler._random = np.random.RandomState(np.random.MT19937(1))
    t0 = time.perf_counter()
    sampler.run_mcmc(p0, steps, progress=False)
    seconds = time.perf_counter() - t0
    chain = sampler.get_chain()[steps // 4:]  # (steps, walkers, ndim)
    walker_major = np.moveaxis(chain, 1, 0).reshape(1, -1, model.ndim)
    ess = min(diagnostics.ess_bulk(walker_major[..., j]) for j in range(model.ndim))
    return ess / seconds


def grid_seconds(study) -> float | None:
    from infer.inference.grid import grid_posterior
    from infer.model.posterior import Model

    model = Model(study)
    if model.ndim > 2:
        return None
    t0 = time.perf_counter()
    grid_posterior(model, study.interval)
    return time.perf_counter() - t0


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    from infer.files.study import load_study

    print(f"{'study':<28} {'free':>4} {'process s':>9} {'ESS/s vec':>10} {'ESS/s scalar':>12} "
          f"{'ratio':>6} {'steps':>6} {'grid s':>7}")
    for path in sorted((ROOT / "data_demo").glob("*.toml")):
        if path.stem.startswith("claim-"):
            continue
        study = load_study(path)
        wall = whole_process(path, args.repeats)
        vec, steps = vectorised_ess_rate(study, args.repeats)
        scalar = scalar_ess_rate(study)
        grid = grid_seconds(study)
        grid_text = f"{grid:7.2f}" if grid is not None else "      —"
        print(f"{path.stem:<28} {len(study.free):>4} {wall:9.2f} {vec:10.0f} {scalar:12.0f} "
              f"{vec / scalar:6.1f} {steps:6.0f} {grid_text}", flush=True)


if __name__ == "__main__":
    main()
