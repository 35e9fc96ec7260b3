"""posterior.nc as arviz 1.x users expect it, checked with arviz itself.

References independent of the writer: ``arviz_base.from_dict`` (arviz 1.x) builds the
tree from the same arrays, and xarray's own netCDF reader opens our file; arviz-stats
computes R-hat and ESS on the stored draws (Vehtari, Gelman, Simpson, Carpenter &
Bürkner 2021, "Rank-normalization, folding, and localization: an improved R-hat",
Bayesian Analysis 16:667), PSIS-LOO (Vehtari, Gelman & Gabry 2017, "Practical Bayesian
model evaluation using leave-one-out cross-validation and WAIC", Statistics and
Computing 27:1413) and draws the predictive checks.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from conftest import run_python

from infer.files.study import load_study
from infer.inference.sampling import SamplerSettings
from infer.jobs.estimate.pipeline import estimate
from infer.reporting.jsonout import dumps
from infer.reporting.netcdf import to_datatree, write_netcdf

xr = pytest.importorskip("xarray")

DEMO = Path(__file__).resolve().parents[2] / "data_demo" / "island-dominant.toml"
SAMPLED = ("posterior", "prior", "log_likelihood", "posterior_predictive", "sample_stats")
GROUPS = {*SAMPLED, "observed_data", "constant_data"}


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    """The demo's estimate (small sampler settings), its posterior.nc and summary.json."""
    study = load_study(DEMO)
    result, _ = estimate(study, seed=5, settings=SamplerSettings(target_ess=200), grid=False)
    folder = tmp_path_factory.mktemp("nc")
    write_netcdf(result, folder / "posterior.nc", result.log_prob)
    (folder / "summary.json").write_text(dumps(result.summary), encoding="utf-8")
    summary = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    return result, folder / "posterior.nc", summary


@pytest.fixture
def tree(written):
    opened = xr.open_datatree(written[1], engine="h5netcdf")
    yield opened
    opened.close()


def test_every_group_equals_the_arviz_datatree(written, tree):
    result, _, _ = written
    reference = to_datatree(result, result.log_prob)
    assert set(tree.children) == set(reference.children) == GROUPS, (
        f"groups: posterior.nc {sorted(tree.children)}, arviz_base tree "
        f"{sorted(reference.children)}, expected {sorted(GROUPS)}")
    for group in reference.children:
        # values, dims, coordinates and variable attributes; the group attributes differ
        # only in creation time
        xr.testing.assert_identical(tree[group].to_dataset().drop_attrs(deep=False),
                                    reference[group].to_dataset().drop_attrs(deep=False))
        dims = list(tree[group].attrs["sample_dims"])
        expected = list(reference[group].attrs["sample_dims"])
        assert dims == expected, f"group {group}: sample_dims {dims}, arviz_base {expected}"


