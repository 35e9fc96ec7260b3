"""The estimate pipeline: sampler against the exact grid, classic estimators in the
large-sample limit, and the determinism of the summary."""

import numpy as np
import pytest

from infer.estimate.pipeline import estimate
from infer.inference.grid import compare_with_draws, grid_posterior
from infer.model.posterior import Model
from infer.files.study import parse_study

LOG_MU = {"prior": "log-uniform", "low": 1e-8, "high": 1e-3}
UNIFORM = {"prior": "uniform", "low": 0.0, "high": 1.0}


def study(parameters, observations, inheritance="autosomal", seed=5):
    document = {"title": "test study", "inheritance": inheritance, "parameters": parameters,
                "observations": observations, "sampler": {"seed": seed}}
    return parse_study(document, source="test.toml")


# One- and two-parameter studies of every observation kind (the sampler must match the
# exact quadrature posterior: median within 2 %, interval ends within 5 %).
CASES = {
    "allele-count/1": ({"mu": LOG_MU, "s": 0.2, "h": 0.5},
                       [{"kind": "allele-count", "observed": 30, "sampled": 200_000}]),
    "allele-count/2": ({"mu": LOG_MU, "s": {"prior": "beta", "a": 4, "b": 4}, "h": 0.5},
                       [{"kind": "allele-count", "observed": 30, "sampled": 200_000}]),
    "genotype-count/1": ({"mu": LOG_MU, "s": 1.0, "h": 0.0, "F": 0.02},
                         [{"kind": "genotype-count", "AA": 9_980, "Aa": 19, "aa": 1}]),
    "genotype-count/2": ({"mu": LOG_MU, "s": {"prior": "beta", "a": 8, "b": 2}, "h": 0.0,
                          "F": 0.02},
                         [{"kind": "genotype-count", "AA": 9_980, "Aa": 19, "aa": 1}]),
    "affected/1": ({"mu": LOG_MU, "s": 0.8, "h": 1.0},
                   [{"kind": "affected", "affected": 19, "total": 182_400,
                     "mode": "dominant"}]),
    "affected/2": ({"mu": LOG_MU, "s": UNIFORM, "h": 1.0},
                   [{"kind": "affected", "affected": 19, "total": 182_400,
                     "mode": "dominant"},
                    {"kind": "sporadic", "cases": 15, "births": 182_400,
                     "mode": "dominant"}]),
    "sporadic/1": ({"mu": LOG_MU, "s": 0.8, "h": 1.0},
                   [{"kind": "sporadic", "cases": 15, "births": 182_400,
                     "mode": "dominant"}]),
    "fertility/1": ({"mu": 4e-5, "s": UNIFORM, "h": 1.0},
                    [{"kind": "fertility", "affected_people": 64, "affected_children": 27,
                      "reference_people": 310, "reference_children": 655,
                      "mode": "dominant"}]),
    "fertility/2": ({"mu": LOG_MU, "s": UNIFORM, "h": 1.0},
                    [{"kind": "fertility", "affected_people": 64, "affected_children": 27,
                      "reference_people": 310, "reference_children": 655,
                      "mode": "dominant"},
                     {"kind": "affected", "affected": 19, "total": 182_400,
                      "mode": "dominant"}]),
    "estimate/1": ({"mu": LOG_MU, "s": 0.5, "h": 0.5},
                   [{"kind": "estimate", "parameter": "mu", "median": 2e-5, "lower": 1e-5,
                     "upper": 4e-5}]),
    "estimate/2": ({"mu": LOG_MU, "s": UNIFORM, "h": 0.5},
                   [{"kind": "estimate", "parameter": "mu", "median": 2e-5, "lower": 1e-5,
                     "upper": 4e-5},
                    {"kind": "estimate", "parameter": "s", "median": 0.3, "lower": 0.15,
                     "upper": 0.6}]),
    "x-linked/2": ({"mu": LOG_MU, "s": UNIFORM, "h": 0.0},
                   [{"kind": "affected", "affected": 22, "total": 121_500,
                     "mode": "x-linked-male"},
                    {"kind": "fertility", "affected_people": 41, "affected_children": 13,
                     "reference_people": 205, "reference_children": 418,
                     "mode": "x-linked-male"}]),
}


def _run(name):
    parameters, observations = CASES[name]
    inheritance = "x-linked" if name.startswith("x-linked") else "autosomal"
    return estimate(study(parameters, observations, inheritance))[0]


