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
4. peak resident memory and wall time of the whole command (``qhat batch``, --jobs 1,
   log-uniform prior, default chunk size) on invented loci files of 20,000, 200,000 and
   2,000,000 rows (``make_batch_demo.simulate``), each run a fresh process whose own
   ru_maxrss is read with os.wait4; medians of --repeats runs (the 2M file: --big-repeats,
   1 by default, as one run takes many minutes). The command streams the file (blocks on
   disk, loci.csv written chunk by chunk), so the peak should stay flat: the 2M-row peak
   within ~1.5x of the 20k-row one. Figures are kept in benchmarks/results/batch.md.

Run: .venv/bin/python benchmarks/batch.py [--skip-drift] [--emcee-loci 4] [--repeats 3]
     .venv/bin/python benchmarks/batch.py --memory-only [--sizes 20000 200000 2000000]
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

def _children_cpu():
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


#: ``python -c`` program: qhat batch with infer.commands.batch.SERIAL_WORK set to argv[1]
_FORCED = ("import sys, infer.commands.batch as b; b.SERIAL_WORK = float(sys.argv[1]); "
           "from infer.cli import main; sys.exit(main(sys.argv[2:]))")


def run_cli(source, out, *extra, code=None, serial_work=None):
    """Wall and CPU seconds (all processes) of one ``qhat batch`` run in a fresh process.

    ``code``: a checkout of qhat (e.g. an earlier commit's worktree) imported instead of
    this one. ``serial_work``: the one-process rule's threshold for this run (0 always
    starts the --jobs workers, inf never does).
    """
    env = dict(os.environ)
    if code is not None:
        env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(code), env.get("PYTHONPATH")]))
    head = [PYTHON, "-m", "infer"] if serial_work is None else \
        [PYTHON, "-c", _FORCED, repr(float(serial_work))]
    cpu, start = _children_cpu(), time.perf_counter()
    # from the scratch folder: ``python -m`` puts the working folder first on sys.path,
    # which would shadow ``code``
    done = subprocess.run([*head, "batch", str(source), "--out", str(out),
                           "--force", "--quiet", *extra], capture_output=True, text=True,
                          env=env, cwd=Path(out).parent)
    if done.returncode:
        sys.exit(f"qhat batch failed: {done.stderr}")
    return time.perf_counter() - start, _children_cpu() - cpu


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
    parser.add_argument("--memory-only", action="store_true", help="only section 4")
    parser.add_argument("--sizes", type=int, nargs="+", default=[20_000, 200_000, 2_000_000])
    parser.add_argument("--big-repeats", type=int, default=1,
                        help="runs of files of 1,000,000 rows or more")
    parser.add_argument("--baseline", type=Path, metavar="DIR",
                        help="a checkout of an earlier qhat (e.g. `git worktree add DIR HEAD`) "
                        "whose drift/deterministic ratio is measured alongside")
    parser.add_argument("--crossover-sizes", type=int, nargs="*",
                        default=[1_000, 2_000, 5_000, 10_000, 20_000],
                        help="loci of the one-process / --jobs 2 comparison")
    parser.add_argument("--crossover-only", action="store_true",
                        help="only the one-process / --jobs 2 comparison")
    parser.add_argument("--drift-only", action="store_true",
                        help="only the drift / deterministic ratio")
    args = parser.parse_args(argv)
    work = Path(tempfile.mkdtemp(prefix="qhat-batch-bench-"))
    if args.memory_only:
        memory(work, args.sizes, args.repeats, args.big_repeats)
        return
    if args.crossover_only:
        crossover(work, args.crossover_sizes, args.repeats)
        return
    data20 = demo.simulate(20_000, 1)
    source20 = work / "loci20k.csv"
    demo.write_csv(source20, data20)
    if args.drift_only:
        drift_against_deterministic(source20, work, args.repeats, args.baseline)
        return
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
        drift_against_deterministic(source20, work, args.repeats, args.baseline)
    crossover(work, args.crossover_sizes, args.repeats)
    memory(work, args.sizes, args.repeats, args.big_repeats)


DRIFT = ("--model", "drift", "--Ne", "10000")


def drift_against_deterministic(source, work, repeats, baseline=None):
    """The drift model's wall time as a multiple of the deterministic run's (issue 19).

    Both on the same 20,000 loci with --jobs 2, run alternately (det, drift, det, ...) so
    that other work on the machine weighs on both alike; the ratio of the medians is the
    figure, goal <= 3x. With ``baseline`` (a checkout of an earlier version) the same
    pair of runs of that code is interleaved with these, and both ratios are printed.
    """
    codes = [("this tree", None)] + ([("baseline " + str(baseline), baseline)]
                                     if baseline else [])
    runs = {(label, model): [] for label, _ in codes for model in ("det", "drift")}
    for _ in range(repeats):
        for label, code in codes:
            runs[(label, "det")].append(run_cli(source, work / "out", "--jobs", "2",
                                                code=code))
            runs[(label, "drift")].append(run_cli(source, work / "out", "--jobs", "2", *DRIFT,
                                                  code=code))
    for label, _ in codes:
        det = _report(f"[{label}] deterministic, 20,000 loci, --jobs 2", runs[(label, "det")])
        drift = _report(f"[{label}] drift (Ne = 10,000), 20,000 loci with mu intervals, "
                        "--jobs 2", runs[(label, "drift")], "300 s")
        print(f"[{label}] drift / deterministic: {drift / det:.1f}x (goal <= 3x)", flush=True)


