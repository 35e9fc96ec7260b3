"""The [history] table of a study file: what it accepts, and bad histories refused in one line.

The refusals follow docs/files.md ('History'): negative or non-integer lengths, overlapping
epochs, founders above Ne, unknown keys, a founder older than the history; each is one
``qhat: error:`` line naming the file, the field and the value, exit status 2.
"""

from __future__ import annotations

import pytest
from conftest import call_qhat

from infer.errors import InputError
from infer.files.study import parse_study, study_document

BASE = """\
title = "founder test"
[parameters]
mu = 1e-5
s = { prior = "uniform", low = 0.0, high = 1.0 }
h = 0.0
Ne = 500
q_founder = { prior = "uniform", low = 0.0, high = 0.2 }

[history]
epochs = [ { generations = 10, Ne = 300 }, { generations = 20, s = 0.9 } ]
founder = { founders = 60, generations_ago = 10, frequency = "q_founder" }
sampled = { "old register" = 4 }

[[observations]]
label = "today"
kind = "allele-count"
observed = 60
sampled = 1200

[[observations]]
label = "old register"
kind = "affected"
affected = 20
total = 9000
mode = "recessive"
"""


def test_a_history_is_read_and_written_back():
    study = parse_study(BASE, source="isle.toml")
    history = study.history
    assert [(e.generations, e.ends, e.begins) for e in history.epochs] == [(10, 0, 10),
                                                                          (20, 10, 30)]
    assert dict(history.epochs[1].values) == {"s": 0.9}
    assert history.founder.founders == 60 and history.founder.frequency == "q_founder"
    assert study.sampled == {"old register": 4}
    assert study.free == ["s", "q_founder"]
    again = parse_study(study_document(study), source="isle.toml")
    assert again.history == history and again.sampled == study.sampled


def test_a_study_without_history_has_none():
    text = BASE.split("[history]")[0].replace(
        'q_founder = { prior = "uniform", low = 0.0, high = 0.2 }\n', "")
    text += BASE.split('sampled = { "old register" = 4 }\n')[1]
    study = parse_study(text, source="plain.toml")
    assert study.history is None and study.sampled == {}


BAD = [
    ("{ generations = 10, Ne = 300 }", "{ generations = -10, Ne = 300 }",
     "history.epochs[1].generations: -10 is negative"),
    ("{ generations = 10, Ne = 300 }", "{ generations = 2.5, Ne = 300 }",
     "history.epochs[1].generations: 2.5 is not a whole number"),
    ("{ generations = 20, s = 0.9 }", "{ generations = 20, ends = 6, s = 0.9 }",
     "history.epochs[2].ends: 6 overlaps history.epochs[1]"),
    ("founders = 60,", "founders = 301,",
     "history.founder.founders: 301 founders is more than Ne = 300"),
    ("{ generations = 10, Ne = 300 }", "{ generations = 10, size = 300 }",
     'history.epochs[1].size: unknown key "size"'),
    ("generations_ago = 10,", "generations_ago = 31,",
     "history.founder.generations_ago: 31 is older than the history"),
    ('sampled = { "old register" = 4 }', 'sampled = { "old register" = 40 }',
     "history.sampled.old register: 40 is older than the history"),
    ('sampled = { "old register" = 4 }', 'sampled = { "no such" = 4 }',
     'history.sampled.no such: "no such" is not the label'),
    ('frequency = "q_founder"', "frequency = 1.5",
     "history.founder.frequency: 1.5 is not a frequency"),
    ('frequency = "q_founder"', "frequency = 0.1",
     "parameters.q_founder: q_founder is given but [history] does not use it"),
    ("[history]", "[history]\nwhen = 3",
     'history.when: unknown key "when"'),
]


@pytest.mark.parametrize("old, new, message", BAD)
def test_bad_histories_are_refused_naming_file_field_and_value(old, new, message):
    with pytest.raises(InputError) as caught:
        parse_study(BASE.replace(old, new, 1), source="isle.toml")
    assert f"isle.toml: {message}" in str(caught.value)


def test_the_command_line_refuses_a_bad_history_in_one_line(tmp_path, capsys):
    path = tmp_path / "isle.toml"
    path.write_text(BASE.replace("generations = 10, Ne", "generations = -1, Ne"))
    status, out, err = call_qhat(["estimate", path, "--out", tmp_path / "report"], capsys)
    assert status == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("qhat: error:")
    assert "history.epochs[1].generations: -1 is negative" in lines[0]
    assert not (tmp_path / "report").exists()


def test_q_founder_without_a_history_is_refused():
    text = BASE.split("[history]")[0] + BASE.split('sampled = { "old register" = 4 }\n')[1]
    with pytest.raises(InputError, match="parameters.q_founder: q_founder is read only by"):
        parse_study(text, source="isle.toml")


def test_the_drift_model_refuses_an_epoch_with_inbreeding():
    text = BASE.replace("title", 'model = "drift"\ntitle').replace(
        "{ generations = 20, s = 0.9 }", "{ generations = 20, F = 0.1 }")
    with pytest.raises(InputError, match=r"history.epochs\[2\].F: 0.1: the drift model"):
        parse_study(text, source="isle.toml")
