"""``qhat compare``: each model's evidence against an independent integral, and the command.

References:
- with mu and s fixed and only h free, each model's evidence is the one-dimensional
  integral of binom(k; n, q(h)) over the uniform prior of h, computed here by
  scipy.integrate.quad with q(h) the smaller positive root of the balance quadratic
  (1-2h)s q² + hs(1+mu) q - mu = 0 (docs/model.md; written out again below, for h < 0 in
  the form (-b + sqrt(b² + 4a mu))/(2a)) — an independent quadrature of the same model;
- posterior model probabilities w_i Z_i / sum_j w_j Z_j (Kass & Raftery 1995, JASA 90:773);
- quadrature and bridge sampling (Meng & Wong 1996) estimate the same evidence.
"""

from __future__ import annotations

import json
import tomllib
import math

import numpy as np
import pytest
from conftest import call_qhat
from scipy import integrate, stats

from infer.files.compare_table import CompareSettings, parse_compare_table
from infer.files.study import parse_study
from infer.jobs.compare.run import compare_models

MU, S, K, N = 1e-6, 0.2, 290, 1000

STUDY = f"""\
title = "Invented island: a common allele"
[parameters]
mu = {MU}
s = {S}
h = {{ prior = "uniform", low = 0, high = 1 }}
[[observations]]
kind = "allele-count"
observed = {K}
sampled = {N}
"""


def _q(h, mu=MU, s=S):
    a, b = (1 - 2 * h) * s, h * s * (1 + mu)
    disc = b * b + 4 * a * mu
    if disc < 0:   # h > 1/2 past the fold: no equilibrium, probability 0
        return math.nan
    return (math.sqrt(disc) - b) / (2 * a) if b < 0 else 2 * mu / (b + math.sqrt(disc))


def _log_likelihood(h):
    q = _q(h)
    return -math.inf if not 0 < q < 1 else float(stats.binom.logpmf(K, N, q))


def _reference_log_evidence(low, high):
    """log of (1/(high - low)) ∫ binom(K; N, q(h)) dh, scaled by its largest value first
    (the balance model's likelihood is far below the smallest double)."""
    grid = np.linspace(low, high, 20001)
    top = max(_log_likelihood(h) for h in grid)
    peak = float(grid[int(np.argmax([_log_likelihood(h) for h in grid]))])

    def integrand(h):
        return math.exp(_log_likelihood(h) - top)
    value, _ = integrate.quad(integrand, low, high, points=[peak], limit=400, epsabs=0,
                              epsrel=1e-8)
    return math.log(value) + top - math.log(high - low)


def test_each_model_against_an_independent_integral():
    study = parse_study(STUDY)
    result = compare_models(study, CompareSettings())
    by_name = {m.name: m for m in result.models}
    references = {"balance": _reference_log_evidence(0.0, 1.0),
                  "heterozygote-advantage": _reference_log_evidence(-5.0, 0.0)}
    for name, reference in references.items():
        found = by_name[name].log_evidence
        assert abs(found - reference) < 2e-3, (
            f"{name}: log evidence {found:.6f} vs scipy.integrate.quad {reference:.6f}")
    z = {k: math.exp(v) for k, v in references.items()}
    expected = z["heterozygote-advantage"] / sum(z.values())
    got = result.probabilities["heterozygote-advantage"]["posterior_probability"]
    assert got == pytest.approx(expected, rel=1e-2), (
        f"posterior probability {got} vs Z_het / (Z_bal + Z_het) = {expected} "
        "(equal prior odds; Kass & Raftery 1995)")
    assert result.ranking[0] == "heterozygote-advantage", (
        "290 of 1000 copies with mu = 1e-6: only a fitter heterozygote holds so common an allele")
    widened = [r for r in result.sensitivity if r.factor > 1][0]
    assert widened.prior == "uniform(-10, 0)"
    assert abs(widened.log_evidence - _reference_log_evidence(-10.0, 0.0)) < 2e-3, (
        "the widened prior's evidence vs scipy.integrate.quad")


def test_quadrature_and_bridge_agree_on_a_three_parameter_study():
    study = parse_study(STUDY.replace(f"mu = {MU}", 'mu = { prior = "log-uniform", low = '
                                      '1e-8, high = 1e-4 }').replace(
        f"s = {S}", 's = { prior = "uniform", low = 0.01, high = 1 }') + "[sampler]\nseed = 5\n")
    quad = compare_models(study, CompareSettings(models=("heterozygote-advantage",)))
    bridge = compare_models(study, CompareSettings(models=("heterozygote-advantage",),
                                                   method="bridge"))
    q, b = quad.models[0].estimate, bridge.models[0].estimate
    assert b.method == "bridge" and q.method == "quadrature"
    assert abs(q.log_evidence - b.log_evidence) < 4 * b.error + 2 * q.error + 1e-3, (
        f"quadrature {q.log_evidence:.5f} ± {q.error:.1e} vs bridge {b.log_evidence:.5f} "
        f"± {b.error:.1e}: the same evidence by two methods")


