"""The estimate pipeline: sampler against the exact grid, classic estimators in the
large-sample limit, and the determinism of the summary.

References: the exact quadrature posterior (infer.inference.exact, itself checked against
scipy.stats closed forms in tests/inference/test_exact.py); the direct and indirect
(Haldane) estimators of the mutation rate (Haldane 1935, J. Genet. 31:317; Vogel &
Motulsky, *Human Genetics*; REFERENCES.md).
"""

import numpy as np
import pytest

from infer.jobs.estimate.pipeline import estimate
from infer.files.study import parse_study
from infer.inference.exact import exact_posterior, verify_draws
from infer.model.posterior import Model

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


def _fit(name):
    """The estimate of CASES[name] (x-linked when the name says so), seed 5."""
    parameters, observations = CASES[name]
    inheritance = "x-linked" if name.startswith("x-linked") else "autosomal"
    return estimate(study(parameters, observations, inheritance))[0]


@pytest.mark.parametrize("name", ["affected/2", "sporadic/1"])
def test_sampler_matches_grid_quick(name):
    result = _fit(name)
    diagnostics = result.summary["diagnostics"]
    assert diagnostics["converged"], f"{name}: the sampler did not converge: {diagnostics}"
    assert result.summary["grid"]["agrees"], (
        f"{name}: sampler median/interval vs the exact grid (2 % / 5 %): "
        f"{result.summary['grid']}")


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(set(CASES) - {"affected/2", "sporadic/1"}))
def test_sampler_matches_grid_every_kind(name):
    result = _fit(name)
    diagnostics = result.summary["diagnostics"]
    assert diagnostics["converged"], f"{name}: the sampler did not converge: {diagnostics}"
    check = verify_draws(result.grid, result.posterior, 0.95)
    assert check["verified"], f"{name}: sampler vs the exact posterior: {check['messages']}"


def _median(st, name):
    return exact_posterior(Model(st)).quantiles[name]["median"]


def test_direct_method_large_sample():
    """Direct method: mu = cases / (2 births) for a dominant disorder (Vogel & Motulsky,
    *Human Genetics*; Mørch 1941 used it for achondroplasia)."""
    cases, births = 4_000, 50_000_000
    st = study({"mu": LOG_MU, "s": 0.8, "h": 1.0},
               [{"kind": "sporadic", "cases": cases, "births": births, "mode": "dominant"}])
    median, expected = _median(st, "mu"), cases / (2 * births)
    assert median == pytest.approx(expected, rel=0.01), (
        f"posterior median of mu {median:.5g} vs the direct estimate cases/(2 births) = "
        f"{expected:.5g} (1 %)")


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
    median = _median(st, "mu")
    assert median == pytest.approx(expected, rel=0.03), (
        f"{mode}: posterior median of mu {median:.5g} vs Haldane's (1 - f) x / {divisor:g} = "
        f"{expected:.5g} (3 %)")
    median = _median(st, "s")
    assert median == pytest.approx(1 - f, rel=0.01), (
        f"{mode}: posterior median of s {median:.5g} vs 1 - f = {1 - f} (1 %)")


def test_same_seed_same_summary():
    from infer.reporting.jsonout import dumps

    parameters, observations = CASES["affected/2"]
    a = estimate(study(parameters, observations, seed=9))[0]
    b = estimate(study(parameters, observations, seed=9))[0]
    # docs/reports.md: the summary depends on the study and the seed alone
    assert dumps(a.summary) == dumps(b.summary), "the same study and seed gave two summaries"


def test_frequency_data_alone_identify_only_the_ratio():
    """Common practice (Crow & Kimura 1970): allele frequencies alone fix q ~ mu/(hs),
    not mu and s separately; the report must say so."""
    result = _fit("allele-count/2")
    text = " ".join(result.summary["identifiability"])
    assert "mu/(h*s)" in text or "mu/s" in text, (
        f"the identifiability notes must name the ratio mu/(hs) or mu/s: {text!r}")
    contraction = result.summary["parameters"]["s"]["contraction"]
    assert contraction < 0.5, (
        f"allele counts alone cannot pin s: its contraction must stay below 0.5, got "
        f"{contraction}")


def test_predictive_p_value_flags_an_impossible_observation():
    # 400 sporadic cases in 10,000 births need mu = 0.02, beyond a prior capped at 1e-4;
    # the posterior sits at the cap and cannot reproduce the count (p < 0.01).
    st = study({"mu": {"prior": "log-uniform", "low": 1e-8, "high": 1e-4}, "s": 0.8,
                "h": 1.0},
               [{"kind": "sporadic", "cases": 400, "births": 10_000, "mode": "dominant"}])
    result = estimate(st)[0]
    check = result.summary["predictive"][0]
    assert check["p_value"] < 0.01, (
        f"400 cases in 10,000 births need mu = 0.02 > the prior cap 1e-4: the predictive "
        f"p-value must be < 0.01; got {check}")


def test_summary_has_the_contract_keys():
    result = _fit("affected/2")
    s = result.summary
    # the summary.json contract of docs/reports.md
    contract = {
        "summary": (s, ("interval", "inheritance", "model", "parameters", "derived",
                        "diagnostics", "predictive")),
        "parameters.mu": (s["parameters"]["mu"],
                          ("median", "mean", "sd", "lower", "upper", "ess_bulk", "ess_tail",
                           "r_hat", "prior_lower", "prior_upper", "contraction", "fixed")),
        "diagnostics": (s["diagnostics"],
                        ("converged", "walkers", "steps", "burn_in", "autocorr_time")),
        "predictive[0]": (s["predictive"][0],
                          ("label", "kind", "observed", "expected_median", "p_value")),
        "derived": (s["derived"], ("q_hat", "load")),
    }
    for where, (table, keys) in contract.items():
        missing = [key for key in keys if key not in table]
        assert not missing, f"summary {where} lacks {missing}; has {sorted(table)}"
    q = s["derived"]["q_hat"]["median"]
    assert np.isfinite(q), f"derived q_hat median must be finite; got {q}"
    # the data: 19 affected and 15 sporadic cases in 182,400 births (CASES["affected/2"])
    observed = [p["observed"] for p in s["predictive"]]
    assert observed == [19, 15], f"predictive 'observed' must be the study's counts: {observed}"
