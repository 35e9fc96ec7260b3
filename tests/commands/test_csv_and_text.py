"""User text on its way out: CSV cells, terminal lines, report headings; and two stream cases.

References (named again beside each check):

* OWASP, "CSV Injection": a cell starting with ``= + - @``, a tab or a carriage return
  is read by spreadsheets as a formula; prefixing a single quote neutralises it
  (common practice);
* ECMA-48 (1991), "Control functions for coded character sets": ESC (0x1b), CR (0x0d),
  BEL (0x07) are C0 control functions a terminal acts on; Unicode 15.0 chapter 5.8 and
  UAX #14: U+2028 LINE SEPARATOR breaks a line;
* docs/command-line.md, "Exit status": bad input is one ``qhat: error:`` line and
  status 2, nothing written.
"""

from __future__ import annotations

import csv
import importlib.util
import subprocess
import sys

import pytest
from conftest import DEMO, ROOT, call_qhat

from infer.core.text import shown, spreadsheet_safe

_spec = importlib.util.spec_from_file_location("make_batch_demo",
                                               ROOT / "benchmarks" / "make_batch_demo.py")
demo = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(demo)

HEADER = "locus,observed,sampled,mu\n"
#: characters a terminal or a Markdown heading must never receive raw (ECMA-48; Unicode)
RAW = ("\x1b", "\r", "\x07", "\x00", "\x85", "\u2028", "\u2029", "\u202e")


def _names(folder):
    return sorted(p.name for p in folder.iterdir())


# ------------------------------------------------------------------ duplicate header


def test_batch_refuses_a_repeated_column(tmp_path, capsys):
    """Two 'observed' columns: refused in one line naming the file and the column."""
    source = tmp_path / "loci.csv"
    source.write_text("locus,observed,sampled,mu,OBSERVED\nGENE1,1,1000,1e-6,7\n")
    status, out, err = call_qhat(["batch", source, "--out", tmp_path / "out"], capsys)
    assert status == 2, f"exit {status}, want 2 (docs/command-line.md)"
    assert err.splitlines() == [f"qhat: error: {source}: line 1: the header repeats the column "
                                "'observed' (each column may appear once)"], f"stderr {err!r}"
    assert out == "", f"stdout {out!r}"
    assert _names(tmp_path) == ["loci.csv"], f"left behind: {_names(tmp_path)}"


# ------------------------------------------------------------------ spreadsheet formulas


@pytest.mark.parametrize("text, safe", [
    ("=HYPERLINK(\"http://x\",\"y\")", "'=HYPERLINK(\"http://x\",\"y\")"),
    ("+1", "'+1"), ("-1", "'-1"), ("@SUM(A1)", "'@SUM(A1)"), ("\tA", "'\tA"),
    ("\rA", "'\rA"), ("GENE1", "GENE1"), ("A=B", "A=B"), ("", ""),
])
def test_spreadsheet_safe_prefixes_formula_starts(text, safe):
    """OWASP "CSV Injection": = + - @ tab CR at the start get a single quote; others not."""
    assert spreadsheet_safe(text) == safe, f"{text!r} -> {spreadsheet_safe(text)!r}"


def test_batch_loci_csv_holds_no_formula(tmp_path, capsys):
    """Each dangerous locus name reaches loci.csv with a leading quote (OWASP). (A leading
    tab or CR never reaches it: names are read without surrounding white space.)"""
    names = ["=HYPERLINK(\"http://x\",\"y\")", "+CMD", "-2+3", "@SUM(A1)", "GENE1"]
    source = tmp_path / "loci.csv"
    with open(source, "w", newline="") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(["locus", "observed", "sampled", "mu"])
        writer.writerows([name, 1, 1000, "1e-6"] for name in names)
    out = tmp_path / "out"
    status, printed, err = call_qhat(["batch", source, "--out", out, "--quiet"], capsys)
    # --quiet: no progress, the result line only (docs/command-line.md)
    assert status == 0 and printed.startswith("qhat batch: 5 loci") and err == "", (
        f"exit {status}: {printed!r} {err!r}")
    with open(out / "loci.csv", newline="") as handle:
        cells = [row["locus"] for row in csv.DictReader(handle)]
    want = ["'" + n if n[0] in "=+-@" else n for n in names]
    assert cells == want, f"loci.csv locus cells {cells}, want {want} (OWASP CSV Injection)"
    assert _names(tmp_path) == ["loci.csv", "out"], f"left behind: {_names(tmp_path)}"


