"""Time ``qhat forecast``: 20 generations over 10,000 posterior draws.

The draws are real: the demo Varrow island study (data_demo/island-dominant.toml) is
estimated once (not timed), and its posterior.nc is cut to 4 chains x 2,500 draws of mu
and s. Printed, as medians of several runs: the job alone (``forecast`` on draws
already read), reading the folder plus the job, the report folder written (CSV, JSON,
fan plot, report.md and report.html), and the whole process (``qhat forecast ... -q``
in a fresh interpreter) beside the start-up of ``qhat --version`` measured in the same
run. Goal (issue 17): the job under 2 s.

    .venv/bin/python benchmarks/forecast.py [--runs 7] [--draws 10000] [--generations 20]
"""

from __future__ import annotations

import argparse
import pathlib
import statistics
import subprocess
import sys
import tempfile
import time

ROOT = pathlib.Path(__file__).resolve().parents[1]
QHAT = [sys.executable, "-m", "infer"]
GOAL_JOB = 2.0


def _timed(function, runs: int) -> float:
    wall = []
    for _ in range(runs):
        start = time.perf_counter()
        function()
        wall.append(time.perf_counter() - start)
    return statistics.median(wall)


def _cut_draws(report: pathlib.Path, draws: int, chains: int = 4) -> None:
    """Rewrite posterior.nc with the first draws of mu and s, (chains, draws / chains)."""
    import h5netcdf
    import numpy as np

    path = report / "posterior.nc"
    with h5netcdf.File(path, "r") as root:
        kept = {name: np.asarray(root["posterior"][name][...]).reshape(-1)[:draws]
                for name in ("mu", "s")}
    per_chain = draws // chains
    with h5netcdf.File(path, "w") as root:
        group = root.create_group("posterior")
        group.dimensions = {"chain": chains, "draw": per_chain}
        for name, values in kept.items():
            variable = group.create_variable(name, ("chain", "draw"), dtype=float)
            variable[...] = values[: chains * per_chain].reshape(chains, per_chain)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7)
    parser.add_argument("--draws", type=int, default=10_000)
    parser.add_argument("--generations", type=int, default=20)
    args = parser.parse_args()

    from infer.jobs.forecast.run import forecast
    from infer.jobs.forecast.source import read_report
    from infer.reporting.forecast_report import write_forecast_report

    with tempfile.TemporaryDirectory() as scratch:
        scratch = pathlib.Path(scratch)
        report = scratch / "island"
        subprocess.run([*QHAT, "estimate", str(ROOT / "data_demo" / "island-dominant.toml"),
                        "--out", str(report), "-q"], check=True, stdout=subprocess.DEVNULL)
        _cut_draws(report, args.draws)
        source = read_report(report)
        print(f"{source.size} posterior draws of mu and s (Varrow island demo), "
              f"{args.generations} generations, --set s=0; medians of {args.runs} runs")
        job = _timed(lambda: forecast(source, args.generations, {"s": 0.0}), args.runs)
        print(f"job (forecast on draws read):        {job:.4f} s   goal < {GOAL_JOB:g} s "
              f"({'met' if job < GOAL_JOB else 'NOT met'})")
        read = _timed(lambda: forecast(read_report(report), args.generations, {"s": 0.0}),
                      args.runs)
        print(f"read the folder + job:               {read:.4f} s")
        result = forecast(source, args.generations, {"s": 0.0})
        write = _timed(lambda: write_forecast_report(result, scratch / "written", force=True),
                       args.runs)
        print(f"report folder written (plot incl.):  {write:.4f} s")
        command = [*QHAT, "forecast", str(report), "--generations", str(args.generations),
                   "--set", "s=0", "--out", str(scratch / "cli"), "--force", "-q"]
        whole = _timed(lambda: subprocess.run(command, check=True,
                                              stdout=subprocess.DEVNULL), args.runs)
        start_up = _timed(lambda: subprocess.run([*QHAT, "--version"], check=True,
                                                 stdout=subprocess.DEVNULL), args.runs)
        print(f"whole process (qhat forecast -q):    {whole:.3f} s   "
              f"(baseline: qhat --version {start_up:.3f} s, so {whole - start_up:.3f} s "
              "beyond start-up)")


if __name__ == "__main__":
    main()
