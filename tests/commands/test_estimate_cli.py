"""``qhat estimate`` from the command line: the report folder, --force, --json, and bad
input (exit 2, one line naming file, field and value, nothing written;
docs/files.md and docs/command-line.md).

The report's numbers are checked against sources outside the renderer: summary.json (the
same run's machine-readable numbers), the study file (observed counts), closed-form prior
quantiles, and numpy/arviz recomputing the summaries from the draws in posterior.nc.
"""

import json
import re

import numpy as np
import pytest
from conftest import run_qhat

GOOD = """\
title = "Test island: dominant disorder"
[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s = { prior = "uniform", low = 0.0, high = 1.0 }
h = 1.0
[[observations]]
kind = "affected"
affected = 19
total = 182400
mode = "dominant"
[[observations]]
kind = "sporadic"
cases = 15
births = 182400
mode = "dominant"
[sampler]
seed = 4
"""

PLOTS = ("marginals.png", "pairs.png", "trace.png", "balance.png", "predictive.png")


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("estimate")
    study = folder / "study.toml"
    study.write_text(GOOD)
    out = folder / "report"
    done = run_qhat("estimate", study, "--out", out, "--json")
    assert done.returncode == 0, f"the good study must fit (exit 0); {done}"
    return folder, study, out, done


def markdown_table(text: str, first_header: str) -> dict[str, dict[str, str]]:
    """The Markdown table whose header row starts ``| first_header |``, as
    {first cell: {column header: cell}} (GitHub table syntax, common practice)."""
    lines = text.splitlines()
    start = next((i for i, line in enumerate(lines) if line.startswith(f"| {first_header} |")),
                 None)
    assert start is not None, f"no table with a '{first_header}' column in report.md"
    header = [c.strip() for c in lines[start].strip("|").split("|")]
    rows = {}
    for line in lines[start + 2:]:
        if not line.startswith("|"):
            break
        cells = [c.strip() for c in line.strip("|").split("|")]
        rows[cells[0]] = dict(zip(header, cells, strict=True))
    return rows


def number(cell: str) -> float:
    """A number as the report prints it (``3.89e-05``, ``0.751``, ``12488``)."""
    assert re.fullmatch(r"-?[0-9.]+(e[-+][0-9]+)?", cell), f"{cell!r} is not a number"
    return float(cell)


def interval(cell: str) -> tuple[float, float]:
    """``2.35e-05 – 5.71e-05`` -> (2.35e-05, 5.71e-05)."""
    low, sep, high = cell.partition(" – ")
    assert sep, f"{cell!r} is not an interval 'low – high'"
    return number(low), number(high)


#: 3 significant digits are printed: a rounded mantissa in [1, 10) is off by at most 0.005
#: of its value (derived), so a printed number lies within 5e-3 relative of the true one
PRINTED = 5e-3


def test_report_folder_has_every_file(report):
    _, _, out, done = report
    names = {p.name for p in out.iterdir()}
    expected = {"summary.json", "report.md", "posterior.nc", *PLOTS}
    assert expected <= names, f"report folder lacks {sorted(expected - names)}; has {names}"
    summary = json.loads((out / "summary.json").read_text())
    assert json.loads(done.stdout) == summary, "--json output differs from summary.json"
    for name in PLOTS:
        data = (out / name).read_bytes()
        # PNG signature (W3C PNG specification 2003, 5.2)
        assert data[:8] == b"\x89PNG\r\n\x1a\n", f"{name} is not a PNG: {data[:8]!r}"
    # no temporary debris beside the report (docs/command-line.md, 'Report folders')
    debris = [p.name for p in out.parent.iterdir() if p.name.startswith(".")]
    assert not debris, f"hidden temporary files left beside the report: {debris}"


def test_report_md_sections_and_caution(report):
    _, _, out, _ = report
    text = (out / "report.md").read_text()
    assert text.startswith("# Test island: dominant disorder\n"), (
        f"report.md must open with the study title as its heading; starts {text[:80]!r}")
    # docs/reports.md: the caution at the top and the bottom of every report
    assert text.count("not a clinical or genetic-counselling result") == 2, (
        "the caution must appear twice in report.md (top and bottom)")
    headings = [line for line in text.splitlines() if line.startswith("## ")]
    for heading in ("## Data and assumptions", "## Posterior (95 % equal-tailed intervals)",
                    "## What the data identify", "## Diagnostics",
                    "## Posterior predictive checks"):
        assert heading in headings, f"report.md lacks the section {heading!r}; has {headings}"
    for name in PLOTS:
        assert f"]({name})" in text, f"report.md does not embed {name}"


