"""The rendering of ``qhat check``: the balance curve it draws, the plot, the report folder.

Covers infer/jobs/check/balance_curve.py (the computation), infer/reporting/plots/
claim_balance.py (the figure) and infer/reporting/check_report.py (text, JSON, folder).

References (named again beside each check):

* the exact root of the balance quadratic (1-2h)s q^2 + hs(1+mu) q = mu at F = 0
  (docs/model.md; derived), solved with numpy.roots independently of the code;
  a dominant phenotype's share of births is 1 - (1-q)^2 (Hardy-Weinberg, common practice);
* the Clopper-Pearson interval as beta quantiles (Clopper & Pearson 1934, Biometrika
  26:404), from scipy.stats.beta;
* measured per-locus rates 1e-6 to 1e-4 (Morton, Crow & Muller 1956, PNAS 42:855) and
  per-nucleotide 1e-8 to 3e-8 (Nachman & Crowell 2000, Genetics 156:297; Kong et al.
  2012, Nature 488:471);
* a new file's mode is 0o666 & ~umask (POSIX open(2)).
"""

from __future__ import annotations

import io
import json

import matplotlib

matplotlib.use("Agg")
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from scipy import stats  # noqa: E402

from infer.jobs.check.run import check_claim  # noqa: E402
from infer.cli import main  # noqa: E402
from infer.files.claim import load_claim  # noqa: E402
from infer.reporting import check_report  # noqa: E402
from infer.reporting.folder import MARKER  # noqa: E402
from infer.reporting.jsonout import dumps  # noqa: E402
from infer.reporting.plots.claim_balance import claim_balance_figure  # noqa: E402
from infer.reporting.plots.save import plain_text  # noqa: E402

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (W3C 2003), section 5.2
MINUS = "\u2212"                       # matplotlib's tick labels use the Unicode minus

DOMINANT = """title = "{title}"
[parameters]
mu = 1e-5
s = 0.5
h = 1.0
{head}
[[observations]]
label = "registry births"
kind = "affected"
affected = 19
total = 182_400
mode = "dominant"
{extra}
"""


def _claim(tmp_path, *, title="Dominant test claim", head="", extra="", name="claim.toml"):
    path = tmp_path / name
    path.write_text(DOMINANT.format(title=title, head=head, extra=extra), encoding="utf-8")
    return load_claim(path)


def _exact_q(mu, s, h):
    """Smaller root in (0, 1) of (1-2h)s q^2 + hs(1+mu) q - mu = 0 (derived, F = 0)."""
    a, b = (1 - 2 * h) * s, h * s * (1 + mu)
    if a == 0:
        return mu / b if mu / b < 1 else np.nan
    roots = np.roots([a, b, -mu])
    real = [r.real for r in roots if abs(r.imag) < 1e-18 and 0 < r.real < 1]
    return min(real) if real else np.nan


def _drawn(figure):
    with plain_text():
        figure.savefig(io.BytesIO(), format="png", dpi=40)
    return figure


# ----------------------------------------------------------------- the curve (check/)


def test_balance_curve_is_the_exact_dominant_incidence_over_mu(tmp_path):
    """Each point is 1 - (1 - q)^2 with q the exact root at that mu (numpy.roots)."""
    result = check_claim(_claim(tmp_path))
    curve = result.balance_curve
    assert curve.quantity == "incidence_dominant", f"plotted {curve.quantity!r}"
    assert curve.label == "affected share of births (dominant)", curve.label
    assert curve.mu.size == 241 and curve.mu[0] == pytest.approx(1e-9), (
        f"mu grid {curve.mu[0]:g}..{curve.mu[-1]:g} ({curve.mu.size} points)")
    np.testing.assert_allclose(np.diff(np.log(curve.mu)), np.log(1e7) / 240, rtol=1e-9,
                               err_msg="the mu grid is not log spaced over 1e-9..1e-2")
    for i in range(0, 241, 30):
        q = _exact_q(curve.mu[i], 0.5, 1.0)
        assert curve.values[i] == pytest.approx(1 - (1 - q) ** 2, rel=1e-9), (
            f"at mu = {curve.mu[i]:.3g} the curve is {curve.values[i]:.6g}, the exact "
            f"dominant incidence {1 - (1 - q) ** 2:.6g}")
    q = _exact_q(1e-5, 0.5, 1.0)
    assert curve.claimed_mu == 1e-5, f"claimed mu {curve.claimed_mu}"
    assert curve.claimed_value == pytest.approx(1 - (1 - q) ** 2, rel=1e-9), (
        f"the claimed point {curve.claimed_value:.6g} is not the implied incidence")
    assert curve.measured_range == (1e-6, 1e-4) and curve.mu_scale == "locus", (
        f"measured range {curve.measured_range} on scale {curve.mu_scale}")


