"""Speed and accuracy of `qhat estimate` on studies with 2 to 5 free parameters, in one run.

For each study (two demos, and the invented studies in benchmarks/studies/: a prior far
from the data, the mu-s-h ridge with 3, 4 and 5 free parameters, Ne free under drift)
this prints, as medians of several runs,
- the wall seconds of the whole `qhat estimate` process (imports, sampling to
  convergence, exact cross-check, plots, netCDF), the same as a multiple of
  `python -c "import numpy, scipy.special, emcee"` timed in alternation with it (the
  machine's speed and load of the moment), and its converged/verified verdict;
- bulk ESS per second of sampling (the minimum over free parameters) and steps;
- where an exact posterior exists (up to 3 free parameters): its seconds, and the
  sampler's interval ends and medians against it, two ways:
  * in probability, |F_exact(sampled end) - p|: what Monte Carlo error controls. Its sd
    is sqrt(p (1 - p) / ESS) with ESS that of the indicator x <= end (Vehtari et al.
    2021, Bayesian Analysis 16:667, section 4.3); shown as the worst difference and as
    z = difference / sd, the worst and the root mean square over every end and seed.
    Goal: every |z| <= 4 (the verdict of `verify_draws`), rms z about 1 (no bias);
  * relative, |sampled end - exact end| / |exact end|. An end near 0 turns a small error
    in probability into a large relative one (its relative Monte Carlo sd is
    sd / (f(end) |end|), f the exact marginal density). Goal: 2 % on every end whose
    relative Monte Carlo sd at the run's ESS is at most 1 % (so that 2 % is a two-sd
    bar); the worst end overall is printed with its relative Monte Carlo sd beside it;
- with --scalar, the ESS/s of a plain scalar-log-prob emcee run (slow);
- with --shrinkage, the ridge-3 tail errors at larger target ESS (several seeds): if the
  errors are Monte Carlo noise, rms z stays about 1 while rms |F - p| falls as
  1 / sqrt(ESS).

Goals on the 2-core machine: the 3-parameter ridge right (as above) in under 5 s whole
process, >= 1,000 bulk ESS/s on it.

Usage: .venv/bin/python benchmarks/estimate.py [--repeats 3] [--scalar] [--shrinkage]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]


def _seconds(command: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run(command, check=True, capture_output=True, cwd=ROOT)
    return time.perf_counter() - t0


def whole_process(study: Path, repeats: int, command: str = "estimate") -> tuple[float, float]:
    """Median wall seconds of ``qhat COMMAND STUDY --out TMP --quiet``, and its ratio.

    The ratio is the median of each run's seconds over those of the import baseline
    ``python -c "import numpy, scipy.special, emcee"`` run just before it.
    """
    times, ratios = [], []
    for _ in range(repeats):
        baseline = _seconds([sys.executable, "-c", "import numpy, scipy.special, emcee"])
        with tempfile.TemporaryDirectory() as tmp:
            seconds = _seconds([sys.executable, "-m", "infer", command, str(study), "--out",
                                str(Path(tmp) / "r"), "--quiet"])
        times.append(seconds)
        ratios.append(seconds / baseline)
    return statistics.median(times), statistics.median(ratios)


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


def _end_errors(model, exact, z: np.ndarray, interval: float) -> list[dict]:
    """Every median and interval end of one run against the exact posterior."""
    from infer.inference.exact import verify_draws

    params, _ = model.to_parameters(z.reshape(-1, model.ndim))
    chains = {name: np.asarray(params[name]).reshape(z.shape[0], -1) for name in model.free}
    verdict = verify_draws(exact, chains, interval)
    rows = []
    for name, entry in verdict["parameters"].items():
        for key, e in entry.items():
            density = float(np.interp(e["exact"], exact.axes[name],
                                      exact.marginal_density[name]))
            scale = density * abs(e["exact"])
            rows.append({"end": f"{name}.{key}", "relative": e["relative_difference"],
                         "probability": e["exact_probability_below_sampled"] - e["probability"],
                         "sd": e["monte_carlo_sd"], "ess": e["ess"],
                         "relative_sd": e["monte_carlo_sd"] / scale if scale > 0 else np.inf})
    return rows


def exact_check(study, repeats: int, settings=None) -> dict | None:
    """Seconds of the exact posterior, and the sampler's ends against it over seeds.

    One run per seed 0 .. repeats - 1 (``settings``: the sampler's, default its own).
    Returns the exact seconds (median), whether every quadrature settled, and every
    end's errors of every seed (:func:`_end_errors`). None above three free parameters.
    """
    from infer.inference.exact import MAX_DIMENSIONS, exact_posterior
    from infer.inference.sampling import SamplerSettings, run_to_convergence
    from infer.model.posterior import Model

    model = Model(study)
    if model.ndim > MAX_DIMENSIONS:
        return None
    seconds, settled, rows, ess = [], [], [], []
    for seed in range(repeats):
        run = run_to_convergence(model, model.initial_points, model.ndim,
                                 np.random.default_rng(seed), settings or SamplerSettings())
        t0 = time.perf_counter()
        exact = exact_posterior(model, study.interval, hint=run.z.reshape(-1, model.ndim))
        seconds.append(time.perf_counter() - t0)
        settled.append(exact.settled)
        rows += _end_errors(model, exact, run.z, study.interval)
        ess.append(float(run.ess_bulk.min()))
    return {"seconds": statistics.median(seconds), "settled": all(settled), "rows": rows,
            "ess": statistics.median(ess)}


def accuracy_text(exact: dict) -> str:
    """The accuracy columns: in probability, then relative (see the module docstring)."""
    rows = exact["rows"]
    z = np.array([r["probability"] / r["sd"] for r in rows])
    worst_p = max(rows, key=lambda r: abs(r["probability"]))
    conditioned = [r for r in rows if r["relative_sd"] <= 0.01]
    worst_rel = max(rows, key=lambda r: r["relative"])
    worst_ok = max((r["relative"] for r in conditioned), default=float("nan"))
    return (f"{abs(worst_p['probability']):.4f} ({worst_p['end']}) | "
            f"{np.abs(z).max():.1f} / {np.sqrt(np.mean(z ** 2)):.2f} | "
            f"{100 * worst_ok:.1f} % ({len(conditioned)}/{len(rows)} ends) | "
            f"{100 * worst_rel['relative']:.1f} % ({worst_rel['end']}; MC sd "
            f"{100 * worst_rel['relative_sd']:.1f} %)")


def shrinkage(path: Path, targets=(1000, 16_000, 64_000), seeds: int = 6) -> None:
    """The ridge-3 errors at larger target ESS: rms z ~ 1 and rms |F - p| ~ 1/sqrt(ESS)."""
    from infer.files.study import load_study
    from infer.inference.sampling import SamplerSettings

    study = load_study(path)
    print(f"\n{path.stem}: errors against the exact posterior as the run grows "
          f"({seeds} seeds each)\n")
    print("| target ESS | bulk ESS (median) | end | rms F - p | rms z | median relative |")
    print("|---|---|---|---|---|---|")
    for target in targets:
        exact = exact_check(study, seeds, SamplerSettings(target_ess=target))
        by_end: dict[str, list] = {}
        for r in exact["rows"]:
            by_end.setdefault(r["end"], []).append(r)
        for end, rs in by_end.items():
            if end.endswith("median"):
                continue
            d = np.array([r["probability"] for r in rs])
            z = d / np.array([r["sd"] for r in rs])
            rel = np.median([r["relative"] for r in rs])
            print(f"| {target:,} | {exact['ess']:,.0f} | {end} | {np.sqrt(np.mean(d ** 2)):.5f}"
                  f" | {np.sqrt(np.mean(z ** 2)):.2f} | {100 * rel:.1f} % |", flush=True)


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
    parser.add_argument("--shrinkage", action="store_true",
                        help="also the ridge-3 tail errors at larger target ESS (minutes)")
    args = parser.parse_args()
    from infer.files.study import load_study

    print(f"machine: {os.cpu_count()} cores, load average {os.getloadavg()[0]:.2f} at start")
    print("| study | free | whole process s | x import baseline | converged/verified "
          "| bulk ESS/s | steps | exact s | worst end in probability, abs(F - p) "
          "| worst abs(z) / rms z (goal <= 4 / ~1) | worst relative, ends with MC sd <= 1 % "
          "(goal 2 %) | worst relative, any end |"
          + (" scalar ESS/s |" if args.scalar else ""))
    print("|---|---|---|---|---|---|---|---|---|---|---|---|" + ("---|" if args.scalar else ""))
    for path in STUDIES:
        study = load_study(path)
        wall, ratio = whole_process(path, args.repeats)
        vec, steps = vectorised_ess_rate(study, args.repeats)
        exact = exact_check(study, args.repeats)
        if exact is None:
            exact_text = "— | — | — | — | —"
        else:
            exact_text = (f"{exact['seconds']:.2f}{'' if exact['settled'] else ' (not settled)'}"
                          f" | {accuracy_text(exact)}")
        row = (f"| {path.stem} | {len(study.free)} | {wall:.2f} | {ratio:.1f} | {verdict(path)} "
               f"| {vec:,.0f} | {steps:.0f} | {exact_text} |")
        if args.scalar:
            row += f" {scalar_ess_rate(study):,.0f} |"
        print(row, flush=True)
    print(f"load average {os.getloadavg()[0]:.2f} at the end")
    if args.shrinkage:
        shrinkage(ROOT / "benchmarks" / "studies" / "ridge-3.toml")


if __name__ == "__main__":
    main()
