"""The log posterior of a study with a [history].

References: a recessive lethal without mutation falls as q_t = q_0/(1 + t q_0) (Haldane
1924, Trans. Camb. Phil. Soc. 23:19; common practice); allele copies in a sample are
binomial on the frequency (common practice; scipy.stats.binom as the reference); under
drift, a long constant epoch ends at Wright's stationary density (Wright 1931, Genetics
16:97), whose sample probabilities infer.core.drift.stationary computes independently.
"""

import numpy as np
from scipy import stats

from infer.files.study import parse_study
from infer.model.posterior import Model

STUDY = """\
title = "founder test"
model = "{model}"
[parameters]
mu = 1e-12
s = 1.0
h = 0.0
Ne = {Ne}
nu = {nu}
q_founder = {{ prior = "uniform", low = 0.0, high = 0.3 }}

[history]
epochs = [ {{ generations = {length} }} ]
founder = {{ founders = 40, generations_ago = {length}, frequency = "q_founder" }}
sampled = {{ "old sample" = 5 }}

[[observations]]
label = "today"
kind = "allele-count"
observed = 30
sampled = 1000

[[observations]]
label = "old sample"
kind = "allele-count"
observed = 50
sampled = 1000
"""


def _model(model="deterministic", Ne=1000, length=12):
    nu = 1e-9 if model == "drift" else 0  # the drift model needs back mutation
    return Model(parse_study(STUDY.format(model=model, Ne=Ne, length=length, nu=nu),
                             source="t.toml"))


def test_each_observation_sees_the_history_frequency_at_its_sampling_time():
    model = _model()
    q0 = np.linspace(0.02, 0.25, 7)
    ll = model.log_likelihoods(model.complete({"q_founder": q0}, q0.size))
    today, before = q0 / (1 + 12 * q0), q0 / (1 + 7 * q0)
    np.testing.assert_allclose(ll[:, 0], stats.binom.logpmf(30, 1000, today), rtol=1e-8)
    np.testing.assert_allclose(ll[:, 1], stats.binom.logpmf(50, 1000, before), rtol=1e-8)


def test_the_present_state_is_the_histories_frequency_today():
    model = _model()
    q0 = np.array([0.1, 0.2])
    state = model.state(model.complete({"q_founder": q0}, 2))
    np.testing.assert_allclose(state.q, q0 / (1 + 12 * q0), rtol=1e-9)


def test_drift_integrates_over_the_propagated_distribution():
    # P(data) = E[Binomial(k; n, x_today)] over forward Wright-Fisher replicates of the
    # same history (Monte Carlo reference, 100,000 replicates: a few per cent)
    from infer.core.history.simulate import simulate_history

    text = STUDY.format(model="drift", Ne=500, length=12, nu=1e-9).replace(
        "s = 1.0", "s = 0.3")
    model = Model(parse_study(text, source="t.toml"))
    q0 = np.array([0.06, 0.1])
    ll = model.log_likelihoods(model.complete({"q_founder": q0}, 2))
    rng = np.random.default_rng(7)
    for i, q in enumerate(q0):
        params = dict(Ne=500.0, mu=1e-12, s=0.3, h=0.0, nu=1e-9, q_founder=q)
        runs = simulate_history(rng, model.history, params, 100_000, times=(0, 5))
        for j, (t, k) in enumerate(((0, 30), (5, 50))):
            reference = np.log(stats.binom.pmf(k, 1000, runs[t]).mean())
            np.testing.assert_allclose(ll[i, j], reference, atol=0.08)


def test_a_long_drift_history_returns_to_wrights_sample_probability():
    from infer.core.drift.stationary import log_binomial_probability

    text = """\
title = "long"
model = "drift"
[parameters]
mu = 5e-4
s = { prior = "uniform", low = 0.0, high = 0.05 }
h = 0.5
Ne = 500
nu = 2e-4
[history]
epochs = [ { generations = 10000 } ]
founder = { founders = 20, generations_ago = 10000, frequency = 0.5 }
[[observations]]
kind = "allele-count"
observed = 3
sampled = 40
"""
    model = Model(parse_study(text, source="long.toml"))
    s = np.array([0.0, 0.01, 0.03])
    ll = model.log_likelihoods(model.complete({"s": s}, 3))[:, 0]
    reference = log_binomial_probability(3, 40, 500.0, 5e-4, s, 0.5, 2e-4)
    np.testing.assert_allclose(ll, reference, atol=5e-3)


def test_a_study_without_history_keeps_the_equilibrium_path():
    text = STUDY.format(model="deterministic", Ne=1000, length=12, nu=0).split("[history]")[0]
    text = text.replace('q_founder = { prior = "uniform", low = 0.0, high = 0.3 }',
                        's_unused = 0').replace("s_unused = 0\n", "").replace(
        "s = 1.0", 's = { prior = "uniform", low = 0.01, high = 1.0 }')
    text += '[[observations]]\nkind = "allele-count"\nobserved = 30\nsampled = 1000\n'
    model = Model(parse_study(text, source="plain.toml"))
    assert model.history is None
    s = np.array([0.1, 0.5])
    ll = model.log_likelihoods(model.complete({"s": s}, 2))[:, 0]
    # h = 0, F = nu = 0: q = sqrt(mu/s) exactly (Haldane 1927; common practice)
    np.testing.assert_allclose(ll, stats.binom.logpmf(30, 1000, np.sqrt(1e-12 / s)),
                               rtol=1e-4)