def test_every_sampled_group_is_on_the_posteriors_chain_and_draw(written, tree):
    result, _, summary = written
    posterior = tree["posterior"].to_dataset()
    shape = (summary["diagnostics"]["ensembles"],
             summary["diagnostics"]["draws"] // summary["diagnostics"]["ensembles"])
    assert (posterior.sizes["chain"], posterior.sizes["draw"]) == shape, (
        f"posterior (chain, draw) {dict(posterior.sizes)}; summary.json: {shape} "
        "(chains = ensembles, docs/reports.md)")
    for group in SAMPLED:
        data = tree[group].to_dataset()
        # xarray's exact join is what arviz's predictive plots need (LIBRARIES.md)
        xr.align(posterior, data, join="exact", exclude=["observation"])
        for name, variable in data.data_vars.items():
            assert variable.dims[:2] == ("chain", "draw"), (
                f"{group}.{name} dims {variable.dims}: must start with (chain, draw)")


def test_one_statistic_along_the_observations_counts_as_integers(written, tree):
    result, _, _ = written
    labels = [o.label for o in result.study.observations]
    for group in ("log_likelihood", "posterior_predictive", "observed_data"):
        data = tree[group].to_dataset()
        assert list(data.data_vars) == ["statistic"], (
            f"{group} must hold one variable 'statistic' (az.loo needs one log_likelihood "
            f"variable); has {list(data.data_vars)}")
        assert list(data["observation"].values) == labels, (
            f"{group} observation coordinate {list(data['observation'].values)}; "
            f"study labels {labels}")
    observed = tree["observed_data"]["statistic"]
    assert observed.dims == ("observation",), f"observed_data dims {observed.dims}: no stray dims"
    # the demo's statistics are counts: 19 affected births, 27 children (data_demo file)
    assert observed.dtype.kind == "i" and list(observed.values) == [19, 27], (
        f"observed counts {observed.values!r} ({observed.dtype}); the study has 19 and 27")
    replicated = tree["posterior_predictive"]["statistic"]
    assert replicated.dtype.kind == "i", f"replicated counts stored as {replicated.dtype}"
    ll = tree["log_likelihood"]["statistic"].values
    np.testing.assert_array_equal(ll, result.log_likelihood,
                                  err_msg="log_likelihood must be the sampler's per-observation "
                                          "columns in the posterior's (chain, draw) order")


def test_constant_data_holds_fixed_values_and_descriptors(written, tree):
    result, _, _ = written
    constant = tree["constant_data"]
    # the demo file fixes h = 1.0; F, nu default to 0 and alpha to 1 (docs/files.md)
    values = {n: float(constant[n].values) for n in ("h", "F", "nu", "alpha")}
    assert values == {"h": 1.0, "F": 0.0, "nu": 0.0, "alpha": 1.0}, (
        f"constant_data fixed values {values}; study: h = 1, defaults F = nu = 0, alpha = 1")
    assert list(constant["kind"].values) == ["registry", "fertility"], (
        f"constant_data.kind {list(constant['kind'].values)}; the demo's two kinds")
    for key in ("title", "inheritance", "model", "interval"):
        assert constant.attrs[key] == tree.attrs[key] == getattr(result.study, key), (
            f"constant_data / root attribute {key}: {constant.attrs.get(key)!r}")


def test_derived_quantities_are_in_the_posterior(written, tree):
    result, _, summary = written
    posterior = tree["posterior"]
    missing = [k for k in summary["derived"] if k not in posterior]
    assert not missing, f"summary.json derived {missing} are not in the posterior group"
    # Haldane's approximation for a dominant allele, q_hat ~ mu / (h s), error of order
    # q_hat itself (Haldane 1927, "A mathematical theory of natural and artificial
    # selection, part V"; Crow & Kimura 1970, An Introduction to Population Genetics
    # Theory, ch. 6); here q_hat is about 5e-5, so 1e-3 relative is ample.
    approx = posterior["mu"].values / posterior["s"].values
    np.testing.assert_allclose(posterior["q_hat"].values, approx, rtol=1e-3,
                               err_msg="q_hat in posterior.nc vs mu / (h s), h = 1")


def test_units_and_long_name_on_every_variable(tree):
    for group in GROUPS:
        data = tree[group].to_dataset()
        for name, variable in data.variables.items():
            assert variable.attrs.get("long_name"), f"{group}.{name} has no long_name"
            if variable.dtype.kind in "iuf":
                assert variable.attrs.get("units"), f"{group}.{name} has no units"
    # mutation rates per gene copy per generation (docs/model.md)
    assert tree["posterior"]["mu"].attrs["units"] == "per gene copy per generation"
    assert tree["observed_data"]["statistic"].attrs["units"] == "count"


def test_attributes_carry_title_and_caution(written, tree):
    result, _, _ = written
    # docs/reports.md: every report carries the caution
    caution = "research estimate, not a clinical or genetic-counselling result"
    assert tree.attrs["caution"] == caution, f"caution attribute: {tree.attrs.get('caution')!r}"
    assert tree.attrs["title"] == result.study.title, f"title attribute {tree.attrs['title']!r}"


def test_summary_json_diagnostics_equal_arviz_on_the_stored_draws(written, tree):
    az = pytest.importorskip("arviz")
    _, _, summary = written
    names = [n for n, p in summary["parameters"].items() if not p["fixed"]]
    for name in names:
        draws = tree["posterior"][name]
        p = summary["parameters"][name]
        theirs = {
            "ess_bulk": float(az.ess(draws, method="bulk")),
            # the 5 % and 95 % quantiles of Vehtari et al. (2021); arviz's own default is
            # its rcParams["stats.ci_prob"] (0.89), so the interval is given explicitly
            "ess_tail": float(az.ess(draws, method="tail", prob=(0.05, 0.95))),
            "r_hat": float(az.rhat(draws)),
        }
        for key, value in theirs.items():
            assert p[key] == pytest.approx(value, rel=1e-10), (
                f"{name} {key}: summary.json {p[key]!r}, arviz on posterior.nc {value!r}")
    with az.rc_context({"stats.ci_prob": 0.95}):
        table = az.summary(tree, var_names=names, round_to="none")
    for name in names:
        for key in ("ess_bulk", "ess_tail", "r_hat"):
            assert summary["parameters"][name][key] == pytest.approx(
                float(table.loc[name, key]), rel=1e-10), (
                f"{name} {key}: summary.json vs az.summary of posterior.nc")


# each observation is a whole data set, so leaving one out moves the posterior far and
# PSIS warns of large Pareto k (docs/reports.md); the check here is that loo reads the file
@pytest.mark.filterwarnings("ignore:Estimated shape parameter of Pareto")
def test_loo_reads_the_pointwise_log_likelihood(written, tree):
    az = pytest.importorskip("arviz")
    result, _, _ = written
    loo = az.loo(tree, pointwise=True)
    n = len(result.study.observations)
    assert loo.n_data_points == n, f"az.loo saw {loo.n_data_points} observations, study has {n}"
    # elpd_loo is a sum of n log predictive densities, each at most the log-likelihood's
    # largest value over draws (Vehtari et al. 2017, eq. 4: a weighted mean of likelihoods)
    ll = tree["log_likelihood"]["statistic"].values.reshape(-1, n)
    assert np.isfinite(loo.elpd) and loo.elpd <= ll.max(axis=0).sum(), (
        f"elpd_loo {loo.elpd} must be finite and at most {ll.max(axis=0).sum()}")


@pytest.mark.filterwarnings("ignore:Variables statistic in")  # counts: "look discrete"
@pytest.mark.filterwarnings("ignore:Estimated shape parameter of Pareto")
def test_arviz_predictive_plots_draw_from_the_file(tree, tmp_path):
    az = pytest.importorskip("arviz")
    matplotlib = pytest.importorskip("matplotlib")
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    try:
        for plot in ("plot_ppc_pit", "plot_ppc_dist", "plot_ppc_rootogram", "plot_loo_pit"):
            collection = getattr(az, plot)(tree, backend="matplotlib")
            collection.savefig(tmp_path / f"{plot}.png")
            size = (tmp_path / f"{plot}.png").stat().st_size
            assert size > 1000, f"az.{plot} on posterior.nc wrote {size} bytes"
    finally:
        plt.close("all")  # arviz draws through pyplot; later tests count open figures


def test_writing_does_not_import_arviz_or_xarray(tmp_path):
    """The estimate command must not pay for arviz/xarray imports (issue acceptance)."""
    code = (
        "import sys\n"
        "from infer.files.study import load_study\n"
        "from infer.jobs.estimate.pipeline import estimate\n"
        "from infer.inference.sampling import SamplerSettings\n"
        "from infer.reporting.netcdf import write_netcdf\n"
        f"study = load_study({str(DEMO)!r})\n"
        "r, _ = estimate(study, seed=1, settings=SamplerSettings(target_ess=100), grid=False)\n"
        f"write_netcdf(r, {str(tmp_path / 'p.nc')!r}, r.log_prob)\n"
        "print(sorted(m for m in ('arviz', 'arviz_base', 'xarray', 'dask') if m in sys.modules))\n"
    )
    done = run_python(code)
    assert done.returncode == 0, f"the import check failed in the child; {done}"
    assert done.stdout.strip() == "[]", (
        f"writing posterior.nc imported {done.stdout.strip()}; it must use h5netcdf alone")
