"""Observation kinds: log-likelihoods against scipy.stats, published identities, draws.

References named beside each check: scipy.stats ``binom``, ``multinomial``, ``poisson``,
``norm`` as independent implementations; Hardy–Weinberg proportions with inbreeding
(Wright's F; common practice); the direct method of estimating mutation rates, 2·mu
new mutations per birth for a dominant (Vogel & Motulsky, *Human Genetics*, direct
method) and mu_female per male birth for an X-linked disorder (Haldane 1935,
J. Genet. 31:317); the Poisson-conditioning identity (derived in
``test_fertility_conditional_equals_profiled_two_poisson_joint``).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from infer.errors import InputError
from infer.model.balance_state import BalanceState
from infer.model.observations.fertility import Fertility
from infer.model.observations.frequency import AlleleCount
from infer.model.observations.kinds import KINDS, parse_observation
from infer.model.observations.published import Estimate

ROWS = 4


def params(**overrides):
    base = {
        "mu": np.array([1e-6, 1e-5, 3e-5, 1e-4]),
        "s": np.array([0.05, 0.3, 0.8, 1.0]),
        "h": np.array([0.0, 0.2, 0.5, 1.0]),
        "F": np.array([0.0, 0.01, 0.05, 0.0]),
        "nu": np.zeros(ROWS),
        "Ne": np.full(ROWS, np.inf),
        "alpha": np.array([1.0, 2.0, 4.0, 1.0]),
    }
    base.update({k: np.broadcast_to(np.asarray(v, float), (ROWS,)).copy()
                 for k, v in overrides.items()})
    return base


Q = np.array([2e-3, 1e-2, 0.05, 0.3])


def autosomal_state(q=Q, exists=None, **overrides):
    exists = np.ones(ROWS, bool) if exists is None else exists
    return BalanceState(params(**overrides), "autosomal", np.asarray(q, float), None, None, exists)


def x_state(q_male=Q, q_female=Q * 0.7, exists=None):
    exists = np.ones(ROWS, bool) if exists is None else exists
    q_male, q_female = np.asarray(q_male), np.asarray(q_female)
    return BalanceState(params(), "x-linked", (2 * q_female + q_male) / 3, q_male, q_female, exists)


def obs(table, inheritance="autosomal", index=1):
    return parse_observation(table, field=f"observations[{index}]", inheritance=inheritance)


# -- allele-count ---------------------------------------------------------------------

def test_allele_count_is_binomial():
    o = obs({"kind": "allele-count", "observed": 37, "sampled": 2000})
    np.testing.assert_allclose(
        o.log_likelihood(autosomal_state()), stats.binom.logpmf(37, 2000, Q), rtol=1e-11
    )
    assert o.statistic() == 37
    np.testing.assert_allclose(o.expected(autosomal_state()), 2000 * Q)


@pytest.mark.parametrize("sex, column", [("male", "q_male"), ("female", "q_female"), ("all", "q")])
def test_x_linked_allele_count_uses_the_chosen_frequency(sex, column):
    state = x_state()
    o = obs({"kind": "allele-count", "observed": 5, "sampled": 700, "sex": sex}, "x-linked")
    np.testing.assert_allclose(
        o.log_likelihood(state), stats.binom.logpmf(5, 700, getattr(state, column)), rtol=1e-11
    )


def test_allele_count_probabilities_sum_to_one():
    """True log-probabilities: the pmf over every possible count sums to 1 (closed form)."""
    state = autosomal_state()
    total = sum(np.exp(obs({"kind": "allele-count", "observed": k, "sampled": 12})
                       .log_likelihood(state)) for k in range(13))
    np.testing.assert_allclose(total, 1.0, rtol=1e-12)


def test_frequency_kinds_are_minus_inf_without_equilibrium():
    exists = np.array([True, False, True, False])
    q = np.where(exists, Q, np.nan)
    state = autosomal_state(q=q, exists=exists)
    for table in (
        {"kind": "allele-count", "observed": 1, "sampled": 100},
        {"kind": "genotype-count", "AA": 90, "Aa": 9, "aa": 1},
        {"kind": "affected", "affected": 1, "total": 100, "mode": "recessive"},
    ):
        ll = obs(table).log_likelihood(state)
        assert np.all(np.isfinite(ll[exists]))
        assert np.all(ll[~exists] == -np.inf)
        assert np.all(np.isnan(obs(table).simulate(state, np.random.default_rng(0))[~exists]))


# -- genotype-count -------------------------------------------------------------------

def _hardy_weinberg_with_F(q, F):
    """AA p²(1−F)+pF, Aa 2pq(1−F), aa q²(1−F)+qF (Wright's F; common practice)."""
    p = 1 - q
    return np.stack([p * p * (1 - F) + p * F, 2 * p * q * (1 - F), q * q * (1 - F) + q * F], -1)


def test_genotype_count_is_multinomial_with_F():
    o = obs({"kind": "genotype-count", "AA": 950, "Aa": 45, "aa": 5})
    state = autosomal_state()
    freqs = _hardy_weinberg_with_F(Q, state.params["F"])
    expected = [stats.multinomial.logpmf([950, 45, 5], 1000, f) for f in freqs]
    np.testing.assert_allclose(o.log_likelihood(state), expected, rtol=1e-10)
    assert o.statistic() == 45 + 2 * 5


def test_genotype_count_x_linked_is_daughters():
    """Daughters: egg X at x = q_male, sperm X at y = 2 q_female − x; AA (1−x)(1−y), Aa
    x(1−y)+y(1−x), aa xy (derived from docs/model.md; F = 0 in these rows)."""
    state = x_state()
    state.params["F"] = np.zeros(ROWS)
    x = state.q_male
    y = 2 * state.q_female - x
    freqs = np.stack([(1 - x) * (1 - y), x * (1 - y) + y * (1 - x), x * y], -1)
    o = obs({"kind": "genotype-count", "AA": 400, "Aa": 30, "aa": 2}, "x-linked")
    expected = [stats.multinomial.logpmf([400, 30, 2], 432, f) for f in freqs]
    np.testing.assert_allclose(o.log_likelihood(state), expected, rtol=1e-10)


def test_genotype_probabilities_sum_to_one():
    state = autosomal_state()
    total = np.zeros(ROWS)
    n = 6
    for aa in range(n + 1):
        for Aa in range(n + 1 - aa):
            o = obs({"kind": "genotype-count", "AA": n - aa - Aa, "Aa": Aa, "aa": aa})
            total += np.exp(o.log_likelihood(state))
    np.testing.assert_allclose(total, 1.0, rtol=1e-12)


# -- affected -------------------------------------------------------------------------

@pytest.mark.parametrize("mode", ["dominant", "recessive"])
def test_affected_is_binomial_on_the_affected_genotypes(mode):
    state = autosomal_state()
    freqs = _hardy_weinberg_with_F(Q, state.params["F"])
    fraction = 0.8 * ((freqs[:, 1] + freqs[:, 2]) if mode == "dominant" else freqs[:, 2])
    o = obs({"kind": "affected", "affected": 30, "total": 25_000, "mode": mode,
             "penetrance": 0.8})
    np.testing.assert_allclose(
        o.log_likelihood(state), stats.binom.logpmf(30, 25_000, fraction), rtol=1e-11
    )


def test_affected_x_linked_male_uses_q_male():
    state = x_state()
    o = obs({"kind": "affected", "affected": 4, "total": 3000, "mode": "x-linked-male"},
            "x-linked")
    np.testing.assert_allclose(
        o.log_likelihood(state), stats.binom.logpmf(4, 3000, state.q_male), rtol=1e-11
    )


# -- sporadic (direct method) ---------------------------------------------------------

def test_sporadic_dominant_is_binomial_on_two_mu():
    """Direct method: a dominant new mutation arises in either parental gamete, 2·mu per
    birth (Vogel & Motulsky, Human Genetics, direct method)."""
    state = autosomal_state()
    o = obs({"kind": "sporadic", "cases": 8, "births": 94_075, "mode": "dominant",
             "penetrance": 0.9})
    mu = state.params["mu"]
    np.testing.assert_allclose(
        o.log_likelihood(state), stats.binom.logpmf(8, 94_075, 2 * mu * 0.9), rtol=1e-11
    )


def test_sporadic_maximum_is_the_direct_estimate():
    """The likelihood peaks at mu = cases / (2·births) (Vogel & Motulsky, direct method;
    Mørch 1941's 8 sporadic cases in 94,075 births give 4.25e-5, REFERENCES.md [memory])."""
    o = obs({"kind": "sporadic", "cases": 8, "births": 94_075, "mode": "dominant"})
    mu = np.geomspace(1e-6, 1e-3, 200_001)
    p = {k: np.full(mu.size, v) for k, v in
         {"s": 1.0, "h": 1.0, "F": 0.0, "nu": 0.0, "Ne": np.inf, "alpha": 1.0}.items()}
    p["mu"] = mu
    ll = o.log_likelihood(BalanceState.without_frequency(p, "autosomal"))
    assert mu[np.argmax(ll)] == pytest.approx(8 / (2 * 94_075), rel=1e-4)
    assert 8 / (2 * 94_075) == pytest.approx(4.25e-5, rel=2e-3)


@pytest.mark.parametrize("alpha", [1.0, 2.0, 5.0])
def test_sporadic_x_linked_uses_mu_female(alpha):
    """Sons receive only their mother's X: new cases per male birth are mu_female, with
    mu = (2 mu_female + mu_male)/3 and mu_male = alpha·mu_female, so mu_female =
    3mu/(2+alpha) (Haldane 1935; docs/model.md, 'X-linked equilibrium')."""
    p = params(alpha=alpha)
    state = BalanceState.without_frequency(p, "x-linked")
    o = obs({"kind": "sporadic", "cases": 3, "births": 40_000, "mode": "x-linked-male"},
            "x-linked")
    mu_female = 3 * p["mu"] / (2 + alpha)
    np.testing.assert_allclose(
        o.log_likelihood(state), stats.binom.logpmf(3, 40_000, mu_female), rtol=1e-11
    )


# -- fertility ------------------------------------------------------------------------

FERTILITY = {"kind": "fertility", "affected_people": 108, "affected_children": 27,
             "reference_people": 457, "reference_children": 582}


@pytest.mark.parametrize("mode, w_of", [
    ("dominant", lambda p: 1 - p["h"] * p["s"]),
    ("recessive", lambda p: 1 - p["s"]),
])
def test_fertility_is_the_conditional_binomial(mode, w_of):
    state = autosomal_state()
    o = obs({**FERTILITY, "mode": mode})
    w = w_of(state.params)
    share = 108 * w / (108 * w + 457)
    np.testing.assert_allclose(
        o.log_likelihood(state), stats.binom.logpmf(27, 609, share), rtol=1e-11
    )


def test_fertility_conditional_equals_profiled_two_poisson_joint():
    """Derived: with X ~ Poisson(A·w·λ), Y ~ Poisson(R·λ), the joint log-likelihood
    ℓ(w, λ) = log Pois(X; Awλ) + log Pois(Y; Rλ) is maximised over λ at
    λ̂ = T/(Aw + R), T = X + Y. Writing the joint as Pois(T; (Aw+R)λ) ×
    Binom(X; T, Aw/(Aw+R)) gives ℓ(w, λ̂(w)) = log Pois(T; T) + log Binom(X; T, Aw/(Aw+R)):
    the profile and the conditional binomial differ by a constant free of w, so they
    lead to the same inference about w (scipy.stats.poisson as the reference)."""
    A, X, R, Y = 108, 27, 457, 582
    T = X + Y
    w = np.linspace(0.05, 1.0, 40)
    p = params()
    p = {k: np.full(w.size, v[0]) for k, v in p.items()}
    p["h"], p["s"] = np.ones(w.size), 1 - w  # dominant: w = 1 - h s
    o = obs({**FERTILITY, "mode": "dominant"})
    conditional = o.log_likelihood(BalanceState.without_frequency(p, "autosomal"))
    lam = T / (A * w + R)
    profile = stats.poisson.logpmf(X, A * w * lam) + stats.poisson.logpmf(Y, R * lam)
    np.testing.assert_allclose(profile - conditional, stats.poisson.logpmf(T, T), rtol=1e-10)


def test_fertility_x_linked_male_and_zero_children():
    state = BalanceState.without_frequency(params(), "x-linked")
    o = obs({**FERTILITY, "mode": "x-linked-male"}, "x-linked")
    w = 1 - state.params["s"]
    np.testing.assert_allclose(
        o.log_likelihood(state), stats.binom.logpmf(27, 609, 108 * w / (108 * w + 457)),
        rtol=1e-11,
    )
    none = obs({**FERTILITY, "affected_children": 0, "reference_children": 0, "mode": "dominant"})
    np.testing.assert_array_equal(none.log_likelihood(autosomal_state()), 0.0)


# -- estimate -------------------------------------------------------------------------

def test_estimate_is_normal_on_the_log_scale():
    """ln median ~ N(ln θ, σ), σ = (ln upper − ln lower)/(2·1.959964) (common practice for
    a published 95 % interval; scipy.stats.norm as the reference)."""
    state = autosomal_state()
    o = obs({"kind": "estimate", "parameter": "mu", "median": 2e-5, "lower": 1e-5,
             "upper": 4e-5})
    sigma = (math.log(4e-5) - math.log(1e-5)) / (2 * stats.norm.ppf(0.975))
    assert o.sigma == pytest.approx(sigma, rel=1e-12)
    np.testing.assert_allclose(
        o.log_likelihood(state),
        stats.norm.logpdf(math.log(2e-5), np.log(state.params["mu"]), sigma),
        rtol=1e-11,
    )
    assert o.parameters_used() == {"mu"}


# -- drift interface ------------------------------------------------------------------

@pytest.mark.parametrize("table", [
    {"kind": "allele-count", "observed": 3, "sampled": 500},
    {"kind": "genotype-count", "AA": 90, "Aa": 9, "aa": 1},
    {"kind": "affected", "affected": 2, "total": 1000, "mode": "dominant"},
    {"kind": "affected", "affected": 2, "total": 1000, "mode": "recessive", "penetrance": 0.5},
])
def test_given_frequency_matches_the_state_likelihood(table):
    o = obs(table)
    x = np.array([[1e-4, 1e-3, 0.02], [0.1, 0.2, 0.3], [1e-6, 0.5, 0.9], [0.01, 0.01, 0.4]])
    p = params()
    got = o.log_likelihood_given_frequency(x, p)
    assert got.shape == (ROWS, 3)
    for j in range(3):
        state = BalanceState.at_frequency(p, x[:, j])
        np.testing.assert_allclose(got[:, j], o.log_likelihood(state), rtol=1e-12)


def test_given_frequency_refused_for_kinds_without_frequency():
    o = obs({**FERTILITY, "mode": "dominant"})
    assert not o.depends_on_frequency
    with pytest.raises(TypeError):
        o.log_likelihood_given_frequency(np.zeros((ROWS, 2)), params())


# -- predictive draws -----------------------------------------------------------------

SIM_CASES = [
    ("autosomal", {"kind": "allele-count", "observed": 3, "sampled": 5000}),
    ("autosomal", {"kind": "genotype-count", "AA": 900, "Aa": 90, "aa": 10}),
    ("autosomal", {"kind": "affected", "affected": 5, "total": 20000, "mode": "dominant"}),
    ("autosomal", {"kind": "sporadic", "cases": 5, "births": 200000, "mode": "dominant"}),
    ("autosomal", {**FERTILITY, "mode": "dominant"}),
    ("x-linked", {"kind": "sporadic", "cases": 5, "births": 200000, "mode": "x-linked-male"}),
    ("x-linked", {"kind": "genotype-count", "AA": 900, "Aa": 90, "aa": 10}),
]


@pytest.mark.parametrize("inheritance, table", SIM_CASES, ids=[t["kind"] for _, t in SIM_CASES])
def test_simulated_draws_have_the_expected_mean(inheritance, table):
    """Sample mean of 20,000 draws per row within 5 standard errors of expected()."""
    o = obs(table, inheritance)
    base = x_state() if inheritance == "x-linked" else autosomal_state()
    reps = 20_000
    big = BalanceState(
        {k: np.repeat(v, reps) for k, v in base.params.items()},
        inheritance,
        np.repeat(base.q, reps),
        None if base.q_male is None else np.repeat(base.q_male, reps),
        None if base.q_female is None else np.repeat(base.q_female, reps),
        np.repeat(base.exists, reps),
    )
    if inheritance == "x-linked":
        big.params["F"] = np.zeros(big.n)
    draws = o.simulate(big, np.random.default_rng(3)).reshape(ROWS, reps)
    mean = o.expected(big).reshape(ROWS, reps)[:, 0]
    se = draws.std(axis=1) / math.sqrt(reps)
    assert np.all(np.abs(draws.mean(axis=1) - mean) <= 5 * se + 1e-9)


def test_estimate_draws_are_log_normal_around_the_parameter():
    o = obs({"kind": "estimate", "parameter": "s", "median": 0.3, "lower": 0.2, "upper": 0.45})
    state = BalanceState.without_frequency(params(s=0.25), "autosomal")
    state = BalanceState({k: np.repeat(v, 5000) for k, v in state.params.items()}, "autosomal",
                  np.full(ROWS * 5000, np.nan), None, None, np.ones(ROWS * 5000, bool))
    logs = np.log(o.simulate(state, np.random.default_rng(1)))
    assert abs(logs.mean() - math.log(0.25)) < 5 * o.sigma / math.sqrt(logs.size)
    assert logs.std() == pytest.approx(o.sigma, rel=0.03)


# -- parameters and descriptions ------------------------------------------------------

def test_parameters_used_and_describe():
    assert obs({**FERTILITY, "mode": "dominant"}).parameters_used() == {"s", "h"}
    assert obs({**FERTILITY, "mode": "recessive"}).parameters_used() == {"s"}
    spor = obs({"kind": "sporadic", "cases": 1, "births": 10, "mode": "x-linked-male"}, "x-linked")
    assert spor.parameters_used() == {"mu", "alpha"}
    ac = obs({"kind": "allele-count", "observed": 1, "sampled": 10})
    assert ac.parameters_used() == {"mu", "s", "h", "F", "nu"}
    assert "Ne" in ac.parameters_used("drift")
    assert ac.label == "allele-count 1"
    assert ac.describe() == "allele-count 1: 1 of 10 allele copies carry the allele"
    assert set(KINDS) == {"allele-count", "genotype-count", "affected", "sporadic", "registry",
                          "capture-recapture", "carrier-mothers", "fertility", "estimate"}
    assert isinstance(ac, AlleleCount)
    for kind_table in (ac, spor):
        again = parse_observation(kind_table.as_table(), field="observations[1]",
                                  inheritance=kind_table.inheritance)
        assert again == kind_table
    assert isinstance(obs({"kind": "estimate", "parameter": "Ne", "median": 100, "lower": 50,
                           "upper": 200}), Estimate)
    assert isinstance(obs({**FERTILITY, "mode": "dominant"}), Fertility)


# -- validation -----------------------------------------------------------------------

AFF = {"kind": "affected", "affected": 3, "total": 10, "mode": "dominant"}
BAD = [
    # (inheritance, table, field, text)
    ("autosomal", {**AFF, "affected": 12}, "observations[1].affected", "12 is more than total 10"),
    ("autosomal", {"kind": "affected", "total": 10, "mode": "dominant"},
     "observations[1].affected", "missing"),
    ("autosomal", {**AFF, "affected": -1}, "observations[1].affected", "-1 is negative"),
    ("autosomal", {**AFF, "affected": 2.5}, "observations[1].affected", "2.5 is not a whole"),
    ("autosomal", {**AFF, "total": float("nan")}, "observations[1].total", "nan is not a finite"),
    ("autosomal", {**AFF, "total": float("inf")}, "observations[1].total", "inf is not a finite"),
    ("autosomal", {**AFF, "total": True}, "observations[1].total", "true is not a number"),
    ("autosomal", {**AFF, "total": 0, "affected": 0}, "observations[1].total",
     "0 is not at least 1"),
    ("autosomal", {**AFF, "penetrance": 1.2}, "observations[1].penetrance",
     "1.2 is not a probability in [0, 1]"),
    ("autosomal", {**AFF, "mode": "dominent"}, "observations[1].mode",
     '"dominent" is not allowed; must be one of dominant, recessive, x-linked-male'),
    ("autosomal", {**AFF, "mode": "x-linked-male"}, "observations[1].mode",
     'needs inheritance = "x-linked"'),
    ("x-linked", AFF, "observations[1].mode", 'needs inheritance = "autosomal"'),
    ("autosomal", {**AFF, "affectd": 3}, "observations[1].affectd",
     'unknown key "affectd"; must be one of affected, total, mode, kind, label, penetrance'),
    ("autosomal", {**AFF, "label": ""}, "observations[1].label", "is not a non-empty text"),
    ("autosomal", {"kind": "allele-counts", "observed": 1, "sampled": 2}, "observations[1].kind",
     "must be one of allele-count, genotype-count, affected, sporadic, registry, "
     "capture-recapture, carrier-mothers, fertility, estimate"),
    ("autosomal", {"observed": 1, "sampled": 2}, "observations[1].kind", "missing"),
    ("autosomal", {"kind": "allele-count", "observed": 11, "sampled": 10},
     "observations[1].observed", "11 is more than sampled 10"),
    ("autosomal", {"kind": "allele-count", "observed": 1, "sampled": 10, "sex": "male"},
     "observations[1].sex", 'applies only to inheritance = "x-linked"'),
    ("x-linked", {"kind": "allele-count", "observed": 1, "sampled": 10},
     "observations[1].sex", "missing"),
    ("x-linked", {"kind": "allele-count", "observed": 1, "sampled": 10, "sex": "both"},
     "observations[1].sex", '"both" is not allowed; must be one of male, female, all'),
    ("autosomal", {"kind": "genotype-count", "AA": 0, "Aa": 0, "aa": 0},
     "observations[1].AA", "all three genotype counts are 0"),
    ("autosomal", {"kind": "genotype-count", "AA": 5, "Aa": -2, "aa": 0},
     "observations[1].Aa", "-2 is negative"),
    ("autosomal", {"kind": "sporadic", "cases": 3, "births": 100, "mode": "recessive"},
     "observations[1].mode", "a new recessive mutation does not show"),
    ("autosomal", {"kind": "sporadic", "cases": 300, "births": 100, "mode": "dominant"},
     "observations[1].cases", "300 is more than births 100"),
    ("autosomal", {**FERTILITY, "mode": "dominant", "affected_people": 0},
     "observations[1].affected_people", "0 is not at least 1"),
    ("autosomal", {**FERTILITY, "mode": "x-linked-male"}, "observations[1].mode",
     'needs inheritance = "x-linked"'),
    ("autosomal", {"kind": "estimate", "parameter": "k", "median": 0.3, "lower": 0.2,
                   "upper": 0.4}, "observations[1].parameter", "must be one of mu, s, h, F"),
    ("autosomal", {"kind": "estimate", "parameter": "h", "median": 0.3, "lower": 0.2,
                   "upper": 1.0}, "observations[1].upper", "read on the logit scale"),
    ("autosomal", {"kind": "estimate", "parameter": "mu", "median": 1e-5, "lower": 2e-5,
                   "upper": 4e-5}, "observations[1].median", "1e-05 is not above lower 2e-05"),
    ("autosomal", {"kind": "estimate", "parameter": "mu", "median": 1e-5, "lower": 0.0,
                   "upper": 4e-5}, "observations[1].lower", "0.0 is not above 0"),
    ("autosomal", {"kind": "estimate", "parameter": "s", "median": 1.5, "lower": 1.0,
                   "upper": 2.0}, "observations[1].median", "1.5 is above 1"),
]


@pytest.mark.parametrize("inheritance, table, field, text", BAD,
                         ids=[f"{b[2].split('.')[-1]}:{b[3][:20]}" for b in BAD])
def test_bad_observations_name_field_and_value(inheritance, table, field, text):
    with pytest.raises(InputError) as caught:
        obs(table, inheritance)
    assert caught.value.field == field
    assert text in caught.value.message
    assert "\n" not in str(caught.value)
