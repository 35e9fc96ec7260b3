"""The ``registry`` kind (infer/model/observations/registry.py): one registry, one likelihood.

References beside each check: scipy.stats.multinomial, scipy.stats.binom and
scipy.special (independent implementations); Hardy–Weinberg proportions with Wright's F
(common practice); the direct method, 2·mu new dominant mutations per birth (Vogel &
Motulsky, *Human Genetics*, from memory) and mu_female = 3mu/(2 + alpha) per male birth
(Haldane 1935, J. Genet. 31:317).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import special, stats

from infer.errors import InputError
from infer.files.study import parse_study
from infer.model.balance_state import BalanceState
from infer.model.observations.kinds import KINDS, parse_observation
from infer.model.observations.registry import Registry, shared_birth_warnings

ROWS = {"mu": np.array([1e-5, 3e-5, 8e-5]), "s": np.array([0.2, 0.5, 0.9]),
        "h": np.array([0.3, 0.6, 1.0]), "F": np.array([0.0, 0.01, 0.03]),
        "nu": np.zeros(3), "Ne": np.full(3, np.inf), "alpha": np.array([1.0, 2.0, 4.0])}
Q = np.array([2e-4, 1.5e-4, 2e-4])          # autosomal frequencies of the three rows
Q_MALE = np.array([3e-4, 2e-4, 1e-4])       # sons' frequencies (x-linked rows)
TABLE = {"kind": "registry", "births": 94_075, "affected": 10, "sporadic": 8,
         "mode": "dominant"}


def obs(table, inheritance="autosomal"):
    return parse_observation(table, field="observations[1]", inheritance=inheritance)


def autosomal():
    return BalanceState(ROWS, "autosomal", Q, None, None, np.ones(3, bool))


def x_linked():
    q_female = Q_MALE * 0.9
    q = (2 * q_female + Q_MALE) / 3
    return BalanceState(ROWS, "x-linked", q, Q_MALE, q_female, np.ones(3, bool))


def cells(mode, penetrance):
    """(new, inherited, unaffected) per row from the published rates, not from the module.

    Dominant: new 2·mu·pen (direct method), affected pen·(Aa + aa) with Aa 2pq(1−F),
    aa q²(1−F) + qF (Wright's F; common practice). x-linked-male: new mu_female·pen with
    mu_female = 3mu/(2 + alpha) (Haldane 1935), affected pen·q_male.
    """
    if mode == "dominant":
        p, F = 1 - Q, ROWS["F"]
        affected = penetrance * (2 * p * Q * (1 - F) + Q * Q * (1 - F) + Q * F)
        new = 2 * ROWS["mu"] * penetrance
    else:
        affected = penetrance * Q_MALE
        new = 3 * ROWS["mu"] / (2 + ROWS["alpha"]) * penetrance
    return new, affected - new, 1 - affected


def test_registry_is_a_registered_kind():
    assert KINDS["registry"] is Registry, "kinds.py does not register the registry kind"


@pytest.mark.parametrize("mode, inheritance, penetrance", [
    ("dominant", "autosomal", 1.0), ("dominant", "autosomal", 0.8),
    ("x-linked-male", "x-linked", 0.9)])
def test_log_likelihood_is_the_multinomial_logpmf(mode, inheritance, penetrance):
    """With no unknown parentage the registry is Multinomial(N; new, inherited, unaffected)
    (scipy.stats.multinomial.logpmf as the independent reference)."""
    o = obs({**TABLE, "mode": mode, "penetrance": penetrance}, inheritance)
    state = autosomal() if inheritance == "autosomal" else x_linked()
    new, inherited, unaffected = cells(mode, penetrance)
    counts = [8, 2, 94_075 - 10]
    for row in range(3):
        assert inherited[row] > 0, "test rows must have inherited cases possible"
        reference = stats.multinomial.logpmf(counts, 94_075,
                                             [new[row], inherited[row], unaffected[row]])
        got = o.log_likelihood(state)[row]
        assert got == pytest.approx(reference, rel=1e-10, abs=1e-10), (
            f"{mode} row {row}: {got} against scipy.stats.multinomial.logpmf {reference}")


def brute_force(N, S, Fam, U, new, inherited):
    """P(S sporadic, Fam familial | U unknown), by summing over the complete data.

    Of n1 = S + j new and n2 = Fam + U − j inherited cases (the complete multinomial),
    U of the A affected have unknown parents, every set of U equally likely, so j of them
    are new with the hypergeometric probability C(n1, j) C(n2, U − j) / C(A, U)
    (derived; scipy.stats.multinomial and scipy.special.comb as references).
    """
    A = S + Fam + U
    total = 0.0
    for j in range(U + 1):
        n1, n2 = S + j, Fam + U - j
        complete = stats.multinomial.pmf([n1, n2, N - A], N, [new, inherited, 1 - new - inherited])
        masked = special.comb(n1, j) * special.comb(n2, U - j) / special.comb(A, U)
        total += complete * masked
    return math.log(total)


@pytest.mark.parametrize("sporadic, unknown", [(3, 4), (0, 2), (5, 0), (1, 6)])
def test_familial_unknown_is_marginalised(sporadic, unknown):
    births, affected = 2_000, 9
    o = obs({"kind": "registry", "births": births, "affected": affected,
             "sporadic": sporadic, "familial_unknown": unknown, "mode": "dominant"})
    rows = {**ROWS, "mu": np.array([2e-4, 5e-4, 1e-3]), "F": np.zeros(3)}
    q = np.array([2e-3, 1.5e-3, 1.2e-3])
    state = BalanceState(rows, "autosomal", q, None, None, np.ones(3, bool))
    got = o.log_likelihood(state)
    for row in range(3):
        affected_share = 2 * (1 - q[row]) * q[row] + q[row] ** 2  # Hardy–Weinberg, F = 0
        new = 2 * rows["mu"][row]
        reference = brute_force(births, sporadic, affected - sporadic - unknown, unknown,
                                new, affected_share - new)
        assert got[row] == pytest.approx(reference, rel=1e-9), (
            f"row {row}: {got[row]} against the brute-force sum over unknown parentage "
            f"{reference}")


def test_expected_is_births_times_the_affected_fraction():
    o = obs({**TABLE, "penetrance": 0.8})
    new, inherited, _ = cells("dominant", 0.8)
    closed = 94_075 * (new + inherited)   # births × pen × (Aa + aa) (closed form)
    np.testing.assert_allclose(o.expected(autosomal()), closed, rtol=1e-12,
                               err_msg="expected affected births are not N·pen·(Aa + aa)")
    assert o.statistic_trials(autosomal()) == 94_075
    assert o.statistic() == 10


def test_simulated_tables_are_one_multinomial():
    """Calibration data: the three cells drawn jointly (margins Binomial, covariance
    −N p1 p2: scipy.stats.multinomial.cov as the reference)."""
    births = 20_000
    o = obs({"kind": "registry", "births": births, "affected": 40, "sporadic": 20,
             "mode": "dominant"})
    params = {k: v[1:2] for k, v in ROWS.items()}
    state = BalanceState(params, "autosomal", np.array([1e-3]), None, None, np.array([True]))
    p_aff = 2 * 0.999 * 1e-3 * 0.99 + 1e-6 * 0.99 + 1e-3 * 0.01
    p = [2 * 3e-5, p_aff - 6e-5, 1 - p_aff]
    rng = np.random.default_rng(3)
    tables = [o.simulate_table(state, rng) for _ in range(4000)]
    assert all(t["births"] == births and t["kind"] == "registry" for t in tables)
    sporadic = np.array([t["sporadic"] for t in tables])
    familial = np.array([t["affected"] - t["sporadic"] for t in tables])
    for draws, prob, name in ((sporadic, p[0], "sporadic"), (familial, p[1], "familial")):
        mean, se = draws.mean(), math.sqrt(births * prob * (1 - prob) / draws.size)
        assert abs(mean - births * prob) < 5 * se, (
            f"{name} cases average {mean}, Binomial mean {births * prob:.3g} (5 s.e.)")
    reference = stats.multinomial(births, p).cov()[0, 1]
    sample = np.cov(sporadic, familial)[0, 1]
    se = math.sqrt(np.var(sporadic) * np.var(familial) / sporadic.size)
    assert abs(sample - reference) < 5 * se, (
        f"sporadic/familial covariance {sample:.3g}, multinomial {reference:.3g}")
    again = parse_observation(tables[0], field="observations[1]", inheritance="autosomal")
    assert isinstance(again, Registry) and again.label == o.label


def test_simulated_unknown_parentage_keeps_the_table_valid():
    o = obs({"kind": "registry", "births": 5_000, "affected": 12, "sporadic": 4,
             "familial_unknown": 3, "mode": "dominant"})
    params = {k: v[2:3] for k, v in ROWS.items()}
    state = BalanceState(params, "autosomal", np.array([2e-3]), None, None, np.array([True]))
    rng = np.random.default_rng(8)
    tables = [o.simulate_table(state, rng) for _ in range(300)]
    for t in tables:
        again = parse_observation(t, field="observations[1]", inheritance="autosomal")
        assert again.sporadic + again.familial_unknown <= again.affected
    share = (sum(t["familial_unknown"] for t in tables)
             / max(1, sum(t["affected"] for t in tables)))
    assert 0.1 < share < 0.4, f"unknown share {share:.2f}, drawn at the observed 3/12"


def test_given_frequency_matches_the_deterministic_likelihood():
    """The drift path at x = q equals the likelihood at the state of frequency q."""
    o = obs({**TABLE, "penetrance": 0.9})
    params = {**ROWS, "F": np.zeros(3)}
    state = BalanceState.at_frequency(params, Q)
    got = o.log_likelihood_given_frequency(Q[:, None], params)[:, 0]
    np.testing.assert_allclose(got, o.log_likelihood(state), rtol=1e-12)


@pytest.mark.parametrize("change, field, text", [
    ({"sporadic": 11}, "sporadic", "more than affected 10"),
    ({"affected": 100_000}, "affected", "more than births"),
    ({"familial_unknown": 3}, "familial_unknown", "more than affected minus sporadic 2"),
    ({"mode": "recessive"}, "mode", "recessive"),
    ({"penetrance": 0}, "penetrance", "0 cannot"),
    ({"births": 0}, "births", "not at least 1"),
    ({"sporadic": 2.5}, "sporadic", "2.5"),
])
def test_bad_tables_name_the_field(change, field, text):
    with pytest.raises(InputError) as caught:
        obs({**TABLE, **change})
    assert caught.value.field == f"observations[1].{field}", caught.value.field
    assert text in str(caught.value), str(caught.value)


def test_x_linked_registry_needs_the_x_linked_mode():
    with pytest.raises(InputError, match="x-linked"):
        obs(TABLE, "x-linked")


STUDY = """
title = "invented registry read twice"
[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s = { prior = "uniform", low = 0.0, high = 1.0 }
h = 1.0
[[observations]]
label = "all births"
kind = "affected"
affected = 7
total = 50_000
mode = "dominant"
[[observations]]
label = "new mutations"
kind = "sporadic"
cases = 5
births = BIRTHS
mode = "dominant"
"""


def test_an_affected_and_a_sporadic_over_the_same_births_warn():
    study = parse_study(STUDY.replace("BIRTHS", "50_000"), source="pair.toml")
    found = shared_birth_warnings(study.observations)
    assert len(found) == 1, f"expected one warning for the pair, got {found}"
    assert '"all births"' in found[0] and '"new mutations"' in found[0], found[0]
    assert 'kind = "registry"' in found[0], found[0]
    other = parse_study(STUDY.replace("BIRTHS", "60_000"), source="two.toml")
    assert shared_birth_warnings(other.observations) == [], (
        "different totals are different registries: no warning")
