"""qhat check's heterozygote-advantage alternative, fitted and weighed by its evidence.

References:
- the evidence ratio is (1/5) ∫_{-5}^{0} L(h) dh / L(h_claimed), with L the multinomial
  probability of the genotype counts at Hardy-Weinberg frequencies of the balance root
  q(h) (common practice; scipy.stats.multinomial), the root written out again from the
  quadratic (1-2h)s q² + hs(1+mu) q - mu = 0 (docs/model.md), and the integral by
  scipy.integrate.quad: an independent computation of the same quantity;
- Fisher (1922, Proc. Roy. Soc. Edinburgh 42:321): carriers need the advantage
  s1 = q s2/(1 - q) to hold q; the fitted advantage, with mutation, must be near it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from infer.files.claim import load_claim
from infer.jobs.check.run import check_claim

MU, S, COUNTS = 1e-5, 0.8, (800, 190, 10)

CLAIM = f"""\
title = "Invented excess"
inheritance = "autosomal"
model = "deterministic"
[parameters]
mu = {MU}
s = {S}
h = 0.0
[[observations]]
kind = "genotype-count"
AA = {COUNTS[0]}
Aa = {COUNTS[1]}
aa = {COUNTS[2]}
"""


def _q(h):
    a, b = (1 - 2 * h) * S, h * S * (1 + MU)
    disc = b * b + 4 * a * MU
    return (math.sqrt(disc) - b) / (2 * a) if b < 0 else 2 * MU / (b + math.sqrt(disc))


def _log_likelihood(h):
    q = _q(h)
    p = 1 - q
    return float(stats.multinomial.logpmf(COUNTS, sum(COUNTS), [p * p, 2 * p * q, q * q]))


def test_evidence_ratio_and_fitted_advantage(tmp_path):
    path = tmp_path / "claim.toml"
    path.write_text(CLAIM, encoding="utf-8")
    result = check_claim(load_claim(path))
    finding = next(f for f in result.findings if f.code == "possible-heterozygote-advantage")
    weighed = finding.details["weighed"]
    grid = np.linspace(-5, 0, 50001)
    top = max(_log_likelihood(h) for h in grid)
    peak = float(grid[int(np.argmax([_log_likelihood(h) for h in grid]))])
    value, _ = integrate.quad(lambda h: math.exp(_log_likelihood(h) - top), -5, 0,
                              points=[peak], limit=400)
    reference = math.log(value / 5) + top - _log_likelihood(0.0)
    assert abs(weighed["log_evidence_ratio"] - reference) < 2e-3 * abs(reference), (
        f"log evidence ratio {weighed['log_evidence_ratio']:.4f} vs scipy.integrate.quad "
        f"{reference:.4f}")
    q = (2 * COUNTS[2] + COUNTS[1]) / (2 * sum(COUNTS))
    fisher = q * S / (1 - q)
    assert weighed["advantage"]["median"] == pytest.approx(fisher, rel=0.1), (
        f"fitted carrier advantage {weighed['advantage']['median']:.4f} vs Fisher's "
        f"q s2/(1-q) = {fisher:.4f} at the observed frequency")
    assert finding.details["rank"] == 1 and "evidence ratio against recurrent mutation" in (
        finding.message), "a decisive evidence ratio ranks the advantage first"