def test_models_that_do_not_apply_are_skipped():
    study = parse_study(STUDY.replace("[parameters]", 'inheritance = "x-linked"\n[parameters]')
                        .replace("sampled = 1000", 'sampled = 1000\nsex = "all"'))
    result = compare_models(study)
    assert [m.name for m in result.models] == ["balance"]
    assert "autosomal" in result.skipped["heterozygote-advantage"]


@pytest.mark.parametrize("table, field, message", [
    ({"models": ["drift"]}, "compare.models", "is not allowed"),
    ({"founder": {"generations_ago": 0}}, "compare.founder.generations_ago", "whole number"),
    ({"founder": {"q_founder": {"prior": "beta", "a": 1, "b": 1}}},
     "compare.founder.q_founder", "uniform prior"),
    ({"models": ["balance", "balance"]}, "compare.models", "named twice"),
    ({"prior_odds": {"balance": 0}}, "compare.prior_odds.balance", "is not above 0"),
    ({"sensitivity": 1}, "compare.sensitivity", "is not above 1"),
    ({"heterozygote-advantage": {"h": {"prior": "uniform", "low": -1, "high": 0.5}}},
     "compare.heterozygote-advantage.h", "within [-10, 0]"),
    ({"method": "nested"}, "compare.method", "is not allowed"),
    ({"extra": 1}, "compare.extra", 'unknown key "extra"'),
])
def test_bad_compare_tables(table, field, message):
    with pytest.raises(Exception) as raised:
        parse_compare_table(table)
    assert getattr(raised.value, "field", None) == field and message in str(raised.value), (
        f"expected {field}: ...{message}...; got {raised.value}")


def test_command_line(tmp_path, capsys):
    path = tmp_path / "study.toml"
    path.write_text(STUDY + '\n[compare]\nprior_odds = { balance = 3 }\n', encoding="utf-8")
    status, out, err = call_qhat(["compare", path, "--out", tmp_path / "report", "--json"],
                                 capsys)
    assert status == 0, err
    document = json.loads(out)
    assert document["models"][0]["prior_probability"] == pytest.approx(0.75), (
        "prior_odds balance 3 : 1 is a prior probability 3/4")
    written = json.loads((tmp_path / "report" / "compare.json").read_text(encoding="utf-8"))
    assert written == document, "compare.json equals the printed document"
    report = (tmp_path / "report" / "report.md").read_text(encoding="utf-8")
    assert "**Caution.**" in report and "founder" in report
    status, out, err = call_qhat(["compare", path, "--models", "founder"], capsys)
    assert status == 2 and "compare.models" in err and "generations_ago" in err and not out
    bad = tmp_path / "bad.toml"
    bad.write_text(STUDY + "\n[compare]\nsensitivity = 0.5\n", encoding="utf-8")
    status, out, err = call_qhat(["compare", bad], capsys)
    assert status == 2 and f"{bad}: compare.sensitivity: 0.5 is not above 1" in err, err
    assert len(err.strip().splitlines()) == 1


def test_estimate_ignores_the_compare_table():
    study = parse_study(STUDY + "\n[compare]\nsensitivity = 3\n")
    assert np.isclose(study.parameters["s"].value, S)


FOUNDER = """\
title = "Invented founder test: a recessive allele-count"
inheritance = "autosomal"

[parameters]
mu = 1e-6
s = 0.6
h = 0.0

[[observations]]
kind = "allele-count"
observed = 40
sampled = 1000

[compare]
models = ["founder"]
founder = { generations_ago = 15, q_founder = { prior = "uniform", low = 0.0, high = 0.5 } }
"""


def test_founder_evidence_matches_an_independent_quadrature():
    """Evidence of the founder model = ∫ Binomial(40 | 1000, q_15(q0)) dq0 / 0.5, with q_t
    from the textbook recursion of selection on zygotes then mutation (Crow & Kimura 1970,
    ch. 6), iterated here, and the integral by scipy.integrate.quad."""
    def today(q0, mu=1e-6, s=0.6, generations=15):
        q = q0
        for _ in range(generations):
            aa, het = q * q, 2 * q * (1 - q)
            q_sel = (0.5 * het + aa * (1 - s)) / (1 - s * aa)
            q = q_sel + (1 - q_sel) * mu
        return q

    reference = integrate.quad(lambda q0: stats.binom.pmf(40, 1000, today(q0)) / 0.5,
                               0.0, 0.5, points=[0.03, 0.05, 0.08], limit=200)[0]
    study = parse_study(FOUNDER, require_free=False)
    settings = parse_compare_table(tomllib.loads(FOUNDER)["compare"])
    result = compare_models(study, settings)
    (model,) = result.models
    assert model.name == "founder" and model.free == ("q_founder",)
    assert model.log_evidence == pytest.approx(np.log(reference), abs=2e-3)