def test_report_md_tables_hold_the_summary_numbers(report):
    """Every row of the posterior table names a free parameter and prints its summary.json
    numbers to 3 significant digits; the prior table names every parameter."""
    _, _, out, _ = report
    text = (out / "report.md").read_text()
    summary = json.loads((out / "summary.json").read_text())
    priors = markdown_table(text, "parameter")
    # the island study's registry reads the ascertainment parameters: they are listed too
    assert list(priors) == ["mu", "s", "h", "F", "nu", "Ne", "alpha", "penetrance",
                            "completeness", "phenocopy"], (
        f"the prior table must list every life-cycle parameter in order; has {list(priors)}")
    assert priors["mu"]["prior or fixed value"] == "log-uniform(1e-08, 0.001)", priors["mu"]
    assert priors["h"]["prior or fixed value"] == "fixed 1", (
        f"h = 1.0 in the study must show as fixed 1; got {priors['h']}")
    posterior_start = text.index("## Posterior (")
    posterior = markdown_table(text[posterior_start:], "parameter")
    assert sorted(posterior) == ["mu", "s"], (
        f"the posterior table must hold the free parameters mu and s; has {sorted(posterior)}")
    for name, row in posterior.items():
        p = summary["parameters"][name]
        for column, key in (("median", "median"), ("mean", "mean"), ("sd", "sd")):
            assert number(row[column]) == pytest.approx(p[key], rel=PRINTED), (
                f"report.md {name} {column} {row[column]} vs summary.json {p[key]}")
        low, high = interval(row["95 % interval"])
        assert (low, high) == pytest.approx((p["lower"], p["upper"]), rel=PRINTED), (
            f"report.md {name} interval {row['95 % interval']} vs summary.json "
            f"{p['lower']} – {p['upper']}")
        assert number(row["R-hat"]) == pytest.approx(p["r_hat"], abs=5e-5), (
            f"report.md {name} R-hat {row['R-hat']} vs summary.json {p['r_hat']}")
        assert number(row["bulk ESS"]) == pytest.approx(p["ess_bulk"], abs=0.5), (
            f"report.md {name} bulk ESS {row['bulk ESS']} vs summary.json {p['ess_bulk']}")
    q_row = markdown_table(text, "quantity")["q_hat"]
    q = summary["derived"]["q_hat"]
    assert number(q_row["median"]) == pytest.approx(q["median"], rel=PRINTED), (
        f"report.md q_hat median {q_row['median']} vs summary.json {q['median']}")


def test_prior_intervals_are_the_closed_form_quantiles(report):
    """Central 95 % of log-uniform(1e-8, 1e-3) is 10^(-8 + 5·0.025) .. 10^(-8 + 5·0.975);
    of uniform(0, 1) it is 0.025 .. 0.975 (closed-form quantiles)."""
    _, _, out, _ = report
    summary = json.loads((out / "summary.json").read_text())["parameters"]
    expected = {"mu": (10 ** (-8 + 5 * 0.025), 10 ** (-8 + 5 * 0.975)), "s": (0.025, 0.975)}
    for name, (low, high) in expected.items():
        got = (summary[name]["prior_lower"], summary[name]["prior_upper"])
        assert got == pytest.approx((low, high), rel=1e-9), (
            f"{name}: summary.json prior 95 % {got}, closed form {(low, high)}")
    text = (out / "report.md").read_text()
    row = markdown_table(text[text.index("## Posterior ("):], "parameter")["mu"]
    assert interval(row["prior 95 %"]) == pytest.approx(expected["mu"], rel=PRINTED), (
        f"report.md prior interval of mu {row['prior 95 %']} vs closed form {expected['mu']}")


def test_predictive_table_shows_the_observed_counts_of_the_study(report):
    """The 'observed' column holds the study's own counts (affected = 19, cases = 15) and
    p-values are probabilities."""
    _, _, out, _ = report
    text = (out / "report.md").read_text()
    rows = markdown_table(text, "#")
    observed = {row["observation"]: number(row["observed"]) for row in rows.values()}
    assert observed == {"affected 1": 19.0, "sporadic 2": 15.0}, (
        f"observed counts in report.md must be the study's 19 and 15; got {observed}")
    for row in rows.values():
        assert 0 <= number(row["p-value"]) <= 1, f"p-value outside [0, 1]: {row}"


def test_posterior_netcdf_holds_the_draws_summarised_in_summary_json(report):
    """The draws in posterior.nc give summary.json's numbers when recomputed independently:
    numpy for median, 2.5/97.5 % quantiles, mean and sd; arviz (Vehtari et al. 2021,
    Bayesian Analysis 16:667) for the rank-normalised bulk ESS."""
    az = pytest.importorskip("arviz")
    import xarray as xr

    _, _, out, _ = report
    summary = json.loads((out / "summary.json").read_text())
    tree = xr.open_datatree(out / "posterior.nc", engine="h5netcdf")
    groups = set(tree.children)
    for group in ("posterior", "prior", "log_likelihood", "observed_data"):
        assert group in groups, f"posterior.nc lacks the group {group}; has {sorted(groups)}"
    dims = dict(tree["posterior"].sizes)
    assert set(dims) >= {"chain", "draw"}, f"posterior dims must include chain, draw: {dims}"
    diagnostics = summary["diagnostics"]
    assert dims["chain"] * dims["draw"] == diagnostics["draws"], (
        f"posterior.nc holds {dims} draws; summary.json says {diagnostics['draws']} were kept")
    for name in ("mu", "s"):
        draws = tree["posterior"][name].to_numpy()
        p = summary["parameters"][name]
        lower, upper = np.quantile(draws, [0.025, 0.975])
        recomputed = {"median": np.median(draws), "lower": lower, "upper": upper,
                      "mean": draws.mean(), "sd": draws.std()}
        for key, value in recomputed.items():
            assert p[key] == pytest.approx(value, rel=1e-9), (
                f"{name} {key}: summary.json {p[key]}, numpy on posterior.nc draws {value}")
        ess = float(az.ess(tree, var_names=[name], method="bulk")[name])
        # repeated draws (rejected independence proposals) are ties, which rank
        # normalisation may break differently: 1e-3, not the 1e-4 of tie-free chains
        assert p["ess_bulk"] == pytest.approx(ess, rel=1e-3), (
            f"{name} bulk ESS: summary.json {p['ess_bulk']}, arviz {ess}")
    tree.close()


