"""``qhat simulate --history``: forward Wright–Fisher replicates of a [history] against the
distribution qhat propagates through it.

The reference is the simulation itself (independent binomial sampling of 2Ne genes each
generation, Wright 1931; the founder event as binomial sampling of 2·founders genes): the
propagated mean must lie within Monte Carlo error of the replicates' mean. Bad files end
in one line with status 2, naming the file.
"""

from __future__ import annotations

import json

import pytest
from conftest import call_qhat

HISTORY = """\
[history]
epochs = [ { generations = 30, Ne = 60 } ]
founder = { founders = 10, generations_ago = 30 }
"""

OPTIONS = ["--Ne", "60", "--mu", "1e-4", "--s", "0.05", "--h", "0.3", "--nu", "1e-6"]


def test_replicates_agree_with_the_propagated_distribution(tmp_path, capsys):
    path = tmp_path / "history.toml"
    path.write_text(HISTORY, encoding="utf-8")
    status, out, err = call_qhat(["simulate", *OPTIONS, "--history", path,
                                  "--replicates", "20000", "--seed", "7", "--json"], capsys)
    assert status == 0, err
    doc = json.loads(out)
    assert doc["generations"] == 30 and doc["history"] == str(path)
    se = doc["mean_standard_error"]
    assert abs(doc["mean"] - doc["propagated"]["mean"]) < 4 * se, doc
    assert doc["sd"] == pytest.approx(doc["propagated"]["sd"], rel=0.05)
    jsonschema = pytest.importorskip("jsonschema")
    from infer.reporting.schemas import load_schema

    jsonschema.validate(doc, load_schema("simulate"))


@pytest.mark.parametrize("text, needle", [
    ("title = 'no history'\n", "history: no [history] table"),
    (HISTORY.replace("generations = 30", "generations = -3"), "history.epochs"),
    (HISTORY.replace("founders = 10", "founders = 10, frequency = \"q_founder\""),
     "history.founder.frequency"),
    (HISTORY.replace("founders = 10", "founders = 500"), "history.founder"),
    ("[history\n", "history.toml"),
])
def test_bad_history_files_end_in_one_line(tmp_path, capsys, text, needle):
    path = tmp_path / "history.toml"
    path.write_text(text, encoding="utf-8")
    status, out, err = call_qhat(["simulate", *OPTIONS, "--history", path], capsys)
    assert status == 2, err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("qhat: error:"), err
    assert "history.toml" in lines[0] and needle in lines[0], lines[0]
    assert out == ""
