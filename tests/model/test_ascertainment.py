"""Penetrance, completeness and phenocopies as parameters; capture-recapture; estimates of
any parameter (issue: real registries)."""

import numpy as np
import pytest
from scipy import stats

from infer.core import balance
from infer.errors import InputError
from infer.files.study import parse_study
from infer.model.balance_state import BalanceState
from infer.model.posterior import Model

HEAD = """title = "invented ascertainment study"
inheritance = "autosomal"
[parameters]
mu = { prior = "log-uniform", low = 1e-7, high = 1e-3 }
s = 0.6
h = 1.0
"""


def _study(parameters: str, observations: str):
    return parse_study(HEAD + parameters + observations, source="t.toml")


ROW = {"mu": np.array([4e-5, 1e-4]), "s": np.array([0.6, 0.3]), "h": np.array([1.0, 1.0]),
       "F": np.zeros(2), "nu": np.zeros(2), "Ne": np.full(2, np.inf), "alpha": np.ones(2)}


def test_affected_count_is_binomial_on_completeness_times_penetrance_share_plus_phenocopies():
    study = _study("penetrance = 0.8\ncompleteness = 0.7\nphenocopy = 2e-5\n", """
[[observations]]
kind = "affected"
affected = 40
total = 200000
mode = "dominant"
""")
    obs = study.observations[0]
    params = {**ROW, "penetrance": np.full(2, 0.8), "completeness": np.full(2, 0.7),
              "phenocopy": np.full(2, 2e-5)}
    state = BalanceState.deterministic(params, "autosomal")
    q = balance.autosomal_balance(ROW["mu"], ROW["s"], ROW["h"]).q_hat
    genotype = 1 - (1 - q) ** 2            # Aa + aa under Hardy-Weinberg (common practice)
    expected = stats.binom.logpmf(40, 200000, 0.7 * (0.8 * genotype + 2e-5))
    np.testing.assert_allclose(obs.log_likelihood(state), expected, rtol=1e-10)


def test_an_observation_may_fix_its_own_completeness():
    study = _study("completeness = { prior = \"uniform\", low = 0.2, high = 1.0 }\n", """
[[observations]]
kind = "sporadic"
cases = 6
births = 100000
mode = "dominant"
completeness = 0.5
[[observations]]
kind = "sporadic"
label = "second registry"
cases = 9
births = 100000
mode = "dominant"
[[observations]]
kind = "capture-recapture"
first_only = 3
second_only = 4
both = 8
""")
    own, shared, _ = study.observations
    params = {**ROW, "completeness": np.array([0.9, 0.3])}
    # direct method (Vogel & Motulsky): 2 mu per birth, times what is counted
    np.testing.assert_allclose(own.rate(params), 0.5 * 2 * ROW["mu"])
    np.testing.assert_allclose(shared.rate(params), np.array([0.9, 0.3]) * 2 * ROW["mu"])
    assert "completeness" in Model(study).free


def test_fertility_reads_the_affected_peoples_fitness_through_the_penetrance():
    # with penetrance P, non-penetrant carriers are not selected: the genotype loses
    # P x the affected people's loss, so affected fitness is 1 - h s / P (derived in the
    # kind's docstring); the conditional binomial share A w / (A w + R)
    study = _study("penetrance = 0.9\n", """
[[observations]]
kind = "fertility"
affected_people = 50
affected_children = 20
reference_people = 100
reference_children = 220
mode = "dominant"
""")
    fertility = study.observations[0]
    params = {**ROW, "penetrance": np.full(2, 0.9)}
    w = 1 - ROW["h"] * ROW["s"] / 0.9
    share = 50 * w / (50 * w + 100)
    state = BalanceState.without_frequency(params, "autosomal")
    np.testing.assert_allclose(fertility.log_likelihood(state),
                               stats.binom.logpmf(20, 240, share), rtol=1e-10)


def test_a_retinoblastoma_like_study_reads_the_genotypes_selection():
    # invented counts: affected people have f = (20/50)/(220/100) = 0.18 of the reference
    # fertility; with penetrance 0.9 the genotype's selection is 0.9 x 0.82 = 0.74, not 0.82
    text = """title = "invented eye-tumour registry"
inheritance = "autosomal"
[parameters]
mu = 1e-5
s = { prior = "uniform", low = 0.0, high = 1.0 }
h = 1.0
penetrance = 0.9
[[observations]]
kind = "fertility"
affected_people = 500
affected_children = 200
reference_people = 1000
reference_children = 2200
mode = "dominant"
"""
    model = Model(parse_study(text, source="eye.toml"))
    s = np.linspace(0.5, 0.95, 4501)
    lp = model.log_posterior(model.to_unconstrained({"s": s}))
    assert s[np.argmax(lp)] == pytest.approx(0.9 * (1 - 200 / 500 / 2.2), abs=2e-3)


def test_penetrance_takes_a_beta_prior():
    study = _study('penetrance = { prior = "beta", a = 9, b = 1 }\n', """
[[observations]]
kind = "registry"
births = 90000
affected = 12
sporadic = 7
mode = "dominant"
""")
    model = Model(study)
    assert model.free == ["mu", "penetrance"]
    z = model.to_unconstrained({"mu": np.array([5e-5]), "penetrance": np.array([0.8])})
    assert np.isfinite(model.log_posterior(z)).all()
    assert "penetrance from its prior" in study.observations[0].describe()


def test_capture_recapture_needs_completeness_with_a_prior():
    with pytest.raises(InputError, match="completeness.*fixed.*give completeness a prior"):
        _study("", """
[[observations]]
kind = "affected"
affected = 10
total = 100000
mode = "dominant"
[[observations]]
kind = "capture-recapture"
first_only = 3
second_only = 4
both = 8
""")


def test_capture_recapture_rejects_no_cases():
    with pytest.raises(InputError, match="observations\\[1\\].both"):
        _study("completeness = { prior = \"uniform\", low = 0.2, high = 1.0 }\n", """
[[observations]]
kind = "capture-recapture"
first_only = 0
second_only = 0
both = 0
""")


def test_published_estimate_of_h_is_normal_on_the_logit_scale():
    study = parse_study("""title = "t"
[parameters]
mu = 1e-5
s = 0.5
h = { prior = "uniform", low = 0.0, high = 1.0 }
[[observations]]
kind = "estimate"
parameter = "h"
median = 0.3
lower = 0.15
upper = 0.5
""", source="t.toml")
    obs = study.observations[0]
    logit = stats.logistic.ppf
    sigma = (logit(0.5) - logit(0.15)) / (2 * stats.norm.ppf(0.975))
    h = np.array([0.2, 0.3, 0.6])
    state = BalanceState.without_frequency({**ROW, "mu": np.full(3, 1e-5), "s": np.full(3, 0.5),
                                            "h": h, "F": np.zeros(3), "nu": np.zeros(3),
                                            "Ne": np.full(3, np.inf), "alpha": np.ones(3)},
                                           "autosomal")
    np.testing.assert_allclose(obs.log_likelihood(state),
                               stats.norm.logpdf(logit(0.3), logit(h), sigma), rtol=1e-12)
