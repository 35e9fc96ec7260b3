"""Every JSON document qhat writes or prints against its shipped JSON Schema.

docs/reports.md, 'JSON documents': each document carries ``schema_version`` and
``qhat_version``, writes a non-finite number as the string "inf", "-inf" or "nan" (RFC
8259, section 6: JSON has no literal for them), and is described by a JSON Schema
(draft 2020-12) installed with qhat in ``infer/reporting/schemas``. The reference for
validation is the ``jsonschema`` library (an implementation of the JSON Schema
specification, not of qhat).

Each command runs once, in this process, with ``--json -q`` and a standard error that
says it is a terminal: the output must validate against its schema, and ``-q`` must
leave standard error empty on a clean run (no progress, results only:
docs/command-line.md, 'Progress, -q/--quiet and --json').
"""

from __future__ import annotations

import copy
import importlib.metadata
import json
import math
import tomllib
from pathlib import Path

import pytest
from conftest import DEMO, ROOT, call_qhat_on_terminal

jsonschema = pytest.importorskip("jsonschema")

from infer.reporting import jsonout  # noqa: E402
from infer.reporting.schemas import SCHEMAS, load_schema, schema_file  # noqa: E402

SCHEMA_FOLDER = ROOT / "infer" / "reporting" / "schemas"

