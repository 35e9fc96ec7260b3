"""``qhat forecast REPORT_DIR --generations N [--set ...]`` end to end.

References outside the command: with s = 0 the allele frequency gains mu(1 - q) per
generation (Crow & Kimura 1970, An Introduction to Population Genetics Theory, ch. 6);
a recessive's incidence penetrance x q² then rises by penetrance x (2 q mu (1 - q) +
mu² (1 - q)²) in the first generation (derived here: q' - q = mu(1 - q) with s = 0, and
(q + Δq)² - q² = 2qΔq + Δq²). The
estimate report's draws are read here with xarray's own netCDF reader and the CSV with
the standard library's csv module; the caution is the sentence docs/reports.md names.
"""

import csv
import io
import json

import numpy as np
import pytest
from conftest import call_qhat

from infer.reporting.folder import MARKER

CAUTION_LINE = "research estimate, not a clinical or genetic-counselling result"
DOMINANT = """\
title = "Invented registry: one free rate, a dominant"
[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s = 1.0
h = 1.0
[[observations]]
kind = "sporadic"
cases = 15
births = 182400
mode = "dominant"
[sampler]
seed = 3
walkers = 8
ensembles = 2
"""
RECESSIVE = """\
title = "Invented island: a recessive with reduced penetrance"
[parameters]
mu = { prior = "log-uniform", low = 1e-7, high = 1e-3 }
s = 0.8
h = 0.0
penetrance = 0.9
[[observations]]
kind = "affected"
affected = 30
total = 200000
mode = "recessive"
[sampler]
seed = 5
walkers = 8
ensembles = 2
"""


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    """Two estimate report folders, written by qhat estimate."""
    from infer.cli import main

    folder = tmp_path_factory.mktemp("forecast")
    found = {}
    for name, text in (("dominant", DOMINANT), ("recessive", RECESSIVE)):
        study = folder / f"{name}.toml"
        study.write_text(text, encoding="utf-8")
        assert main(["estimate", str(study), "--out", str(folder / name), "-q"]) == 0
        found[name] = folder / name
    return found


def _posterior_mu(report):
    xr = pytest.importorskip("xarray")
    tree = xr.open_datatree(report / "posterior.nc", engine="h5netcdf")
    return tree["posterior"]["mu"].values.reshape(-1)


def _rows(path):
    return list(csv.DictReader(io.StringIO(path.read_text(encoding="utf-8"))))