def test_observed_band_is_clopper_pearson_and_penetrance_scales_the_curve(tmp_path):
    """19 of 182,400: scipy.stats.beta quantiles (Clopper & Pearson 1934); penetrance 0.5
    halves the affected share (docs/model.md: affected = penetrance x genotypes)."""
    full = check_claim(_claim(tmp_path)).balance_curve
    band = full.band
    assert (band.count, band.total, band.level) == (19, 182_400, 0.95), (
        f"band {band.count}/{band.total} at {band.level}")
    assert band.lower == pytest.approx(stats.beta(19, 182_400 - 19 + 1).ppf(0.025), rel=1e-9), (
        f"lower end {band.lower:.6g} is not Beta(k, n-k+1).ppf(0.025)")
    assert band.upper == pytest.approx(stats.beta(20, 182_400 - 19).ppf(0.975), rel=1e-9), (
        f"upper end {band.upper:.6g} is not Beta(k+1, n-k).ppf(0.975)")
    text = DOMINANT.format(title="half", head="", extra="").replace(
        'mode = "dominant"\n', 'mode = "dominant"\npenetrance = 0.5\n')
    (tmp_path / "half.toml").write_text(text, encoding="utf-8")
    half = check_claim(load_claim(tmp_path / "half.toml")).balance_curve
    np.testing.assert_allclose(half.values, 0.5 * full.values, rtol=1e-12,
                               err_msg="penetrance 0.5 does not halve the plotted share")


def test_curve_is_nan_where_mutation_overwhelms_selection(tmp_path):
    """h = 1/2, s = 0.01: the root is q = mu / (hs(1+mu)) (derived), an interior balance
    only while it is below 1, i.e. mu/(1+mu) < hs = 0.005."""
    text = DOMINANT.format(title="weak", head="", extra="").replace(
        "s = 0.5\nh = 1.0", "s = 0.01\nh = 0.5")
    (tmp_path / "weak.toml").write_text(text, encoding="utf-8")
    curve = check_claim(load_claim(tmp_path / "weak.toml")).balance_curve
    ratio = curve.mu / (1 + curve.mu) / 0.005
    clear = np.abs(ratio - 1) > 0.01
    assert np.all(np.isfinite(curve.values[clear & (ratio < 1)])), (
        "the curve has gaps where an interior balance exists")
    assert np.all(np.isnan(curve.values[clear & (ratio > 1)])), (
        "the curve has values where mu/(1+mu) > hs leaves no interior balance")
    assert np.any(ratio > 1.01), "the test grid never reaches the no-balance region"


def test_without_a_frequency_observation_there_is_no_band(tmp_path):
    path = tmp_path / "sporadic.toml"
    path.write_text('title = "sporadic only"\n[parameters]\nmu = 1e-5\ns = 0.5\nh = 1.0\n'
                    '[[observations]]\nkind = "sporadic"\ncases = 3\nbirths = 100000\n'
                    'mode = "dominant"\n', encoding="utf-8")
    result = check_claim(load_claim(path))
    assert result.balance_curve.band is None, f"band {result.balance_curve.band}"
    assert result.balance_curve.quantity == "q_hat", result.balance_curve.quantity
    ax = claim_balance_figure(result).axes[0]
    assert len(ax.patches) == 1, f"{len(ax.patches)} patches: want the measured range only"
    assert ax.get_ylabel() == "q_hat (equilibrium allele frequency)", ax.get_ylabel()


# --------------------------------------------------------------- the figure (reporting/)


def test_claim_balance_figure_draws_curve_point_range_and_band(tmp_path):
    result = check_claim(_claim(tmp_path))
    with plain_text():
        figure = claim_balance_figure(result)
    assert figure.get_suptitle() == ("Dominant test claim\nbalance under the claim (others "
                                     "held at claimed values)"), figure.get_suptitle()
    (ax,) = figure.axes
    assert ax.get_xlabel() == "mu (per gene copy per generation)", ax.get_xlabel()
    assert ax.get_ylabel() == "affected share of births (dominant)", ax.get_ylabel()
    assert (ax.get_xscale(), ax.get_yscale()) == ("log", "log"), "both axes should be log"
    curve, point = ax.get_lines()
    np.testing.assert_array_equal(curve.get_xdata(), result.balance_curve.mu,
                                  err_msg="the drawn curve is not the result's mu grid")
    np.testing.assert_array_equal(curve.get_ydata(), result.balance_curve.values,
                                  err_msg="the drawn curve is not the result's values")
    assert point.get_marker() == "o" and list(point.get_xdata()) == [1e-5], (
        f"claimed point drawn at {point.get_xdata()} with marker {point.get_marker()!r}")
    assert len(ax.patches) == 2 and not ax.collections, (
        f"{len(ax.patches)} patches, {len(ax.collections)} collections: want the measured "
        "range and the observed band")
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert legend == ["measured human locus rates (1e-06 to 0.0001)",
                      "exact balance, s = 0.5, h = 1",
                      "claimed mu = 1e-05", "observed 19/182400 (95 % Clopper-Pearson)"], (
        f"legend {legend}")
    _drawn(figure)
    x_labels = [t.get_text() for t in ax.xaxis.get_ticklabels() if t.get_text()]
    y_labels = [t.get_text() for t in ax.yaxis.get_ticklabels() if t.get_text()]
    assert not [t for t in x_labels + y_labels if "$" in t], (
        f"tick labels {x_labels + y_labels} are mathtext printed as text: log axes need "
        "plain_log_formatters")
    for decade in ("06", "04"):
        assert f"1e{MINUS}{decade}" in x_labels, f"no tick 1e-{decade} among {x_labels}"


