"""Bad input for the registry parameters and kinds: penetrance, completeness and
phenocopy, capture-recapture, carrier-mothers and estimates of any parameter. Each ends
with exit status 2, one ``qhat: error:`` line naming the file, the field and the value,
and nothing written (docs/command-line.md, 'Exit status')."""

from __future__ import annotations

import pytest
from conftest import call_qhat

STUDY = """\
title = "Catalogue registry study"
inheritance = "autosomal"

[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s = 0.6
h = 1.0
completeness = { prior = "uniform", low = 0.3, high = 1.0 }

[[observations]]
label = "registry"
kind = "registry"
births = 90000
affected = 40
sporadic = 22
mode = "dominant"

[[observations]]
label = "two sources"
kind = "capture-recapture"
first_only = 10
second_only = 8
both = 22
"""

X_LINKED = """\
title = "Catalogue carrier mothers"
inheritance = "x-linked"

[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s = 0.9
h = 0.0
alpha = { prior = "log-uniform", low = 0.1, high = 30.0 }

[[observations]]
kind = "carrier-mothers"
tested = 20
carriers = 15
"""

ALPHA = 'alpha = { prior = "log-uniform", low = 0.1, high = 30.0 }\n'

SEXES = """\
title = "Catalogue selection by sex"
inheritance = "autosomal"

[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s_male = { prior = "uniform", low = 0.0, high = 1.0 }
s_female = { prior = "uniform", low = 0.0, high = 1.0 }
h = 1.0

[[observations]]
kind = "fertility"
mode = "dominant"
sex = "male"
affected_people = 30
affected_children = 20
reference_people = 100
reference_children = 200
"""

CASES = [
    ("penetrance above 1", STUDY, "h = 1.0\n", "h = 1.0\npenetrance = 1.5\n",
     "parameters.penetrance"),
    ("completeness fixed under capture-recapture", STUDY,
     'completeness = { prior = "uniform", low = 0.3, high = 1.0 }', "completeness = 0.8",
     "give completeness a prior"),
    ("phenocopy of 1 in a count", STUDY, 'mode = "dominant"\n',
     'mode = "dominant"\nphenocopy = 1.0\n', "observations[1].phenocopy"),
    ("completeness 0 with cases", STUDY, 'mode = "dominant"\n',
     'mode = "dominant"\ncompleteness = 0.0\n', "observations[1].completeness"),
    ("capture-recapture without cases", STUDY, "first_only = 10\nsecond_only = 8\nboth = 22",
     "first_only = 0\nsecond_only = 0\nboth = 0", "observations[2].both"),
    ("capture-recapture negative count", STUDY, "both = 22", "both = -1",
     "observations[2].both"),
    ("carrier mothers at an autosomal locus", X_LINKED.replace(ALPHA, ""),
     'inheritance = "x-linked"', 'inheritance = "autosomal"', "observations[1].kind"),
    ("more carriers than tested", X_LINKED, "carriers = 15", "carriers = 25",
     "observations[1].carriers"),
    ("sensitivity above 1", X_LINKED, "carriers = 15", "carriers = 15\nsensitivity = 2",
     "observations[1].sensitivity"),
    ("completeness name not declared", STUDY, 'mode = "dominant"\n',
     'mode = "dominant"\ncompleteness = "completeness_north"\n',
     'observations[1].completeness: "completeness_north" is not in [parameters]'),
    ("completeness name declared but not read", STUDY, "h = 1.0\n",
     "h = 1.0\ncompleteness_south = 0.8\n", "parameters.completeness_south: no observation"),
    ("completeness name of the wrong form", STUDY, 'mode = "dominant"\n',
     'mode = "dominant"\ncompleteness = "North"\n', 'observations[1].completeness: "North"'),
    ("capture-recapture with a fixed completeness", STUDY, "both = 22",
     "both = 22\ncompleteness = 0.8", "observations[2].completeness: 0.8"),
    ("s_male without s_female", SEXES,
     's_female = { prior = "uniform", low = 0.0, high = 1.0 }\n', "",
     "parameters.s_male: given without s_female"),
    ("s with s_male and s_female", SEXES, "h = 1.0\n", "h = 1.0\ns = 0.5\n",
     "parameters.s: given with s"),
    ("s_male above 1", SEXES, 's_male = { prior = "uniform", low = 0.0, high = 1.0 }',
     "s_male = 1.2", "parameters.s_male"),
    ("selection by sex at an x-linked locus", SEXES, 'inheritance = "autosomal"',
     'inheritance = "x-linked"', "parameters.s_male"),
    ("selection by sex under drift", SEXES, 'inheritance = "autosomal"',
     'inheritance = "autosomal"\nmodel = "drift"\n[parameters.Ne]\nprior = "log-uniform"\n'
     'low = 100\nhigh = 10000', "parameters.s_male: model is"),
    ("fertility sex not male or female", SEXES, 'sex = "male"', 'sex = "men"',
     'observations[1].sex: "men"'),
    ("fertility sex at an x-linked locus", X_LINKED, "carriers = 15\n",
     'carriers = 15\n\n[[observations]]\nkind = "fertility"\nmode = "x-linked-male"\n'
     'sex = "male"\naffected_people = 3\naffected_children = 1\nreference_people = 9\n'
     "reference_children = 9\n", "observations[2].sex"),
]


@pytest.mark.parametrize("case,base,old,new,needle", CASES, ids=[c[0] for c in CASES])
def test_bad_registry_study(tmp_path, capsys, case, base, old, new, needle):
    assert old in base, f"test case {case!r} out of date"
    path = tmp_path / "study.toml"
    path.write_text(base.replace(old, new, 1), encoding="utf-8")
    before = sorted(p.name for p in tmp_path.iterdir())
    status, out, err = call_qhat(["estimate", path, "--out", tmp_path / "out"], capsys)
    assert sorted(p.name for p in tmp_path.iterdir()) == before, "bad input wrote files"
    assert status == 2, err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("qhat: error:"), err
    assert "study.toml" in lines[0] and needle in lines[0], lines[0]
    assert out == ""


def test_estimate_of_h_with_an_upper_end_at_1_is_refused(tmp_path, capsys):
    free_h = '\nh = { prior = "uniform", low = 0.0, high = 1.0 }\n'
    text = STUDY.replace("\nh = 1.0\n", free_h) + """
[[observations]]
kind = "estimate"
parameter = "h"
median = 0.5
lower = 0.2
upper = 1.0
"""
    path = tmp_path / "study.toml"
    path.write_text(text, encoding="utf-8")
    status, out, err = call_qhat(["estimate", path, "--out", tmp_path / "out"], capsys)
    assert status == 2 and "observations[3].upper" in err and "logit" in err, err
    assert not (tmp_path / "out").exists()


def test_selection_by_sex_with_a_history_is_refused(tmp_path, capsys):
    """A [history] carries one s: a study with s_male and s_female and a [history] is
    refused in one line rather than read at the sexes' mean (docs/files.md)."""
    path = tmp_path / "study.toml"
    path.write_text(SEXES + "\n[history]\nepochs = [ { generations = 5 } ]\n", encoding="utf-8")
    status, out, err = call_qhat(["estimate", path, "--out", tmp_path / "out"], capsys)
    assert status == 2 and out == "" and not (tmp_path / "out").exists()
    assert err.count("\n") == 1 and "study.toml: history: selection by sex" in err, err
