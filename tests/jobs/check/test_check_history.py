"""``qhat check`` under a claim's ``[history]``: today's values, sampling times, equilibrium beside.

References (each beside its check):

- the exact balance of a recessive lethal (s = 1, h = 0, F = 0, nu = 0) in this life cycle
  (selection on zygotes, then mutation of the gametes, docs/model.md) is q = sqrt(mu)
  exactly, with incidence and load mu: the selected frequency is q/(1 + q), and
  q = q/(1 + q) + mu·(1 - q/(1 + q)) = (q + mu)/(1 + q) gives q² = mu (derived; Haldane
  1937, Am. Nat. 71:337 for the load);
- a recessive lethal without mutation falls as q_t = q0/(1 + t q0) (Crow & Kimura 1970,
  An Introduction to Population Genetics Theory, ch. 5; from memory for the chapter; it is
  also derived: 1/q' = 1/q + 1 from q' = q/(1 + q));
- without selection or mutation the frequency does not change (Hardy-Weinberg; common
  practice);
- the predictive p-value of an allele count at a known frequency is the two-sided binomial
  tail, min(1, 2 min(P(T <= t), P(T >= t))) (scipy.stats.binom as the reference);
- under drift, the exact neutral Wright-Fisher chain (binomial sampling of 2Ne genes;
  Fisher 1930, Wright 1931, Genetics 16:97) built with scipy.stats.binom, whose mean is
  constant and whose heterozygosity decays as (1 - 1/(2Ne))^t (Wright 1931).
"""

from __future__ import annotations

import json
import math
import tomllib

import pytest
from conftest import DEMO, call_qhat
from scipy import stats

from infer.files.claim import load_claim, parse_claim
from infer.jobs.check.run import check_claim

jsonschema = pytest.importorskip("jsonschema")


def _claim(parameters: str, history: str, observations: str = "", claimed: str = "",
           model: str = "deterministic"):
    text = (f'title = "invented"\nmodel = "{model}"\n[parameters]\n{parameters}\n{history}\n'
            f"{claimed}\n{observations}")
    return parse_claim(tomllib.loads(text), source="claim.toml")


def _finding(result, code):
    found = [f for f in result.findings if f.code == code]
    assert found, f"no {code} finding among {[f.code for f in result.findings]}"
    return found[0]


def test_a_long_single_epoch_returns_the_equilibrium():
    """A recessive lethal long after s changed from 0.3 to 1 is at sqrt(mu) (closed form)."""
    mu = 1e-4
    claim = _claim(f"mu = {mu}\ns = 1.0\nh = 0.0",
                   "[history]\nepochs = [ { generations = 3000 } ]\nancestral = { s = 0.3 }")
    result = check_claim(claim)
    implied = result.implied
    assert implied["q_hat"] == pytest.approx(math.sqrt(mu), rel=1e-9), (
        f"q today {implied['q_hat']} after 3,000 generations, expected sqrt(mu) = "
        f"{math.sqrt(mu)} (exact balance of a recessive lethal, derived)")
    assert implied["incidence_recessive"] == pytest.approx(mu, rel=1e-8), (
        "recessive incidence at the balance is mu (derived)")
    assert implied["load"] == pytest.approx(mu, rel=1e-8), "load of a recessive = mu (Haldane 1937)"
    assert implied["equilibrium"]["q_hat"] == pytest.approx(math.sqrt(mu), rel=1e-12), (
        "the equilibrium beside is the exact balance sqrt(mu)")
    assert implied["history"]["compared"]["q_hat"]["ratio"] == pytest.approx(1.0, abs=1e-8)


def test_a_founder_without_forces_keeps_the_founder_frequency():
    """With selection and mutation negligible the frequency stays the founders' (common practice).

    A claim cannot state s = 0 or mu = 0 (outside their supports), so the epoch holds
    s = 1e-12 and mu = 1e-15: 40 generations move q by less than 1e-10.
    """
    claim = _claim("mu = 1e-15\ns = 1e-12\nh = 0.5",
                   "[history]\nepochs = [ { generations = 40 } ]\n"
                   "founder = { founders = 30, generations_ago = 40, frequency = 0.137 }")
    result = check_claim(claim)
    assert result.implied["q_hat"] == pytest.approx(0.137, abs=1e-10), (
        f"q today {result.implied['q_hat']}, expected the founder frequency 0.137 "
        "(no change without forces; Hardy-Weinberg, common practice)")
    assert result.implied["carrier_frequency"] == pytest.approx(2 * 0.137 * 0.863, rel=1e-9), (
        "carrier frequency 2pq in Hardy-Weinberg proportions (common practice)")


