"""The drift study beside its deterministic twin (infer/jobs/estimate/drift_comparison.py),
and every parameter a model accepts with a prior through the whole of ``qhat estimate``.

References: the complete-recessive balance q_hat = sqrt(mu/s) (Haldane 1927, Proc. Camb.
Phil. Soc. 23:838, from memory; Crow & Kimura 1970, *An Introduction to Population Genetics
Theory*, ch. 6, from memory), exact for this life cycle when h = F = nu = 0 (derived in
test_ne_with_a_prior_is_left_out_and_said_so); the study
parser (a deterministic study written out by hand is the reference twin); the study
files' own prior bounds (docs/files.md, 'Parameters and priors').
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from infer.files.study import parse_study
from infer.jobs.estimate.drift_comparison import (
    compare_drift_with_deterministic,
    deterministic_twin,
)
from infer.model.posterior import Model

LOG_UNIFORM = "log-uniform"
NE_PRIOR = {"prior": LOG_UNIFORM, "low": 20, "high": 80}
#: the drift demo (data_demo/kestrel-captive-drift.toml), nu near 0 so that the closed form
#: q_hat = sqrt(mu/s) holds to 1e-9
COUNTS = {"label": "genotyped animals", "kind": "genotype-count", "AA": 112, "Aa": 7, "aa": 0}
NE_ESTIMATE = {"label": "published Ne", "kind": "estimate", "parameter": "Ne", "median": 40,
               "lower": 25, "upper": 65}
MU_S = {"mu": {"prior": "log-normal", "median": 1e-5, "sigma": 1.0},
        "s": {"prior": LOG_UNIFORM, "low": 1e-3, "high": 1.0}, "h": 0.0, "nu": 1e-12}


def drift_study(parameters, observations=(COUNTS,)):
    return parse_study({"title": "drift test", "model": "drift", "parameters": parameters,
                        "observations": list(observations)}, source="drift.toml")


def fake_posterior(study, rng, n=4_000):
    """Draws standing in for a drift posterior: the prior, with Ne moved to around 60 so that
    its median differs from the prior's (40)."""
    draws = {name: study.parameters[name].sample(rng, n) for name in study.free}
    if "Ne" in draws:
        draws["Ne"] = rng.uniform(55.0, 65.0, n)
    return draws


def test_twin_drops_ne_and_the_observations_that_read_only_ne():
    """The twin's log posterior equals that of the same study written by hand as a
    deterministic study without Ne and without the estimate of Ne (the parser's model)."""
    study = drift_study({**MU_S, "Ne": NE_PRIOR}, (COUNTS, NE_ESTIMATE))
    twin = deterministic_twin(study)
    assert twin.model == "deterministic" and "Ne" not in twin.free, (
        f"the twin must be deterministic with Ne not free; got {twin.model}, {twin.free}")
    assert [o.label for o in twin.observations] == ["genotyped animals"], (
        "the twin must keep the counts and drop the estimate of Ne (it reads only Ne)")
    by_hand = parse_study({"title": "by hand", "parameters": MU_S, "observations": [COUNTS]},
                          source="by-hand.toml")
    z = np.random.default_rng(3).normal(size=(50, 2))
    ours, reference = Model(twin).log_posterior(z), Model(by_hand).log_posterior(z)
    np.testing.assert_allclose(ours, reference, rtol=1e-12, err_msg=(
        "the twin's log posterior must be that of the hand-written deterministic study"))


@pytest.mark.parametrize("observations", [(COUNTS,), (COUNTS, NE_ESTIMATE)],
                         ids=["Ne prior", "Ne prior and an estimate of Ne"])
