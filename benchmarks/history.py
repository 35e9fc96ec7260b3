"""Cost of a study with a [history]: the log-likelihood per row, and the founder demo whole.

Prints, as medians of several runs,
- the seconds per log-likelihood row of a three-epoch history (a bottleneck 0-10
  generations ago, changed selection 10-30, a founder event at 30, the ancestral balance
  before), deterministic and under drift at Ne = 50 (the exact Wright-Fisher transition),
  500 and 5,000 (the diffusion), for 200 rows at once (a sampler's call);
- the whole `qhat estimate` process on data_demo/skerra-founder-island.toml (two free
  parameters: s and the founders' frequency), with its converged/verified verdict.

Goals on the 2-core machine: the founder study converged and verified in under 30 s whole
process; per-row costs are printed for the record (the deterministic recursion is the one
the demo samples with).

Usage: .venv/bin/python benchmarks/history.py [--repeats 3] [--rows 200]
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
GOAL_WHOLE = 30.0


def three_epochs(Ne: float):
    from infer.core.history.spec import Epoch, Founder, History

    return History(epochs=(Epoch(generations=10, values={"Ne": Ne / 2}),
                           Epoch(generations=20, ends=10, values={"s": 0.6})),
                   founder=Founder(founders=max(5, int(Ne // 10)), generations_ago=30))


def per_row(model: str, Ne: float, rows: int, repeats: int) -> float:
    from infer.core.history.deterministic import history_frequencies
    from infer.core.history.distribution import history_distributions

    rng = np.random.default_rng(1)
    params = dict(mu=10 ** rng.uniform(-6, -4, rows), s=rng.uniform(0.05, 1.0, rows),
                  h=rng.uniform(0.0, 0.5, rows), F=np.zeros(rows), nu=np.full(rows, 1e-8),
                  Ne=np.full(rows, Ne), alpha=np.ones(rows))
    history = three_epochs(Ne)
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        if model == "deterministic":
            history_frequencies(history, params, times=(0,))
        else:
            history_distributions(history, params, times=(0,))
        times.append(time.perf_counter() - t0)
    return statistics.median(times) / rows


def whole_process(study: Path, repeats: int) -> tuple[float, str]:
    times, verdict = [], ""
    for _ in range(repeats):
        with tempfile.TemporaryDirectory() as tmp:
            out = Path(tmp) / "r"
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-m", "infer", "estimate", str(study), "--out",
                            str(out), "--quiet"], check=False, capture_output=True, cwd=ROOT)
            times.append(time.perf_counter() - t0)
            d = json.loads((out / "summary.json").read_text())["diagnostics"]
            verdict = (f"converged {d['converged']}, verified {d['verified']}")
    return statistics.median(times), verdict


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--rows", type=int, default=200)
    args = parser.parse_args()
    print(f"three-epoch history, {args.rows} rows per call (median of {args.repeats})")
    print(f"{'model':<14}{'Ne':>8}{'method':>12}{'ms per row':>14}")
    print(f"{'deterministic':<14}{'-':>8}{'recursion':>12}"
          f"{1e3 * per_row('deterministic', 500.0, args.rows, args.repeats):>14.4f}")
    for Ne in (50.0, 500.0, 5000.0):
        method = "exact WF" if 2 * Ne <= 200 else "diffusion"
        cost = per_row("drift", Ne, args.rows, args.repeats)
        print(f"{'drift':<14}{Ne:>8g}{method:>12}{1e3 * cost:>14.4f}")
    seconds, verdict = whole_process(ROOT / "data_demo" / "skerra-founder-island.toml",
                                     args.repeats)
    print(f"founder demo (2 free parameters), whole qhat estimate: {seconds:.1f} s "
          f"(goal < {GOAL_WHOLE:g} s); {verdict}")


if __name__ == "__main__":
    main()