def test_nucleotide_claims_are_drawn_against_the_per_nucleotide_range(tmp_path):
    text = DOMINANT.format(title="nucleotide", head="[claimed]\nmu_scale = \"nucleotide\"",
                           extra="").replace("mu = 1e-5", "mu = 2e-8")
    (tmp_path / "nt.toml").write_text(text, encoding="utf-8")
    result = check_claim(load_claim(tmp_path / "nt.toml"))
    assert result.balance_curve.measured_range == (1e-8, 3e-8), result.balance_curve
    ax = claim_balance_figure(result).axes[0]
    assert ax.get_xlabel() == "mu (per nucleotide per generation)", ax.get_xlabel()
    assert ax.patches[0].get_label() == "measured human nucleotide rates (1e-08 to 3e-08)", (
        ax.patches[0].get_label())


# ---------------------------------------------------------------- text, JSON, folder


def test_text_report_names_the_verdict_and_the_report(tmp_path):
    result = check_claim(_claim(tmp_path))
    text = check_report.text_report(result, tmp_path / "out")
    errors, warnings = result.count("error"), result.count("warning")
    assert f"INCONSISTENT: {errors} error(s), {warnings} warning(s) at threshold 0.01" in text, (
        f"verdict missing from:\n{text}")
    assert text.splitlines()[0] == "qhat check: Dominant test claim", text.splitlines()[0]
    assert f"report: {tmp_path / 'out'}/report.md" in text, "the report folder is not named"
    assert "not a clinical" in text.splitlines()[-1], "the caution is not the last line"
    codes = [f.code for f in result.findings]
    assert all(f"[{code}]" in text for code in codes), f"a finding of {codes} is not printed"


def test_json_document_is_what_the_command_prints(tmp_path, capsys):
    claim = _claim(tmp_path)
    assert main(["check", str(claim.path), "--json"]) == 3, "an inconsistent claim exits 3"
    printed = capsys.readouterr().out
    document = check_report.check_document(check_claim(claim))
    assert printed == dumps(document), "--json does not print check_document(result)"
    assert list(json.loads(printed)) == ["schema_version", "qhat_version", "consistent",
                                         "findings", "implied"], (
        f"--json keys {list(json.loads(printed))}")


def test_write_check_report_writes_three_files_with_the_umask_mode(tmp_path, umask):
    mode = umask(0o027)
    result = check_claim(_claim(tmp_path))
    out = check_report.write_check_report(result, tmp_path / "report")
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted((*check_report.CHECK_FILES, MARKER)), f"report folder holds {names}"
    for name in names:
        got = (out / name).stat().st_mode & 0o777
        assert got == mode, f"{name} has mode {got:o}, not 0o666 & ~027 = {mode:o}"
    assert (out / "balance.png").read_bytes()[:8] == PNG_SIGNATURE, "balance.png is no PNG"
    assert (out / "check.json").read_text() == dumps(check_report.check_document(result)), (
        "check.json is not check_document(result)")
    assert "![Balance curve](balance.png)" in (out / "report.md").read_text(), (
        "report.md does not show the balance plot")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["claim.toml", "report"], (
        f"left beside the report: {sorted(p.name for p in tmp_path.iterdir())}")


def test_the_command_writes_files_with_the_umask_mode(tmp_path, umask, capsys):
    mode = umask(0o077)
    claim = _claim(tmp_path)
    out = tmp_path / "report"
    assert main(["check", str(claim.path), "--out", str(out)]) == 3, capsys.readouterr().err
    modes = {p.name: p.stat().st_mode & 0o777 for p in out.iterdir()}
    assert modes == {name: mode for name in (*check_report.CHECK_FILES, MARKER)}, (
        f"umask 077: file modes {modes}, want {mode:o} for each of {check_report.CHECK_FILES}")


def test_dollar_in_the_claim_title_is_drawn_literally(tmp_path):
    """'$\\frac{1$' would stop matplotlib's maths parser with a ValueError if parse_math
    were on (matplotlib mathtext documentation); the title must be drawn as written."""
    claim = _claim(tmp_path, title="Cost $\\\\frac{1$ claim")
    result = check_claim(claim)
    out = check_report.write_check_report(result, tmp_path / "dollar")
    assert (out / "balance.png").stat().st_size > 10_000, "the plot with '$' is nearly empty"
    with plain_text():
        figure = claim_balance_figure(result)
    assert figure.get_suptitle().startswith("Cost $\\frac{1$ claim\n"), figure.get_suptitle()
    _drawn(figure)
