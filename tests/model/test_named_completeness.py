"""Each registry's own completeness (``completeness = "completeness_<tag>"``).

A registry that names its own completeness has exactly the likelihood it would have with
the study's completeness at that value (the registry multinomial, tested against
scipy.stats.multinomial in tests/model/test_registry.py), and two registries read two
independent values. The capture-recapture count informs the one it names: its
likelihood peaks near Chapman's estimate (Chapman 1951) of that registry's cases.
"""

import numpy as np

from infer.files.study import parse_study
from infer.model.posterior import Model

NAMED = """\
title = "Two registries"
inheritance = "autosomal"

[parameters]
mu = { prior = "log-uniform", low = 1e-7, high = 1e-3 }
s = 0.6
h = 1.0
completeness_north = { prior = "uniform", low = 0.3, high = 1.0 }
completeness_south = { prior = "beta", a = 16, b = 4 }

[[observations]]
kind = "registry"
births = 200000
affected = 50
sporadic = 30
mode = "dominant"
completeness = "completeness_north"

[[observations]]
kind = "capture-recapture"
first_only = 12
second_only = 9
both = 29
completeness = "completeness_north"

[[observations]]
kind = "registry"
births = 150000
affected = 48
sporadic = 29
mode = "dominant"
completeness = "completeness_south"
"""

SHARED = """\
title = "One registry, the study's completeness"
inheritance = "autosomal"

[parameters]
mu = { prior = "log-uniform", low = 1e-7, high = 1e-3 }
s = 0.6
h = 1.0
completeness = { prior = "uniform", low = 0.3, high = 1.0 }

[[observations]]
kind = "registry"
births = BIRTHS
affected = AFFECTED
sporadic = SPORADIC
mode = "dominant"
"""


def _shared(births, affected, sporadic):
    return parse_study(SHARED.replace("BIRTHS", str(births)).replace(
        "AFFECTED", str(affected)).replace("SPORADIC", str(sporadic)))


def test_each_registry_reads_its_own_completeness():
    study = parse_study(NAMED)
    assert study.free == ["mu", "completeness_north", "completeness_south"]
    model = Model(study)
    mu = np.array([5e-5, 1e-4, 2e-4])
    north, south = np.array([0.5, 0.9, 0.95]), np.array([0.8, 0.6, 0.99])
    ll = model.log_likelihoods(model.complete(
        {"mu": mu, "completeness_north": north, "completeness_south": south}, 3))
    for column, (births, affected, sporadic, c) in ((0, (200000, 50, 30, north)),
                                                     (2, (150000, 48, 29, south))):
        alone = Model(_shared(births, affected, sporadic))
        expected = alone.log_likelihoods(alone.complete({"mu": mu, "completeness": c}, 3))
        np.testing.assert_allclose(ll[:, column], expected[:, 0], rtol=1e-12)


def test_capture_recapture_informs_the_named_completeness_near_chapman():
    study = parse_study(NAMED)
    model = Model(study)
    c = np.linspace(0.5, 1.0, 2001)
    params = model.complete({"mu": np.full(c.size, 1e-4), "completeness_north": c,
                             "completeness_south": np.full(c.size, 0.8)}, c.size)
    capture = model.log_likelihoods(params)[:, 1]
    # Chapman (1951): N = (n1 + 1)(n2 + 1)/(m + 1) - 1 cases, of which 50 were found
    chapman = 50 / ((41 + 1) * (38 + 1) / (29 + 1) - 1)
    assert abs(c[np.argmax(capture)] - chapman) < 0.03
    assert study.observations[1].parameters_used() == {"completeness_north"}


def test_a_published_estimate_of_a_registry_completeness_is_read_on_the_logit_scale():
    # logit-normal density of the published median (docs/files.md, `estimate`); checked
    # with scipy.stats.norm on logit(median) - logit(theta), sd from the 95 % interval
    from scipy import special, stats

    text = NAMED + """
[[observations]]
kind = "estimate"
parameter = "completeness_south"
median = 0.8
lower = 0.6
upper = 0.92
"""
    study = parse_study(text)
    model = Model(study)
    theta = np.array([0.7, 0.85])
    params = model.complete({"mu": np.full(2, 1e-4), "completeness_north": np.full(2, 0.9),
                             "completeness_south": theta}, 2)
    ll = model.log_likelihoods(params)[:, 3]
    sd = (special.logit(0.92) - special.logit(0.6)) / (2 * stats.norm.ppf(0.975))
    expected = stats.norm.logpdf(special.logit(0.8), special.logit(theta), sd)
    np.testing.assert_allclose(ll, expected, rtol=1e-10)