def crossover(work, sizes, repeats):
    """--jobs 2 against one process for deterministic batches of ``sizes`` loci.

    The workers are forced on (and off) through ``infer.commands.batch.SERIAL_WORK``, so
    the figures show where two processes start to pay; runs alternate. The last column
    is what ``local_processes`` picks for ``--jobs 2`` at that size.
    """
    sys.path.insert(0, str(ROOT))
    from infer.commands.batch import local_processes
    from infer.jobs.batch import run as batch

    print("deterministic batches, one process against --jobs 2 (medians of "
          f"{repeats}; runs alternate):", flush=True)
    for loci in sizes:
        data = demo.simulate(loci, 1)
        source = work / f"cross{loci}.csv"
        demo.write_csv(source, data)
        one, two = [], []
        for _ in range(repeats):
            one.append(run_cli(source, work / "out", "--jobs", "2", serial_work=math.inf)[0])
            two.append(run_cli(source, work / "out", "--jobs", "2", serial_work=0)[0])
        sigma = batch.mu_sigma_from_interval(data["mu_lower"], data["mu_upper"])
        settings = batch.with_half_width(batch.BatchSettings(), sigma, data["observed"])
        picked = local_processes(2, loci, settings, 512)
        a, b = statistics.median(one), statistics.median(two)
        print(f"  {loci:>7,} loci: one process {a:.2f} s, two {b:.2f} s "
              f"(two/one {b / a:.2f}); faster: {'two' if b < a else 'one'}; "
              f"--jobs 2 now runs {picked} process(es)", flush=True)
        source.unlink()


def measured_run(source, out, *extra):
    """(peak resident MB, wall seconds) of one ``qhat batch`` process (os.wait4 rusage)."""
    start = time.perf_counter()
    child = subprocess.Popen([PYTHON, "-m", "infer", "batch", str(source), "--out", str(out),
                              "--force", "--quiet", *extra], stdout=subprocess.DEVNULL,
                             stderr=subprocess.PIPE)
    _, status, usage = os.wait4(child.pid, 0)
    wall = time.perf_counter() - start
    error = child.stderr.read().decode()
    child.stderr.close()
    if status:
        sys.exit(f"qhat batch failed ({status}): {error}")
    return usage.ru_maxrss / 1024, wall


def write_loci(path, loci, piece=200_000):
    """An invented loci file of ``loci`` rows, simulated ``piece`` rows at a time (seeds
    1, 2, ...; a seed whose draw puts a frequency above 1 is passed over), genes
    numbered through."""
    import csv

    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(["locus", "observed", "sampled", "mu", "mu_lower", "mu_upper"])
        done, seed = 0, 1
        while done < loci:
            size = min(piece, loci - done)
            try:
                data = demo.simulate(size, seed)
            except ValueError:        # a rare draw of q above 1: take the next seed
                seed += 1
                continue
            for i in range(size):
                writer.writerow([f"GENE{done + i + 1:07d}", int(data["observed"][i]),
                                 int(data["sampled"][i]), f"{data['mu'][i]:.6g}",
                                 f"{data['mu_lower'][i]:.6g}", f"{data['mu_upper'][i]:.6g}"])
            done, seed = done + size, seed + 1


def memory(work, sizes, repeats, big_repeats):
    """Section 4: peak memory and wall time against the number of rows."""
    print("peak resident memory of qhat batch (--jobs 1, log-uniform; os.wait4 ru_maxrss):",
          flush=True)
    first = None
    for loci in sizes:
        source = work / f"loci{loci}.csv"
        write_loci(source, loci)
        runs = [measured_run(source, work / "memout")
                for _ in range(big_repeats if loci >= 1_000_000 else repeats)]
        peak = statistics.median(r[0] for r in runs)
        wall = statistics.median(r[1] for r in runs)
        first = first or peak
        print(f"  {loci:>9,} rows: peak {peak:.0f} MB (runs "
              f"{', '.join(f'{r[0]:.0f}' for r in runs)}), {peak / first:.2f}x the first size; "
              f"wall {wall:.1f} s (runs {', '.join(f'{r[1]:.1f}' for r in runs)}), "
              f"load {os.getloadavg()[0]:.1f}", flush=True)
        source.unlink()


if __name__ == "__main__":
    main()
