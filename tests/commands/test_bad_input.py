"""The bad-input catalogue: malformed study, claim and batch files a user plausibly
writes. Each must end with exit status 2 and exactly one line on stderr that starts
``qhat: error:`` and names the place (file and field, or line and column), with no
traceback, and nothing written (docs/command-line.md, 'Exit status')."""

from __future__ import annotations

from pathlib import Path

import pytest
from conftest import DEMO, call_qhat

STUDY = """\
title = "Catalogue base study"
inheritance = "autosomal"
model = "deterministic"
interval = 0.95

[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s = { prior = "uniform", low = 0.0, high = 1.0 }
h = 1.0

[[observations]]
label = "births"
kind = "affected"
affected = 19
total = 182400
mode = "dominant"

[[observations]]
label = "new mutations"
kind = "sporadic"
cases = 15
births = 182400
mode = "dominant"

[[observations]]
label = "fertility"
kind = "fertility"
affected_people = 64
affected_children = 27
reference_people = 310
reference_children = 655
mode = "dominant"
"""

# (case id, text replaced, replacement, text the error line must contain)
STUDY_CASES = [
    ("kind typo", 'kind = "sporadic"', 'kind = "sporadik"', "observations[2].kind"),
    ("field typo", "cases = 15", "casse = 15", "observations[2]"),
    ("count above total", "affected = 19", "affected = 200000", "observations[1].affected"),
    ("negative count", "cases = 15", "cases = -3", "observations[2].cases"),
    ("fractional count", "affected = 19", "affected = 19.5", "observations[1].affected"),
    ("NaN count", "affected = 19", "affected = nan", "observations[1].affected"),
    ("infinite total", "total = 182400", "total = inf", "observations[1].total"),
    ("gigantic count", "total = 182400", "total = 1e400", "observations[1].total"),
    ("text count", "cases = 15", 'cases = "fifteen"', "observations[2].cases"),
    ("boolean count", "cases = 15", "cases = true", "observations[2].cases"),
    ("unknown top-level key", 'title = "Catalogue base study"',
     'titel = "Catalogue base study"', "titel"),
    ("unknown parameter", "\nh = 1.0", "\nhh = 1.0", "parameters"),
    ("unknown prior family", '"uniform", low = 0.0', '"flat", low = 0.0', "parameters.s"),
    ("prior low above high", "low = 1e-8, high = 1e-3", "low = 1e-3, high = 1e-8",
     "parameters.mu"),
    ("prior outside support", "low = 0.0, high = 1.0", "low = 0.0, high = 2.0",
     "parameters.s"),
    ("h above 1", "\nh = 1.0", "\nh = 1.5", "parameters.h"),
    ("interval above 1", "interval = 0.95", "interval = 1.5", "interval"),
    ("unknown inheritance", 'inheritance = "autosomal"', 'inheritance = "y-linked"',
     "inheritance"),
    ("unknown model", 'model = "deterministic"', 'model = "stochastic"', "model"),
    ("unknown mode", 'mode = "dominant"\n\n[[observations]]\nlabel = "new',
     'mode = "codominant"\n\n[[observations]]\nlabel = "new', "observations[1].mode"),
    ("penetrance above 1", 'total = 182400\nmode = "dominant"',
     'total = 182400\nmode = "dominant"\npenetrance = 1.2', "observations[1].penetrance"),
    ("reference children negative", "reference_children = 655", "reference_children = -655",
     "observations[3].reference_children"),
    ("drift without Ne", 'model = "deterministic"', 'model = "drift"', "Ne"),
    ("sampler seed negative", 'mode = "dominant"\n"""', 'mode = "dominant"\n[sampler]\n'
     'seed = -1\n"""', "sampler.seed"),
    ("duplicate label", 'label = "new mutations"', 'label = "births"', "label"),
    ("missing field", "reference_people = 310\n", "", "observations[3]"),
]


def _run_writing_nothing(tmp_path: Path, argv: list[str], capsys) -> tuple[int, str]:
    """``qhat *argv`` in-process; fails if anything appeared in (or left) ``tmp_path``."""
    before = sorted(p.name for p in tmp_path.iterdir())
    status, out, err = call_qhat(argv, capsys)
    after = sorted(p.name for p in tmp_path.iterdir())
    assert after == before, (
        f"bad input must write nothing (docs/command-line.md): folder went from {before} to "
        f"{after}; stderr: {err}")
    assert out == "", f"bad input must print nothing on stdout; printed {out!r}"
    return status, err


def _assert_one_line(status: int, err: str, *needles: str) -> None:
    assert status == 2, f"bad input must exit 2 (docs/command-line.md); got {status}: {err}"
    lines = err.strip().splitlines()
    assert len(lines) == 1, f"bad input must be exactly one stderr line; got {len(lines)}:\n{err}"
    assert lines[0].startswith("qhat: error:"), f"the line must start 'qhat: error:': {err}"
    assert "Traceback" not in err, f"bad input must not show a traceback:\n{err}"
    for needle in needles:
        assert needle in lines[0], f"the error line must name {needle!r}; got {lines[0]!r}"


