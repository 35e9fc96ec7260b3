"""Studies with h outside [0, 1]: accepted as a fixed value or uniform prior for the
autosomal deterministic model, refused elsewhere with one line naming the field.

Reference: Fisher (1922, Proc. Roy. Soc. Edinburgh 42:321), the balanced polymorphism
t/(s' + t) (mu -> 0), for the equilibrium the study's state holds.
"""

import numpy as np
import pytest

from infer.errors import InputError
from infer.files.study import parse_study
from infer.model.balance_state import BalanceState

OBS = '[[observations]]\nkind = "allele-count"\nobserved = 30\nsampled = 100\n'


def _study(parameters, head=""):
    return parse_study(head + "[parameters]\n" + parameters + "\n" + OBS)


def test_uniform_prior_below_zero_is_accepted():
    study = _study('mu = 1e-6\ns = 0.1\nh = { prior = "uniform", low = -3, high = 0 }')
    prior = study.parameters["h"]
    assert prior.interval(1.0) == (-3.0, 0.0)
    density = prior.log_density(np.array([-1.0, 0.5]))
    assert density[0] == pytest.approx(-np.log(3)) and density[1] == -np.inf, (
        "uniform(-3, 0) on h has density 1/3 inside and none outside (closed form)")
    t, s_prime = 0.02, 0.05
    s, h = (s_prime - t) / (1 - t), -t / (s_prime - t)
    state = BalanceState.deterministic({"mu": 0.0, "s": s, "h": h, "F": 0.0, "nu": 0.0,
                                        "Ne": np.inf, "alpha": 1.0}, "autosomal")
    assert float(state.q[0] if np.ndim(state.q) else state.q) == pytest.approx(
        t / (s_prime + t), rel=1e-12), "the study's state holds Fisher's t/(s'+t) at mu = 0"


def test_normal_prior_keeps_the_unit_support():
    study = _study('mu = 1e-6\ns = 0.1\nh = { prior = "normal", mean = 0.3, sd = 0.1 }')
    assert "truncated to [0, 1]" in study.parameters["h"].describe(), (
        "the normal, beta and log-normal families keep h's support [0, 1]")


@pytest.mark.parametrize("head, field", [
    ('inheritance = "x-linked"\n', "parameters.h"),
    ('model = "drift"\n', "parameters.h"),
])
def test_refused_outside_the_autosomal_deterministic_model(head, field):
    extra = "Ne = 1000\n" if "drift" in head else ""
    with pytest.raises(InputError) as raised:
        _study(f"mu = 1e-6\ns = 0.1\nh = -0.5\n{extra}", head)
    assert raised.value.field == field and "h < 0 and h > 1" in str(raised.value), (
        f"expected a refusal naming {field}; got {raised.value}")


def test_fixed_value_beyond_the_range_is_refused():
    with pytest.raises(InputError) as raised:
        _study("mu = 1e-6\ns = 0.01\nh = 12")
    assert "outside [-10, 10]" in str(raised.value)