def test_a_recessive_lethal_after_founding_follows_crow_and_kimura():
    """q_today = q0/(1 + t q0) for s = 1, h = 0 (Crow & Kimura 1970), statements judged today."""
    q0, t = 0.06, 25
    expected = q0 / (1 + t * q0)
    claim = _claim("mu = 1e-12\ns = 1.0\nh = 0.0",
                   "[history]\nepochs = [ { generations = 25 } ]\n"
                   f"founder = {{ founders = 50, generations_ago = 25, frequency = {q0} }}",
                   claimed=f'[claimed]\nmode = "recessive"\nq = {expected:.6f}\n'
                           f"incidence = {expected ** 2:.6e}")
    result = check_claim(claim)
    assert result.implied["q_hat"] == pytest.approx(expected, rel=1e-6), (
        f"q today {result.implied['q_hat']}, expected q0/(1 + t q0) = {expected} "
        "(Crow & Kimura 1970)")
    assert result.implied["incidence_recessive"] == pytest.approx(expected ** 2, rel=1e-5)
    statements = [f for f in result.findings if f.code.startswith("statement-")]
    assert {f.code for f in statements} == {"statement-agrees"}, (
        f"statements of today's values should agree: {[f.message for f in statements]}")
    assert all("at equilibrium it would be" in f.message for f in statements), (
        "each statement names the equilibrium value beside")
    note = _finding(result, "history-assumed")
    assert "Founder event 25 generations ago" in note.message, note.message


def test_predictive_p_value_of_an_allele_count_at_its_sampling_time():
    """The p-value is scipy.stats.binom's two-sided tail at the history's q then."""
    q0, ago, n, k = 0.05, 8, 3000, 100
    claim = _claim("mu = 1e-12\ns = 1.0\nh = 0.0",
                   "[history]\nepochs = [ { generations = 20 } ]\n"
                   f"founder = {{ founders = 40, generations_ago = 20, frequency = {q0} }}\n"
                   f'sampled = {{ "old survey" = {ago} }}',
                   observations=f'[[observations]]\nlabel = "old survey"\n'
                                f'kind = "allele-count"\nobserved = {k}\nsampled = {n}\n')
    result = check_claim(claim)
    q_then = q0 / (1 + (20 - ago) * q0)  # Crow & Kimura 1970, 12 generations after founding
    reference = min(1.0, 2 * min(stats.binom.cdf(k, n, q_then), stats.binom.sf(k - 1, n, q_then)))
    record = result.implied["observations"][0]
    assert record["generations_ago"] == ago, record
    assert record["q_then"] == pytest.approx(q_then, rel=1e-6), (
        f"q at the sampling time {record['q_then']}, expected {q_then}")
    assert record["p_value"] == pytest.approx(reference, rel=1e-6), (
        f"p-value {record['p_value']}, scipy.stats.binom gives {reference}")
    today = q0 / (1 + 20 * q0)
    wrong = min(1.0, 2 * min(stats.binom.cdf(k, n, today), stats.binom.sf(k - 1, n, today)))
    assert record["p_value"] > 0.3 and wrong < 0.01, (
        f"the count fits q then (p {record['p_value']}) and not q today (p {wrong})")


def test_equilibrium_findings_and_curve_say_they_are_the_equilibrium():
    """Approximation findings and the balance curve are labelled as the equilibrium's."""
    claim = load_claim(DEMO / "claim-vennick-founder.toml")
    result = check_claim(claim)
    approx = _finding(result, "approximation-in-range")
    assert "concerns the equilibrium" in approx.message, approx.message
    assert approx.details["concerns"] == "equilibrium", approx.details
    assert approx.details["exact"] == pytest.approx(math.sqrt(1e-5), rel=1e-9), (
        "the approximation is judged against the exact balance sqrt(mu) (derived)")
    curve = result.balance_curve
    assert "equilibrium" in curve.label and "equilibrium" in curve.title, (curve.label, curve.title)
    assert curve.claimed_value == pytest.approx(result.implied["equilibrium"]["q_hat"])
    assert curve.today_value == pytest.approx(result.implied["q_hat"])


def test_check_json_carries_the_history_and_validates(tmp_path, capsys):
    """check.json names the history (schema ``check``); the terminal text says it too."""
    from infer.reporting.schemas import load_schema

    status, out, err = call_qhat(["check", str(DEMO / "claim-vennick-founder.toml"), "--json"],
                                 capsys)
    assert status in (0, 3), f"qhat check exited {status}: {err}"
    document = json.loads(out)
    jsonschema.validate(document, load_schema("check"))
    assert document["history"]["history"]["founder"]["founders"] == 60, document["history"]
    assert document["implied"]["history"]["compared"]["q_hat"]["equilibrium"] == pytest.approx(
        math.sqrt(1e-5), rel=1e-9), "equilibrium q beside is sqrt(mu) (derived)"
    status, out, _ = call_qhat(["check", str(DEMO / "claim-vennick-founder.toml")], capsys)
    assert "history: " in out and "under the stated history" in out, out


