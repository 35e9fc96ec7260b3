"""The Python front door: ``import infer`` names everything the command line does.

References outside the face: the names' home modules (listed below by hand, not read
from the face), ``tomllib`` for what a TOML study file holds, xarray's own netCDF reader
for posterior.nc, the JSON file ``write_report`` writes, and ``qhat batch``'s loci.csv.
"""

from __future__ import annotations

import csv
import importlib
import json
import math
import subprocess
import sys
import tomllib
from html.parser import HTMLParser

import numpy as np
import pytest
from conftest import DEMO, ROOT, TIMEOUT, call_qhat, run_python

import infer
from infer.errors import InputError
from infer.files.study import parse_study, study_document
from infer.inference.sampling import SamplerSettings

#: face name -> home "module:attribute" (issue 11; written out here, not read from the face)
HOMES = {
    "load_study": "infer.files.study:load_study",
    "parse_study": "infer.files.study:parse_study",
    "study_document": "infer.files.study:study_document",
    "load_claim": "infer.files.claim:load_claim",
    "parse_claim": "infer.files.claim:parse_claim",
    "read_loci": "infer.files.loci:read_loci",
    "write_report": "infer.reporting.report:write_report",
    "check": "infer.jobs.check.run:check_claim",
    "batch": "infer.jobs.batch.frame:batch_loci",
    "q_hat": "infer.core.balance:q_hat",
    "autosomal_balance": "infer.core.balance:autosomal_balance",
    "x_linked_balance": "infer.core.x_linked:x_linked_balance",
    "affected_fraction": "infer.core.balance:affected_fraction",
    "autosomal_approximations": "infer.core.approximations:autosomal_approximations",
    "x_linked_approximations": "infer.core.approximations:x_linked_approximations",
    "stationary_density": "infer.core.drift.stationary:stationary_density",
    "stationary_summary": "infer.core.drift.stationary:stationary_summary",
    "stationary_quantile": "infer.core.drift.stationary:stationary_quantile",
    "log_binomial_probability": "infer.core.drift.stationary:log_binomial_probability",
    "probability_absent": "infer.core.drift.stationary:probability_absent",
    "simulate": "infer.core.wright_fisher:wright_fisher",
    "forecast": "infer.jobs.forecast.run:forecast",
    "compare": "infer.jobs.compare.run:compare_models",   # issue 18
    "fitness_coefficients": "infer.core.balance:fitness_coefficients",   # issue 18
    "InputError": "infer.errors:InputError",
}
#: defined by the face itself
FACE_ONLY = {"estimate", "__version__"}
#: docs/reports.md: every report carries the caution
CAUTION_LINE = "research estimate, not a clinical or genetic-counselling result"

STUDY_TOML = """
title = "Test: a dominant disorder in an invented registry"
inheritance = "autosomal"
interval = 0.9
[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s = { prior = "uniform", low = 0.0, high = 1.0 }
h = 1.0
[[observations]]
label = "births"
kind = "affected"
affected = 19
total = 182_400
mode = "dominant"
[[observations]]
label = "children of affected adults"
kind = "fertility"
affected_people = 64
affected_children = 27
reference_people = 310
reference_children = 655
mode = "dominant"
[sampler]
seed = 3
"""


# ---------------------------------------------------------------- names, laziness, cost

@pytest.mark.parametrize("name", sorted(HOMES))
def test_each_face_name_is_its_home_object(name):
    module, attribute = HOMES[name].split(":")
    home = getattr(importlib.import_module(module), attribute)
    assert getattr(infer, name) is home, (
        f"infer.{name} should be {HOMES[name]}; fix _HOMES in infer/__init__.py")


def test_face_lists_every_name_in_all_and_dir():
    expected = set(HOMES) | FACE_ONLY
    assert set(infer.__all__) == expected, (
        f"infer.__all__ differs from the issue-11 list: extra "
        f"{sorted(set(infer.__all__) - expected)}, missing {sorted(expected - set(infer.__all__))}")
    missing = expected - set(dir(infer))
    assert not missing, f"dir(infer) should list every face name; missing {sorted(missing)}"


