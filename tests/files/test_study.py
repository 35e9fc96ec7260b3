"""Study files: a good study round-trips; every kind of bad input is one clear line.

The TOML grammar (line/column in parser errors) is Python's ``tomllib`` (TOML 1.0,
common practice); everything else checked here is the contract of docs/files.md,
'Study files' (the defaults, the one-line messages naming file, field and value).
"""

from __future__ import annotations

import math

import pytest

from infer.errors import InputError
from infer.files.study import load_study, parse_study, study_document
from infer.model.observations.fertility import Fertility
from infer.model.observations.frequency import Affected
from infer.model.observations.sporadic import Sporadic
from infer.model.priors.parsing import Beta, Fixed, LogUniform, Uniform

GOOD = """\
title = "Dominant disorder, Isle of Brannoch birth registry"
inheritance = "autosomal"
model = "deterministic"
interval = 0.9

[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s = { prior = "beta", a = 2, b = 2 }
h = 1.0

[[observations]]
kind = "affected"
affected = 12
total = 94075
mode = "dominant"

[[observations]]
kind = "sporadic"
label = "new mutations"
cases = 8
births = 94075
mode = "dominant"

[[observations]]
kind = "fertility"
affected_people = 108
affected_children = 27
reference_people = 457
reference_children = 582
mode = "dominant"

[sampler]
seed = 3
walkers = 16
"""


def _toml_value(value):
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, float):
        return "inf" if math.isinf(value) else repr(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, dict):
        return "{ " + ", ".join(f"{k} = {_toml_value(v)}" for k, v in value.items()) + " }"
    raise TypeError(value)


def to_toml(document: dict) -> str:
    """A minimal TOML writer for study documents (tests only)."""
    lines = [f"{k} = {_toml_value(v)}" for k, v in document.items()
             if not isinstance(v, (dict, list))]
    for key in ("parameters", "sampler"):
        if key in document:
            lines += ["", f"[{key}]"]
            lines += [f"{k} = {_toml_value(v)}" for k, v in document[key].items()]
    for table in document.get("observations", []):
        lines += ["", "[[observations]]"]
        lines += [f"{k} = {_toml_value(v)}" for k, v in table.items()]
    return "\n".join(lines) + "\n"