def test_existing_folder_needs_force(report):
    _, study, out, _ = report
    before = (out / "summary.json").read_bytes()
    refused = run_qhat("estimate", study, "--out", out)
    assert refused.returncode == 2, f"an existing --out without --force must exit 2; {refused}"
    assert refused.stderr.startswith("qhat: error:") and "--force" in refused.stderr, (
        f"the refusal must be one 'qhat: error:' line that mentions --force; {refused}")
    assert (out / "summary.json").read_bytes() == before, "a refused run changed summary.json"
    forced = run_qhat("estimate", study, "--out", out, "--force")
    assert forced.returncode == 0, f"--force must replace the report; {forced}"
    # docs/reports.md: same seed, same summary, byte for byte
    assert (out / "summary.json").read_bytes() == before, (
        "the same study and seed gave a different summary.json on the second run")


BAD = [
    ("affected = 19", "affected = 190000000", "observations[1].affected"),
    ("affected = 19", "affected = -1", "observations[1].affected"),
    ('kind = "sporadic"', 'kind = "sporadik"', "observations[2].kind"),
    ('prior = "uniform"', 'prior = "flat"', "parameters.s"),
    ("\nh = 1.0", "\nh = 10.5", "parameters.h"),
    ("cases = 15", "cases = 1.5", "observations[2].cases"),
    ('mode = "dominant"\n[[observations]]\nkind = "sporadic"',
     'mode = "dominat"\n[[observations]]\nkind = "sporadic"', "observations[1].mode"),
]


@pytest.mark.parametrize("old,new,field", BAD)
def test_bad_study_exits_2_with_one_line_and_writes_nothing(tmp_path, old, new, field):
    assert old in GOOD, f"test case out of date: {old!r} is not in GOOD"
    study = tmp_path / "bad.toml"
    study.write_text(GOOD.replace(old, new, 1))
    out = tmp_path / "out"
    done = run_qhat("estimate", study, "--out", out)
    assert done.returncode == 2, f"bad input must exit 2 (docs/command-line.md); {done}"
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("qhat: error:"), (
        f"bad input must give exactly one 'qhat: error:' line; {done}")
    assert "bad.toml" in lines[0] and field in lines[0], (
        f"the error line must name the file bad.toml and the field {field}; got {lines[0]!r}")
    assert "Traceback" not in done.stderr, f"bad input must not show a traceback; {done}"
    assert not out.exists(), "--out was created although the study was rejected"
    left = sorted(p.name for p in tmp_path.iterdir())
    assert left == ["bad.toml"], f"a rejected study wrote files: {left}"


def test_missing_file_and_bad_toml(tmp_path):
    missing = run_qhat("estimate", tmp_path / "nope.toml", "--out", tmp_path / "o")
    assert missing.returncode == 2 and "nope.toml" in missing.stderr, (
        f"a missing study must exit 2 naming nope.toml; {missing}")
    broken = tmp_path / "broken.toml"
    broken.write_text("title = \n")
    done = run_qhat("estimate", broken, "--out", tmp_path / "o")
    assert done.returncode == 2 and "broken.toml" in done.stderr, (
        f"invalid TOML must exit 2 naming broken.toml; {done}")
    assert len(done.stderr.strip().splitlines()) == 1, f"invalid TOML must be one line; {done}"
    assert not (tmp_path / "o").exists(), "--out was created for an unreadable study"


def test_title_cannot_choose_the_output_path(tmp_path):
    """docs/command-line.md: without --out the report goes to reports/<file stem>."""
    study = tmp_path / "study.toml"
    study.write_text(GOOD.replace('title = "Test island: dominant disorder"',
                                  'title = "../../etc/evil"'))
    done = run_qhat("estimate", study, cwd=tmp_path)
    assert done.returncode == 0, f"a study titled '../../etc/evil' must still fit; {done}"
    assert (tmp_path / "reports" / "study" / "summary.json").exists(), (
        "the default report folder must be reports/study (the file stem), not the title")
    left = sorted(p.name for p in tmp_path.iterdir())
    assert left == ["reports", "study.toml"], f"files written outside reports/: {left}"
