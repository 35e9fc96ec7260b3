"""``qhat demo``: the shipped scenarios are found from any folder, copied on request, and
bad folders end in one line with status 2.

The scenarios are package data of ``infer.data_demo`` read through importlib.resources
(Python standard library; PyPA Packaging User Guide, "Package data"); the full run from a
wheel in a fresh environment is tests/test_packaging.py.
"""

from __future__ import annotations

import pytest
from conftest import DEMO, call_qhat

from infer.commands import demo

#: the scenario files of the repository's data_demo/
SCENARIOS = sorted(p.name for p in DEMO.iterdir() if p.is_file() and p.suffix != ".py")


def test_default_run_uses_the_shipped_scenarios_from_any_folder(tmp_path, monkeypatch, capsys):
    """From an empty folder, without --data, the demo runs the installed infer.data_demo."""
    seen = {}

    def record(data, out, quiet, as_json=False):
        seen.update(data=data, names=sorted(p.name for p in data.iterdir()), out=out)
        return 0

    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(demo, "_run_all", record)
    status, _, err = call_qhat(["demo", "--quiet"], capsys)
    assert status == 0, f"qhat demo from an empty folder exited {status}: {err}"
    assert set(SCENARIOS) <= set(seen["names"]), (
        f"the shipped folder {seen['data']} lacks {sorted(set(SCENARIOS) - set(seen['names']))}")
    assert seen["out"].as_posix() == "reports", f"default --out is {seen['out']}, not reports"


def test_copy_writes_every_scenario_unchanged_then_refuses_to_overwrite(tmp_path, capsys):
    """--copy DIR gives the user the scenario files byte for byte, and never replaces one."""
    target = tmp_path / "nested" / "mine"
    status, out, err = call_qhat(["demo", "--copy", target], capsys)
    assert status == 0, f"qhat demo --copy exited {status}: {err}"
    assert sorted(p.name for p in target.iterdir()) == SCENARIOS, (
        f"--copy wrote {sorted(p.name for p in target.iterdir())}, data_demo/ has {SCENARIOS}")
    for name in SCENARIOS:
        assert (target / name).read_bytes() == (DEMO / name).read_bytes(), f"{name} changed"
    assert str(target) in out, f"--copy did not say where the files went: {out!r}"

    (target / SCENARIOS[0]).write_text("mine", encoding="utf-8")
    status, out, err = call_qhat(["demo", "--copy", target], capsys)
    assert status == 2, f"a second --copy into the same folder exited {status}"
    assert err.startswith("qhat: error: --copy: ") and err.count("\n") == 1, (
        f"expected one line naming --copy and the file, got {err!r}")
    assert (target / SCENARIOS[0]).read_text(encoding="utf-8") == "mine", "a file was replaced"


def test_copied_scenarios_run_with_data(tmp_path, capsys):
    """A folder of one copied claim runs through --data (claims go to qhat check)."""
    claim = next(n for n in SCENARIOS if n.startswith("claim-"))
    (tmp_path / "mine").mkdir()
    (tmp_path / "mine" / claim).write_bytes((DEMO / claim).read_bytes())
    status, out, err = call_qhat(["demo", "--data", tmp_path / "mine",
                                  "--out", tmp_path / "reports"], capsys)
    assert status == 0, f"qhat demo --data exited {status}: {err}"
    assert (tmp_path / "reports" / claim.removesuffix(".toml") / "report.md").is_file(), (
        f"no report for {claim}: {out}")


@pytest.mark.parametrize("case", ["missing", "empty", "file"])
def test_bad_data_folder_is_one_line_and_status_2(tmp_path, capsys, case):
    """--data that is missing, holds no scenario, or is a file: one line, status 2."""
    data = tmp_path / "data"
    if case == "empty":
        data.mkdir()
    elif case == "file":
        data.write_text("x", encoding="utf-8")
    status, out, err = call_qhat(["demo", "--data", data, "--out", tmp_path / "r"], capsys)
    assert status == 2, f"--data {case}: exit {status}, expected 2"
    assert err.startswith("qhat: error: --data: ") and str(data) in err, (
        f"--data {case}: expected one line naming --data and {data}, got {err!r}")
    assert err.count("\n") == 1 and "Traceback" not in err, f"--data {case}: {err!r}"
    assert not (tmp_path / "r").exists(), f"--data {case}: the reports folder was created"


def test_the_treated_island_study_is_forecast_after_its_estimate(tmp_path, capsys):
    """The Varrow island study (invented) is also forecast with s = 0 (a treatment that
    restores fertility); the forecast reads the demo's own estimate report."""
    (tmp_path / "mine").mkdir()
    name = "island-dominant.toml"
    (tmp_path / "mine" / name).write_bytes((DEMO / name).read_bytes())
    status, out, err = call_qhat(["demo", "--data", tmp_path / "mine",
                                  "--out", tmp_path / "reports", "-q"], capsys)
    assert status == 0, f"qhat demo exited {status}: {err}"
    forecast = tmp_path / "reports" / "island-dominant-forecast"
    assert (forecast / "forecast.csv").is_file() and (forecast / "report.md").is_file(), out
    assert "== qhat forecast" in out and "s from" in out, out