def test_import_infer_alone_imports_nothing_heavy_and_resolves_each_name_on_use():
    # a fresh interpreter: in this one other tests have imported everything already
    code = f"""
import sys
import infer
heavy = sorted(m for m in ("numpy", "scipy", "pandas", "matplotlib") if m in sys.modules)
loaded = sorted(m for m in sys.modules if m.startswith("infer."))
eager = sorted(n for n in {sorted(HOMES)!r} if n in vars(infer))
for name in {sorted(HOMES)!r}:
    getattr(infer, name)
cached = sorted(n for n in {sorted(HOMES)!r} if n not in vars(infer))
import infer.jobs.estimate.pipeline, infer.jobs.check.run, infer.jobs.batch.frame
jobs = [type(getattr(infer, n)).__name__ for n in ("estimate", "check", "batch")]
print(heavy, loaded, eager, cached, sep="\\n")
print(jobs)
"""
    done = run_python(code, cwd=ROOT)
    assert done.returncode == 0, str(done)
    heavy, loaded, eager, cached, jobs = done.stdout.splitlines()
    assert heavy == "[]", f"`import infer` imported {heavy}: the face must stay lazy"
    assert loaded == "[]", f"`import infer` imported sub-modules {loaded}"
    assert eager == "[]", f"names bound before first use: {eager} (PEP 562 __getattr__)"
    assert cached == "[]", f"names not cached in the module after first use: {cached}"
    assert jobs == "['function', 'function', 'function']", (
        f"infer.estimate/check/batch must stay the face's functions after the job modules "
        f"(infer.jobs.*) are imported; got types {jobs}")


def test_help_imports_no_numpy():
    done = run_python("import runpy, sys; sys.argv = ['qhat', '--help']\n"
                      "try:\n    runpy.run_module('infer', run_name='__main__')\n"
                      "except SystemExit:\n    pass\n"
                      "print(sorted(m for m in ('numpy', 'pandas', 'scipy') if m in sys.modules))",
                      cwd=ROOT)
    assert done.returncode == 0, str(done)
    assert done.stdout.strip().splitlines()[-1] == "[]", (
        f"`qhat --help` must not import numpy, pandas or scipy:\n{done}")


def test_sub_packages_stay_reachable_beside_the_face_names():
    """Importing a job's sub-package rebinds its name on ``infer``; the face's don't clash."""
    import infer.jobs.estimate.pipeline

    assert callable(infer.estimate), "infer.estimate should be a function"
    assert infer.jobs.estimate.pipeline.estimate is importlib.import_module(
        "infer.jobs.estimate.pipeline").estimate, "infer.estimate should stay the sub-package"


# ---------------------------------------------------------------- parse_study

def _numpy_document():
    """STUDY_TOML written in Python with numpy scalars and tuples."""
    return {
        "title": "Test: a dominant disorder in an invented registry",
        "inheritance": np.str_("autosomal"),
        "interval": np.float32(0.9),
        "parameters": {"mu": {"prior": "log-uniform", "low": np.float64(1e-8),
                              "high": np.float64(1e-3)},
                       "s": {"prior": "uniform", "low": np.int64(0), "high": np.int32(1)},
                       "h": np.float64(1.0)},
        "observations": (
            {"label": "births", "kind": "affected", "affected": np.int64(19),
             "total": np.uint32(182_400), "mode": "dominant"},
            {"label": "children of affected adults", "kind": "fertility",
             "affected_people": np.int64(64), "affected_children": np.int16(27),
             "reference_people": np.int64(310), "reference_children": np.int64(655),
             "mode": "dominant"},
        ),
        "sampler": {"seed": np.int64(3)},
    }


def test_parse_study_takes_numpy_scalars_as_the_numbers_they_hold():
    from_numpy = parse_study(_numpy_document(), source="notebook")
    from_toml = parse_study(tomllib.loads(STUDY_TOML), source="notebook")
    ours, reference = study_document(from_numpy), study_document(from_toml)
    # float32(0.9) is 0.8999999761581421 as a double; everything else is exact
    assert ours.pop("interval") == pytest.approx(reference.pop("interval"), rel=1e-7), (
        "interval given as numpy.float32 should be read as its value")
    assert ours == reference, (
        "a study with numpy integers/floats (and tuples) should parse like the TOML file "
        "with the same numbers")
    assert from_numpy.seed == 3 and type(from_numpy.seed) is int, (
        f"numpy.int64 seed should become the int 3, got {from_numpy.seed!r}")