def write(tmp_path, text, name="study.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_good_study_parses_with_defaults(tmp_path):
    study = load_study(write(tmp_path, GOOD))
    assert study.title == "Dominant disorder, Isle of Brannoch birth registry", study.title
    top = (study.inheritance, study.model, study.interval)
    assert top == ("autosomal", "deterministic", 0.9), f"top-level keys read as {top}"
    expected = {"mu": LogUniform("mu", 1e-8, 1e-3), "s": Beta("s", 2.0, 2.0),
                "h": Fixed("h", 1.0), "F": Fixed("F", 0.0)}  # F: the default of docs/files.md
    for name, prior in expected.items():
        assert study.parameters[name] == prior, (
            f"parameters.{name} read as {study.parameters[name]!r}; the file says {prior!r}")
    left_out = {"F", "nu", "Ne", "alpha", "penetrance", "completeness", "phenocopy",
                "s_male", "s_female"}
    assert study.defaulted == left_out, (
        f"the parameters the file leaves out are {left_out}; defaulted = {study.defaulted}")
    assert study.free == ["mu", "s"], f"mu and s have priors, h is fixed; free = {study.free}"
    assert study.fixed["h"] == 1.0, f"h = 1.0 in the file; fixed h = {study.fixed['h']}"
    assert study.seed == 3 and study.sampler == {"seed": 3, "walkers": 16}, (
        f"[sampler] seed = 3, walkers = 16; read seed {study.seed}, sampler {study.sampler}")
    kinds = [type(o) for o in study.observations]
    assert kinds == [Affected, Sporadic, Fertility], f"observation kinds read as {kinds}"
    labels = [o.label for o in study.observations]
    # an unlabelled observation is named "<kind> <position>" (docs/files.md)
    assert labels == ["affected 1", "new mutations", "fertility 3"], f"labels: {labels}"
    assert study.path == str(tmp_path / "study.toml"), f"study.path = {study.path!r}"


def test_good_study_round_trips(tmp_path):
    first = load_study(write(tmp_path, GOOD))
    text = to_toml(study_document(first))
    second = load_study(write(tmp_path, text, "again.toml"))
    for name in ("title", "inheritance", "model", "interval", "parameters", "observations",
                 "seed", "sampler"):
        assert getattr(second, name) == getattr(first, name), (
            f"{name} changed on a round trip through study_document:\n{text}")
    # Ne is not used by the deterministic model, so study_document does not write it; nor
    # does it write s_male and s_female when they are "as s" (no value of their own)
    assert second.defaulted == {"Ne", "s_male", "s_female"}, (
        f"after the round trip only Ne and the sex pair may be defaulted; "
        f"defaulted = {second.defaulted}")


def test_omitted_keys_take_defaults_and_title_defaults_to_file_name(tmp_path):
    text = '[[observations]]\nkind = "allele-count"\nobserved = 3\nsampled = 1000\n'
    study = load_study(write(tmp_path, text, "island.toml"))
    # the defaults documented in docs/files.md, 'Study files'
    assert study.title == "island", f"the title must default to the file stem; {study.title!r}"
    top = (study.inheritance, study.model, study.interval)
    assert top == ("autosomal", "deterministic", 0.95), f"top-level defaults read as {top}"
    assert study.parameters["mu"] == LogUniform("mu", 1e-9, 1e-3), study.parameters["mu"]
    assert study.parameters["s"] == Uniform("s", 0.0, 1.0), study.parameters["s"]
    assert study.free == ["mu", "s", "h"], f"mu, s, h are free by default; free = {study.free}"
    assert study.seed is None, f"no [sampler] seed: seed must be None, got {study.seed}"


def test_drift_defaults_and_x_linked(tmp_path):
    drift = parse_study({
        "model": "drift",
        "parameters": {"Ne": {"prior": "log-uniform", "low": 100, "high": 1e5}},
        "observations": [{"kind": "allele-count", "observed": 3, "sampled": 1000}],
    }, source="drift.toml")
    assert drift.parameters["nu"] == Fixed("nu", 1e-9), (
        f"the drift model's default back mutation is nu = 1e-9; got {drift.parameters['nu']!r}")
    assert drift.free == ["mu", "s", "h", "Ne"], f"drift free parameters: {drift.free}"
    x = parse_study({
        "inheritance": "x-linked",
        "parameters": {"h": 0.0, "alpha": {"prior": "log-normal", "median": 3, "sigma": 0.5}},
        "observations": [{"kind": "affected", "affected": 4, "total": 20000,
                          "mode": "x-linked-male"}],
    }, source="x.toml")
    assert x.free == ["mu", "s", "alpha"], (
        f"X-linked with h fixed and a prior on alpha: free must be mu, s, alpha; got {x.free}")


def test_all_fixed_allowed_only_on_request():
    document = {"parameters": {"mu": 1e-5, "s": 0.5, "h": 0.5},
                "observations": [{"kind": "allele-count", "observed": 3, "sampled": 1000}]}
    with pytest.raises(InputError, match="no free parameter to estimate"):
        parse_study(document, source="fixed.toml")
    free = parse_study(document, source="fixed.toml", require_free=False).free
    assert free == [], f"every parameter fixed: free must be []; got {free}"


def test_utf8_with_byte_order_mark_is_read(tmp_path):
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + GOOD.encode("utf-8"))
    free = load_study(path).free
    assert free == ["mu", "s"], f"a UTF-8 byte order mark must be skipped; free = {free}"


OBS = '\n[[observations]]\nkind = "affected"\naffected = 3\ntotal = 10\nmode = "dominant"\n'