#: one free rate (mu), the rest fixed: converges in a few hundred steps
STUDY = """\
title = "Small invented registry: one free rate"
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
#: the demo claim that is consistent (exit 0)
CLAIM = DEMO / "claim-northholm-indirect.toml"


_run = call_qhat_on_terminal


def _loci(path: Path, rows: int = 40) -> Path:
    """The first ``rows`` loci of the invented demo file."""
    lines = (DEMO / "batch_loci.csv").read_text(encoding="utf-8").splitlines()[: rows + 1]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


#: the runs of :func:`_commands` (a command, or a command and a case)
RUNS = ("estimate", "check", "batch", "equilibrium", "equilibrium-x-linked",
        "equilibrium-no-balance", "equilibrium-drift", "equilibrium-fitnesses", "simulate",
        "forecast", "compare", "demo")


def _commands(folder: Path) -> dict:
    """Run name -> (arguments after the command, schema of its --json output, exit status)."""
    study = folder / "study.toml"
    study.write_text(STUDY, encoding="utf-8")
    demo_data = folder / "demo-data"
    demo_data.mkdir()
    (demo_data / CLAIM.name).write_bytes(CLAIM.read_bytes())
    return {
        "estimate": ([study, "--out", folder / "estimate"], "estimate-summary", 0),
        "check": ([CLAIM, "--out", folder / "check"], "check", 0),
        "batch": ([_loci(folder / "loci.csv"), "--out", folder / "batch"], "batch-summary", 0),
        "equilibrium": (["--mu", "1e-5", "--s", "0.1", "--h", "0.5"], "equilibrium", 0),
        "equilibrium-x-linked": (["--mu", "1e-5", "--s", "1", "--h", "0", "--inheritance",
                                  "x-linked"], "equilibrium", 0),
        "equilibrium-no-balance": (["--mu", "1e-2", "--s", "1e-3", "--h", "0.3"],
                                   "equilibrium", 0),
        "equilibrium-drift": (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--nu", "1e-8",
                               "--Ne", "1e4", "--sample", "1000"], "equilibrium", 0),
        "equilibrium-fitnesses": (["--mu", "1e-6", "--w-AA", "0.98", "--w-Aa", "1",
                                   "--w-aa", "0.95"], "equilibrium", 0),
        "compare": ([study, "--out", folder / "compare"], "compare", 0),
        "simulate": (["--Ne", "50", "--mu", "1e-3", "--s", "0.1", "--h", "0.5", "--nu", "1e-4",
                      "--replicates", "20", "--generations", "400", "--seed", "1"],
                     "simulate", 0),
        # reads the report of the "estimate" run above (the runs go in this order)
        "forecast": ([folder / "estimate", "--generations", "5", "--set", "s=0", "--out",
                      folder / "forecast"], "forecast", 0),
        "demo": (["--data", demo_data, "--out", folder / "demo"], "demo", 0),
    }


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """Every command run once with --json -q: name -> (status, stdout, stderr, folder)."""
    folder = tmp_path_factory.mktemp("json")
    found = {}
    for name, (args, schema, expected) in _commands(folder).items():
        command = name.split("-")[0]
        status, stdout, stderr = _run([command, *args, "--json", "-q"])
        assert status == expected, f"qhat {name} --json -q exited {status}: {stderr}"
        found[name] = (stdout, stderr, schema)
    return folder, found


def _validate(document, schema_name: str) -> list[str]:
    validator = jsonschema.Draft202012Validator(load_schema(schema_name))
    return [f"{'/'.join(map(str, e.absolute_path)) or '(top)'}: {e.message}"
            for e in validator.iter_errors(document)]


# ------------------------------------------------------------------ the schema files


def test_every_schema_is_a_valid_draft_2020_12_schema():
    """Each shipped schema passes the metaschema check of JSON Schema draft 2020-12."""
    on_disk = sorted(p.name.removesuffix(".schema.json")
                     for p in SCHEMA_FOLDER.glob("*.schema.json"))
    assert on_disk == sorted(SCHEMAS), f"schema files {on_disk} vs SCHEMAS {sorted(SCHEMAS)}"
    for name in SCHEMAS:
        schema = load_schema(name)
        assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema", (
            f"{name}: $schema {schema['$schema']!r}, want draft 2020-12")
        jsonschema.Draft202012Validator.check_schema(schema)
        assert schema["additionalProperties"] is False and {
            "schema_version", "qhat_version"} <= set(schema["required"]), (
            f"{name}: the top-level keys must be pinned, the two versions required")
        assert schema["properties"]["schema_version"] == {
            "const": jsonout.SCHEMA_VERSION, "description": "layout of this document's keys"}, (
            f"{name}: schema_version must be pinned to {jsonout.SCHEMA_VERSION!r}")


def test_schemas_are_shipped_as_package_data():
    """pyproject.toml installs the schema files, and importlib.resources finds them."""
    pyproject = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    setuptools = pyproject["tool"]["setuptools"]
    assert "infer.reporting.schemas" in setuptools["packages"], "the schemas package is unlisted"
    patterns = setuptools["package-data"]["infer.reporting.schemas"]
    assert all(any(Path(n).match(p) for p in patterns) for n in
               (f"{name}.schema.json" for name in SCHEMAS)), f"package-data {patterns}"
    assert schema_file("check").is_file(), "importlib.resources does not find check.schema.json"
    with pytest.raises(KeyError, match="no schema"):
        schema_file("nothing")


# ------------------------------------------------------------------ what the commands print


@pytest.mark.parametrize("name", RUNS)
def test_json_output_validates_against_its_schema(runs, name):
    _, found = runs
    stdout, _, schema = found[name]
    document = json.loads(stdout)   # stdout holds the one document and nothing else
    problems = _validate(document, schema)
    assert not problems, f"qhat {name} --json against {schema}.schema.json:\n" + "\n".join(
        problems)
    assert list(document)[:2] == ["schema_version", "qhat_version"], (
        f"qhat {name} --json must open with the two versions; keys {list(document)[:4]}")
    assert document["qhat_version"] == importlib.metadata.version("qhat"), (
        f"qhat_version {document['qhat_version']!r} vs the installed distribution's metadata")


@pytest.mark.parametrize("name", ["estimate", "check", "batch", "equilibrium", "simulate",
                                  "forecast", "demo"])
def test_quiet_prints_nothing_on_stderr_for_a_clean_run(runs, name):
    """-q: no progress, results only; a clean run has no warning, so stderr stays empty
    although it is a terminal (where progress would be drawn)."""
    _, found = runs
    _, stderr, _ = found[name]
    assert stderr == "", f"qhat {name} -q printed on stderr: {stderr!r}"


def test_written_documents_validate_and_equal_the_printed_ones(runs):
    """summary.json (estimate, batch), check.json and both timing.json files."""
    folder, found = runs
    written = {
        ("estimate", "summary.json"): "estimate-summary",
        ("estimate", "timing.json"): "timing",
        ("check", "check.json"): "check",
        ("batch", "summary.json"): "batch-summary",
        ("batch", "timing.json"): "timing",
        ("forecast", "forecast.json"): "forecast",
        ("compare", "compare.json"): "compare",
    }
    for (command, file), schema in written.items():
        document = json.loads((folder / command / file).read_text(encoding="utf-8"))
        problems = _validate(document, schema)
        assert not problems, f"{command}/{file} against {schema}:\n" + "\n".join(problems)
        if file != "timing.json":
            assert document == json.loads(found[command][0]), (
                f"qhat {command} --json must print {file} exactly")
    timing = json.loads((folder / "batch" / "timing.json").read_text(encoding="utf-8"))
    assert {"read_seconds", "compute_seconds"} <= set(timing), f"batch timing.json {timing}"


def test_demo_document_lists_each_scenario(runs):
    folder, found = runs
    document = json.loads(found["demo"][0])
    (entry,) = document["scenarios"]
    assert entry["job"] == "check" and entry["scenario"] == CLAIM.name, entry
    assert entry["status"] == 0 and entry["done"] is True, entry
    assert Path(entry["report"]) == folder / "demo" / CLAIM.stem, entry
    assert (Path(entry["report"]) / "check.json").is_file(), "the listed folder was not written"
    assert entry["command"][:2] == ["qhat", "check"], entry["command"]


# ------------------------------------------------------------------ the schemas bite


def test_schemas_refuse_a_changed_top_level(runs):
    """The schemas pin the top level: an unknown key, a missing key, a wrong type, a bare
    null for a number and another schema version are each refused."""
    _, found = runs
    for name in ("estimate", "check", "batch", "equilibrium", "simulate", "forecast", "demo"):
        stdout, _, schema = found[name]
        document = json.loads(stdout)
        extra = dict(document, surprise=1)
        missing = {k: v for k, v in document.items() if k != "schema_version"}
        other = dict(document, schema_version="2")
        retyped = copy.deepcopy(document)
        key = next(k for k, v in document.items() if isinstance(v, (dict, list)))
        retyped[key] = "text"
        for label, changed in (("extra key", extra), ("missing schema_version", missing),
                               ("schema_version 2", other), (f"{key} as text", retyped)):
            assert _validate(changed, schema), f"{schema}: a document with {label} validated"
    equilibrium = json.loads(found["equilibrium"][0])
    assert _validate(dict(equilibrium, q_hat=None), "equilibrium"), (
        "q_hat null must be refused: a missing number is written as a string")


def test_non_finite_numbers_are_strings():
    """RFC 8259, section 6: Infinity and NaN are not JSON; qhat writes them as strings
    and None as null (docs/reports.md, 'JSON documents')."""
    import numpy as np

    text = jsonout.dumps({"a": math.inf, "b": -np.inf, "c": np.float32("nan"),
                          "d": None, "e": [1.5, np.inf], "f": np.int64(3)})
    assert json.loads(text) == {"a": "inf", "b": "-inf", "c": "nan", "d": None,
                                "e": [1.5, "inf"], "f": 3}, text
    assert "Infinity" not in text and "NaN" not in text, text


def test_no_balance_is_written_as_nan(runs):
    """mu = 1e-2, s = 1e-3, h = 0.3 has no stable interior equilibrium (derived: the balance
    quadratic has no root in (0, 1); docs/model.md, 'Autosomal equilibrium')."""
    _, found = runs
    document = json.loads(found["equilibrium-no-balance"][0])
    assert document["exists"] is False and document["q_hat"] == "nan", (
        f"no balance: exists false and q_hat 'nan'; got {document['exists']}, "
        f"{document['q_hat']!r}")
    estimate = json.loads(found["estimate"][0])
    assert estimate["parameters"]["Ne"]["median"] == "inf", (
        "the deterministic model's fixed Ne of infinity must read 'inf'; got "
        f"{estimate['parameters']['Ne']['median']!r}")
