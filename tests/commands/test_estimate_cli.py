"""``qhat estimate`` from the command line: the report folder, --force, --json, and bad
input (exit 2, one line naming file, field and value, nothing written)."""

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]

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


def qhat(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "infer", *map(str, args)], cwd=cwd,
                          capture_output=True, text=True, timeout=600)


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("estimate")
    study = folder / "study.toml"
    study.write_text(GOOD)
    out = folder / "report"
    done = qhat("estimate", study, "--out", out, "--json")
    assert done.returncode == 0, done.stderr
    return folder, study, out, done


def test_report_folder_has_every_file(report):
    _, _, out, done = report
    names = {p.name for p in out.iterdir()}
    assert {"summary.json", "report.md", "posterior.nc", "marginals.png", "pairs.png",
            "trace.png", "balance.png", "predictive.png"} <= names
    assert json.loads(done.stdout) == json.loads((out / "summary.json").read_text())
    text = (out / "report.md").read_text()
    assert "not a clinical or genetic-counselling result" in text
    for heading in ("## Data and assumptions", "## Posterior", "## What the data identify",
                    "## Diagnostics", "## Posterior predictive checks"):
        assert heading in text
    # no temporary debris beside the report
    assert not [p for p in out.parent.iterdir() if p.name.startswith(".")]


def test_posterior_netcdf_is_an_arviz_datatree(report):
    az = pytest.importorskip("arviz")
    import xarray as xr

    _, _, out, _ = report
    tree = xr.open_datatree(out / "posterior.nc", engine="h5netcdf")
    for group in ("posterior", "prior", "log_likelihood", "observed_data"):
        assert group in tree.children
    assert set(tree["posterior"].dims) >= {"chain", "draw"}
    summary = az.summary(tree, var_names=["mu"], ci_kind="eti", ci_prob=0.95)
    assert summary is not None


def test_existing_folder_needs_force(report):
    _, study, out, _ = report
    before = (out / "summary.json").read_bytes()
    refused = qhat("estimate", study, "--out", out)
    assert refused.returncode == 2
    assert refused.stderr.startswith("qhat: error:") and "--force" in refused.stderr
    assert (out / "summary.json").read_bytes() == before
    forced = qhat("estimate", study, "--out", out, "--force")
    assert forced.returncode == 0, forced.stderr
    # same seed, same summary, byte for byte
    assert (out / "summary.json").read_bytes() == before


BAD = [
    ("affected = 19", "affected = 190000000", "observations[1].affected"),
    ("affected = 19", "affected = -1", "observations[1].affected"),
    ('kind = "sporadic"', 'kind = "sporadik"', "observations[2].kind"),
    ('prior = "uniform"', 'prior = "flat"', "parameters.s"),
    ("\nh = 1.0", "\nh = 1.5", "parameters.h"),
    ("cases = 15", "cases = 1.5", "observations[2].cases"),
    ('mode = "dominant"\n[[observations]]\nkind = "sporadic"',
     'mode = "dominat"\n[[observations]]\nkind = "sporadic"', "observations[1].mode"),
]


@pytest.mark.parametrize("old,new,field", BAD)
def test_bad_study_exits_2_with_one_line_and_writes_nothing(tmp_path, old, new, field):
    assert old in GOOD
    study = tmp_path / "bad.toml"
    study.write_text(GOOD.replace(old, new, 1))
    out = tmp_path / "out"
    done = qhat("estimate", study, "--out", out)
    assert done.returncode == 2
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("qhat: error:"), done.stderr
    assert "bad.toml" in lines[0] and field in lines[0]
    assert "Traceback" not in done.stderr
    assert not out.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.toml"]


def test_missing_file_and_bad_toml(tmp_path):
    missing = qhat("estimate", tmp_path / "nope.toml", "--out", tmp_path / "o")
    assert missing.returncode == 2 and "nope.toml" in missing.stderr
    broken = tmp_path / "broken.toml"
    broken.write_text("title = \n")
    done = qhat("estimate", broken, "--out", tmp_path / "o")
    assert done.returncode == 2 and "broken.toml" in done.stderr
    assert len(done.stderr.strip().splitlines()) == 1
    assert not (tmp_path / "o").exists()


def test_title_cannot_choose_the_output_path(tmp_path):
    study = tmp_path / "study.toml"
    study.write_text(GOOD.replace('title = "Test island: dominant disorder"',
                                  'title = "../../etc/evil"'))
    done = qhat("estimate", study, cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert (tmp_path / "reports" / "study" / "summary.json").exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["reports", "study.toml"]
