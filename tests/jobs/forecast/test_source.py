"""Reading an estimate report folder back for a forecast.

References outside the reader: xarray's own netCDF reader (``xarray.open_datatree``,
engine h5netcdf) for the posterior draws, and the JSON parser of the standard library
for summary.json's fixed values (docs/reports.md, 'The estimate report folder').
"""

import json
import shutil

import numpy as np
import pytest

import infer
from infer.errors import InputError
from infer.jobs.forecast.source import LIFE_CYCLE, read_report

STUDY = {
    "title": "Invented registry: one free rate, a dominant",
    "parameters": {"mu": {"prior": "log-uniform", "low": 1e-8, "high": 1e-3},
                   "s": 1.0, "h": 1.0, "penetrance": 0.9},
    "observations": [{"kind": "sporadic", "cases": 15, "births": 182400,
                      "mode": "dominant"}],
    "sampler": {"seed": 3, "walkers": 8, "ensembles": 2},
}


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("forecast-source") / "report"
    infer.write_report(infer.estimate(STUDY), folder)
    return folder


def test_free_draws_come_from_posterior_nc_and_fixed_values_from_summary_json(report):
    xr = pytest.importorskip("xarray")
    tree = xr.open_datatree(report / "posterior.nc", engine="h5netcdf")
    summary = json.loads((report / "summary.json").read_text(encoding="utf-8"))
    source = read_report(report)
    mu = tree["posterior"]["mu"].values          # (chain, draw)
    np.testing.assert_array_equal(source.draws["mu"], mu.reshape(-1))
    assert source.size == mu.size
    for name in LIFE_CYCLE:
        if name in summary["parameters"] and summary["parameters"][name]["fixed"]:
            assert np.all(source.draws[name] == float(summary["parameters"][name]["median"]))
    assert source.draws["penetrance"][0] == 0.9 and source.draws["s"][0] == 1.0
    assert source.fixed == {"s", "h", "F", "nu", "alpha", "penetrance"}
    assert (source.inheritance, source.model) == ("autosomal", "deterministic")
    assert source.title == STUDY["title"]


def test_a_missing_folder_or_file_is_named(report, tmp_path):
    with pytest.raises(InputError, match="no such folder") as caught:
        read_report(tmp_path / "nothing")
    assert caught.value.source == str(tmp_path / "nothing")
    copy = tmp_path / "copy"
    shutil.copytree(report, copy)
    (copy / "posterior.nc").unlink()
    with pytest.raises(InputError, match="no such file; give a report folder written by "
                                         "qhat estimate") as caught:
        read_report(copy)
    assert caught.value.source == str(copy / "posterior.nc")
    (copy / "summary.json").unlink()
    with pytest.raises(InputError) as caught:
        read_report(copy)
    assert caught.value.source == str(copy / "summary.json")


@pytest.mark.parametrize(("change", "needle"), [
    (lambda folder: (folder / "summary.json").write_text("{not json", encoding="utf-8"),
     "not a JSON document"),
    (lambda folder: (folder / "summary.json").write_text('{"scenarios": []}',
                                                         encoding="utf-8"),
     "no 'parameters' key: not a summary of qhat estimate"),
    (lambda folder: (folder / "posterior.nc").write_bytes(b"not netCDF"),
     "cannot read the draws"),
])
def test_a_folder_not_written_by_estimate_is_refused_naming_the_file(report, tmp_path,
                                                                      change, needle):
    copy = tmp_path / "copy"
    shutil.copytree(report, copy)
    change(copy)
    with pytest.raises(InputError, match=needle) as caught:
        read_report(copy)
    assert str(copy) in caught.value.source, caught.value.source