@pytest.mark.parametrize("name", ["affected/2", "sporadic/1"])
def test_sampler_matches_grid_quick(name):
    result = _run(name)
    assert result.summary["diagnostics"]["converged"]
    assert result.summary["grid"]["agrees"], result.summary["grid"]


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(set(CASES) - {"affected/2", "sporadic/1"}))
def test_sampler_matches_grid_every_kind(name):
    result = _run(name)
    assert result.summary["diagnostics"]["converged"]
    check = compare_with_draws(result.grid, result.posterior, 0.95)
    assert check["agrees"], check


def _median(st, name):
    return grid_posterior(Model(st)).quantiles[name]["median"]


def test_direct_method_large_sample():
    """Direct method: mu = cases / (2 births) for a dominant disorder (Vogel & Motulsky,
    *Human Genetics*; Mørch 1941 used it for achondroplasia)."""
    cases, births = 4_000, 50_000_000
    st = study({"mu": LOG_MU, "s": 0.8, "h": 1.0},
               [{"kind": "sporadic", "cases": cases, "births": births, "mode": "dominant"}])
    assert _median(st, "mu") == pytest.approx(cases / (2 * births), rel=0.01)


def _fertility(affected_children, reference_children, mode, people=100_000):
    return {"kind": "fertility", "affected_people": people,
            "affected_children": affected_children, "reference_people": people,
            "reference_children": reference_children, "mode": mode}


@pytest.mark.parametrize("inheritance,mode,h,divisor", [
    ("autosomal", "dominant", 1.0, 2.0),
    ("autosomal", "recessive", 0.0, 1.0),
    ("x-linked", "x-linked-male", 0.0, 3.0),
])
def test_indirect_method_large_sample(inheritance, mode, h, divisor):
    """Haldane's indirect method, x = incidence among births (male births for X-linked),
    f = relative fertility of affected people: mu = (1 - f) x / 2 for a dominant,
    mu = (1 - f) x for a recessive, mu = (1 - f) x / 3 for X-linked males (Haldane 1935,
    J. Genet. 31:317; Vogel & Motulsky, *Human Genetics*). Large samples make the
    posterior median approach the point estimate."""
    affected, total = 2_000, 40_000_000
    x = affected / total
    f = 0.25
    observations = [
        {"kind": "affected", "affected": affected, "total": total, "mode": mode},
        _fertility(int(f * 200_000), 200_000, mode),
    ]
    st = study({"mu": LOG_MU, "s": UNIFORM, "h": h}, observations, inheritance)
    expected = (1 - f) * x / divisor
    assert _median(st, "mu") == pytest.approx(expected, rel=0.03)
    assert _median(st, "s") == pytest.approx(1 - f, rel=0.01)


def test_same_seed_same_summary():
    from infer.reporting.jsonout import dumps

    parameters, observations = CASES["affected/2"]
    a = estimate(study(parameters, observations, seed=9))[0]
    b = estimate(study(parameters, observations, seed=9))[0]
    assert dumps(a.summary) == dumps(b.summary)


def test_frequency_data_alone_identify_only_the_ratio():
    """Common practice (Crow & Kimura 1970): allele frequencies alone fix q ~ mu/(hs),
    not mu and s separately; the report must say so."""
    result = _run("allele-count/2")
    text = " ".join(result.summary["identifiability"])
    assert "mu/(h*s)" in text or "mu/s" in text
    assert result.summary["parameters"]["s"]["contraction"] < 0.5


def test_predictive_p_value_flags_an_impossible_observation():
    # 400 sporadic cases in 10,000 births need mu = 0.02, beyond a prior capped at 1e-4;
    # the posterior sits at the cap and cannot reproduce the count (p < 0.01).
    st = study({"mu": {"prior": "log-uniform", "low": 1e-8, "high": 1e-4}, "s": 0.8,
                "h": 1.0},
               [{"kind": "sporadic", "cases": 400, "births": 10_000, "mode": "dominant"}])
    result = estimate(st)[0]
    assert result.summary["predictive"][0]["p_value"] < 0.01


def test_summary_has_the_contract_keys():
    result = _run("affected/2")
    s = result.summary
    for key in ("interval", "inheritance", "model", "parameters", "derived", "diagnostics",
                "predictive"):
        assert key in s
    for key in ("median", "mean", "sd", "lower", "upper", "ess_bulk", "ess_tail", "r_hat",
                "prior_lower", "prior_upper", "contraction", "fixed"):
        assert key in s["parameters"]["mu"]
    for key in ("converged", "walkers", "steps", "burn_in", "autocorr_time"):
        assert key in s["diagnostics"]
    for key in ("label", "kind", "observed", "expected_median", "p_value"):
        assert key in s["predictive"][0]
    assert {"q_hat", "load"} <= set(s["derived"])
    assert np.isfinite(s["derived"]["q_hat"]["median"])
