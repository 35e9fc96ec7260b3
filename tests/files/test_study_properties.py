"""Property-based tests (hypothesis) of the study parser, infer.files.study (issue 7,
item 2): a study mutated in any way either parses or raises an InputError of exactly one
line naming the file, in the library and through the command line (exit 2, one stderr
line, no traceback, nothing written; docs/command-line.md, 'Exit status').

The mutated studies start from the shipped demo studies (valid by construction); the
test's own TOML writer is checked against the standard library's reader (tomllib).
"""

from __future__ import annotations

import copy
import math
import tempfile
import tomllib
from pathlib import Path

import pytest
from conftest import DEMO, run_qhat
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from infer.errors import InputError
from infer.files.study import load_study, parse_study

FEW = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])


# ---------------------------------------------------------------- the study parser


def demo_documents():
    """The shipped demo studies (valid by construction) as parsed TOML documents."""
    names = ("island-dominant", "northholm-x-linked", "kestrel-captive-drift", "valley-recessive")
    return [tomllib.loads((DEMO / f"{n}.toml").read_text("utf-8")) for n in names]


BASES = demo_documents()

ODD_TEXT = st.sampled_from([
    "NaN", "nan", "inf", "-inf", "1e999", "-1", "0x10", "", " ", "12 ", "true", "None",
    "dominant ", "Dominant", "x-linked-male\n", "../../etc/passwd", "ƒ(μ)", "漢字", "\u2028",
    "log-uniform", "beta", "a\x1b[31mb",
])
INT64 = st.integers(-(2**63), 2**63 - 1)  # TOML 1.0 integers are 64-bit
ODD_SCALAR = st.one_of(
    INT64, st.integers(-3, 3), st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0.0, -0.0, 1e-320, 1e308, -1e-9, 0.5, 1.0, 1.5, 2.0, 12.5]),
    st.booleans(), ODD_TEXT,
    st.text(st.characters(blacklist_categories=("Cs",)), max_size=12),
)
ODD_VALUE = st.one_of(
    ODD_SCALAR,
    st.lists(ODD_SCALAR, max_size=3),
    st.dictionaries(st.sampled_from(["prior", "low", "high", "x", "median"]), ODD_SCALAR,
                    max_size=3),
)
KEYS = st.one_of(
    st.sampled_from([
        "title", "inheritance", "model", "interval", "kind", "mode", "prior", "low", "high",
        "median", "sigma", "a", "b", "mean", "sd", "affected", "total", "cases", "births",
        "observed", "sampled", "sex", "AA", "Aa", "aa", "parameter", "lower", "upper",
        "penetrance", "label", "seed", "walkers", "max_steps", "ensembles", "mu", "s", "h",
        "F", "nu", "Ne", "alpha", "affected_people", "affected_children", "reference_people",
        "reference_children", "sporadik", "Mu",
    ]),
    # any key TOML can quote, line breaks and control characters included (InputError
    # folds them into one printable line)
    st.text(st.characters(blacklist_categories=("Cs",)), min_size=1, max_size=8),
)


def paths(document, prefix=()):
    """Every (path, value) in a document, tables and lists included."""
    out = []
    items = document.items() if isinstance(document, dict) else enumerate(document)
    for key, value in items:
        here = (*prefix, key)
        out.append(here)
        if isinstance(value, (dict, list)):
            out.extend(paths(value, here))
    return out


def parent_of(document, path):
    node = document
    for key in path[:-1]:
        node = node[key]
    return node


@st.composite
def studies(draw):
    """A demo study with 1-4 mutations: a value replaced by an odd one, a key deleted, an
    unknown key added, or a unicode title."""
    document = copy.deepcopy(draw(st.sampled_from(BASES)))
    for _ in range(draw(st.integers(1, 4))):
        action = draw(st.sampled_from(["replace", "replace", "delete", "add", "title"]))
        places = paths(document)
        if action == "title":
            document["title"] = draw(st.text(st.characters(blacklist_categories=("Cs",)),
                                             max_size=40))
            continue
        if not places:
            break
        path = draw(st.sampled_from(places))
        parent = parent_of(document, path)
        if action == "replace":
            parent[path[-1]] = draw(ODD_VALUE)
        elif action == "delete":
            del parent[path[-1]]
        elif isinstance(parent, dict):
            parent[draw(KEYS)] = draw(ODD_VALUE)
        else:
            parent.append(draw(ODD_VALUE))
    return document


