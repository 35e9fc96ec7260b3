"""``qhat check``: claim files, every finding in both directions, and the command line.

References (named again beside each check):

* Cystic fibrosis, the textbook argument: incidence about 1 in 2,500 births in people of
  Northern European ancestry, carriers about 1 in 25 (common practice); with s = 1 balance
  would need mu near 4e-4, far above measured per-locus rates; heterozygote advantage is
  the hypothesis with data (Romeo et al. 1989, Hum. Genet. 84:1).
* Haldane's indirect method, X-linked: mu = s x / 3 with x the incidence among male
  births (Haldane 1935, J. Genet. 31:317).
* Measured per-locus rates about 1e-6 to 1e-4 (Morton, Crow & Muller 1956, PNAS 42:855;
  achondroplasia 1.93e-5, Oberklaid et al. 1979, J. Med. Genet. 16:140; Duchenne 6.3e-5,
  Yasuda & Kondo 1980, J. Med. Genet. 17:106); per nucleotide ~2.5e-8 (Nachman & Crowell
  2000, Genetics 156:297) and 1.2e-8 (Kong et al. 2012, Nature 488:471).
* Exact roots: the balance quadratic (1-2h)s q^2 + hs(1+mu) q = mu at F = 0 (docs/model.md;
  derived), solved here with numpy.roots independently of infer.core.balance.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from infer.jobs.check.run import check_claim
from infer.files.claim import load_claim, parse_claim
from infer.errors import InputError
from infer.reporting.check_report import check_document

ROOT = Path(__file__).resolve().parents[3]


def _claim_text(parameters: str, observations: str, claimed: str = "", head: str = "") -> str:
    text = f'title = "test claim"\n{head}\n[parameters]\n{parameters}\n'
    if claimed:
        text += f"[claimed]\n{claimed}\n"
    return text + observations


def _claim(tmp_path, *parts, name="claim.toml", **kw):
    path = tmp_path / name
    path.write_text(_claim_text(*parts, **kw), encoding="utf-8")
    return load_claim(path)


def _codes(result, severity=None):
    return [f.code for f in result.findings if severity is None or f.severity == severity]


def _finding(result, code):
    found = [f for f in result.findings if f.code == code]
    assert found, f"no {code} in {_codes(result)}"
    return found[0]


def _affected(k, n, mode):
    return (f'[[observations]]\nkind = "affected"\naffected = {k}\ntotal = {n}\n'
            f'mode = "{mode}"\n')


def _exact_q(mu, s, h):
    """Smaller positive root of (1-2h)s q^2 + hs(1+mu) q - mu = 0 (derived, F = 0)."""
    a, b = (1 - 2 * h) * s, h * s * (1 + mu)
    if a == 0:
        return mu / b
    roots = np.roots([a, b, -mu])
    real = [r.real for r in roots if abs(r.imag) < 1e-18 and 0 < r.real < 1]
    return min(real)


# ---------------------------------------------------------------- cystic fibrosis

CF_OBS = _affected(40, 100_000, "recessive")  # 1 in 2,500 births (common practice)


def test_cystic_fibrosis_argument_is_an_error(tmp_path):
    """Textbook argument (common practice; Romeo et al. 1989, Hum. Genet. 84:1).

    Incidence 1 in 2,500, s = 1, h = 0: balance needs mu = incidence = 4e-4 (at h = 0 the
    exact root is q^2 = mu/s, derived), far above measured per-locus rates.
    """
    claim = _claim(tmp_path, "mu = 4e-4\ns = 1.0\nh = 0.0", CF_OBS,
                   'mode = "recessive"\nincidence = 4e-4\ncarrier_frequency = 0.04')
    result = check_claim(claim)
    assert not result.consistent, f"the CF claim should be inconsistent; findings {_codes(result)}"
    rate = _finding(result, "mutation-rate-outside-measured")
    assert rate.severity == "error" and "4.00e-04" in rate.message, (
        f"{rate.severity}: {rate.message}")
    implied = _finding(result, "implied-mutation-rate-outside-measured")
    assert implied.severity == "error", (
        f"implied rate 4e-4 vs measured range should be an error: {implied.message}")
    # the rate the data need: posterior of mu is Beta(k, n - k + 1) (log-uniform prior
    # times binomial(k; n, mu), derived) -- scipy.stats.beta as the reference
    assert implied.details["implied_median"] == pytest.approx(
        stats.beta(40, 100_000 - 40 + 1).median(), rel=0.01), (
        "implied median is not the Beta(k, n-k+1) median")
    assert 3.5e-4 < implied.details["implied_median"] < 4.5e-4, (
        f"implied median {implied.details['implied_median']:.3g} not near 4e-4")
    # the numbers are internally consistent: incidence and carriers (2pq ~ 1/25) agree
    assert "observation-agrees" in _codes(result), (
        f"incidence 40/1e5 fits the claim; findings {_codes(result)}")
    assert _codes(result).count("statement-agrees") == 2, (
        f"incidence and carrier frequency should both agree: {_codes(result)}")
    # heterozygote advantage and the other classic alternatives, worded as possibilities
    for code in ("possible-heterozygote-advantage", "possible-founder-effect", "possible-drift",
                 "possible-ascertainment", "possible-non-equilibrium"):
        finding = _finding(result, code)
        assert finding.severity == "note", (
            f"{code} is an alternative explanation, a note, not {finding.severity}")
        assert " could " in finding.message or " may " in finding.message, (
            f"{code} should be worded as a possibility: {finding.message}")
    # issue 13: no disease-specific citation; the advantage that would hold q is given
    # (overdominant equilibrium q = s1/(s1+s2), Fisher 1922: s1 = q s2/(1-q), q = sqrt(4e-4))
    advantage = _finding(result, "possible-heterozygote-advantage")
    assert "Fisher 1922" in advantage.message and "Romeo" not in advantage.message, (
        f"the heterozygote-advantage note should be generic and quantified: {advantage.message}")
    assert advantage.details["s1_needed"] == pytest.approx(0.02 / 0.98, rel=0.01), (
        "s1 = q s2/(1-q) with q = 0.02, s2 = 1 (Fisher 1922)")


def test_cystic_fibrosis_with_a_measured_rate_misses_the_incidence(tmp_path):
    """Same data, a typical measured rate 2e-5 (Oberklaid et al. 1979): incidence 20x off."""
    result = check_claim(_claim(tmp_path, "mu = 2e-5\ns = 1.0\nh = 0.0", CF_OBS))
    mismatch = _finding(result, "observation-mismatch")
    assert mismatch.severity == "error", (
        f"a 20-fold incidence miss should be an error: {mismatch.message}")
    assert mismatch.details["ratio"] == pytest.approx(40 / 2.0, rel=1e-3), (  # 40 vs 1e5*2e-5
        f"ratio {mismatch.details['ratio']} (observed 40, implied 1e5 x 2e-5 = 2)")
    assert "ratio observed/implied 20" in mismatch.message, mismatch.message
    assert _finding(result, "claimed-outside-implied").severity == "error", (
        "mu = 2e-5 is far outside what 40 / 1e5 implies at s = 1, h = 0")
    assert "possible-heterozygote-advantage" in _codes(result), (
        f"heterozygote advantage should be suggested: {_codes(result)}")


def test_implied_interval_matches_the_beta_posterior(tmp_path):
    """Equal-tailed interval of mu from the data: Beta(k, n-k+1) quantiles (derived)."""
    result = check_claim(_claim(tmp_path, "mu = 4e-4\ns = 1.0\nh = 0.0", CF_OBS))
    record = result.implied["from_data"]["mu"]
    reference = stats.beta(40, 100_000 - 40 + 1)
    assert record["lower"] == pytest.approx(reference.ppf(0.025), rel=0.01), (
        f"lower {record['lower']:.4g} vs Beta(k, n-k+1).ppf(0.025) {reference.ppf(0.025):.4g}")
    assert record["upper"] == pytest.approx(reference.ppf(0.975), rel=0.01), (
        f"upper {record['upper']:.4g} vs Beta(k, n-k+1).ppf(0.975) {reference.ppf(0.975):.4g}")
    assert record["evidence"] > 0.5, (
        f"evidence {record['evidence']:.3g} for a claimed value at the posterior centre")
    assert _finding(result, "implied-interval").severity == "note", (
        "the implied interval is reported as a note")
    assert "claimed-outside-implied" not in _codes(result), (
        f"the claimed 4e-4 lies inside the implied interval: {_codes(result)}")


# ------------------------------------------------------- Haldane's indirect method

X_OBS = _affected(22, 121_500, "x-linked-male")
X_HEAD = 'inheritance = "x-linked"'


def test_indirect_method_done_right_is_consistent(tmp_path):
    """mu = s x / 3 (Haldane 1935, J. Genet. 31:317): x = 22/121,500, s = 0.85."""
    mu = 0.85 * (22 / 121_500) / 3
    claim = _claim(tmp_path, f"mu = {mu!r}\ns = 0.85\nh = 0.0", X_OBS,
                   'approximation = "indirect"\nincidence = 1.81e-4', head=X_HEAD)
    result = check_claim(claim)
    assert result.consistent, [f.message for f in result.findings if f.severity == "error"]
    assert not _codes(result, "warning"), f"unexpected warnings: {_codes(result, 'warning')}"
    assert _finding(result, "observation-agrees").details["p_value"] > 0.5, (
        "22 of 121,500 is what the claim implies")
    assert _finding(result, "approximation-in-range").severity == "note", (
        "the indirect method is within its range here")
    assert not any(c.startswith("possible-") for c in _codes(result)), (
        f"a consistent claim needs no alternative explanation: {_codes(result)}")


def test_indirect_method_without_the_factor_three_fails(tmp_path):
    """mu = s x (factor 3 forgotten) implies three times the observed male incidence."""
    mu = 0.85 * (22 / 121_500)
    result = check_claim(_claim(tmp_path, f"mu = {mu!r}\ns = 0.85\nh = 0.0", X_OBS,
                                head=X_HEAD))
    assert not result.consistent, (
        f"forgetting the factor 3 should be inconsistent: {_codes(result)}")
    mismatch = _finding(result, "observation-mismatch")
    assert mismatch.severity == "error", f"a 3-fold miss should be an error: {mismatch.message}"
    assert mismatch.details["ratio"] == pytest.approx(1 / 3, rel=0.01), (
        f"ratio {mismatch.details['ratio']:.4f}, want 1/3")
    outside = [f for f in result.findings if f.code == "claimed-outside-implied"
               and f.details["claimed"] == mu]
    assert outside and outside[0].severity == "error", (
        f"claimed mu = s x outside the implied interval should be an error: {_codes(result)}")
    # balance with a measured rate explains the data: no alternative explanations
    assert not any(c.startswith("possible-") for c in _codes(result)), (
        f"balance with a measured rate explains the data: {_codes(result)}")


# ------------------------------------------------------------------- dominant claims

DOM_OBS = _affected(19, 182_400, "dominant")


def test_dominant_claim_far_from_observed_incidence_fails_with_ratio(tmp_path):
    """p-value against scipy.stats.binom with the exact root of the quadratic (derived)."""
    result = check_claim(_claim(tmp_path, "mu = 1e-5\ns = 0.5\nh = 1.0", DOM_OBS))
    mismatch = _finding(result, "observation-mismatch")
    q = _exact_q(1e-5, 0.5, 1.0)
    expected = 182_400 * (1 - (1 - q) ** 2)
    assert mismatch.details["implied"] == pytest.approx(expected, rel=1e-9), (
        f"implied {mismatch.details['implied']:.6g} vs n (1 - (1-q)^2) = {expected:.6g}")
    assert f"ratio observed/implied {19 / expected:.3g}" in mismatch.message, mismatch.message
    p = 1 - (1 - q) ** 2
    reference = min(1.0, 2 * min(stats.binom.cdf(19, 182_400, p),
                                 stats.binom.sf(18, 182_400, p)))
    assert mismatch.details["p_value"] == pytest.approx(reference, rel=1e-9), (
        f"p-value {mismatch.details['p_value']:.4g} vs scipy.stats.binom {reference:.4g}")
    assert reference < 0.01 and mismatch.severity == "error", (
        f"p = {reference:.3g} below 0.01 should make an error, got {mismatch.severity}")


def test_dominant_claim_within_sampling_error_passes(tmp_path):
    """mu = 2.6e-5, s = 0.5: implied ~19 affected of 182,400 (derived: 2q, q ~ mu/(hs))."""
    result = check_claim(_claim(tmp_path, "mu = 2.6e-5\ns = 0.5\nh = 1.0", DOM_OBS))
    assert result.consistent, [f.message for f in result.findings if f.severity == "error"]
    assert "observation-mismatch" not in _codes(result), (
        f"19 observed where ~19 are implied: {_codes(result)}")
    assert _finding(result, "observation-agrees").details["p_value"] > 0.5, (
        "the observation should agree with p > 0.5")


def test_threshold_moves_the_line_between_warning_and_error(tmp_path):
    """Observed 29 where the claim implies ~19 (p ~ 0.04): a warning at 0.01, error at 0.1."""
    claim = _claim(tmp_path, "mu = 2.6e-5\ns = 0.5\nh = 1.0", _affected(29, 182_400,
                                                                            "dominant"))
    loose = check_claim(claim, threshold=0.01)
    p = _finding(loose, "observation-agrees" if "observation-agrees" in _codes(loose)
                 else "observation-mismatch").details["p_value"]
    assert 0.01 < p < 0.05, f"p = {p:.4g}: the test case should sit between 0.01 and 0.05"
    assert _finding(loose, "observation-mismatch").severity == "warning", (
        "between threshold and 5 x threshold is a warning")
    strict = check_claim(claim, threshold=0.1)
    assert _finding(strict, "observation-mismatch").severity == "error", (
        "below threshold 0.1 it is an error")
    assert loose.consistent and not strict.consistent, (
        "a warning keeps the claim consistent, an error does not")


def test_claim_uncertainty_widens_the_predictive(tmp_path):
    """A wide authors' interval lowers the evidence against the observed count.

    Cross-check of the exact tail average against Monte Carlo predictive draws
    (infer.jobs.estimate.results.two_sided_p_value on binomial draws, the definition itself).
    """
    point = check_claim(_claim(tmp_path, "mu = 1.5e-5\ns = 0.5\nh = 1.0", DOM_OBS))
    wide = check_claim(_claim(tmp_path, "mu = { claimed = 1.5e-5, lower = 5e-6, upper = 4.5e-5 }"
                                        "\ns = 0.5\nh = 1.0", DOM_OBS, name="wide.toml"))
    p_point = point.implied["observations"][0]["p_value"]
    p_wide = wide.implied["observations"][0]["p_value"]
    assert p_wide > p_point, (
        f"wide interval p {p_wide:.3g} should exceed the point claim's {p_point:.3g}")
    from infer.core.stats import two_sided_p_value

    rng = np.random.default_rng(3)
    sigma = (math.log(4.5e-5) - math.log(5e-6)) / (2 * 1.959963984540054)
    mu = 1.5e-5 * np.exp(sigma * rng.standard_normal(200_000))
    q = np.array([_exact_q(m, 0.5, 1.0) for m in mu[:2000]])
    draws = rng.binomial(182_400, 1 - (1 - np.repeat(q, 100)) ** 2)
    assert p_wide == pytest.approx(two_sided_p_value(draws, 19), abs=0.03), (
        "exact tail average disagrees with Monte Carlo predictive draws")


# ----------------------------------------------------------------------- statements


def test_stated_carrier_frequency_mismatch_and_agreement(tmp_path):
    """2pq at q = sqrt(mu/s) = 0.02 is 0.0392 (derived): 1/25 agrees, 1/100 does not."""
    good = check_claim(_claim(tmp_path, "mu = 4e-4\ns = 1.0\nh = 0.0", CF_OBS,
                              "carrier_frequency = 0.04"))
    assert _finding(good, "statement-agrees").details["implied"] == pytest.approx(
        2 * 0.02 * 0.98, rel=1e-6), "implied carrier frequency is not 2pq at q = 0.02"
    assert "statement-mismatch" not in _codes(good), (
        f"1/25 agrees with 2pq = 0.0392: {_codes(good)}")
    bad = check_claim(_claim(tmp_path, "mu = 4e-4\ns = 1.0\nh = 0.0", CF_OBS,
                             "carrier_frequency = 0.01", name="bad.toml"))
    finding = _finding(bad, "statement-mismatch")
    assert finding.severity == "error", (
        f"1/100 against 0.0392 should be an error: {finding.message}")
    assert finding.details["ratio"] == pytest.approx(0.01 / 0.0392, rel=1e-6), (
        f"ratio {finding.details['ratio']:.4g}, want 0.01/0.0392")
    # with overlapping stated and implied intervals it is only a warning
    soft = check_claim(_claim(tmp_path, "mu = { claimed = 4e-4, lower = 1e-4, upper = 1.6e-3 }"
                                        "\ns = 1.0\nh = 0.0", CF_OBS,
                              "carrier_frequency = { claimed = 0.012, lower = 0.008, "
                              "upper = 0.03 }", name="soft.toml"))
    assert _finding(soft, "statement-mismatch").severity == "warning", (
        "overlapping stated and implied intervals make only a warning")


# ------------------------------------------------------------------- approximations


def test_approximation_outside_its_range(tmp_path):
    """mu/(hs) at h = 0.001, s = 1, mu = 1e-5 near the recessive limit (Crow & Kimura 1970).

    mu/(hs) = 0.01 while the exact root of the quadratic is ~2.7e-3 (numpy.roots, derived).
    """
    obs = '[[observations]]\nkind = "sporadic"\ncases = 2\nbirths = 100000\nmode = "dominant"\n'
    result = check_claim(_claim(tmp_path, "mu = 1e-5\ns = 1.0\nh = 0.001", obs,
                                'approximation = "mu/(hs)"'))
    finding = _finding(result, "approximation-out-of-range")
    exact = _exact_q(1e-5, 1.0, 0.001)
    assert finding.details["exact"] == pytest.approx(exact, rel=1e-9), (
        f"exact root {finding.details['exact']:.6g} vs numpy.roots {exact:.6g}")
    assert finding.details["relative_error"] == pytest.approx(0.01 / exact - 1, rel=1e-6), (
        f"relative error {finding.details['relative_error']:.4g} of mu/(hs) = 0.01")
    assert finding.severity == "error", "mu/(hs) off by ~270 % should be an error"


def test_approximation_inside_its_range_is_silent(tmp_path):
    """mu/(hs) at h = 0.5, s = 0.1, mu = 1e-6: error ~ mu/(h^2 s) (Crow & Kimura 1970)."""
    obs = _affected(1, 100_000, "dominant")
    result = check_claim(_claim(tmp_path, "mu = 1e-6\ns = 0.1\nh = 0.5", obs,
                                'approximation = "mu/(hs)"'))
    assert "approximation-out-of-range" not in _codes(result), (
        f"mu/(hs) is accurate at h = 0.5: {_codes(result)}")
    finding = _finding(result, "approximation-in-range")
    assert abs(finding.details["relative_error"]) < 1e-3, (
        f"relative error {finding.details['relative_error']:.2e} should be < 1e-3")
    assert "frequency-too-high-for-approximation" not in _codes(result), (
        f"a small q is fine for the rare-allele formula: {_codes(result)}")


def test_frequency_too_high_for_rare_allele_approximation(tmp_path):
    """A stated q = 0.3 with mu/(hs): terms of order q are dropped (common practice)."""
    obs = _affected(1, 100_000, "dominant")
    result = check_claim(_claim(tmp_path, "mu = 1e-6\ns = 0.1\nh = 0.5", obs,
                                'approximation = "mu/(hs)"\nq = 0.3'))
    assert _finding(result, "frequency-too-high-for-approximation").severity == "error", (
        "q = 0.3 is too high for a rare-allele approximation")
    low = check_claim(_claim(tmp_path, "mu = 1e-6\ns = 0.1\nh = 0.5", obs,
                             'approximation = "mu/(hs)"\nq = 2e-5', name="low.toml"))
    assert "frequency-too-high-for-approximation" not in _codes(low), (
        f"q = 2e-5 is rare enough: {_codes(low)}")


def test_deterministic_balance_where_drift_dominates(tmp_path):
    """4 Ne q_hat with q_hat = mu/(hs) to first order (derived): Ne = 50 gives 0.027."""
    obs = _affected(0, 10_000, "dominant")
    small = check_claim(_claim(tmp_path, "mu = 2e-5\ns = 0.3\nh = 0.5\nNe = 50", obs))
    finding = _finding(small, "drift-dominates")
    assert finding.details["four_Ne_q_hat"] == pytest.approx(
        4 * 50 * _exact_q(2e-5, 0.3, 0.5), rel=1e-9), (
        "4 Ne q_hat is not computed from the exact root")
    assert finding.severity == "error", "4 Ne q_hat = 0.027 << 1 should be an error"
    large = check_claim(_claim(tmp_path, "mu = 2e-5\ns = 0.3\nh = 0.5\nNe = 1e6", obs,
                               name="large.toml"))
    assert "drift-dominates" not in _codes(large), (
        f"Ne = 1e6 gives 4 Ne q_hat >> 1: {_codes(large)}")


# ----------------------------------------------------------- what the trade knows


@pytest.mark.parametrize("mu, severity", [
    (4e-4, "error"),      # above 2 x 1e-4 (NF1, the highest commonly quoted)
    (1.5e-4, "warning"),  # just above the measured range
    (1.93e-5, None),      # achondroplasia (Oberklaid et al. 1979): inside
    (6.3e-5, None),       # Duchenne (Yasuda & Kondo 1980): inside
    (1e-7, "note"),       # below, plausible for a small target
    (1e-9, "warning"),    # below a single specified substitution (Kong et al. 2012 / 3)
])
def test_per_locus_rate_against_measured_range(tmp_path, mu, severity):
    obs = _affected(1, 1000, "dominant")
    result = check_claim(_claim(tmp_path, f"mu = {mu!r}\ns = 1.0\nh = 1.0", obs))
    found = [f for f in result.findings if f.code == "mutation-rate-outside-measured"]
    assert (found[0].severity if found else None) == severity, (
        f"mu = {mu:g} per locus: finding {found[0].message if found else None}")


@pytest.mark.parametrize("mu, severity", [
    (2.5e-8, None),      # Nachman & Crowell 2000
    (1.2e-8, None),      # Kong et al. 2012
    (1e-7, "warning"),   # CpG-like, within a factor 10
    (1e-6, "error"),
])
def test_per_nucleotide_rate_against_measured_range(tmp_path, mu, severity):
    obs = _affected(0, 1000, "dominant")
    result = check_claim(_claim(tmp_path, f"mu = {mu!r}\ns = 1.0\nh = 1.0", obs,
                                'mu_scale = "nucleotide"'))
    found = [f for f in result.findings if f.code == "mutation-rate-outside-measured"]
    assert (found[0].severity if found else None) == severity, (
        f"mu = {mu:g} per nucleotide: finding {found[0].message if found else None}")


def test_no_equilibrium_is_a_finding_not_an_input_error(tmp_path):
    """mu = 0.3 against s = 0.01 at h = 0.5: mutation overwhelms selection."""
    result = check_claim(_claim(tmp_path, "mu = 0.3\ns = 0.01\nh = 0.5",
                                _affected(5, 1000, "dominant")))
    assert _finding(result, "no-equilibrium").severity == "error", (
        "mu = 0.3 against s = 0.01 has no interior balance")
    ok = check_claim(_claim(tmp_path, "mu = 2.6e-5\ns = 0.5\nh = 1.0", DOM_OBS,
                            name="ok.toml"))
    assert "no-equilibrium" not in _codes(ok), (
        f"a claim with a balance raised no-equilibrium: {_codes(ok)}")


def test_drift_model_tails_match_beta_binomial(tmp_path):
    """Nearly neutral (s = 1e-9): Wright's density is Beta(4Ne mu, 4Ne nu), so the count
    is beta-binomial (Wright 1931; scipy.stats.betabinom as the reference)."""
    obs = '[[observations]]\nkind = "allele-count"\nobserved = 3\nsampled = 400\n'
    claim = _claim(tmp_path, "mu = 1e-4\ns = 1e-9\nh = 0.5\nNe = 500\nnu = 1e-4", obs,
                   head='model = "drift"')
    result = check_claim(claim)
    record = result.implied["observations"][0]
    a = b = 4 * 500 * 1e-4
    reference = stats.betabinom(400, a, b)
    assert record["lower_tail"] == pytest.approx(reference.cdf(3), rel=1e-5), (
        f"lower tail {record['lower_tail']:.6g} vs betabinom.cdf {reference.cdf(3):.6g}")
    assert record["upper_tail"] == pytest.approx(reference.sf(2), rel=1e-5), (
        f"upper tail {record['upper_tail']:.6g} vs betabinom.sf {reference.sf(2):.6g}")
    assert _finding(result, "drift-model-used").severity == "note", (
        "the drift model should be named in a note")


def test_findings_carry_severity_code_message_details(tmp_path):
    result = check_claim(_claim(tmp_path, "mu = 4e-4\ns = 1.0\nh = 0.0", CF_OBS))
    for finding in result.findings:
        assert finding.severity in ("error", "warning", "note"), (
            f"{finding.code}: unknown severity {finding.severity!r}")
        assert finding.code and finding.message.endswith(".") and "\n" not in finding.message, (
            f"{finding.code}: a finding is one sentence ending in a full stop: {finding.message!r}")
        assert isinstance(finding.details, dict), (
            f"{finding.code}: details {type(finding.details)} should be a dict")
    severities = [f.severity for f in result.findings]
    assert severities == sorted(severities, key=("error", "warning", "note").index), (
        f"findings not sorted errors, warnings, notes: {severities}")
    json.dumps(check_document(result), allow_nan=False, default=float)


# ---------------------------------------------------------------- claim-file errors

GOOD_PARAMETERS = "mu = 4e-4\ns = 1.0\nh = 0.0"


@pytest.mark.parametrize("parameters, claimed, field, value", [
    ("s = 1.0\nh = 0.0", "", "parameters.mu", "missing"),
    ('mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }\ns = 1.0\nh = 0.0', "",
     "parameters.mu.prior", "not a prior"),
    ("mu = { claimed = 4e-4, lower = 5e-4, upper = 6e-4 }\ns = 1.0\nh = 0.0", "",
     "parameters.mu.lower", "0.0005"),
    ("mu = { claimed = 4e-4, lower = 1e-4 }\ns = 1.0\nh = 0.0", "", "parameters.mu.upper",
     "both"),
    ("mu = 4e-4\ns = 1.5\nh = 0.0", "", "parameters.s", "1.5"),
    (GOOD_PARAMETERS, "incidence = 4e-4", "claimed.mode", "missing"),
    (GOOD_PARAMETERS, 'approximation = "guess"', "claimed.approximation", '"guess"'),
    (GOOD_PARAMETERS, "carrier_frequency = 1.5", "claimed.carrier_frequency", "1.5"),
    (GOOD_PARAMETERS, "colour = 3", "claimed.colour", "colour"),
    (GOOD_PARAMETERS, "q_male = 0.001", "claimed.q_male", "x-linked"),
    (GOOD_PARAMETERS, "tolerance = 2", "claimed.tolerance", "2"),
])
def test_bad_claim_names_file_field_value(tmp_path, parameters, claimed, field, value):
    path = tmp_path / "bad.toml"
    path.write_text(_claim_text(parameters, CF_OBS, claimed), encoding="utf-8")
    with pytest.raises(InputError) as info:
        load_claim(path)
    text = str(info.value)
    assert text.startswith(f"{path}: {field}: ") and value in text and "\n" not in text, (
        f"want '{path}: {field}: ...{value}...' on one line, got {text!r}")


def test_bad_observation_is_reported_like_a_study(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(_claim_text(GOOD_PARAMETERS, _affected(12, 10, "recessive")),
                    encoding="utf-8")
    with pytest.raises(InputError, match=r"observations\[1\]\.affected: 12 is more than "
                                         r"total 10"):
        load_claim(path)


def test_claim_parses_intervals_statements_and_seed():
    document = {
        "title": "t", "reference": "Invented 2020",
        "parameters": {"mu": {"claimed": 2e-5, "lower": 1e-5, "upper": 4e-5}, "s": 1.0,
                       "h": 0.0, "F": 0.01},
        "claimed": {"mode": "recessive", "incidence": {"claimed": 4e-4, "lower": 3e-4,
                                                       "upper": 5e-4}},
        "observations": [{"kind": "affected", "affected": 4, "total": 10_000,
                          "mode": "recessive"}],
        "sampler": {"seed": 9},
    }
    claim = parse_claim(document, source="paper.toml")
    assert claim.values["mu"] == 2e-5 and claim.values["F"] == 0.01, (
        f"claimed values {claim.values}")
    assert claim.intervals == {"mu": (1e-5, 4e-5)}, f"intervals {claim.intervals}"
    assert claim.statements["incidence"].lower == 3e-4, (
        f"stated incidence {claim.statements['incidence']}")
    assert claim.seed == 9 and claim.reference == "Invented 2020", (
        f"seed {claim.seed}, reference {claim.reference!r}")
    assert claim.study.free == [], f"a claim fixes every parameter, free {claim.study.free}"


# ------------------------------------------------------------------- command line


def _qhat(*args, cwd=None):
    from conftest import run_qhat  # the shared CLI runner (tests/conftest.py)

    return run_qhat("check", *args, cwd=cwd or ROOT, timeout=300)


def test_cli_inconsistent_json(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(_claim_text("mu = 1e-5\ns = 0.5\nh = 1.0", DOM_OBS), encoding="utf-8")

    ran = _qhat(bad, "--json")
    assert ran.returncode == 3, ran.stderr
    payload = json.loads(ran.stdout)
    assert set(payload) == {"schema_version", "qhat_version", "consistent", "findings",
                            "implied"}, f"--json keys {sorted(payload)}"
    assert payload["consistent"] is False, "an inconsistent claim has consistent: false"
    assert {"severity", "code", "message", "details"} <= set(payload["findings"][0]), (
        f"finding keys {sorted(payload['findings'][0])}")
    assert payload["findings"][0]["severity"] == "error", "errors come first"
    assert "q_hat" in payload["implied"] and "from_data" in payload["implied"], (
        f"implied keys {sorted(payload['implied'])}")


@pytest.mark.slow
def test_cli_consistent_out_folder_and_force(tmp_path):
    good = tmp_path / "good.toml"
    mu = 0.85 * (22 / 121_500) / 3
    good.write_text(_claim_text(f"mu = {mu!r}\ns = 0.85\nh = 0.0", X_OBS, head=X_HEAD),
                    encoding="utf-8")
    ran = _qhat(good)
    assert ran.returncode == 0, ran.stderr
    assert "consistent" in ran.stdout and "note" in ran.stdout, ran.stdout
    bad = tmp_path / "bad.toml"
    bad.write_text(_claim_text("mu = 1e-5\ns = 0.5\nh = 1.0", DOM_OBS), encoding="utf-8")
    out = tmp_path / "report"
    ran = _qhat(bad, "--out", out)
    assert ran.returncode == 3, ran.stderr
    assert "ERROR" in ran.stdout, ran.stdout
    assert sorted(p.name for p in out.iterdir() if p.name != ".qhat-output") == [
            "balance.png", "check.json", "report.html", "report.md"], (
        f"report folder holds {sorted(p.name for p in out.iterdir())}")
    assert (out / "balance.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n", (
        "balance.png is not a PNG file")
    text = (out / "report.md").read_text(encoding="utf-8")
    assert "observation-mismatch" in text and "not a clinical" in text, (
        "report.md lacks the finding or the caution")
    assert _qhat(bad, "--out", out).returncode == 2, (  # exists, no --force
        "an existing folder must not be replaced without --force")
    assert _qhat(bad, "--out", out, "--force").returncode == 3, "--force replaces a report folder"
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".report")], (
        "a temporary report folder was left behind")


@pytest.mark.parametrize("content, field", [
    (_claim_text("s = 1.0\nh = 0.0", CF_OBS), "parameters.mu"),
    (_claim_text(GOOD_PARAMETERS, _affected(12, 10, "recessive")),
     "observations[1].affected"),
    ("title = [", None),
])
def test_cli_bad_claim_exit_2_one_line_nothing_written(tmp_path, content, field):
    path = tmp_path / "bad.toml"
    path.write_text(content, encoding="utf-8")
    out = tmp_path / "never"
    ran = _qhat(path, "--out", out)
    assert ran.returncode == 2, ran.stderr
    lines = ran.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"qhat: error: {path}"), (
        f"want one line naming {path}, got {ran.stderr!r}")
    if field:
        assert field in lines[0], f"the error line should name {field}: {lines[0]}"
    assert "Traceback" not in ran.stderr and not out.exists() and ran.stdout == "", (
        f"a bad claim wrote or printed something: {ran.stderr!r}")
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".never")], (
        "a temporary folder was left behind")


def test_cli_bad_threshold(tmp_path):
    ran = _qhat(ROOT / "data_demo" / "claim-northholm-indirect.toml", "--threshold", "2")
    assert ran.returncode == 2 and ran.stderr.startswith("qhat: error: --threshold: 2"), ran.stderr


@pytest.mark.parametrize("path", sorted((ROOT / "data_demo").glob("claim-*.toml")),
                         ids=lambda p: p.stem)
def test_demo_claims(path):
    """Each demo claim checks without trouble; Northholm and Vennick (its founder history
    explains the data) are the consistent ones."""
    result = check_claim(load_claim(path))
    consistent = ("claim-northholm-indirect", "claim-vennick-founder")
    assert result.consistent == (path.stem in consistent), (
        f"{path.stem}: consistent = {result.consistent}, {_codes(result, 'error')}")
