"""``qhat check`` fits and weighs each alternative the claim's data allow (issue 18).

References:

* The evidence of a binomial count k of n under a uniform prior on its probability on
  [0, b] is C(n, k) B_b(k + 1, n - k + 1) / b = I_b(k + 1, n - k + 1) / ((n + 1) b), the
  regularised incomplete beta function (Bayes 1763; common practice), with
  scipy.special.betainc; the posterior median is the beta quantile at half that mass
  (scipy.stats.beta).
* A registry count with completeness c ~ uniform(a, 1): the evidence is the binomial
  probability of the count at c times the affected share, averaged over the prior,
  integrated here with scipy.integrate.quad (common practice).
* Drift at the claimed Ne: the probability of k of n allele copies under Wright's
  stationary density (Wright 1931), from the independent mpmath quadrature of
  tests/core/drift_reference.py at 20 digits.
* Bayes factor words on log10: Kass & Raftery 1995, JASA 90:773, section 3.2.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest
from conftest import run_qhat
from scipy import integrate, special, stats

from infer.files.claim import load_claim
from infer.jobs.check import weighed
from infer.jobs.check.findings import Finding
from infer.jobs.check.run import check_claim
from infer.jobs.check.trade import alternative_explanations
from infer.model.balance_state import BalanceState

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "core"))
import drift_reference  # noqa: E402  (tests/core: the mpmath reference of Wright's density)

DEMO = Path(__file__).resolve().parents[3] / "data_demo"

#: negligible mutation and selection: a founder's frequency is today's (to ~1e-8)
FOUNDER = """title = "invented islet: founders and nothing else"
inheritance = "autosomal"
model = "deterministic"
[parameters]
mu = 1e-12
s = 1e-9
h = 0.5
[alternatives]
founder = {{ generations_ago = 10{prior} }}
[[observations]]
kind = "allele-count"
observed = {k}
sampled = {n}
"""

#: a recessive registry with fewer affected births than the claimed balance gives
REGISTRY = """title = "invented registry: fewer cases than balance gives"
inheritance = "autosomal"
model = "deterministic"
[parameters]
mu = 4e-5
s = 1.0
h = 0.0
[[observations]]
kind = "affected"
affected = {k}
total = {n}
mode = "recessive"
"""

#: a small herd checked with the deterministic balance; Ne stated
HERD = """title = "invented herd: balance or drift"
inheritance = "autosomal"
model = "deterministic"
[parameters]
mu = 1e-5
s = 0.2
h = 0.3
Ne = {Ne}
[[observations]]
kind = "allele-count"
observed = {k}
sampled = {n}
"""


def _claim(tmp_path, text, name="claim.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return load_claim(path)


def _finding(result, code):
    return next(f for f in result.findings if f.code == code)


@pytest.mark.parametrize("k, n, high", [(30, 400, 0.5), (3, 2000, 0.5), (120, 300, 1.0)])
def test_founder_evidence_is_the_beta_integral(tmp_path, k, n, high):
    prior = "" if high == 0.5 else (
        f', q_founder = {{ prior = "uniform", low = 0, high = {high} }}')
    claim = _claim(tmp_path, FOUNDER.format(k=k, n=n, prior=prior))
    fit = weighed.weigh_founder(claim)
    assert fit is not None and fit["generations_ago"] == 10
    # Bayes 1763: Z = I_b(k+1, n-k+1) / ((n+1) b) under q ~ uniform(0, b)
    a, b = k + 1, n - k + 1
    log_z = math.log(special.betainc(a, b, high)) - math.log((n + 1) * high)
    assert fit["log_evidence"] == pytest.approx(log_z, abs=2e-3), (
        f"founder evidence {fit['log_evidence']:.6f} against the beta integral {log_z:.6f}")
    median = stats.beta.ppf(0.5 * special.betainc(a, b, high), a, b)
    assert fit["q_founder"]["median"] == pytest.approx(median, rel=2e-2), (
        "the fitted founder frequency's median must be the truncated beta median")
    log_claimed = stats.binom.logpmf(k, n, 1e-12 / (0.5 * 1e-9))  # q_hat ~ mu/(hs)
    assert fit["log_evidence_ratio"] == pytest.approx(log_z - log_claimed, rel=1e-3, abs=5e-3)


def test_completeness_evidence_is_the_prior_average(tmp_path):
    k, n = 5, 400_000  # about 16 expected at the claimed balance
    claim = _claim(tmp_path, REGISTRY.format(k=k, n=n))
    state = BalanceState.deterministic({**{p: np.array([v]) for p, v in claim.values.items()}},
                                       "autosomal")
    share = float(claim.study.observations[0].expected(state)[0]) / n  # affected share
    low = weighed.COMPLETENESS_PRIOR.low
    reference, _ = integrate.quad(lambda c: stats.binom.pmf(k, n, c * share) / (1 - low),
                                  low, 1.0, epsabs=0, epsrel=1e-10, limit=200)
    fit = weighed.weigh_completeness(claim)
    assert fit is not None
    assert fit["log_evidence"] == pytest.approx(math.log(reference), abs=2e-3), (
        "the completeness alternative's evidence is the binomial averaged over its prior "
        "(scipy.integrate.quad)")
    assert fit["log_evidence_ratio"] == pytest.approx(
        math.log(reference) - stats.binom.logpmf(k, n, share), abs=2e-3)
    # the count says about 5 of the ~16 expected were registered
    assert fit["completeness"]["lower"] < k / (share * n) < fit["completeness"]["upper"]


@pytest.mark.parametrize("Ne, k, n", [(50, 0, 400), (400, 9, 500)])
def test_drift_evidence_is_wrights_sample_probability(tmp_path, Ne, k, n):
    claim = _claim(tmp_path, HERD.format(Ne=Ne, k=k, n=n))
    fit = weighed.weigh_drift(claim)
    assert fit is not None and fit["fitted"] == {} and fit["Ne"] == Ne
    expected = float(drift_reference.log_binomial(k, n, Ne, 1e-5, 0.2, 0.3, 1e-9))
    assert fit["log_evidence"] == pytest.approx(expected, rel=1e-6, abs=1e-8), (
        "the drift alternative is P(k of n) under Wright's density at the claimed values "
        "(mpmath reference)")


def test_founder_island_ranks_the_founders_first_and_says_by_how_much():
    result = check_claim(load_claim(DEMO / "claim-brennock-founders.toml"))
    founder = _finding(result, "possible-founder-effect")
    advantage = _finding(result, "possible-heterozygote-advantage")
    assert founder.details["rank"] == 1 and advantage.details["rank"] == 2, (
        [(f.code, f.details.get("rank")) for f in result.findings if "possible" in f.code])
    against = founder.details["against_next"]
    assert against["alternative"] == "possible-heterozygote-advantage"
    gap = (founder.details["weighed"]["log_evidence"]
           - advantage.details["weighed"]["log_evidence"]) / math.log(10)
    assert against["log10_ratio"] == pytest.approx(gap) and 1 < gap < 2, (
        f"the founder model should beat overdominance clearly but not absurdly: 10^{gap:.2f}")
    assert "(strong; Kass & Raftery 1995)" in founder.message, founder.message
    q = founder.details["weighed"]["q_founder"]
    # deterministic recessive lethal: q_t = q0 / (1 + t q0) (Crow & Kimura 1970), so the
    # founders' q0 = q / (1 - t q) at the observed q = 86/3000
    observed = 86 / 3000
    assert q["lower"] < observed / (1 - 14 * observed) < q["upper"]


def test_alternatives_the_data_weigh_against_rank_after_the_untested(tmp_path):
    # the tarrow claim fits its registry: overdominance is weighed and loses
    result = check_claim(load_claim(DEMO / "claim-tarrow-recessive.toml"))
    notes = sorted((f for f in result.findings if f.code.startswith("possible-")),
                   key=lambda f: f.details["rank"])
    advantage = _finding(result, "possible-heterozygote-advantage")
    assert advantage.details["weighed"]["log_evidence_ratio"] < 0
    assert notes[-1] is advantage, [f.code for f in notes]
    assert "for the claimed balance" in advantage.message


def test_a_shortfall_in_a_registry_weighs_completeness(tmp_path):
    # as when the data need a mutation rate far below any measured one (a deficit)
    claim = _claim(tmp_path, REGISTRY.format(k=5, n=400_000))
    below = Finding("warning", "implied-mutation-rate-outside-measured", "",
                    {"direction": "below"})
    notes = alternative_explanations([below], {}, claim)
    note = next(f for f in notes if f.code == "possible-ascertainment")
    assert "registry completeness of about" in note.message and "weighed" in note.details
    assert note.details["direction"] == "deficit"
    assert "possible-heterozygote-advantage" not in [f.code for f in notes], (
        "overdominance explains an excess only")


def test_a_claim_with_a_history_gets_no_alternatives():
    result = check_claim(load_claim(DEMO / "claim-vennick-founder.toml"))
    codes = [f.code for f in result.findings]
    assert not [c for c in codes if c.startswith("possible-")], codes
    assert "implied-mutation-rate-outside-measured" not in codes, (
        "under a history the frequency is the history's, not the rate's: no implied-rate "
        f"finding ({codes})")


@pytest.mark.parametrize("table, field, words", [
    ("founder = { generations_ago = 0 }", "alternatives.founder.generations_ago",
     "whole number of generations"),
    ('models = ["founder"]', "alternatives", "models"),
    ('founder = { generations_ago = 5, q_founder = 0.1 }', "alternatives.founder.q_founder",
     "prior table"),
])
def test_bad_alternatives_are_refused_in_one_line(tmp_path, table, field, words):
    text = FOUNDER.format(k=3, n=100, prior="").replace(
        "[alternatives]\nfounder = { generations_ago = 10 }", f"[alternatives]\n{table}")
    (tmp_path / "claim.toml").write_text(text)
    run = run_qhat("check", "claim.toml", cwd=tmp_path)
    assert run.returncode == 2 and run.stdout == "", run
    line = run.stderr.strip()
    assert "\n" not in line and "Traceback" not in line, line
    assert "claim.toml" in line and field in line and words in line, line


def _today(q0, mu, s, h, generations):
    """q after ``generations`` of the textbook life cycle: selection on Hardy–Weinberg
    zygotes (fitnesses 1, 1 - hs, 1 - s), then mutation A -> a (Crow & Kimura 1970, ch. 6)."""
    q = q0
    for _ in range(generations):
        p = 1 - q
        w = p * p + 2 * p * q * (1 - h * s) + q * q * (1 - s)
        q_sel = (p * q * (1 - h * s) + q * q * (1 - s)) / w
        q = q_sel + (1 - q_sel) * mu
    return q


def _random_founder_claims(seed, count):
    rng = np.random.default_rng(seed)
    for _ in range(count):
        mu = float(10 ** rng.uniform(-7, -4))
        s, h = float(rng.uniform(0.05, 1.0)), float(rng.uniform(0.0, 1.0))
        generations, n = int(rng.integers(5, 41)), int(rng.integers(200, 5001))
        k = int(rng.binomial(n, _today(float(rng.uniform(0.01, 0.3)), mu, s, h, generations)))
        yield mu, s, h, generations, k, n


@pytest.mark.parametrize("mu, s, h, generations, k, n", list(_random_founder_claims(18, 8)))
def test_founder_alternative_on_random_claims_against_quad(tmp_path, mu, s, h, generations,
                                                          k, n):
    """Random claims from the documented ranges: the founder alternative's evidence is
    ∫ Binomial(k | n, q_t(q0)) dq0 / 0.5 over q0 ~ uniform(0, 0.5), q_t by the textbook
    recursion above and the integral by scipy.integrate.quad."""
    text = (FOUNDER.replace("mu = 1e-12", f"mu = {mu!r}").replace("s = 1e-9", f"s = {s!r}")
            .replace("h = 0.5", f"h = {h!r}")
            .replace("generations_ago = 10", f"generations_ago = {generations}"))
    claim = _claim(tmp_path, text.format(k=k, n=n, prior=""))
    fit = weighed.weigh_founder(claim)
    assert fit is not None

    def integrand(q0):
        return stats.binom.pmf(k, n, _today(q0, mu, s, h, generations)) / 0.5

    grid = np.linspace(0.0, 0.5, 201)
    peak = grid[np.argmax([integrand(q) for q in grid])]
    reference = integrate.quad(integrand, 0.0, 0.5, points=[peak], limit=400,
                               epsabs=0, epsrel=1e-9)[0]
    assert fit["log_evidence"] == pytest.approx(math.log(reference), abs=3e-3), (
        f"founder evidence {fit['log_evidence']:.5f} vs scipy quad {math.log(reference):.5f}")
