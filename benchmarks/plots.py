"""Time the five report plots for 4 ensembles x 10,000 draws.

Prints the median wall and CPU seconds of ``write_plots`` over several runs for one,
two and three free parameters, beside a baseline measured in the same run: saving
one empty single-axes figure at the same dpi (the least any PNG costs here). The
synthetic results are those of tests/reporting/test_plots.py.

    .venv/bin/python benchmarks/plots.py [--runs 5]
"""

from __future__ import annotations

import argparse
import io
import pathlib
import statistics
import sys
import tempfile
import time

ROOT = pathlib.Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT), str(ROOT / "tests" / "reporting")]


def _timed(function, runs: int) -> tuple[float, float]:
    wall, cpu = [], []
    for _ in range(runs):
        w, c = time.perf_counter(), time.process_time()
        function()
        wall.append(time.perf_counter() - w)
        cpu.append(time.process_time() - c)
    return statistics.median(wall), statistics.median(cpu)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    args = parser.parse_args()

    import matplotlib

    matplotlib.use("Agg")
    from test_plots import _make_result

    from infer.reporting.plots import figures as plots
    from infer.reporting.plots.save import new_figure, plain_text

    def empty_figure():
        figure = new_figure(figsize=(6, 4), dpi=100)
        figure.subplots()
        figure.savefig(io.BytesIO(), format="png", dpi=100)

    first = _make_result(("mu", "s"), chains=4, draws=10_000, walkers=40)
    with tempfile.TemporaryDirectory() as folder:
        w, c = time.perf_counter(), time.process_time()
        plots.write_plots(first, pathlib.Path(folder))
        print(f"first call in the process (fonts, caches): wall {time.perf_counter() - w:.2f} s,"
              f" cpu {time.process_time() - c:.2f} s")
    base_wall, base_cpu = _timed(empty_figure, max(args.runs, 5))
    print(f"baseline, one empty figure saved: wall {base_wall:.3f} s, cpu {base_cpu:.3f} s")
    for free in (("mu",), ("mu", "s"), ("mu", "s", "h")):
        result = _make_result(free, chains=4, draws=10_000, walkers=40)
        with tempfile.TemporaryDirectory() as folder:
            wall, cpu = _timed(lambda r=result: plots.write_plots(r, pathlib.Path(folder)),
                               args.runs)
        with plain_text():
            build_wall, _ = _timed(lambda r=result: plots.estimate_figures(r), args.runs)
        print(f"{len(free)} free ({', '.join(free)}): five plots wall {wall:.2f} s "
              f"(building {build_wall:.2f} s), cpu {cpu:.2f} s = {wall / base_wall:.1f} "
              f"empty figures")


if __name__ == "__main__":
    main()