def test_treatment_of_a_dominant_writes_the_folder_and_q_gains_mu(reports, tmp_path, capsys):
    out = tmp_path / "treated"
    status, stdout, err = call_qhat([
        "forecast", reports["dominant"], "--generations", "20", "--set", "s=0",
        "--out", out], capsys)
    assert status == 0, err
    assert sorted(p.name for p in out.iterdir()) == sorted(
        ["forecast.csv", "forecast.json", "forecast.png", "report.md", "report.html", MARKER])
    rows = _rows(out / "forecast.csv")
    assert [int(r["generation"]) for r in rows] == list(range(21))
    assert list(rows[0]) == ["generation", "q_median", "q_p2.5", "q_p25", "q_p75",
                             "q_p97.5", "incidence_median", "incidence_p2.5",
                             "incidence_p25", "incidence_p75", "incidence_p97.5"]
    median = np.array([float(r["q_median"]) for r in rows])
    mu = np.median(_posterior_mu(reports["dominant"]))
    # q' = q + mu(1 - q) with s = 0 and nu = 0: the median draw (the map is monotone
    # in mu at fixed s and h) gains its own mu(1 - q) each generation
    np.testing.assert_allclose(np.diff(median), mu * (1 - median[:-1]), rtol=1e-6)
    for row in rows:
        low, q25, mid, q75, high = (float(row[k]) for k in
                                    ("q_p2.5", "q_p25", "q_median", "q_p75", "q_p97.5"))
        assert low <= q25 <= mid <= q75 <= high
    document = json.loads((out / "forecast.json").read_text(encoding="utf-8"))
    assert document["changes"] == {"s": 0.0} and document["mode"] == "dominant"
    assert document["table"][20]["q"]["0.5"] == pytest.approx(median[20], rel=1e-15)
    text = (out / "report.md").read_text(encoding="utf-8")
    assert text.count("not a clinical or genetic-counselling result") == 2, "caution top and bottom"
    assert "s from 1 to 0" in text and "![Forecast of q and incidence](forecast.png)" in text
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "data:image/png;base64," in html and "genetic-counselling" in html
    assert (out / "forecast.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "Forecast: Invented registry" in stdout and CAUTION_LINE.capitalize() in stdout


def test_a_recessive_incidence_rises_by_about_2_q_mu_penetrance(reports, tmp_path, capsys):
    out = tmp_path / "recessive"
    status, stdout, err = call_qhat(["forecast", reports["recessive"], "--generations", "3",
                                     "--set", "s=0", "--out", out, "--json"], capsys)
    assert status == 0, err
    document = json.loads(stdout)
    assert document == json.loads((out / "forecast.json").read_text(encoding="utf-8"))
    assert document["mode"] == "recessive", "h fixed at 0: the report is a recessive's"
    q0 = document["table"][0]["q"]["0.5"]
    mu = float(np.median(_posterior_mu(reports["recessive"])))
    first = document["first_change"]["incidence"]
    assert first == pytest.approx(0.9 * (2 * q0 * mu * (1 - q0) + (mu * (1 - q0)) ** 2),
                                  rel=1e-3)
    assert first == pytest.approx(0.9 * 2 * q0 * mu, rel=0.02)
    # an even number of draws: each median is the mean of the middle two
    assert document["table"][0]["incidence"]["0.5"] == pytest.approx(0.9 * q0 ** 2, rel=1e-6)


def test_nothing_set_stays_at_the_equilibrium_and_default_out_is_beside(reports, capsys):
    status, _, err = call_qhat(["forecast", reports["dominant"], "--generations", "50",
                                "-q"], capsys)
    assert status == 0 and err == "", err
    out = reports["dominant"].parent / "dominant-forecast"
    rows = _rows(out / "forecast.csv")
    for key in rows[0]:
        if key != "generation":
            values = np.array([float(r[key]) for r in rows])
            np.testing.assert_allclose(values, values[0], rtol=1e-9, atol=0)
    status, _, err = call_qhat(["forecast", reports["dominant"], "--generations", "5"], capsys)
    assert status == 2 and err.count("\n") == 1 and "already exists; use --force" in err, err
    status, _, err = call_qhat(["forecast", reports["dominant"], "--generations", "5",
                                "--force", "-q"], capsys)
    assert status == 0, err
    assert len(_rows(out / "forecast.csv")) == 6


def test_the_report_read_is_never_the_destination(reports, capsys):
    """--out REPORT_DIR --force would replace the estimate it reads: refused."""
    before = sorted(p.name for p in reports["dominant"].iterdir())
    for out in (reports["dominant"], reports["dominant"] / "inside"):
        status, _, err = call_qhat(["forecast", reports["dominant"], "--generations", "5",
                                    "--out", out, "--force"], capsys)
        assert status == 2 and "is the report folder being read" in err, err
    assert sorted(p.name for p in reports["dominant"].iterdir()) == before


def _not_an_estimate(tmp_path):
    folder = tmp_path / "other"
    folder.mkdir()
    (folder / "summary.json").write_text('{"loci": 3}', encoding="utf-8")
    return folder


@pytest.mark.parametrize(("args", "needle"), [
    (lambda r, t: [t / "missing", "--generations", "5"], "missing: no such folder"),
    (lambda r, t: [_not_an_estimate(t), "--generations", "5"],
     "summary.json: no 'parameters' key: not a summary of qhat estimate"),
    (lambda r, t: [t, "--generations", "5"],
     "summary.json: no such file; give a report folder written by qhat estimate"),
    (lambda r, t: [r, "--generations", "5", "--set", "Ne=10"],
     "--set: 'Ne' is not one of s, h, mu, F, nu, alpha, penetrance"),
    (lambda r, t: [r, "--generations", "5", "--set", "s=1.5"], "--set s: 1.5 is above 1"),
    (lambda r, t: [r, "--generations", "5", "--set", "mu=-1e-5"], "--set mu: -1e-5 is negative"),
    (lambda r, t: [r, "--generations", "5", "--set", "s0"], "--set: 's0' is not NAME=VALUE"),
    (lambda r, t: [r, "--generations", "5", "--set", "s=0", "--set", "s=0.1"],
     "--set: s is given twice"),
    (lambda r, t: [r, "--generations", "5", "--set", "alpha=2"],
     "--set alpha: 2 applies to x-linked loci only"),
    (lambda r, t: [r, "--generations", "-3"], "--generations: -3 is negative"),
    (lambda r, t: [r, "--generations", "0"], "--generations: 0 must be at least 1"),
    (lambda r, t: [r, "--generations", "ten"], "--generations: 'ten' is not a number"),
    (lambda r, t: [r, "--generations", "5", "--mode", "x-linked-male"],
     "--mode: 'x-linked-male' is not one of dominant, recessive"),
], ids=["missing", "not-estimate", "no-summary", "unknown-name", "above", "negative",
        "no-equals", "twice", "alpha", "negative-generations", "zero-generations",
        "text-generations", "mode"])
def test_bad_input_is_one_line_exit_2_and_nothing_written(reports, tmp_path, capsys, args,
                                                          needle):
    out = tmp_path / "never"
    status, stdout, err = call_qhat(["forecast", *args(reports["dominant"], tmp_path),
                                     "--out", out], capsys)
    assert status == 2, f"exit {status}: {err!r}"
    assert err.startswith("qhat: error: ") and err.count("\n") == 1, repr(err)
    assert needle in err, f"{needle!r} not in {err!r}"
    assert stdout == "" and not out.exists()


def test_a_report_not_converged_draws_a_warning(reports, tmp_path, capsys):
    """A forecast of an estimate that did not converge says so on stderr (one
    ``qhat: warning:`` line) and still runs: the draws are the report's."""
    import shutil

    copy = tmp_path / "copy"
    shutil.copytree(reports["dominant"], copy)
    summary = json.loads((copy / "summary.json").read_text(encoding="utf-8"))
    summary["diagnostics"]["converged"] = False
    (copy / "summary.json").write_text(json.dumps(summary), encoding="utf-8")
    status, out, err = call_qhat(["forecast", copy, "--generations", "2", "--out",
                                  tmp_path / "fc", "-q"], capsys)
    assert status == 0, err
    warnings = [line for line in err.splitlines() if line.startswith("qhat: warning:")]
    assert len(warnings) == 1 and "did not converge" in warnings[0], err
