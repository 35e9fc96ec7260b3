"""Throughput and accuracy of infer.core.drift.stationary on parameter arrays.

Prints, for 1e3 and 1e4 parameter rows drawn over the range of docs/model.md, the median wall time
of several runs of log_normaliser and log_binomial_probability (one allele-count
log-likelihood: the goal is <= 0.1 s for 10,000 rows on one core), per-row cost, the cost
relative to a baseline of the same size (numpy's scipy.special.betaln on the rows, the
neutral closed form), the median cost of one call of the drift model's log posterior
(data_demo/kestrel-captive-drift.toml, 96 rows, as the sampler calls it), and the largest
relative error against the mpmath reference on a random sample of rows.

It then prints the cost of a drift study whose observation is ``affected`` (integrated by
the general rule, ``log_expectation``) against the same study with an ``allele-count``
instead (the binomial path), per row of a log-posterior call at 96 rows (as the sampler
calls it) and at 10,000 rows; goal: affected within 2x the binomial path at 96 rows (issue
19). With ``--baseline DIR`` (a checkout of an earlier qhat, e.g. ``git worktree add DIR
HEAD``) the same figures of that code are measured in alternating fresh processes beside
this tree's, so before and after come from one run.

Usage: .venv/bin/python benchmarks/drift.py [--sample 12] [--runs 5] [--baseline DIR]
       .venv/bin/python benchmarks/drift.py --paths-only [--baseline DIR] [--rounds 3]
"""

from __future__ import annotations

import argparse
import os
import sys
import time

import numpy as np
from scipy import special

sys.path.insert(0, os.path.join(os.path.dirname(__file__), "..", "tests", "core"))
# after PYTHONPATH, so that --baseline's checkout is the one imported in its processes
sys.path.append(os.path.join(os.path.dirname(__file__), ".."))

import drift_reference as reference  # noqa: E402

from infer.core.drift import stationary as drift  # noqa: E402
from infer.model.posterior import Model  # noqa: E402
from infer.files.study import load_study  # noqa: E402

STUDY = os.path.join(os.path.dirname(__file__), "..", "data_demo", "kestrel-captive-drift.toml")


def draw(rng, rows):
    """Rows over 4Ne·mu in [1e-6, 10], 4Ne·s in [0, 1e5], h in [0, 1], 4Ne·nu in [1e-6, 1]."""
    Ne = 10 ** rng.uniform(1, 5, rows)
    a = 10 ** rng.uniform(-6, 1, rows)
    four_ne_s = np.minimum(10 ** rng.uniform(-1, 5, rows), 4 * Ne)
    b = 10 ** rng.uniform(-6, 0, rows)
    return Ne, a / (4 * Ne), four_ne_s / (4 * Ne), rng.uniform(0, 1, rows), b / (4 * Ne)


def median_time(function, runs):
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return float(np.median(times))


#: the drift study of the path comparison: everything but its one observation
_PATH_STUDY = """
title = "drift path benchmark"
inheritance = "autosomal"
model = "drift"
[parameters]
mu = {{ prior = "log-normal", median = 1e-5, sigma = 1.0 }}
s  = {{ prior = "log-uniform", low = 1e-3, high = 1.0 }}
h  = 0.3
Ne = 400
nu = 1e-7
[[observations]]
{observation}
"""
_PATHS = {
    "affected": 'kind = "affected"\naffected = 12\ntotal = 20000\nmode = "dominant"',
    "binomial": 'kind = "allele-count"\nobserved = 12\nsampled = 20000',
}


