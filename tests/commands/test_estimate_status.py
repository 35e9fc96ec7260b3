"""``qhat estimate`` exit status 4 and its ``qhat: warning:`` lines (docs/command-line.md,
'Exit status' and 'Progress, `-q/--quiet` and `--json`').

The references are the documented contract and summary.json of the same run (its
``diagnostics.messages``): a study capped at 20 steps per ensemble cannot meet the
convergence rule (bulk ESS >= 1000 needs more draws than 20 steps of the default walkers
can give; docs/model.md, 'The sampler and its convergence rule'), so it must exit 4 with
the whole folder written; the demo island study converges and must exit 0 with no
warning at all.
"""

import json

from conftest import DEMO, call_qhat, run_qhat

from infer.jobs.estimate.warnings import estimate_warnings

CAPPED = (DEMO / "island-dominant.toml").read_text(encoding="utf-8").replace(
    "[sampler]\n", "[sampler]\nmax_steps = 20\n")
FILES = ("summary.json", "report.md", "posterior.nc", "timing.json", "marginals.png",
         "pairs.png", "trace.png", "balance.png", "predictive.png")
WARNING = "qhat: warning: "


def warning_lines(stderr: str) -> list[str]:
    return [line[len(WARNING):] for line in stderr.splitlines() if line.startswith(WARNING)]


def test_a_run_that_cannot_converge_exits_4_with_the_whole_report(tmp_path):
    """--json --quiet: status 4, stdout only the JSON, every file written, report.md marked at
    its top, and one warning line per diagnostics message (and per other warning)."""
    assert "max_steps = 20" in CAPPED, "the demo study has no [sampler] table to cap"
    study = tmp_path / "capped.toml"
    study.write_text(CAPPED, encoding="utf-8")
    out = tmp_path / "report"
    done = run_qhat("estimate", study, "--out", out, "--json", "--quiet")
    assert done.returncode == 4, f"a run stopped at its step cap must exit 4; {done}"
    shown = json.loads(done.stdout)  # --json: nothing but the JSON on stdout
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert shown == summary, "stdout must be summary.json exactly"
    missing = [name for name in FILES if not (out / name).is_file()]
    assert not missing, f"the report folder must be written in full; missing {missing}"
    diagnostics = summary["diagnostics"]
    assert diagnostics["converged"] is False and diagnostics["messages"], diagnostics
    lines = warning_lines(done.stderr)
    for message in diagnostics["messages"]:
        assert sum(message in line for line in lines) == 1, (
            f"one 'qhat: warning:' line must carry {message!r}; stderr:\n{done.stderr}")
    assert lines == estimate_warnings(summary), (
        "stderr must hold one warning line per warning of the summary, even with --quiet")
    first = (out / "report.md").read_text(encoding="utf-8").splitlines()[0]
    assert first.startswith("**Not converged — read with care:**"), (
        f"report.md must say so on its first line; it starts {first!r}")
    assert diagnostics["messages"][0][1:] in first, first


def test_a_converged_demo_exits_0_without_warnings(tmp_path, capsys):
    """The demo island study converges (README, 'What a newcomer sees'): status 0, the
    terminal summary says converged, report.md opens with the title, no warning line."""
    out = tmp_path / "island"
    status, stdout, stderr = call_qhat(
        ["estimate", DEMO / "island-dominant.toml", "--out", out], capsys)
    assert status == 0, f"the converged demo must exit 0; stdout:\n{stdout}\nstderr:\n{stderr}"
    assert "  converged" in stdout.splitlines(), stdout
    assert warning_lines(stderr) == [], f"no warning expected; stderr:\n{stderr}"
    assert (out / "report.md").read_text(encoding="utf-8").startswith("# Varrow island"), (
        "a converged report opens with its title")


def test_help_says_quiet_keeps_warnings_and_names_status_4(capsys):
    status, stdout, _ = call_qhat(["estimate", "--help"], capsys)
    text = " ".join(stdout.split())
    assert status == 0, stdout
    assert "warnings are still printed" in text and "4 when the report is written" in text, text