# ------------------------------------------------------------------ control characters


@pytest.mark.parametrize("raw, escaped", [
    ("a\x1b[31mb", "a\\x1b[31mb"), ("a\rb", "a\\x0db"), ("a\x07b", "a\\x07b"),
    ("a\nb", "a\\x0ab"), ("a\tb", "a\\x09b"), ("a\x7fb", "a\\x7fb"), ("a\x85b", "a\\x85b"),
    ("a\u2028b", "a\\u2028b"), ("a\u2029b", "a\\u2029b"), ("a\u202eb", "a\\u202eb"),
    ("plain Ärger – ok \\x", "plain Ärger – ok \\x"),
])
def test_shown_escapes_control_characters(raw, escaped):
    """ECMA-48 C0/C1 controls, DEL, U+2028/2029 and bidi overrides become literal escapes;
    letters, dashes and backslashes stay as they are."""
    assert shown(raw) == escaped, f"{raw!r} -> {shown(raw)!r}, want {escaped!r}"


def test_check_escapes_control_characters_in_title_and_labels(tmp_path, capsys):
    """A claim title and an observation label full of controls: the terminal text and
    report.md show escapes, never the raw characters (ECMA-48; Unicode 5.8)."""
    text = (DEMO / "claim-northholm-indirect.toml").read_text()
    text = text.replace('title = "Northholm county: an X-linked disorder by the indirect method"',
                        'title = "North\\u001b[2Jholm\\r bell\\u0007 sep\\u2028end"')
    text = text.replace('label = "affected sons among male births"',
                        'label = "affected\\u001b[31m sons\\nsecond line"')
    claim = tmp_path / "claim.toml"
    claim.write_text(text)
    out = tmp_path / "out"
    status, printed, err = call_qhat(["check", claim, "--out", out], capsys)
    assert status in (0, 3), f"exit {status}: {err!r}"
    report = (out / "report.md").read_text()
    for where, body in (("terminal", printed + err), ("report.md", report)):
        leaked = [c for c in RAW if c in body]
        assert not leaked, f"{where} holds raw control characters {leaked}"
    assert "North\\x1b[2Jholm\\x0d bell\\x07 sep\\u2028end" in printed, (
        f"the terminal title should show escapes: {printed.splitlines()[:2]}")
    assert "North\\x1b[2Jholm\\x0d bell\\x07 sep\\u2028end" in report.splitlines()[0], (
        f"report.md's heading should show escapes: {report.splitlines()[0]!r}")
    assert "affected\\x1b[31m sons\\x0asecond line" in report, (
        "the observation label should keep to one table row, escaped")


# ------------------------------------------------------------------ streams and --out


def test_closed_stderr_sends_the_error_nowhere(tmp_path):
    """With descriptor 2 closed, the error line must not appear on stdout; still exit 2."""
    missing = tmp_path / "absent.csv"
    done = subprocess.run(
        ["sh", "-c", 'exec "$0" -m infer batch "$1" --out "$2" 2>&-', sys.executable,
         str(missing), str(tmp_path / "out")],
        capture_output=False, stdout=subprocess.PIPE, stdin=subprocess.DEVNULL, text=True,
        timeout=120, cwd=ROOT)
    assert done.returncode == 2, f"exit {done.returncode}, want 2"
    assert done.stdout == "", f"the error reached stdout: {done.stdout!r}"
    assert _names(tmp_path) == [], f"left behind: {_names(tmp_path)}"


def test_out_with_missing_parents_is_created(tmp_path, capsys):
    """--out a/b/report where a/ does not exist: the parents are made, exit 0."""
    source = tmp_path / "loci.csv"
    demo.write_csv(source, demo.simulate(20, 3))
    out = tmp_path / "a" / "b" / "report"
    status, printed, err = call_qhat(["batch", source, "--out", out, "--quiet"], capsys)
    assert status == 0 and err == "", f"exit {status}: {err!r}"
    assert (out / "loci.csv").is_file(), "the report folder was not written"
    assert _names(tmp_path / "a" / "b") == ["report"], (
        f"beside the report: {_names(tmp_path / 'a' / 'b')} (no lock or partial folder)")