def path_costs(runs):
    """Median µs per row of one log-posterior call, {(path, rows): µs}."""
    from infer.files.study import parse_study

    out = {}
    for rows in (96, 10_000):
        for path, observation in _PATHS.items():
            model = Model(parse_study(_PATH_STUDY.format(observation=observation)))
            # 96 rows near the posterior (the best of 40·96 prior draws, as a sampler
            # starts); 10,000 rows drawn from the prior
            z = model.initial_points(np.random.default_rng(0), rows, pool=40 if rows < 1000 else 2)
            model.log_posterior(z)
            calls = max(1, 2000 // rows)
            # new rows at every call, as a sampler's proposals are (nothing is recalled)
            rng = np.random.default_rng(1)
            sets = [z + 1e-3 * rng.standard_normal(z.shape) for _ in range(calls * runs)]
            batches = iter([sets[i * calls:(i + 1) * calls] for i in range(runs)])
            seconds = median_time(lambda m=model, b=batches: [m.log_posterior(w)
                                                              for w in next(b)], runs)
            out[(path, rows)] = 1e6 * seconds / calls / rows
    return out


def compare_paths(runs, rounds, baseline=None):
    """The affected/binomial ratio of this tree (and of ``baseline``), fresh processes taking
    turns; medians over ``rounds`` rounds."""
    import json
    import statistics
    import subprocess

    codes = [("this tree", None)] + ([(f"baseline {baseline}", baseline)] if baseline else [])
    figures = {label: [] for label, _ in codes}
    for _ in range(rounds):
        for label, code in codes:
            env = dict(os.environ)
            if code is not None:
                env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(code),
                                                                  env.get("PYTHONPATH")]))
            done = subprocess.run([sys.executable, __file__, "--paths-json", "--runs", str(runs)],
                                  capture_output=True, text=True, env=env, check=True)
            figures[label].append(json.loads(done.stdout))
    for label, _ in codes:
        for rows in (96, 10_000):
            aff = statistics.median(f[f"affected {rows}"] for f in figures[label])
            bino = statistics.median(f[f"binomial {rows}"] for f in figures[label])
            goal = " (goal <= 2x)" if rows == 96 else ""
            print(f"[{label}] drift study, {rows:,} rows: affected {aff:.1f} us/row, "
                  f"allele-count {bino:.1f} us/row: ratio {aff / bino:.2f}x{goal}", flush=True)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sample", type=int, default=12, help="rows checked against mpmath")
    parser.add_argument("--runs", type=int, default=5, help="timed runs (median reported)")
    parser.add_argument("--baseline", metavar="DIR",
                        help="a checkout of an earlier qhat measured beside this one")
    parser.add_argument("--rounds", type=int, default=3,
                        help="alternating processes per code for the path comparison")
    parser.add_argument("--paths-only", action="store_true",
                        help="only the affected / allele-count comparison")
    parser.add_argument("--paths-json", action="store_true", help=argparse.SUPPRESS)
    options = parser.parse_args()
    if options.paths_json:  # one measuring process of compare_paths
        import json

        costs = path_costs(options.runs)
        print(json.dumps({f"{path} {rows}": value for (path, rows), value in costs.items()}))
        return
    if options.paths_only:
        compare_paths(options.runs, options.rounds, options.baseline)
        return
    rng = np.random.default_rng(1)
    print(f"{'rows':>6} {'function':<28} {'median s':>9} {'us/row':>8} {'x betaln':>9}")
    for rows in (1_000, 10_000):
        params = draw(rng, rows)
        Ne, mu, s, h, nu = params
        a, b = 4 * Ne * mu, 4 * Ne * nu
        base = median_time(lambda a=a, b=b: special.betaln(a, b), options.runs)
        for name, call in [
            ("log_normaliser", lambda p=params: drift.log_normaliser(*p)),
            ("log_binomial_probability", lambda p=params: drift.log_binomial_probability(7, 2e3, *p)),  # noqa: E501
        ]:
            seconds = median_time(call, options.runs)
            per_row = 1e6 * seconds / rows
            print(
                f"{rows:>6} {name:<28} {seconds:>9.4f} {per_row:>8.2f} {seconds / base:>9.0f}"
            )
    model = Model(load_study(STUDY))
    z = model.initial_points(np.random.default_rng(0), 96)
    model.log_posterior(z)
    calls = 20
    seconds = median_time(lambda: [model.log_posterior(z) for _ in range(calls)], options.runs)
    print(f"log posterior, kestrel drift study, 96 rows: {1e3 * seconds / calls:.3f} ms per call")
    Ne, mu, s, h, nu = draw(rng, options.sample)
    n = (10 ** rng.uniform(0, 6, options.sample)).astype(int)
    k = (rng.uniform(0, 1, options.sample) * n).astype(int)
    got_z = drift.log_normaliser(Ne, mu, s, h, nu)
    got_p = drift.log_binomial_probability(k, n, Ne, mu, s, h, nu)
    worst_z = worst_p = 0.0
    for i in range(options.sample):
        args = (Ne[i], mu[i], s[i], h[i], nu[i])
        ref_z = float(reference.log_z_drift(*args))
        ref_p = float(reference.log_binomial(int(k[i]), int(n[i]), *args))
        worst_z = max(worst_z, abs(np.expm1(got_z[i] - ref_z)))
        worst_p = max(worst_p, abs(np.expm1(got_p[i] - ref_p)))
    print(
        f"max relative error vs mpmath over {options.sample} random rows: "
        f"normaliser {worst_z:.2e}, binomial probability {worst_p:.2e}"
    )
    compare_paths(options.runs, options.rounds, options.baseline)


if __name__ == "__main__":
    main()