def test_parse_study_takes_toml_text_and_names_the_source():
    study = parse_study(STUDY_TOML, source="registry")
    assert study.path == "registry" and study.free == ["mu", "s"], (
        "TOML text should parse like the file, with the source as Study.path")
    with pytest.raises(InputError) as bad:
        parse_study("title = ", source="notebook cell 4")
    assert str(bad.value).startswith("notebook cell 4: invalid TOML"), (
        f"bad TOML text should name the source; got {bad.value}")


def test_parse_study_still_refuses_numpy_booleans_and_does_not_touch_the_input():
    document = _numpy_document()
    document["observations"][0]["affected"] = np.bool_(True)
    with pytest.raises(InputError) as bad:
        parse_study(document, source="notebook")
    # a TOML boolean is refused as a count (docs/files.md, 'Observation kinds'): so is numpy's
    assert str(bad.value) == "notebook: observations[1].affected: true is not a number", (
        f"numpy.bool_ should be refused like a TOML boolean; got {bad.value}")
    assert isinstance(document["observations"], tuple), "parse_study must not modify its input"


# ---------------------------------------------------------------- the estimate result

@pytest.fixture(scope="module")
def estimated(tmp_path_factory):
    result = infer.estimate(tomllib.loads(STUDY_TOML),
                                  settings=SamplerSettings(target_ess=200), grid=False)
    folder = infer.write_report(result, tmp_path_factory.mktemp("front") / "report")
    return result, folder


def test_summary_is_the_summary_json_document(estimated):
    result, folder = estimated
    written = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    for name in ("mu", "s"):
        for key in ("median", "lower", "upper"):
            assert written["parameters"][name][key] == result.summary["parameters"][name][key], (
                f"result.summary parameters.{name}.{key} differs from summary.json")
    assert written["diagnostics"]["converged"] == result.summary["diagnostics"]["converged"]


def test_to_datatree_equals_the_posterior_nc_written(estimated):
    xr = pytest.importorskip("xarray")
    result, folder = estimated
    tree = result.to_datatree()
    written = xr.open_datatree(folder / "posterior.nc", engine="h5netcdf")
    try:
        assert set(tree.children) == set(written.children), (
            f"groups differ: {sorted(tree.children)} vs posterior.nc {sorted(written.children)}")
        for group in tree.children:
            xr.testing.assert_equal(tree[group].to_dataset(), written[group].to_dataset())
        assert tree.attrs["caution"] == CAUTION_LINE, "the tree should carry the caution"
    finally:
        written.close()


class _Cells(HTMLParser):
    """The text of every table cell, row by row (stdlib parser: an outside reader)."""

    def __init__(self):
        super().__init__()
        self.rows, self._cell = [], None

    def handle_starttag(self, tag, attrs):
        if tag == "tr":
            self.rows.append([])
        elif tag in ("td", "th"):
            self._cell = ""

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self.rows[-1].append(self._cell.strip())
            self._cell = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell += data


def test_repr_and_html_show_the_parameters_the_verdict_and_the_caution(estimated):
    result, _ = estimated
    text, page = repr(result), result._repr_html_()
    verdict = "converged" if result.summary["diagnostics"]["converged"] else "NOT CONVERGED"
    for shown, what in ((text, "repr"), (page, "_repr_html_")):
        assert CAUTION_LINE in shown, f"{what} must carry the caution line (docs/reports.md)"
        assert verdict in shown, f"{what} must give the convergence verdict ({verdict})"
        assert result.summary["title"] in shown, f"{what} should name the study"
    assert len(text.splitlines()) <= 10, f"repr should stay short:\n{text}"
    parser = _Cells()
    parser.feed(page)
    rows = {row[0]: row[1:] for row in parser.rows[1:]}
    assert set(rows) == {"mu", "s", "q_hat"}, f"HTML table rows: {sorted(rows)}"
    for name in ("mu", "s"):
        median = float(rows[name][0])
        expected = result.summary["parameters"][name]["median"]
        assert math.isclose(median, expected, rel_tol=5e-3), (
            f"HTML median of {name} {median} should be the summary's {expected} (3 digits)")
        lower, upper = (float(v) for v in rows[name][1].split(" – "))
        assert lower < median < upper, f"{name}: interval {lower}..{upper} around {median}"
        assert f"{name} " in text, f"repr should list {name}"


