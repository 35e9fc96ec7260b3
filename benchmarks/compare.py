"""Speed and agreement of `qhat compare`: quadrature against bridge sampling.

For each compare demo (data_demo/compare-*.toml) this prints, as medians of several
runs, the wall seconds of the whole `qhat compare` process (method auto: quadrature,
since the demos have three free parameters) and, in this process, each model's log
evidence by quadrature and by bridge sampling (Meng & Wong 1996, on the sampler's draws)
with their errors, and the difference in units of the bridge's Monte Carlo error.
Also the autosomal balance's throughput with and without general genotype fitness
(any_dominance) on rows with 0 <= h <= 1, which must be the same.

Usage: .venv/bin/python benchmarks/compare.py [--repeats 3]
"""

from __future__ import annotations

import argparse
import statistics
import time
from pathlib import Path

import numpy as np
from estimate import whole_process  # this script's folder is on sys.path

ROOT = Path(__file__).resolve().parents[1]


def agreement(study: Path) -> None:
    import tomllib
    from dataclasses import replace

    from infer.files.compare_table import parse_compare_table
    from infer.files.study import load_study
    from infer.jobs.compare.run import compare_models

    loaded = load_study(study)
    table = tomllib.loads(study.read_text(encoding="utf-8")).get("compare")
    rows = {}
    for method in ("quadrature", "bridge"):
        t0 = time.perf_counter()
        result = compare_models(loaded, replace(parse_compare_table(table), method=method))
        seconds = time.perf_counter() - t0
        for m in result.models:
            rows.setdefault(m.name, {})[method] = (m.estimate, seconds)
    for name, found in rows.items():
        (q, tq), (b, tb) = found["quadrature"], found["bridge"]
        gap = (q.log_evidence - b.log_evidence) / b.error
        print(f"  {name:<24} quadrature {q.log_evidence:10.4f} ± {q.error:.1e} "
              f"({q.evaluations} evaluations)   bridge {b.log_evidence:10.4f} ± {b.error:.1e}"
              f"   gap {gap:+.2f} bridge errors   (job {tq:.1f} s vs {tb:.1f} s)")


def balance_throughput(repeats: int) -> None:
    from infer.core.balance import autosomal_balance

    rng = np.random.default_rng(0)
    n = 100_000
    mu, s, h = 10 ** rng.uniform(-9, -3, n), rng.uniform(0, 1, n), rng.uniform(0, 1, n)
    for nu in (0.0, 1e-7):
        for flag in (False, True):
            times = []
            for _ in range(repeats * 3):
                t0 = time.perf_counter()
                autosomal_balance(mu, s, h, 0.01, nu, any_dominance=flag)
                times.append(time.perf_counter() - t0)
            print(f"  nu = {nu:g}, any_dominance = {flag!s:<5}: "
                  f"{n / statistics.median(times) / 1e6:.2f} million equilibria per second")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    for study in sorted((ROOT / "data_demo").glob("compare-*.toml")):
        seconds = whole_process(study, args.repeats, "compare")
        print(f"{study.name}: whole qhat compare {seconds:.1f} s "
              f"(median of {args.repeats})")
        agreement(study)
    print("autosomal balance, 0 <= h <= 1:")
    balance_throughput(args.repeats)


if __name__ == "__main__":
    main()
