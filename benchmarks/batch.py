"""Benchmark of ``qhat batch`` (issue 6): wall time, speed-up over emcee, peak memory.

Prints:

1. wall and CPU time of ``qhat batch`` on 20,000 simulated loci (deterministic model;
   medians of 3 runs, each a fresh process, so start-up, reading and writing count);
   goal <= 10 s wall with --jobs 2 on 2 cores;
2. the same for the drift model (Ne = 10,000; one run); goal <= 5 minutes;
3. the ratio against fitting loci one at a time with an emcee sampler of the same
   posterior (ln s_het and the mu deviate z sampled jointly; 32 walkers, run in blocks
   of 1,000 steps until 50 autocorrelation times), measured on a few loci in this run and
   extrapolated to 20,000; goal >= 100x;
4. peak resident memory (ru_maxrss of a child process) of the engine on 20,000 and
   200,000 loci and of the whole command on the same files: it should grow only by the
   per-locus columns (~0.2 kB a locus), not by the grid (S = 400 doubles = 3.2 kB a locus).

Run: .venv/bin/python benchmarks/batch.py [--skip-drift] [--emcee-loci 4] [--repeats 3]
"""

from __future__ import annotations

import argparse
import importlib.util
import math
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PYTHON = sys.executable
DEMO = ROOT / "benchmarks" / "make_batch_demo.py"
_spec = importlib.util.spec_from_file_location("make_batch_demo", DEMO)
demo = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(demo)

ENGINE = """
import importlib.util, resource, sys, time
sys.path.insert(0, {root!r})
spec = importlib.util.spec_from_file_location("d", {demo!r})
d = importlib.util.module_from_spec(spec)
spec.loader.exec_module(d)
from infer.jobs.batch import run as batch
data = d.simulate({loci}, 1)
sigma = batch.mu_sigma_from_interval(data["mu_lower"], data["mu_upper"])
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
t = time.perf_counter()
r = batch.analyse(data["observed"], data["sampled"], data["mu"], sigma,
                  batch.BatchSettings(), prior="empirical", chunk_size=512)
print(before, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, time.perf_counter() - t)
"""


def _children_cpu():
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def run_cli(source, out, *extra):
    """Wall and CPU seconds (all processes) of one ``qhat batch`` run in a fresh process."""
    cpu, start = _children_cpu(), time.perf_counter()
    done = subprocess.run([PYTHON, "-m", "infer", "batch", str(source), "--out", str(out),
                           "--force", "--quiet", *extra], capture_output=True, text=True)
    if done.returncode:
        sys.exit(f"qhat batch failed: {done.stderr}")
    return time.perf_counter() - start, _children_cpu() - cpu


def cli_memory(source, out, *extra):
    """Peak resident memory (kB) of the whole command, run in a child process."""
    argv = ["batch", str(source), "--out", str(out), "--force", "--quiet", *extra]
    code = (f"import resource\nfrom infer.cli import main\nmain({argv!r})\n"
            "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)")
    done = subprocess.run([PYTHON, "-c", code], capture_output=True, text=True, check=True)
    return int(done.stdout.split()[-1])


def _report(label, runs, goal=None):
    walls = [w for w, _ in runs]
    cpus = [c for _, c in runs]
    text = (f"{label}: median {statistics.median(walls):.2f} s wall "
            f"(runs {', '.join(f'{w:.2f}' for w in walls)}), "
            f"{statistics.median(cpus):.2f} s CPU, load {os.getloadavg()[0]:.1f}")
    if goal:
        text += f"; goal <= {goal}"
    print(text, flush=True)
    return statistics.median(walls)


