"""Flags a practitioner expects (issue 13, item 5): tailored check alternatives, arithmetic
claims, the population behind the mutation-rate ranges, fertility f >= 1, batch flags.

References: the overdominant equilibrium q = s1/(s1 + s2) with fitnesses 1-s1, 1, 1-s2
(Fisher 1922, Proc. R. Soc. Edinb. 42:321; common practice), checked here against the
genotype recursion iterated to its fixed point (derived: one generation of random
mating and selection, q' = (pq w12 + q^2 w22) / w_bar).
"""

from __future__ import annotations

import numpy as np
import pytest

from infer.files.claim import load_claim
from infer.files.study import parse_study
from infer.jobs.check.run import check_claim
from infer.jobs.check.trade import overdominance_advantage
from infer.jobs.estimate.results import data_warnings
from infer.reporting.check_report import text_report

ALTERNATIVES = ("possible-heterozygote-advantage", "possible-founder-effect", "possible-drift",
                "possible-ascertainment", "possible-non-equilibrium")

# an invented haemoglobin-like variant: genotypes of newborns, q ~ 0.105, s = 0.8
HB = """title = "invented haemoglobin variant among newborns"
inheritance = "autosomal"
model = "{model}"
[parameters]
mu = 1e-5
s = 0.8
h = 0.0
{extra}
[[observations]]
label = "newborn genotypes"
kind = "genotype-count"
AA = 800
Aa = 190
aa = 10
"""


