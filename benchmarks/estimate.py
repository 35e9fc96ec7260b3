"""Speed and accuracy of `qhat estimate` on studies with 2 to 5 free parameters, in one run.

For each study (two demos, and the invented studies in benchmarks/studies/: a prior far
from the data, the mu-s-h ridge with 3, 4 and 5 free parameters, Ne free under drift)
this prints, as medians of several runs,
- the wall seconds of the whole `qhat estimate` process (imports, sampling to
  convergence, exact cross-check, plots, netCDF) and its converged/verified verdict;
- bulk ESS per second of sampling (the minimum over free parameters) and steps;
- where an exact posterior exists (up to 3 free parameters): its seconds, and the
  sampler's worst interval end against it, as a relative difference of the value and as
  |F_exact(sampled end) - p| in probability;
- with --scalar, the ESS/s of a plain scalar-log-prob emcee run (slow).

Goals on the 2-core machine: the 3-parameter ridge right to 2 % on every interval end in
under 5 s whole process, >= 1,000 bulk ESS/s on it.

Usage: .venv/bin/python benchmarks/estimate.py [--repeats 3] [--scalar]
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


def whole_process(study: Path, repeats: int, command: str = "estimate") -> float:
    """Median wall seconds of ``qhat COMMAND STUDY --out TMP --quiet``."""
    times = []
    for _ in range(repeats):
        with tempfile.TemporaryDirectory() as tmp:
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-m", "infer", command, str(study), "--out",
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


def exact_check(study, repeats: int) -> dict | None:
    """Seconds of the exact posterior, and the sampler's tail error against it.

    For each of ``repeats`` seeds: the largest relative difference of an interval end
    (sampled against exact), and the largest |F_exact(sampled end) - p| (in probability).
    Medians over the seeds. None above three free parameters.
    """
    from infer.core.stats import central_quantiles
    from infer.inference.exact import MAX_DIMENSIONS, exact_posterior
    from infer.inference.sampling import run_to_convergence
    from infer.model.posterior import Model

    model = Model(study)
    if model.ndim > MAX_DIMENSIONS:
        return None
    seconds, relative, probability, settled = [], [], [], []
    tail = (1 - study.interval) / 2
    for seed in range(repeats):
        run = run_to_convergence(model, model.initial_points, model.ndim,
                                 np.random.default_rng(seed))
        t0 = time.perf_counter()
        exact = exact_posterior(model, study.interval, hint=run.z.reshape(-1, model.ndim))
        seconds.append(time.perf_counter() - t0)
        settled.append(exact.settled)
        params, _ = model.to_parameters(run.z.reshape(-1, model.ndim))
        worst_rel, worst_p = 0.0, 0.0
        for name in model.free:
            _, lo, hi = central_quantiles(params[name], study.interval)
            for key, value, p in (("lower", lo, tail), ("upper", hi, 1 - tail)):
                truth = exact.quantiles[name][key]
                worst_rel = max(worst_rel, abs(value - truth) / abs(truth))
                worst_p = max(worst_p, abs(exact.cdf_at(name, value) - p))
        relative.append(worst_rel)
        probability.append(worst_p)
    return {"seconds": statistics.median(seconds), "relative": statistics.median(relative),
            "probability": statistics.median(probability), "settled": all(settled)}


def verdict(study: Path) -> str:
    """converged / verified of one `qhat estimate --json` run."""
    import json

    with tempfile.TemporaryDirectory() as tmp:
        out = subprocess.run([sys.executable, "-m", "infer", "estimate", str(study), "--out",
                              str(Path(tmp) / "r"), "--quiet", "--json"],
                             capture_output=True, cwd=ROOT, text=True)
    diagnostics = json.loads(out.stdout)["diagnostics"]
    return (f"{'yes' if diagnostics['converged'] else 'NO'}/"
            f"{ {True: 'yes', False: 'NO', None: '—'}[diagnostics['verified']] }")


STUDIES = [ROOT / "data_demo" / "island-dominant.toml",
           ROOT / "data_demo" / "kestrel-captive-drift.toml",
           ROOT / "benchmarks" / "studies" / "island-narrow-prior.toml",
           ROOT / "benchmarks" / "studies" / "ridge-3.toml",
           ROOT / "benchmarks" / "studies" / "kestrel-ne-free.toml",
           ROOT / "benchmarks" / "studies" / "ridge-4.toml",
           ROOT / "benchmarks" / "studies" / "ridge-5.toml"]


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--scalar", action="store_true",
                        help="also time a plain scalar emcee run (slow)")
    args = parser.parse_args()
    from infer.files.study import load_study

    print("| study | free | whole process s | converged/verified | bulk ESS/s | steps | "
          "exact s | worst end, relative | worst end, probability |"
          + (" scalar ESS/s |" if args.scalar else ""))
    print("|---|---|---|---|---|---|---|---|---|" + ("---|" if args.scalar else ""))
    for path in STUDIES:
        study = load_study(path)
        wall = whole_process(path, args.repeats)
        vec, steps = vectorised_ess_rate(study, args.repeats)
        exact = exact_check(study, args.repeats)
        if exact is None:
            exact_text = "— | — | —"
        else:
            exact_text = (f"{exact['seconds']:.2f}{'' if exact['settled'] else ' (not settled)'}"
                          f" | {100 * exact['relative']:.1f} % | {exact['probability']:.4f}")
        row = (f"| {path.stem} | {len(study.free)} | {wall:.2f} | {verdict(path)} | {vec:,.0f} "
               f"| {steps:.0f} | {exact_text} |")
        if args.scalar:
            row += f" {scalar_ess_rate(study):,.0f} |"
        print(row, flush=True)


if __name__ == "__main__":
    main()