# (file text, field, text that must appear in the message)
BAD = [
    ('titel = "x"\n' + OBS, "titel",
     'unknown key "titel"; must be one of title, inheritance, model, interval'),
    ('[priors]\nmu = 1e-5\n' + OBS, "priors", 'unknown section "priors"'),
    ('inheritance = "Y-linked"\n' + OBS, "inheritance",
     '"Y-linked" is not allowed; must be one of autosomal, x-linked'),
    ('model = "stochastic"\n' + OBS, "model", "must be one of deterministic, drift"),
    ("interval = 1.0\n" + OBS, "interval", "1.0 is not between 0 and 1"),
    ('interval = "95%"\n' + OBS, "interval", '"95%" is not a number'),
    ("title = 3\n" + OBS, "title", "3 is not a text"),
    ("[parameters]\nmu = 0\n" + OBS, "parameters.mu", "0 is outside the support (0, 1) of mu"),
    ('[parameters]\nmu = { prior = "loguniform", low = 1e-8, high = 1e-3 }\n' + OBS,
     "parameters.mu.prior", '"loguniform" is not allowed; must be one of log-uniform'),
    ('[parameters]\nmu = { prior = "log-uniform", low = 1e-3, high = 1e-8 }\n' + OBS,
     "parameters.mu.low", "0.001 is not below high 1e-08"),
    ('[parameters]\ns = { prior = "uniform", low = 0, high = nan }\n' + OBS,
     "parameters.s.high", "nan is not a finite number"),
    ('[parameters]\nmu = { prior = "log-normal", median = 1e-5, sigma = -1 }\n' + OBS,
     "parameters.mu.sigma", "-1 is not above 0"),
    ("[parameters]\nh = true\n" + OBS, "parameters.h", "true is neither a number"),
    ("[parameters]\nmutation = 1e-5\n" + OBS, "parameters.mutation",
     'unknown parameter "mutation"; must be one of mu, s, h, F, nu, Ne, alpha'),
    ('[parameters]\nNe = { prior = "log-uniform", low = 100, high = 10000 }\n' + OBS,
     "parameters.Ne", 'Ne is used only by model = "drift"'),
    ('[parameters]\nalpha = { prior = "uniform", low = 0.5, high = 5 }\n' + OBS,
     "parameters.alpha", 'used only by inheritance = "x-linked"'),
    ("title = \"no data\"\n", "observations", "missing; a study needs at least one"),
    ("observations = []\n", "observations", "empty; a study needs at least one observation"),
    ('[[observations]]\nkind = "affected"\naffected = 12\ntotal = 10\nmode = "dominant"\n',
     "observations[1].affected", "12 is more than total 10"),
    (OBS + OBS.replace("affected = 3", "affected = -3"), "observations[2].affected",
     "-3 is negative"),
    (OBS + '\n[[observations]]\nkind = "census"\n', "observations[2].kind",
     '"census" is not allowed; must be one of allele-count'),
    (OBS + OBS.replace('kind = "affected"', 'kind = "affected"\nlabel = "affected 1"'),
     "observations[2].label", '"affected 1" is already the label of observations[1]'),
    (OBS.replace('mode = "dominant"', 'mode = "dominant"\npenetrance = 1.5'),
     "observations[1].penetrance", "1.5 is not a probability"),
    ('model = "drift"\ninheritance = "x-linked"\n[parameters]\nNe = 1000\n'
     + OBS.replace('"dominant"', '"x-linked-male"'),
     "model", 'the drift model covers autosomal loci with F = 0; inheritance is "x-linked"'),
    ('model = "drift"\n[parameters]\nNe = 1000\nF = 0.01\n' + OBS, "parameters.F",
     "0.01: the drift model covers autosomal loci with F = 0"),
    ('model = "drift"\n' + OBS, "parameters.Ne", "missing; the drift model needs Ne"),
    ('model = "drift"\n[parameters]\nNe = 1000\nnu = 0\n' + OBS, "parameters.nu",
     "the drift model needs back mutation nu > 0"),
    ("[parameters]\nmu = 1e-5\ns = 0.5\nh = 0.5\n" + OBS, "parameters",
     "no free parameter to estimate"),
    (OBS + '\n[[observations]]\nkind = "estimate"\nparameter = "Ne"\nmedian = 1000\n'
     'lower = 500\nupper = 2000\n', "observations[2].parameter",
     "the deterministic model has no Ne"),
    ("[parameters]\nmu = 1e-5\n" + OBS + '\n[[observations]]\nkind = "estimate"\n'
     'parameter = "mu"\nmedian = 1e-5\nlower = 5e-6\nupper = 2e-5\n',
     "observations[2].parameter", '"mu" is fixed at 1e-05'),
    ("[sampler]\nseed = -1\n" + OBS, "sampler.seed", "-1 is out of range"),
    ("[sampler]\nseed = 1.5\n" + OBS, "sampler.seed", "1.5 is not a whole number"),
    ("[sampler]\nseed = true\n" + OBS, "sampler.seed", "true is not a whole number"),
    ("[sampler]\nwalkers = 3\n" + OBS, "sampler.walkers", "3 is out of range: need at least 6"),
    ("[sampler]\nensembles = 1\n" + OBS, "sampler.ensembles", "1 is out of range"),
    ("[sampler]\nthin = 10\n" + OBS, "sampler.thin",
     'unknown key "thin"; must be one of seed, walkers, max_steps, ensembles'),
    # priors that put no mass where the data can be
    ("[parameters]\ns = 1.0\nh = 1.0\n" + '\n[[observations]]\nkind = "fertility"\n'
     "affected_people = 10\naffected_children = 4\nreference_people = 20\n"
     'reference_children = 40\nmode = "dominant"\n',
     "observations[1]", "children of affected people = 4 has probability 0: the priors put no "
     "mass where these data can arise"),
    ('[parameters]\nmu = 0.5\ns = { prior = "uniform", low = 1e-6, high = 1e-4 }\nh = 0.5\n'
     + OBS, "observations[1]", "there is no stable equilibrium under every one of 400 draws"),
]


