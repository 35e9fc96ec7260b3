"""Germ-line mutation rates of an X-linked locus must stay below 1.

mu is the rate averaged over X chromosomes, mu = (2 mu_female + mu_male)/3 with
mu_male = alpha·mu_female, so mu_female = 3mu/(2 + alpha) (closed form; docs/model.md,
'X-linked equilibrium'). alpha = 1000 with mu = 0.5 gives mu_male = 1500/1002 = 1.497,
a rate above one mutation per gamete: outside the life cycle. The maths gives NaN there,
the model -inf, and a study or claim that fixes such a pair is refused with one line.
"""

from __future__ import annotations

import numpy as np
import pytest

from infer.core.x_linked import germ_line_rate_problem, sex_specific_rates, x_linked_balance
from infer.errors import InputError
from infer.files.claim import parse_claim
from infer.files.study import parse_study

OBSERVATION = {"kind": "affected", "affected": 22, "total": 121_500, "mode": "x-linked-male"}


def test_rates_above_one_are_nan_and_have_no_equilibrium():
    mu = np.array([1e-5, 0.5, 0.9, 1e-4])
    alpha = np.array([1000.0, 1000.0, 0.01, 1.0])
    female, male = sex_specific_rates(mu, alpha)
    expected_female = 3 * mu / (2 + alpha)  # closed form (docs/model.md)
    ok = (expected_female < 1) & (alpha * expected_female < 1)
    assert ok.tolist() == [True, False, False, True], "test premise: which rows are outside"
    np.testing.assert_allclose(female[ok], expected_female[ok], rtol=1e-15,
                               err_msg="mu_female = 3mu/(2 + alpha) inside the domain")
    assert np.all(np.isnan(female[~ok]) & np.isnan(male[~ok])), (
        f"rates at or above 1 must be NaN; got female {female}, male {male}")
    balance = x_linked_balance(mu, 0.5, 0.5, 0.0, 0.0, alpha)
    assert balance.exists.tolist() == [True, False, False, True], (
        f"no equilibrium where a germ-line rate is >= 1; exists {balance.exists}")
    assert np.all(np.isnan(balance.q_hat[~ok])), f"q_hat there must be NaN: {balance.q_hat}"


def test_problem_names_the_rate_and_its_value():
    assert germ_line_rate_problem(1e-5, 1000.0) is None, "a small mu is fine at any alpha"
    message = germ_line_rate_problem(0.5, 1000.0)
    assert message == ("0.5 with alpha = 1000 gives mu_male = 1.497 per gamete; each germ "
                       "line's rate must be below 1"), f"message: {message!r}"
    assert "mu_female = 1.343" in germ_line_rate_problem(0.9, 0.01), "3·0.9/2.01 = 1.343"


def _study(mu, alpha, **extra):
    return {"title": "invented", "inheritance": "x-linked",
            "parameters": {"mu": mu, "s": {"prior": "uniform", "low": 0.0, "high": 1.0},
                           "h": 0.0, "alpha": alpha}, "observations": [OBSERVATION], **extra}


def test_study_with_fixed_rates_above_one_is_refused():
    with pytest.raises(InputError) as error:
        parse_study(_study(0.5, 1000.0), source="invented.toml")
    assert str(error.value) == ("invented.toml: parameters.mu: 0.5 with alpha = 1000 gives "
                                "mu_male = 1.497 per gamete; each germ line's rate must be "
                                "below 1"), f"one line naming file, field and value: {error.value}"


def test_claim_with_fixed_rates_above_one_is_refused():
    document = _study({"claimed": 0.5}, 1000.0)
    document["parameters"]["s"] = 0.85
    with pytest.raises(InputError, match=r"parameters\.mu: 0\.5 with alpha = 1000 gives mu_male"):
        parse_claim(document, source="claim.toml")


def test_model_gives_minus_infinity_beyond_the_rates():
    """With a prior on mu reaching past 1/alpha·(2 + alpha)/3, rows beyond it have log
    posterior -inf and rows inside stay finite (the prior's own support is (0, 1))."""
    from infer.model.posterior import Model

    study = parse_study(_study({"prior": "log-uniform", "low": 1e-8, "high": 0.9}, 1000.0),
                        source="invented.toml")
    model = Model(study)
    mu = np.array([2e-4, 1e-3, 0.5, 0.8])
    limit = (2 + 1000.0) / (3 * 1000.0)  # mu_male = 1 here (closed form)
    params = {"mu": mu, "s": np.full(4, 0.5)}
    z = model.to_unconstrained({name: params[name] for name in model.free})
    log_post = model.log_posterior(z)
    assert np.all(np.isfinite(log_post[mu < limit])), f"inside the rates: {log_post}"
    assert np.all(log_post[mu >= limit] == -np.inf), (
        f"mu >= {limit:.4f} makes mu_male >= 1: log posterior must be -inf; got {log_post}")