def test_ne_with_a_prior_is_left_out_and_said_so(observations):
    """Ne free (the failure was KeyError 'Ne'; with an estimate of Ne, 'no mass on the
    grid'): the comparison covers mu and s, says Ne is left out, and 4·Ne·q_hat uses the
    drift posterior median of Ne with q_hat = sqrt(mu/s) at the drift medians.

    Derived: with h = F = nu = 0 and census at birth, selection gives
    q_s = q(1 - sq)/(1 - sq²) and mutation q' = q_s + mu(1 - q_s); q' = q reduces to
    s q²(1 - q) = mu(1 - q), so q = sqrt(mu/s) exactly (Haldane 1927).
    """
    study = drift_study({**MU_S, "Ne": NE_PRIOR}, observations)
    rng = np.random.default_rng(8)
    posterior = fake_posterior(study, rng)
    c = compare_drift_with_deterministic(study, posterior, rng)
    assert list(c["deterministic"]) == ["mu", "s"] == list(c["drift"]) == list(c["changes"]), (
        f"only the parameters free under both models are compared; got {list(c['drift'])}")
    assert c["left_out"]["parameters"] == ["Ne"], c["left_out"]
    assert "The deterministic model has no Ne: Ne" in c["statement"], c["statement"]
    assert "left out of the comparison" in c["statement"], c["statement"]
    if len(observations) == 2:
        assert c["left_out"]["observations"] == ["published Ne"], c["left_out"]
        assert '"published Ne"' in c["statement"], c["statement"]
    median = {name: float(np.median(draws)) for name, draws in posterior.items()}
    q = math.sqrt(median["mu"] / median["s"])
    assert c["four_Ne_q_hat"] == pytest.approx(4 * median["Ne"] * q, rel=1e-6), (
        "4·Ne·q_hat must use the drift posterior median of Ne (about 60, not the prior's 40) "
        "and sqrt(mu/s) at the drift medians (Haldane 1927)")
    assert f"Ne = {median['Ne']:.3g}, posterior median" in c["statement"], c["statement"]


def test_ne_the_only_free_parameter_leaves_nothing_to_compare():
    """Only Ne free: the twin has no free parameter; no refit, a plain statement."""
    study = drift_study({**MU_S, "mu": 1e-5, "s": 0.2, "Ne": NE_PRIOR})
    rng = np.random.default_rng(2)
    c = compare_drift_with_deterministic(study, fake_posterior(study, rng), rng)
    assert c["deterministic"] == {} and c["changes"] == {}, c
    assert "No parameter is free under both models" in c["statement"], c["statement"]
    expected = 4 * 60.0 * math.sqrt(1e-5 / 0.2)  # Ne draws centred on 60; Haldane 1927
    assert c["four_Ne_q_hat"] == pytest.approx(expected, rel=0.01), c["four_Ne_q_hat"]


# ------------------------------------------------------------------ every prior, whole pipeline

UNIFORM_01 = {"prior": "uniform", "low": 0.0, "high": 1.0}
DRIFT_BASE = ({"mu": {"prior": "log-normal", "median": 1e-5, "sigma": 1.0},
               "s": {"prior": LOG_UNIFORM, "low": 1e-3, "high": 1.0}, "h": 0.0, "Ne": 40,
               "nu": 1e-7}, [COUNTS])
DETERMINISTIC_BASE = ({"mu": {"prior": LOG_UNIFORM, "low": 1e-8, "high": 1e-3}, "s": 0.8,
                       "h": 1.0},
                      [{"kind": "affected", "affected": 19, "total": 182_400,
                        "mode": "dominant"},
                       {"kind": "sporadic", "cases": 15, "births": 182_400,
                        "mode": "dominant"}])
X_LINKED_BASE = ({"mu": {"prior": LOG_UNIFORM, "low": 1e-8, "high": 1e-3}, "s": 0.9,
                  "h": 0.0},
                 [{"kind": "affected", "affected": 22, "total": 121_500,
                   "mode": "x-linked-male"},
                  {"kind": "sporadic", "cases": 8, "births": 121_500,
                   "mode": "x-linked-male"}])