def _neutral_chain(q0: float, genes: int, steps: int):
    """Exact neutral Wright-Fisher masses over k/genes after ``steps`` generations from q0.

    Independent reference: the binomial transition P(k -> j) = Binomial(j; 2N, k/2N)
    (Fisher 1930; Wright 1931, Genetics 16:97) built with scipy.stats.binom.
    """
    import numpy as np

    k = np.arange(genes + 1)
    masses = stats.binom.pmf(k, genes, q0)
    matrix = stats.binom.pmf(k[None, :], genes, (k / genes)[:, None])
    for _ in range(steps - 1):
        masses = masses @ matrix
    return k / genes, masses


def test_drift_history_is_the_exact_wright_fisher_chain():
    """Under drift a founder claim's mean, heterozygosity and p-values follow the exact chain.

    Neutral (s = 1e-12, mu = 1e-12, nu = 1e-9: negligible over 10 generations): the mean
    stays q0 (a martingale) and E[2x(1 - x)] = 2 q0 (1 - q0)(1 - 1/(2Ne))^t (Wright 1931);
    an allele count sampled 4 generations ago is judged against the chain after 6 steps.
    """
    import numpy as np

    q0, Ne, n, k_old, k_today = 0.2, 50, 200, 52, 30
    claim = _claim(f"mu = 1e-12\ns = 1e-12\nh = 0.5\nNe = {Ne}",
                   "[history]\nepochs = [ { generations = 10 } ]\n"
                   f"founder = {{ founders = 50, generations_ago = 10, frequency = {q0} }}\n"
                   'sampled = { "old" = 4 }',
                   observations=(f'[[observations]]\nlabel = "old"\nkind = "allele-count"\n'
                                 f"observed = {k_old}\nsampled = {n}\n"
                                 f'[[observations]]\nlabel = "today"\nkind = "allele-count"\n'
                                 f"observed = {k_today}\nsampled = {n}\n"),
                   model="drift")
    result = check_claim(claim)
    propagated = result.implied["propagated"]
    assert propagated["mean"] == pytest.approx(q0, rel=1e-6), (
        f"mean {propagated['mean']}, a neutral chain keeps q0 = {q0} (martingale)")
    decay = 2 * q0 * (1 - q0) * (1 - 1 / (2 * Ne)) ** 10
    assert propagated["carrier_frequency"] == pytest.approx(decay, rel=1e-6), (
        f"E[2x(1-x)] {propagated['carrier_frequency']}, Wright 1931 gives {decay}")
    for record, steps, k in zip(result.implied["observations"], (6, 10), (k_old, k_today),
                                strict=True):
        x, w = _neutral_chain(q0, 2 * Ne, steps)
        cdf = float(np.sum(w * stats.binom.cdf(k, n, x)))
        sf = float(np.sum(w * stats.binom.sf(k - 1, n, x)))
        reference = min(1.0, 2 * min(cdf, sf))
        assert record["p_value"] == pytest.approx(reference, rel=1e-5), (
            f"{record['label']}: p-value {record['p_value']}, the exact chain after {steps} "
            f"steps with scipy.stats.binom gives {reference}")


def test_x_linked_long_epoch_returns_its_balance_and_reports_the_history():
    """An X-linked claim long after s changed sits at the exact balance (its fixed point).

    The exact X-linked balance is the fixed point of the same life cycle (derived in
    infer/core/x_linked.py), so 400 generations after s changed from 0.3 to 0.9 (a
    geometric approach) the sons' frequency today equals the equilibrium value beside
    it; report.md says which history was assumed and labels the values as today's.
    """
    from infer.reporting.check_report import check_markdown

    claim = parse_claim(tomllib.loads(
        'title = "x"\ninheritance = "x-linked"\n[parameters]\nmu = 2e-5\ns = 0.9\nh = 0.0\n'
        '[history]\nepochs = [ { generations = 400 } ]\nancestral = { s = 0.3 }\n'
        '[[observations]]\nkind = "affected"\naffected = 20\ntotal = 100000\n'
        'mode = "x-linked-male"\n'), source="claim.toml")
    result = check_claim(claim)
    implied = result.implied
    assert implied["q_male"] == pytest.approx(implied["equilibrium"]["q_male"], rel=1e-9), (
        f"q_male today {implied['q_male']} against the balance "
        f"{implied['equilibrium']['q_male']} (the balance is the recursion's fixed point)")
    text = check_markdown(result, None)
    assert "History assumed: Epoch 1: from 400 to 0 generations ago" in text, text
    assert "q_male today = " in text and "[equilibrium " in text, text
