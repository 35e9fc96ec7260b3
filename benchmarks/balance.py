"""Throughput of the exact equilibrium solvers on one core, and `qhat --help` start-up time.

Prints, for arrays of 1,000,000 parameter vectors drawn over the study ranges
(mu 1e-9..1e-3, s 1e-4..1, h 0..1, F 0..0.2, nu 1e-9..1e-5):

- exact autosomal equilibria per second with nu = 0 (closed form; goal >= 1e7/s),
  with nu > 0 (cubic, safeguarded Newton; goal >= 1e6/s) and X-linked (goal >= 1e6/s);
- the same count for a per-element ``scipy.optimize.brentq`` loop on the plain
  recursion, on a small subset, and the ratio between the two measured in this run;
- the wall time of ``python -m infer --help`` (and the ``qhat`` script when installed)
  as a subprocess (goal < 0.5 s).

Every figure is the median of several runs. Usage: ``.venv/bin/python benchmarks/balance.py``.
"""

import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"  # one core, set before numpy is imported

import pathlib  # noqa: E402
import statistics  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402
from scipy.optimize import brentq  # noqa: E402

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
from infer.core import balance  # noqa: E402

N = 1_000_000
SUBSET = 2_000
RUNS = 5


def draws(n, rng):
    return {
        "mu": 10 ** rng.uniform(-9, -3, n),
        "s": 10 ** rng.uniform(-4, 0, n),
        "h": rng.uniform(0, 1, n),
        "F": rng.uniform(0, 0.2, n),
        "nu": 10 ** rng.uniform(-9, -5, n),
        "alpha": 10 ** rng.uniform(-0.5, 1, n),
    }


def median_seconds(function, runs=RUNS):
    """Median (wall seconds, CPU seconds of this process) over ``runs`` calls.

    With one thread the CPU time is what one core spends; it stays meaningful when
    other jobs share the machine and stretch the wall time.
    """
    wall, cpu = [], []
    for _ in range(runs):
        start, start_cpu = time.perf_counter(), time.process_time()
        function()
        wall.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    return statistics.median(wall), statistics.median(cpu)


def autosomal_step(q, mu, s, h, F, nu):
    """One generation of the autosomal life cycle (docs/model.md), plain floats."""
    p = 1.0 - q
    het, hom = 2.0 * p * q * (1.0 - F), q * q * (1.0 - F) + q * F
    w = 1.0 - s * (h * het + hom)
    selected = (het * (1.0 - h * s) / 2.0 + hom * (1.0 - s)) / w
    return selected * (1.0 - nu) + (1.0 - selected) * mu


def x_linked_step(x, mu, s, h, F, nu, alpha):
    """Eggs' frequency after one generation with sperm at their equilibrium for x."""
    mu_f = 3.0 * mu / (2.0 + alpha)
    mu_m = alpha * mu_f
    y = mu_m + (1.0 - mu_m - nu) * (1.0 - s) * x / (1.0 - s * x)
    mean = 0.5 * (x + y)
    hom = (1.0 - F) * x * y + F * mean
    het = (1.0 - F) * (x * (1.0 - y) + y * (1.0 - x))
    w = 1.0 - s * (h * het + hom)
    selected = (het * (1.0 - h * s) / 2.0 + hom * (1.0 - s)) / w
    return mu_f + selected * (1.0 - mu_f - nu)


def brentq_loop(rows, step, upper):
    """Solve step(q) = q for each row with brentq on [0, upper]; return roots."""
    out = []
    for args in rows:
        out.append(brentq(lambda q, args=args: step(q, *args) - q, 0.0, upper, xtol=1e-300,
                          rtol=4 * np.finfo(float).eps))
    return np.array(out)


def compare(label, vectorised, rows, step, upper, goal, reference):
    wall, cpu = median_seconds(vectorised)
    loop_wall, loop_cpu = median_seconds(lambda: brentq_loop(rows, step, upper), runs=3)
    rate, loop_rate = N / cpu, len(rows) / loop_cpu
    roots = brentq_loop(rows, step, upper)
    agreement = np.median(np.abs(roots / reference - 1))
    status = "meets" if rate >= goal else "BELOW"
    print(f"{label:<20}{rate:>12,.0f}/s CPU ({N / wall:>11,.0f}/s wall)   brentq loop "
          f"{loop_rate:>7,.0f}/s CPU ({len(rows) / loop_wall:>6,.0f}/s wall)   ratio "
          f"{rate / loop_rate:>5,.0f}x CPU, {(N / wall) / (len(rows) / loop_wall):>5,.0f}x wall   "
          f"goal {goal:,.0f}/s: {status}; median |brentq/exact - 1| = {agreement:.1e}")


def help_time(command):
    times = []
    for _ in range(7):
        start = time.perf_counter()
        subprocess.run(command, capture_output=True, check=True)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main():
    rng = np.random.default_rng(20261202)
    p = draws(N, rng)
    print(f"qhat balance benchmark: {N:,} parameter vectors, one core, medians of {RUNS} runs "
          f"(brentq: {SUBSET:,} rows, 3 runs)")
    print(f"numpy {np.__version__}, python {sys.version.split()[0]}, load average "
          f"{os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    print()

    # Subsets where [0, upper] brackets the root for the plain recursion: interior
    # equilibrium, h <= 1/2 (one sign change), not too close to 1.
    nu0 = balance.autosomal_balance(p["mu"], p["s"], p["h"], p["F"])
    usable = np.flatnonzero(nu0.exists & (p["h"] <= 0.5) & (nu0.q_hat < 0.5) & (nu0.q_hat > 0))
    pick = usable[:SUBSET]
    rows = [(p["mu"][i], p["s"][i], p["h"][i], p["F"][i], 0.0) for i in pick]
    compare("autosomal, nu = 0", lambda: balance.autosomal_balance(p["mu"], p["s"], p["h"], p["F"]),
            rows, autosomal_step, 1.0 - 1e-9, 1e7, nu0.q_hat[pick])

    with_nu = balance.autosomal_balance(p["mu"], p["s"], p["h"], p["F"], p["nu"])
    rows = [(p["mu"][i], p["s"][i], p["h"][i], p["F"][i], p["nu"][i]) for i in pick]
    compare("autosomal, nu > 0",
            lambda: balance.autosomal_balance(p["mu"], p["s"], p["h"], p["F"], p["nu"]),
            rows, autosomal_step, 1.0, 1e6, with_nu.q_hat[pick])

    x_linked = balance.x_linked_balance(p["mu"], p["s"], p["h"], p["F"], p["nu"], p["alpha"])
    usable = np.flatnonzero(x_linked.exists & (p["h"] <= 0.5) & (x_linked.q_male < 0.5))
    pick = usable[:SUBSET]
    rows = [(p["mu"][i], p["s"][i], p["h"][i], p["F"][i], p["nu"][i], p["alpha"][i])
            for i in pick]
    compare("x-linked, nu > 0",
            lambda: balance.x_linked_balance(p["mu"], p["s"], p["h"], p["F"], p["nu"],
                                             p["alpha"]),
            rows, x_linked_step, 1.0, 1e6, x_linked.q_male[pick])
    print()
    commands = [("python -m infer --help", [sys.executable, "-m", "infer", "--help"])]
    script = pathlib.Path(sys.executable).with_name("qhat")
    if script.exists():
        commands.append(("qhat --help", [str(script), "--help"]))
    for label, command in commands:
        seconds = help_time(command)
        status = "meets" if seconds < 0.5 else "ABOVE"
        print(f"{label:<28}{seconds:>8.3f} s (median of 7; goal < 0.5 s, {status})")


if __name__ == "__main__":
    main()