def toml_string(text):
    """A TOML basic string (escapes quotes, backslashes, control characters)."""
    out = []
    for ch in text:
        if ch in '"\\':
            out.append("\\" + ch)
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def toml_value(value):
    """An inline TOML value (common practice: TOML 1.0 spelling of nan, inf, booleans)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return toml_string(value)
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{toml_string(str(k))} = {toml_value(v)}"
                               for k, v in value.items()) + "}"
    raise TypeError(type(value))


def to_toml(document):
    """TOML text whose ``tomllib.loads`` equals ``document`` (all tables written inline,
    arrays of tables as arrays of inline tables)."""
    return "".join(f"{toml_string(str(k))} = {toml_value(v)}\n" for k, v in document.items())


def test_toml_writer_round_trips_the_demo_studies():
    """The test's own TOML writer is checked against tomllib (the standard library's reader)."""
    for document in BASES:
        text = to_toml(document)
        assert tomllib.loads(text) == document, (
            f"the test's TOML writer does not round-trip {document.get('title')!r}:\n{text}")


def check_one_line(error: InputError, source: str):
    """docs/command-line.md, 'Exit status': one printable line that names the file first."""
    text = str(error)
    assert len(text.splitlines()) == 1, f"an InputError must be one line; got {text!r}"
    assert text.startswith(source + ": "), (
        f"an InputError must start with the file name {source!r}: {text!r}")
    assert text.strip() == text and text, f"an InputError must be non-empty, unpadded: {text!r}"


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(studies())
def test_parser_accepts_or_raises_one_line_input_error(document):
    """parse_study never raises anything but InputError, whose str() is one line naming the
    file; a document that passes has a valid interval and at least one observation."""
    source = "generated.toml"
    try:
        study = parse_study(document, source=source)
    except InputError as error:
        check_one_line(error, source)
    else:
        assert 0 < study.interval < 1, f"accepted a study with interval {study.interval}"
        assert study.observations and study.free, (
            f"accepted a study with observations {study.observations} and free parameters "
            f"{study.free}; docs/files.md needs at least one of each")


@FEW
@given(studies())
def test_study_file_round_trip_accepts_or_raises_one_line(document):
    """The same through TOML text on disk (load_study): file reading, decoding, parsing.
    load_study must end exactly as parse_study does on what tomllib reads from the file
    (same study accepted, or the same one-line message)."""
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "generated.toml"
        text = to_toml(document)
        path.write_text(text, encoding="utf-8")
        reread = tomllib.loads(text)
        try:
            direct = parse_study(reread, source=str(path))
        except InputError as error:
            direct = error
        try:
            from_file = load_study(path)
        except InputError as error:
            check_one_line(error, str(path))
            assert isinstance(direct, InputError) and str(direct) == str(error), (
                f"load_study rejected the file with {str(error)!r}, but parse_study of the "
                f"same document gave {direct!s}")
        else:
            assert not isinstance(direct, InputError), (
                f"load_study accepted the file, but parse_study rejected it: {direct}")
            for name in ("title", "inheritance", "model", "interval", "parameters",
                         "observations", "seed"):
                assert getattr(from_file, name) == getattr(direct, name), (
                    f"{name} differs between load_study and parse_study of the same text")


@pytest.mark.parametrize("value", [10**400, -(10**400)], ids=["huge", "huge-negative"])
def test_integer_beyond_float_range_is_an_input_error(value):
    """A count like ``affected = 1000...0`` (400 digits) must end as one-line bad input."""
    document = copy.deepcopy(BASES[0])
    document["observations"][0]["affected"] = value
    with pytest.raises(InputError) as caught:
        parse_study(document, source="huge.toml")
    check_one_line(caught.value, "huge.toml")


@pytest.mark.parametrize("key", ["bad\nkey", "bad\u2028key", "bad\rkey"])
def test_line_break_in_a_key_still_gives_one_line(key):
    """An unknown key spelled with a line break (TOML allows any quoted key) is named on
    one line."""
    document = copy.deepcopy(BASES[0])
    document[key] = 1
    with pytest.raises(InputError) as caught:
        parse_study(document, source="keys.toml")
    check_one_line(caught.value, "keys.toml")


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(studies())
def test_bad_generated_study_exits_2_with_one_line_and_writes_nothing(document):
    """Through the command line (docs/command-line.md): exit 2, exactly one stderr line
    ``qhat: error: <file>: ...`` equal to the library's message, no traceback, and nothing
    written beside the study."""
    try:
        parse_study(document, source="bad.toml")
    except InputError:
        pass
    else:
        assume(False)  # only rejected studies here (an accepted one would run a full fit)
    with tempfile.TemporaryDirectory() as folder:
        folder = Path(folder)
        study = folder / "bad.toml"
        study.write_text(to_toml(document), encoding="utf-8")
        with pytest.raises(InputError) as expected:
            load_study(study)
        done = run_qhat("estimate", "bad.toml", "--out", "report", cwd=folder)
        assert done.returncode == 2, f"a rejected study must exit 2; {done}"
        assert "Traceback" not in done.stderr, f"a rejected study showed a traceback; {done}"
        lines = done.stderr.splitlines()
        assert len(lines) == 1 and lines[0].startswith("qhat: error: bad.toml: "), (
            f"a rejected study must give one line 'qhat: error: bad.toml: ...'; {done}")
        message = str(expected.value).replace(str(study), "bad.toml", 1)
        assert lines[0] == f"qhat: error: {message}", (
            f"the command's line must be the library's message {message!r}; got {lines[0]!r}")
        assert done.stdout == "", f"a rejected study must print nothing on stdout; {done}"
        left = sorted(p.name for p in folder.iterdir())
        assert left == ["bad.toml"], f"a rejected study wrote files beside it: {left}"