def test_plot_gives_the_report_figures(estimated):
    from matplotlib.figure import Figure

    result, _ = estimated
    figures = result.plot()
    assert set(figures) == {"marginals", "pairs", "trace", "balance", "predictive"}, (
        f"plot() should give the five report figures, got {sorted(figures)}")
    assert all(isinstance(f, Figure) for f in figures.values()), "plot() gives Figures"
    assert isinstance(result.plot("trace"), Figure), "plot('trace') gives one Figure"
    with pytest.raises(ValueError, match="marginals"):
        result.plot("histogram")


# ---------------------------------------------------------------- batch

def test_batch_loci_is_qhat_batch_as_a_data_frame(tmp_path, capsys):
    rows = (DEMO / "batch_loci.csv").read_text(encoding="utf-8").splitlines()[:41]
    loci = tmp_path / "loci.csv"
    loci.write_text("\n".join(rows) + "\n", encoding="utf-8")
    status, _, err = call_qhat(["batch", loci, "--out", tmp_path / "out", "--quiet"], capsys)
    assert status == 0, err
    with open(tmp_path / "out" / "loci.csv", newline="", encoding="utf-8") as handle:
        command = {row["locus"]: row for row in csv.DictReader(handle)}

    frame = infer.batch(loci)
    assert list(frame.index) == [r.split(",")[0] for r in rows[1:]], (
        "rows should be indexed by locus name in file order")
    assert frame.index.name == "locus"
    for name, row in frame.iterrows():
        for column in ("s_het_median", "s_het_lower", "s_het_upper", "s_het_mean", "expected"):
            written = command[name][column]
            value = row[column]
            if written == "":
                assert not np.isfinite(value), f"{name}.{column}: loci.csv empty, frame {value}"
            else:   # loci.csv keeps 6 significant digits
                assert math.isclose(value, float(written), rel_tol=1e-5), (
                    f"{name}.{column}: frame {value} vs qhat batch {written}")
        assert row["flag_names"] == command[name]["flags"], (
            f"{name}: flag names {row['flag_names']!r} vs loci.csv {command[name]['flags']!r}")
    assert (frame["observed"] == 0).sum() == frame["flag_names"].str.contains(
        "zero-observed").sum(), "every locus with 0 copies carries the zero-observed flag"
    assert frame.attrs["caution"] == CAUTION_LINE


def test_batch_loci_refuses_a_bad_setting_by_its_keyword():
    with pytest.raises(InputError) as bad:
        infer.batch(DEMO / "batch_loci.csv", s_high=0.8)
    assert str(bad.value).startswith("s_high: 0.8 is above 0.5"), str(bad.value)


# ---------------------------------------------------------------- the docs example

def test_the_from_python_example_runs(tmp_path):
    script = ROOT / "docs" / "examples" / "from_python.py"
    done = subprocess.run([sys.executable, str(script), str(tmp_path)], cwd=tmp_path,
                          capture_output=True, text=True, timeout=TIMEOUT)
    assert done.returncode == 0, f"the example failed:\n{done.stderr}\n{done.stdout}"
    assert CAUTION_LINE in done.stdout, "the example prints the estimate with its caution"
    for claim in sorted(DEMO.glob("claim-*.toml")):
        assert claim.name in done.stdout, f"the example should check {claim.name}"
    assert "loci; prior" in done.stdout, "the example should run the batch"
    report = tmp_path / "brannoch"
    for name in ("summary.json", "report.md", "posterior.nc"):
        assert (report / name).is_file(), f"the example's report folder lacks {name}"


def test_the_example_uses_only_the_face():
    text = (ROOT / "docs" / "examples" / "from_python.py").read_text(encoding="utf-8")
    internal = [line for line in text.splitlines() if line.lstrip().startswith("from infer")
                or line.lstrip().startswith("import infer.")]
    assert not internal, f"the example should use only `import infer`; found {internal}"
    assert "invented" in text, "the example should say that its scenario is invented"
