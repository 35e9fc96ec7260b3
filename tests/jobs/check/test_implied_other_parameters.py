"""qhat check's implied intervals for alpha and the ascertainment parameters."""

import tomllib
from pathlib import Path

import pytest

from infer.core.capture import chapman_total
from infer.files.claim import load_claim, parse_claim
from infer.jobs.check.run import check_claim

DEMO = Path(__file__).resolve().parents[3] / "data_demo"


def test_x_linked_claim_gets_an_implied_alpha_that_the_data_barely_inform():
    # Haldane 1935 (J. Genet. 31:317): at balance the incidence in sons is about 3 mu / s
    # whatever the male-to-female rate ratio, so affected sons and fertility leave alpha
    # to the prior; the check says so instead of "implied alpha = 1"
    claim = load_claim(DEMO / "claim-northholm-indirect.toml")
    result = check_claim(claim)
    record = result.implied["from_data"]["alpha"]
    assert record["informed"] and record["prior_share"] > 0.9
    codes = [f.code for f in result.findings if "alpha" in f.message and "imply alpha" in
             f.message]
    assert codes == ["implied-interval-uninformed"]


CLAIM = """title = "invented two-source registry claim"
inheritance = "autosomal"
[parameters]
mu = 1.8e-4
s = 0.6
h = 1.0
completeness = 0.9
[[observations]]
kind = "affected"
affected = 110
total = 180000
mode = "dominant"
[[observations]]
kind = "capture-recapture"
first_only = 300
second_only = 200
both = 600
"""


def test_claimed_completeness_is_checked_against_the_sources_overlap():
    # Chapman 1951: N = (n1+1)(n2+1)/(n11+1) - 1 cases in all, completeness found / N
    claim = parse_claim(tomllib.loads(CLAIM), source="registry-claim.toml")
    record = check_claim(claim).implied["from_data"]["completeness"]
    expected = 1100 / chapman_total(300, 200, 600)
    assert record["median"] == pytest.approx(expected, abs=0.01)
    assert record["hpd_lower"] < 0.9 < record["hpd_upper"] or record["evidence"] < 0.05
