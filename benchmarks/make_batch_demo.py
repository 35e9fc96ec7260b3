"""Write data_demo/batch_loci.csv: fictional genes simulated from a known s_het distribution.

Generating values (documented in data_demo/batch_loci.md; tests/jobs/batch/test_batch.py reads
them from ``GENERATING``):

* s_het ~ log-normal, median 0.01, sigma of ln 1.5, truncated to [1e-5, 0.5]
  (the grid of ``qhat batch``), drawn by rejection;
* per-gene reported mutation rate: log-normal, median 2e-6, sigma of ln 0.8; the
  true rate is the reported one times exp(0.3·z), z standard normal, and the file
  gives the central 95 % interval reported · exp(±1.96·0.3);
* alleles sampled: a fictional cohort of 60,000 people (120,000 alleles) of which a
  gene-specific share is callable: round(120,000 × (0.85 + 0.15·U)), U uniform;
* observed copies ~ Binomial(sampled, q_hat) with the exact balance
  q_hat = mu_true / (s_het (1 + mu_true)) (additive, h = 1/2).

Run: .venv/bin/python benchmarks/make_batch_demo.py [--loci 3000] [--seed 20261202]
"""

from __future__ import annotations

import argparse
import csv
import math
import sys
from pathlib import Path

import numpy as np

GENERATING = {"s_het_median": 0.01, "s_het_sigma": 1.5, "s_low": 1e-5, "s_high": 0.5,
              "mu_median": 2e-6, "mu_spread": 0.8, "mu_sigma": 0.3, "alleles": 120_000,
              "seed": 20261202, "loci": 3000}


def simulate(loci, seed, *, mu_sigma=None, values=GENERATING):
    """Return dict of arrays: names, observed, sampled, mu, mu_lower, mu_upper, s_het, mu_true."""
    rng = np.random.default_rng(seed)
    sigma = values["mu_sigma"] if mu_sigma is None else mu_sigma
    s_het = np.empty(0)
    while s_het.size < loci:
        draw = np.exp(rng.normal(math.log(values["s_het_median"]), values["s_het_sigma"], loci))
        draw = draw[(draw >= values["s_low"]) & (draw <= values["s_high"])]
        s_het = np.concatenate([s_het, draw])
    s_het = s_het[:loci]
    mu = np.exp(rng.normal(math.log(values["mu_median"]), values["mu_spread"], loci))
    mu_true = mu * np.exp(sigma * rng.normal(size=loci))
    sampled = np.round(values["alleles"] * (0.85 + 0.15 * rng.random(loci))).astype(np.int64)
    q = mu_true / (s_het * (1.0 + mu_true))
    observed = rng.binomial(sampled, q)
    width = math.exp(1.959963984540054 * sigma)
    return {"names": [f"GENE{i + 1:04d}" for i in range(loci)], "observed": observed,
            "sampled": sampled, "mu": mu, "mu_lower": mu / width, "mu_upper": mu * width,
            "s_het": s_het, "mu_true": mu_true}


def write_csv(path, data, *, intervals=True):
    """Write the loci CSV of ``simulate``'s output."""
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        header = ["locus", "observed", "sampled", "mu"]
        header += ["mu_lower", "mu_upper"] if intervals else []
        writer.writerow(header)
        for i, name in enumerate(data["names"]):
            row = [name, int(data["observed"][i]), int(data["sampled"][i]), f"{data['mu'][i]:.6g}"]
            if intervals:
                row += [f"{data['mu_lower'][i]:.6g}", f"{data['mu_upper'][i]:.6g}"]
            writer.writerow(row)


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--loci", type=int, default=GENERATING["loci"])
    parser.add_argument("--seed", type=int, default=GENERATING["seed"])
    default = Path(__file__).resolve().parents[1] / "data_demo" / "batch_loci.csv"
    parser.add_argument("--out", default=str(default))
    args = parser.parse_args(argv)
    write_csv(args.out, simulate(args.loci, args.seed))
    print(f"wrote {args.out} ({args.loci} loci, seed {args.seed})", file=sys.stderr)


if __name__ == "__main__":
    main()
