"""posterior.nc written with h5netcdf reads back as the DataTree arviz itself builds.

The reference is independent of the writer: ``arviz_base.from_dict`` (arviz 1.x) builds
the tree from the same arrays, and xarray's own netCDF reader opens our file. Every
group, variable, dimension and coordinate must agree, and arviz's summary must give the
same numbers from either tree.
"""

from __future__ import annotations

import tomllib

import numpy as np
import pytest
from conftest import run_python

from infer.jobs.estimate.pipeline import estimate
from infer.files.study import parse_study
from infer.inference.sampling import SamplerSettings
from infer.reporting.netcdf import to_datatree, write_netcdf

xr = pytest.importorskip("xarray")

STUDY = """
title = "Test: a dominant disorder in an invented registry"
inheritance = "autosomal"
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
"""


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    study = parse_study(tomllib.loads(STUDY), source="test.toml")
    result, _ = estimate(study, seed=5, settings=SamplerSettings(target_ess=200), grid=False)
    path = tmp_path_factory.mktemp("nc") / "posterior.nc"
    write_netcdf(result, path, result.log_prob)
    return result, path


def test_every_group_equals_the_arviz_datatree(written):
    result, path = written
    reference = to_datatree(result, result.log_prob)
    ours = xr.open_datatree(path, engine="h5netcdf")
    groups = {"posterior", "prior", "log_likelihood", "posterior_predictive", "observed_data",
              "sample_stats"}
    assert set(ours.children) == set(reference.children) == groups, (
        f"groups: posterior.nc {sorted(ours.children)}, arviz_base tree "
        f"{sorted(reference.children)}, expected {sorted(groups)}")
    for group in reference.children:
        # values, dims and coordinates; attributes differ only in creation time and library
        xr.testing.assert_equal(ours[group].to_dataset(), reference[group].to_dataset())
        dims = list(ours[group].attrs["sample_dims"])
        expected = list(reference[group].attrs["sample_dims"])
        assert dims == expected, f"group {group}: sample_dims {dims}, arviz_base {expected}"
    ours.close()


def test_attributes_carry_labels_and_caution(written):
    result, path = written
    tree = xr.open_datatree(path, engine="h5netcdf")
    # docs/reports.md: every report carries the caution
    caution = "research estimate, not a clinical or genetic-counselling result"
    assert tree.attrs["caution"] == caution, f"caution attribute: {tree.attrs.get('caution')!r}"
    assert tree.attrs["title"] == result.study.title, f"title attribute {tree.attrs['title']!r}"
    # "<kind>: <label>" for each observation, labels as written in STUDY
    labels = {key: tree["observed_data"].attrs.get(key) for key in ("obs1", "obs2")}
    assert labels == {"obs1": "affected: births",
                      "obs2": "fertility: children of affected adults"}, (
        f"observed_data attributes must name kind and label of each observation: {labels}")
    tree.close()


def test_arviz_summary_is_the_same_from_either_tree(written):
    az = pytest.importorskip("arviz")
    result, path = written
    tree = xr.open_datatree(path, engine="h5netcdf")
    ours = az.summary(tree, var_names=["mu", "s"], ci_kind="eti", ci_prob=0.95)
    reference = az.summary(to_datatree(result, result.log_prob), var_names=["mu", "s"],
                           ci_kind="eti", ci_prob=0.95)
    np.testing.assert_array_equal(ours.to_numpy(), reference.to_numpy(),
                                  err_msg="arviz summary of posterior.nc vs of the arviz_base tree")
    tree.close()


def test_writing_does_not_import_arviz_or_xarray(tmp_path):
    """The estimate command must not pay for arviz/xarray imports (issue acceptance)."""
    code = (
        "import sys\n"
        "import tomllib\n"
        "from infer.files.study import parse_study\n"
        "from infer.jobs.estimate.pipeline import estimate\n"
        "from infer.inference.sampling import SamplerSettings\n"
        "from infer.reporting.netcdf import write_netcdf\n"
        f"study = parse_study(tomllib.loads({STUDY!r}), source='t.toml')\n"
        "r, _ = estimate(study, seed=1, settings=SamplerSettings(target_ess=100), grid=False)\n"
        f"write_netcdf(r, {str(tmp_path / 'p.nc')!r}, r.log_prob)\n"
        "print(sorted(m for m in ('arviz', 'arviz_base', 'xarray', 'dask') if m in sys.modules))\n"
    )
    done = run_python(code)
    assert done.returncode == 0, f"the import check failed in the child; {done}"
    assert done.stdout.strip() == "[]", (
        f"writing posterior.nc imported {done.stdout.strip()}; it must use h5netcdf alone")
