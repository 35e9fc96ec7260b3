"""A ``[history]`` in a claim file: read by the study's code, refused with the study's words.

A claim's history goes through :func:`infer.files.study.parse_study` and so through
:func:`infer.files.history.parse_history`, the one reader of the table; these tests hold a
bad history to one line, exit status 2, and the very message the same history gets in a
study file (the house rule for bad input, DEVELOPERS.md; common practice).
"""

from __future__ import annotations

import pytest
from conftest import call_qhat

from infer.files.claim import parse_claim

CLAIM = """
title = "An invented founder claim"
[parameters]
mu = 1e-5
s = 1.0
h = 0.0
Ne = 500
q_founder = {{ claimed = 0.05, lower = 0.03, upper = 0.08 }}
{history}
[[observations]]
label = "register"
kind = "affected"
affected = 30
total = 20000
mode = "recessive"
"""

STUDY = """
title = "The same history in a study"
[parameters]
mu = 1e-5
s = {{ prior = "uniform", low = 0.0, high = 1.0 }}
h = 0.0
Ne = 500
q_founder = {{ prior = "uniform", low = 0.0, high = 0.3 }}
{history}
[[observations]]
label = "register"
kind = "affected"
affected = 30
total = 20000
mode = "recessive"
"""

GOOD = """[history]
epochs = [ { generations = 16 } ]
founder = { founders = 80, generations_ago = 16, frequency = "q_founder" }
sampled = { "register" = 12 }
"""

#: (case, history, field named in the message)
BAD = [
    ("negative length", """[history]
epochs = [ { generations = -3 } ]
founder = { founders = 80, generations_ago = 0, frequency = "q_founder" }
""", "history.epochs[1].generations"),
    ("overlapping epochs", """[history]
epochs = [ { generations = 10 }, { generations = 5, ends = 4 } ]
founder = { founders = 80, generations_ago = 10, frequency = "q_founder" }
""", "history.epochs[2].ends"),
    ("founders above Ne", """[history]
epochs = [ { generations = 16 } ]
founder = { founders = 800, generations_ago = 16, frequency = "q_founder" }
""", "history.founder.founders"),
    ("sampling time older than the history", """[history]
epochs = [ { generations = 16 } ]
founder = { founders = 80, generations_ago = 16, frequency = "q_founder" }
sampled = { "register" = 40 }
""", "history.sampled.register"),
]


def _claim_document(history: str) -> dict:
    import tomllib

    return tomllib.loads(CLAIM.format(history=history))


def test_a_claim_reads_its_history_with_the_study_reader():
    """The claim's study carries the History and the sampling times parse_history gives."""
    claim = parse_claim(_claim_document(GOOD), source="claim.toml")
    history = claim.study.history
    assert history is not None, "a claim's [history] was not kept"
    assert history.length == 16 and history.founder.founders == 80, history
    assert history.founder.frequency == "q_founder", history.founder
    assert claim.study.sampled == {"register": 12}, claim.study.sampled
    assert claim.history_values == {"q_founder": 0.05}, claim.history_values
    assert claim.intervals["q_founder"] == (0.03, 0.08), claim.intervals


@pytest.mark.parametrize("case,history,field", BAD, ids=[b[0] for b in BAD])
def test_bad_history_in_a_claim_gets_the_study_message(tmp_path, capsys, case, history, field):
    """One line, exit 2, the field named, and word for word what a study file is told."""
    claim = tmp_path / "claim.toml"
    claim.write_text(CLAIM.format(history=history), encoding="utf-8")
    status, out, err = call_qhat(["check", str(claim)], capsys)
    assert status == 2, f"{case}: qhat check exited {status}, expected 2: {err}"
    assert err.count("\n") == 1 and "Traceback" not in err, f"{case}: not one line: {err!r}"
    assert f"claim.toml: {field}: " in err, f"{case}: {field} not named: {err!r}"

    study = tmp_path / "study.toml"
    study.write_text(STUDY.format(history=history), encoding="utf-8")
    status, _, study_err = call_qhat(["estimate", str(study), "--out", str(tmp_path / "r")],
                                     capsys)
    assert status == 2, f"{case}: qhat estimate exited {status} on the same history"
    said = err.split("claim.toml: ", 1)[1]
    assert study_err.split("study.toml: ", 1)[1] == said, (
        f"{case}: the claim is told {said!r}, the study {study_err!r}")
    assert not (tmp_path / "r").exists(), "a report folder was half written"


def test_drift_claim_refuses_what_a_drift_study_refuses(tmp_path, capsys):
    """Under model = "drift" an epoch with F != 0 is refused, one line, the study's field."""
    claim = tmp_path / "claim.toml"
    history = GOOD.replace("{ generations = 16 }", "{ generations = 16, F = 0.1 }")
    text = CLAIM.format(history=history).replace('title = "An invented founder claim"',
                                                 'title = "drift"\nmodel = "drift"')
    claim.write_text(text, encoding="utf-8")
    status, _, err = call_qhat(["check", str(claim)], capsys)
    assert status == 2 and err.count("\n") == 1, f"exit {status}: {err!r}"
    assert "claim.toml: history.epochs[1].F: 0.1: the drift model covers" in err, err