@pytest.mark.parametrize("case,old,new,needle", STUDY_CASES, ids=[c[0] for c in STUDY_CASES])
def test_bad_study(tmp_path, capsys, case, old, new, needle):
    text = STUDY + '"""'  # a sentinel end marker for the cases that append
    assert old in text, f"test case {case!r} out of date: {old!r} is not in STUDY"
    text = text.replace(old, new, 1).removesuffix('"""')
    path = tmp_path / "study.toml"
    path.write_text(text, encoding="utf-8")
    status, err = _run_writing_nothing(tmp_path, ["estimate", path, "--out", tmp_path / "out"],
                                       capsys)
    _assert_one_line(status, err, "study.toml", needle)


@pytest.mark.parametrize("case,content,needle", [
    ("empty file", b"", "observations"),
    ("not UTF-8", STUDY.replace("Catalogue", "Catal\u00f6gue").encode("latin-1"), "UTF-8"),
    ("binary file", b"\x00\x01\x02\xff" * 10, "study.toml"),
    ("TOML syntax error", b'title = "unterminated\n', "line"),
    ("no observations", STUDY.split("[[observations]]")[0].encode(), "observations"),
    ("every parameter fixed",
     STUDY.replace('{ prior = "log-uniform", low = 1e-8, high = 1e-3 }', "1e-5")
          .replace('{ prior = "uniform", low = 0.0, high = 1.0 }', "0.8").encode(),
     "free parameter"),
], ids=lambda v: v if isinstance(v, str) and len(v) < 30 else "")
def test_bad_study_file(tmp_path, capsys, case, content, needle):
    path = tmp_path / "study.toml"
    path.write_bytes(content)
    status, err = _run_writing_nothing(tmp_path, ["estimate", path, "--out", tmp_path / "out"],
                                       capsys)
    _assert_one_line(status, err, "study.toml")
    assert needle.lower() in err.lower(), f"the error must mention {needle!r}: {err}"


def test_missing_study_file(tmp_path, capsys):
    status, err = _run_writing_nothing(
        tmp_path, ["estimate", tmp_path / "absent.toml", "--out", tmp_path / "out"], capsys)
    _assert_one_line(status, err, "absent.toml")


CLAIM = (DEMO / "claim-northholm-indirect.toml").read_text(encoding="utf-8")

CLAIM_CASES = [
    ("prior in a claim", "mu = { claimed = 5.1e-5, lower = 3.3e-5, upper = 7.6e-5 }",
     'mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }', "parameters.mu"),
    ("interval reversed", "lower = 3.3e-5, upper = 7.6e-5", "lower = 7.6e-5, upper = 3.3e-5",
     "parameters.mu"),
    ("claimed outside its interval", "claimed = 5.1e-5", "claimed = 9.1e-5", "parameters.mu"),
    ("unknown claimed key", "incidence = 1.81e-4", "incidense = 1.81e-4", "claimed"),
    ("incidence above 1", "incidence = 1.81e-4", "incidence = 1.81", "claimed.incidence"),
    ("unknown approximation", 'approximation = "indirect"', 'approximation = "guess"',
     "claimed.approximation"),
    ("missing mu", "mu = { claimed = 5.1e-5, lower = 3.3e-5, upper = 7.6e-5 }   # s x / 3\n",
     "", "mu"),
    ("negative s", "s = 0.85", "s = -0.85", "parameters.s"),
    ("count above total in a claim", "affected = 22", "affected = 221500",
     "observations[1].affected"),
]


@pytest.mark.parametrize("case,old,new,needle", CLAIM_CASES, ids=[c[0] for c in CLAIM_CASES])
def test_bad_claim(tmp_path, capsys, case, old, new, needle):
    assert old in CLAIM, f"test case {case!r} out of date: {old!r} is not in the demo claim"
    path = tmp_path / "claim.toml"
    path.write_text(CLAIM.replace(old, new, 1), encoding="utf-8")
    status, err = _run_writing_nothing(tmp_path, ["check", path], capsys)
    _assert_one_line(status, err, "claim.toml", needle)


# Batch CSVs: the rest of the catalogue (empty file, missing column, text, negative,
# above total, duplicated locus, NaN, half an interval, short row, fractional count,
# mu above 1, header only) is in tests/jobs/batch/test_batch.py.
BATCH_HEADER = "locus,observed,sampled,mu,mu_lower,mu_upper\n"
BATCH_GOOD = "GENE0001,3,1000,1e-6,5e-7,2e-6\n"


@pytest.mark.parametrize("case,content,needle", [
    ("not UTF-8", (BATCH_HEADER + BATCH_GOOD + "G\u00e9NE2,1,1000,1e-6,,\n").encode("latin-1"),
     "UTF-8"),
    ("gigantic count", (BATCH_HEADER + BATCH_GOOD + "GENE0002,1e400,1000,1e-6,,\n").encode(),
     "line 3, column observed"),
    ("interval not around mu", (BATCH_HEADER + BATCH_GOOD
                                + "GENE0002,1,1000,1e-6,2e-6,3e-6\n").encode(), "line 3"),
    ("zero alleles sampled", (BATCH_HEADER + BATCH_GOOD + "GENE0002,0,0,1e-6,,\n").encode(),
     "line 3, column sampled"),
], ids=lambda v: v if isinstance(v, str) and len(v) < 30 else "")
def test_bad_batch_file(tmp_path, capsys, case, content, needle):
    path = tmp_path / "loci.csv"
    path.write_bytes(content)
    status, err = _run_writing_nothing(tmp_path, ["batch", path, "--out", tmp_path / "out"],
                                       capsys)
    _assert_one_line(status, err, "loci.csv")
    assert needle.lower() in err.lower(), f"the error must mention {needle!r}: {err}"