#: (model, inheritance, base, parameter, its prior); docs/files.md, 'Parameters and priors'
PRIORS = [
    ("drift", "autosomal", DRIFT_BASE, "Ne", NE_PRIOR),
    ("drift", "autosomal", DRIFT_BASE, "mu", None),
    ("drift", "autosomal", DRIFT_BASE, "s", None),
    ("drift", "autosomal", DRIFT_BASE, "h", UNIFORM_01),
    ("drift", "autosomal", DRIFT_BASE, "nu", {"prior": LOG_UNIFORM, "low": 1e-9,
                                               "high": 1e-6}),
    ("deterministic", "autosomal", DETERMINISTIC_BASE, "mu", None),
    ("deterministic", "autosomal", DETERMINISTIC_BASE, "s", UNIFORM_01),
    ("deterministic", "autosomal", DETERMINISTIC_BASE, "h", UNIFORM_01),
    ("deterministic", "autosomal", DETERMINISTIC_BASE, "F",
     {"prior": "uniform", "low": 0.0, "high": 0.1}),
    ("deterministic", "autosomal", DETERMINISTIC_BASE, "nu",
     {"prior": LOG_UNIFORM, "low": 1e-9, "high": 1e-6}),
    ("deterministic", "x-linked", X_LINKED_BASE, "alpha",
     {"prior": LOG_UNIFORM, "low": 0.5, "high": 5.0}),
]


def _bounds(spec: dict) -> tuple[float, float]:
    """The support a prior table states (log-normal: (0, inf))."""
    return (spec["low"], spec["high"]) if "low" in spec else (0.0, math.inf)


@pytest.mark.slow
@pytest.mark.parametrize(("model", "inheritance", "base", "name", "prior"), PRIORS,
                         ids=[f"{m}/{i}/{n}" for m, i, _, n, _ in PRIORS])
def test_every_accepted_prior_runs_the_whole_estimate(tmp_path, model, inheritance, base,
                                                      name, prior):
    """estimate + write_report with a prior on each parameter the model accepts: no crash,
    every file written, the parameter reported as free with its median inside the support
    the study file gives it, and (drift, Ne free) the comparison saying Ne is left out.

    Small sampler settings keep the matrix quick; convergence is not the point here.
    """
    from infer.inference.sampling import SamplerSettings
    from infer.jobs.estimate.pipeline import estimate
    from infer.reporting.report import write_report

    parameters, observations = base
    parameters = dict(parameters)
    if prior is not None:
        parameters[name] = prior
    spec = parameters[name]
    study = parse_study({"title": f"prior on {name}", "model": model,
                         "inheritance": inheritance, "parameters": parameters,
                         "observations": observations}, source=f"{name}.toml")
    assert name in study.free, f"{name} must be free in this case; free: {study.free}"
    settings = SamplerSettings(walkers=16, ensembles=2, max_steps=200, target_ess=50)
    # Wright's density costs a quadrature per grid point: no grid under drift
    result, timing = estimate(study, seed=1, settings=settings, grid=model != "drift")
    out = write_report(result, tmp_path / "report", timing=timing)
    for file in ("summary.json", "report.md", "posterior.nc", "marginals.png", "trace.png"):
        assert (out / file).is_file(), f"{file} missing from the report folder"
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    entry = summary["parameters"][name]
    low, high = _bounds(spec)
    assert entry["fixed"] is False and low <= entry["median"] <= high, (
        f"{name}: free, with its posterior median inside the prior's support [{low}, {high}] "
        f"(the study file); got {entry}")
    text = (out / "report.md").read_text(encoding="utf-8")
    assert f"| {name} |" in text, f"report.md has no row for {name}"
    if model == "drift":
        comparison = summary["drift_comparison"]
        assert "Ne" not in comparison["deterministic"], comparison["deterministic"]
        if name == "Ne":
            assert "The deterministic model has no Ne" in comparison["statement"], comparison
