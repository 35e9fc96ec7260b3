"""Selection by sex in a study: s_male and s_female, the fertility ``sex`` key, and the
two-sex balance the frequency kinds see.

References: the conditional binomial of children of affected against reference people
(derived in infer.model.observations.fertility; checked with scipy.stats.binom); the
two-sex balance (tests/core/test_two_sex.py).
"""

import numpy as np
import pytest
from scipy import stats

from infer.core.two_sex import two_sex_balance
from infer.files.study import parse_study, study_document
from infer.model.posterior import Model

STUDY = """\
title = "Selection by sex"
inheritance = "autosomal"

[parameters]
mu = { prior = "log-uniform", low = 1e-7, high = 1e-3 }
s_male = { prior = "uniform", low = 0.0, high = 1.0 }
s_female = { prior = "uniform", low = 0.0, high = 1.0 }
h = 0.8

[[observations]]
kind = "affected"
mode = "dominant"
affected = 30
total = 100000

[[observations]]
kind = "fertility"
mode = "dominant"
sex = "male"
affected_people = 40
affected_children = 25
reference_people = 100
reference_children = 210

[[observations]]
kind = "fertility"
mode = "dominant"
affected_people = 40
affected_children = 50
reference_people = 100
reference_children = 210
"""


def _rows():
    return {"mu": np.array([2e-5, 1e-4]), "s_male": np.array([0.7, 0.2]),
            "s_female": np.array([0.1, 0.5])}


def test_study_reads_s_as_the_mean_of_the_sexes():
    study = parse_study(STUDY)
    assert study.sex_specific and study.free == ["mu", "s_male", "s_female"]
    model = Model(study)
    params = model.complete(_rows(), 2)
    np.testing.assert_allclose(params["s"], [0.4, 0.35])
    assert "s" not in study.reported_parameters


def test_fertility_of_one_sex_reads_that_sex_and_of_both_the_mean():
    study = parse_study(STUDY)
    model = Model(study)
    params = model.complete(_rows(), 2)
    ll = model.log_likelihoods(params)
    men, both = study.observations[1], study.observations[2]
    for obs, s, column in ((men, params["s_male"], 1), (both, params["s"], 2)):
        w = 1 - 0.8 * s
        share = obs.affected_people * w / (obs.affected_people * w + obs.reference_people)
        expected = stats.binom.logpmf(obs.affected_children, obs.total_children, share)
        np.testing.assert_allclose(ll[:, column], expected, rtol=1e-12)


def test_frequency_kinds_see_the_two_sex_balance():
    study = parse_study(STUDY)
    model = Model(study)
    params = model.complete(_rows(), 2)
    state = model.state(params)
    expected = two_sex_balance(params["mu"], params["s_male"], params["s_female"], 0.8)
    np.testing.assert_allclose(state.q, expected.q_hat, rtol=1e-14)
    # affected = Binomial(total, Aa + aa at q) under Hardy–Weinberg (common practice)
    q = state.q
    ll = model.log_likelihoods(params)[:, 0]
    np.testing.assert_allclose(ll, stats.binom.logpmf(30, 100000, 1 - (1 - q) ** 2),
                               rtol=1e-9)


def test_round_trip_keeps_the_sexes():
    study = parse_study(STUDY)
    again = parse_study(study_document(study))
    assert again.parameters == study.parameters
    assert [o.as_table() for o in again.observations] == [
        o.as_table() for o in study.observations]


def test_without_the_sex_pair_fertility_sex_reads_s():
    text = STUDY.replace('s_male = { prior = "uniform", low = 0.0, high = 1.0 }\n', "")
    text = text.replace('s_female = { prior = "uniform", low = 0.0, high = 1.0 }\n',
                        's = { prior = "uniform", low = 0.0, high = 1.0 }\n')
    study = parse_study(text)
    assert not study.sex_specific
    model = Model(study)
    params = model.complete({"mu": np.array([1e-5]), "s": np.array([0.3])}, 1)
    assert np.isnan(params["s_male"]).all()
    fertility = study.observations[1]
    np.testing.assert_allclose(fertility.relative_fitness(params), 1 - 0.8 * 0.3)
    assert fertility.parameters_used() == {"s", "s_male", "h"}


@pytest.mark.parametrize("sex", ["male", "female"])
def test_fertility_sex_is_described(sex):
    study = parse_study(STUDY.replace('sex = "male"', f'sex = "{sex}"'))
    assert f"dominant, {sex}" in study.observations[1].describe()


def test_reports_derive_the_mean_selection():
    from infer.jobs.estimate.results import derived_quantities

    study = parse_study(STUDY)
    model = Model(study)
    params = model.complete(_rows(), 2)
    derived = derived_quantities(model, params, model.state(params))
    np.testing.assert_allclose(derived["s_mean"], [0.4, 0.35])