def emcee_seconds_per_locus(data, count):
    """Seconds to fit one locus with emcee (joint ln s_het, z) to 50 autocorrelation times."""
    import emcee
    import numpy as np
    from scipy import special

    u0, u1 = math.log(1e-5), math.log(0.5)
    sigma = math.log(data["mu_upper"][0] / data["mu_lower"][0]) / (2 * 1.959963984540054)
    times, steps_used = [], []
    for i in range(count):
        k, n, mu = float(data["observed"][i]), float(data["sampled"][i]), float(data["mu"][i])

        def log_prob(p, k=k, n=n, mu=mu):
            u, z = p[:, 0], p[:, 1]
            m = mu * np.exp(sigma * z)
            q = m / (np.exp(u) * (1 + m))
            inside = (u > u0) & (u < u1) & (q < 1)
            q = np.where(inside, q, 0.5)
            lp = special.xlogy(k, q) + special.xlog1py(n - k, -q) - 0.5 * z * z
            return np.where(inside, lp, -np.inf)

        rng = np.random.default_rng(i)
        centre = min(max(math.log(mu * n / max(k, 0.5)), u0 + 0.5), u1 - 0.5)
        state = np.column_stack([centre + 0.1 * rng.normal(size=32), 0.1 * rng.normal(size=32)])
        start = time.perf_counter()
        sampler = emcee.EnsembleSampler(32, 2, log_prob, vectorize=True)
        sampler._random = np.random.RandomState(np.random.MT19937(int(rng.integers(2**32))))
        steps = 0
        while True:
            state = sampler.run_mcmc(state, 1000)
            steps += 1000
            tau = float(np.max(sampler.get_autocorr_time(tol=0)))
            if steps >= 50 * tau or steps >= 40_000:
                break
        times.append(time.perf_counter() - start)
        steps_used.append(steps)
    return statistics.median(times), steps_used


def main(argv=None):
    parser = argparse.ArgumentParser(description="benchmark of qhat batch")
    parser.add_argument("--skip-drift", action="store_true")
    parser.add_argument("--emcee-loci", type=int, default=4)
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args(argv)
    work = Path(tempfile.mkdtemp(prefix="qhat-batch-bench-"))
    data20 = demo.simulate(20_000, 1)
    source20 = work / "loci20k.csv"
    demo.write_csv(source20, data20)
    print(f"machine: {os.cpu_count()} cores, load average {os.getloadavg()[0]:.1f} at start "
          "(other work on the machine inflates wall times; CPU seconds are steadier)")

    det = _report("deterministic, 20,000 loci, --jobs 2, log-uniform prior",
                  [run_cli(source20, work / "out", "--jobs", "2") for _ in range(args.repeats)],
                  "10 s")
    _report("deterministic, 20,000 loci, --jobs 2, empirical prior",
            [run_cli(source20, work / "out", "--jobs", "2", "--prior", "empirical")
             for _ in range(args.repeats)])
    _report("deterministic, 20,000 loci, --jobs 1, log-uniform prior",
            [run_cli(source20, work / "out") for _ in range(args.repeats)])

    per_locus, steps = emcee_seconds_per_locus(data20, args.emcee_loci)
    extrapolated = per_locus * 20_000
    print(f"emcee one locus at a time: median {per_locus:.2f} s a locus over {args.emcee_loci} "
          f"loci (steps {steps}) -> {extrapolated / 3600:.1f} h for 20,000; ratio "
          f"{extrapolated / det:,.0f}x against the --jobs 2 run (goal >= 100x)", flush=True)

    if not args.skip_drift:
        _report("drift (Ne = 10,000), 20,000 loci with mu intervals, --jobs 2, log-uniform",
                [run_cli(source20, work / "out", "--jobs", "2", "--model", "drift",
                         "--Ne", "10000")], "300 s")

    print("peak resident memory (ru_maxrss of a child process):")
    for loci in (20_000, 200_000):
        code = ENGINE.format(root=str(ROOT), demo=str(DEMO), loci=loci)
        out = subprocess.run([PYTHON, "-c", code], capture_output=True, text=True,
                             check=True).stdout.split()
        before, peak, seconds = int(out[0]), int(out[1]), float(out[2])
        source = work / f"loci{loci}.csv"
        demo.write_csv(source, demo.simulate(loci, 1))
        whole = cli_memory(source, work / "memout", "--prior", "empirical")
        print(f"  {loci:>7,} loci: engine {peak / 1024:.0f} MB (after making the inputs "
              f"{before / 1024:.0f} MB; {seconds:.1f} s in 1 process, empirical prior); "
              f"whole command {whole / 1024:.0f} MB", flush=True)


if __name__ == "__main__":
    main()