@pytest.mark.parametrize("text, field, message", BAD,
                         ids=[f"{i:02d}-{b[1]}" for i, b in enumerate(BAD, 1)])
def test_bad_study_is_one_line_naming_file_field_and_value(tmp_path, text, field, message):
    path = write(tmp_path, text)
    with pytest.raises(InputError) as caught:
        load_study(path)
    error = caught.value
    assert error.source == str(path), f"the error must name the file; source = {error.source!r}"
    assert error.field == field, f"the error must name field {field!r}; got {error.field!r}"
    assert message in error.message, f"expected {message!r} in the message {error.message!r}"
    line = str(error)
    assert line.startswith(f"{path}: {field}: "), f"the line must read 'file: field: ...': {line!r}"
    assert "\n" not in line, f"the message must be one line: {line!r}"


def test_unreadable_files(tmp_path):
    missing = tmp_path / "absent.toml"
    with pytest.raises(InputError) as caught:
        load_study(missing)
    line = str(caught.value)
    assert line.startswith(f"{missing}: cannot read the file"), f"missing file: {line!r}"
    with pytest.raises(InputError) as caught:
        load_study(tmp_path)
    line = str(caught.value)
    assert line.startswith(f"{tmp_path}: cannot read the file"), f"a folder as study: {line!r}"


def test_file_not_utf8(tmp_path):
    path = tmp_path / "latin1.toml"
    path.write_bytes('title = "Île de Brannoch"\n'.encode("latin-1") + OBS.encode())
    with pytest.raises(InputError) as caught:
        load_study(path)
    line = str(caught.value)
    # 'title = "' is 9 bytes, then Î, which latin-1 writes as the single byte 0xce
    # (ISO 8859-1 table): in UTF-8 that is a lead byte, and "l" after it is no
    # continuation byte (RFC 3629, section 3), so decoding fails at offset 9
    assert line.startswith(f"{path}: the file is not UTF-8 text (byte 0xce at offset 9)"), (
        f"the message must name the first bad byte and its offset: {line!r}")
    assert "\n" not in line, f"the message must be one line: {line!r}"


def test_invalid_toml_gives_line_and_column(tmp_path):
    path = write(tmp_path, 'title = "x"\n[parameters]\nmu = { prior = "uniform", low = }\n')
    with pytest.raises(InputError) as caught:
        load_study(path)
    line = str(caught.value)
    assert line.startswith(f"{path}: invalid TOML: "), f"TOML syntax error: {line!r}"
    assert "line 3" in line and "column" in line, (
        f"the error is on line 3 (the 'low = }}' line): the message must say line 3 and a "
        f"column: {line!r}")
    assert "\n" not in line, f"the message must be one line: {line!r}"