def _claim(tmp_path, text, name="claim.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return load_claim(path)


def _alternatives(result):
    return [f for f in result.findings if f.code in ALTERNATIVES]


def _overdominant_fixed_point(s1: float, s2: float, q: float = 0.3) -> float:
    """Iterate the genotype recursion (derived, see the module docstring)."""
    for _ in range(200_000):
        p = 1 - q
        w_bar = p * p * (1 - s1) + 2 * p * q + q * q * (1 - s2)
        q_next = (p * q + q * q * (1 - s2)) / w_bar
        if abs(q_next - q) < 1e-15:
            break
        q = q_next
    return q


def test_overdominance_advantage_holds_the_frequency():
    q, s2 = 0.105, 0.8
    s1 = overdominance_advantage(q, s2)
    assert _overdominant_fixed_point(s1, s2) == pytest.approx(q, rel=1e-9), (
        "the carrier advantage s1 must hold q at the overdominant fixed point (Fisher 1922)")


def test_newborn_genotype_claim_gets_tailored_ranked_alternatives(tmp_path):
    result = check_claim(_claim(tmp_path, HB.format(model="deterministic", extra="")))
    found = _alternatives(result)
    codes = [f.code for f in found]
    assert "possible-heterozygote-advantage" in codes, (
        f"an excess should name overdominance: {codes}")
    assert "possible-ascertainment" not in codes, (
        "newborn genotype data are not ascertained through cases: no ascertainment note")
    text = " ".join(f.message for f in found)
    assert "cystic" not in text.lower() and "Romeo" not in text, (
        f"no disease-specific citation for another locus: {text}")
    ranks = [f.details["rank"] for f in found]
    assert ranks == list(range(1, len(found) + 1)), f"alternatives must be ranked: {ranks}"
    advantage = next(f for f in found if f.code == "possible-heterozygote-advantage")
    q = (190 + 2 * 10) / 2000  # allele count / allele copies
    assert advantage.details["observed_frequency"] == pytest.approx(q)
    assert advantage.details["s1_needed"] == pytest.approx(q * 0.8 / (1 - q), rel=1e-12), (
        "s1 = q s2/(1-q) (Fisher 1922)")


def test_no_drift_note_when_drift_was_modelled(tmp_path):
    result = check_claim(_claim(tmp_path, HB.format(model="drift", extra="Ne = 2000\nnu = 1e-8")))
    codes = [f.code for f in result.findings]
    assert "possible-drift" not in codes, (
        f"drift was modelled: no drift alternative ({codes})")
    line = next(t for t in text_report(result).splitlines() if "implied by the claim" in t)
    assert "Wright's stationary density" in line, (
        f"under the drift model the implied line must use the same model as the findings: {line}")


def test_incidence_only_for_the_claimed_mode(tmp_path):
    text = HB.format(model="deterministic", extra="") .replace(
        "[[observations]]", '[claimed]\nmode = "recessive"\nincidence = 0.011\n[[observations]]')
    line = next(t for t in text_report(check_claim(_claim(tmp_path, text))).splitlines()
                if "implied by the claim" in t)
    assert "incidence_recessive" in line and "incidence_dominant" not in line, line


def test_claim_without_observations_is_checked(tmp_path):
    text = ('title = "arithmetic"\n[parameters]\nmu = 1e-5\ns = 0.5\nh = 0.0\n'
            '[claimed]\nmode = "recessive"\nincidence = 4e-5\n')
    result = check_claim(_claim(tmp_path, text))
    # closed form: recessive balance q^2 = mu/s = 2e-5 (Haldane 1927), half the stated 4e-5
    mismatch = [f for f in result.findings if f.code == "statement-mismatch"]
    assert mismatch and not result.consistent, (
        f"stated incidence 4e-5 against mu/s = 2e-5 must be a mismatch: {result.findings}")
    assert mismatch[0].details["implied"] == pytest.approx(2e-5, rel=1e-3)


def test_mutation_rate_ranges_name_their_population(tmp_path):
    human = check_claim(_claim(tmp_path, HB.format(model="deterministic", extra=""), "h.toml"))
    rate = [f for f in human.findings if "mutation-rate" in f.code]
    assert rate and all("human" in f.message for f in rate), [f.message for f in rate]
    other = HB.format(model="deterministic", extra="").replace(
        "[[observations]]", '[claimed]\nspecies = "invented vole"\n[[observations]]')
    result = check_claim(_claim(tmp_path, other, "v.toml"))
    codes = [f.code for f in result.findings]
    assert "no-reference-mutation-rate" in codes and "implied-mutation-rate-outside-measured" \
        not in codes, f"another species: no built-in range applies ({codes})"


def test_fertility_at_or_above_the_reference_is_flagged():
    study = parse_study({
        "title": "late onset", "inheritance": "autosomal",
        "parameters": {"mu": {"prior": "log-uniform", "low": 1e-7, "high": 1e-3}, "h": 1.0,
                       "s": {"prior": "uniform", "low": 0.0, "high": 1.0}},
        "observations": [{"kind": "fertility", "affected_people": 50,
                          "affected_children": 110, "reference_people": 100,
                          "reference_children": 200, "mode": "dominant"}]})
    found = data_warnings(study)
    # f = (110/50)/(200/100) = 1.1 (the definition of relative fertility)
    assert len(found) == 1 and "1.1 times" in found[0] and "late-onset" in found[0], found


def test_batch_flags_sample_beyond_2ne_and_median_from_s_high():
    from infer.jobs.batch import run as batch
    from infer.jobs.batch.summary import FLAGS

    bits = {name: bit for bit, (name, _) in FLAGS.items()}
    settings = batch.BatchSettings(model="drift", Ne=1000.0, nu=1e-8, grid_points=120)
    observed = np.array([0.0, 30.0])
    sampled = np.array([5000.0, 1500.0])       # 5000 > 2Ne = 2000; 1500 < 2000
    mu = np.array([1e-6, 1e-6])
    result = batch.analyse(observed, sampled, mu, np.zeros(2), settings)
    flags = np.asarray(result.loci["flags"])
    assert flags[0] & bits["sample-exceeds-2Ne"] and not flags[1] & bits["sample-exceeds-2Ne"]
    assert flags[0] & bits["median-from-s-high"], (
        "a zero count whose interval reaches --s-high must say its median is the prior's")
