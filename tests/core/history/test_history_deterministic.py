"""The deterministic history: the exact life-cycle recursion carried through epochs.

References: the equilibria of infer.core.balance are fixed points of the life cycle
(docs/model.md, 'Life cycle'); neutral one-way mutation gives q_t = 1 - (1 - q_0)(1 - mu)^t
(common practice; Crow & Kimura 1970, An Introduction to Population Genetics Theory,
§6.1); a recessive lethal without mutation falls as q_t = q_0 / (1 + t q_0) (Haldane 1924,
Trans. Camb. Phil. Soc. 23:19; common practice).
"""

import numpy as np

from infer.core.balance import autosomal_balance
from infer.core.history.deterministic import history_frequencies
from infer.core.history.spec import Epoch, Founder, History
from infer.core.x_linked import x_linked_balance

RNG = np.random.default_rng(20261203)
N = 300


def _params(**given):
    base = dict(mu=10 ** RNG.uniform(-7, -4, N), s=RNG.uniform(0.05, 1.0, N),
                h=RNG.uniform(0.0, 1.0, N), F=RNG.uniform(0.0, 0.1, N),
                nu=np.zeros(N), Ne=np.full(N, 1e4), alpha=RNG.uniform(0.5, 5.0, N))
    base.update({k: np.broadcast_to(np.asarray(v, dtype=float), (N,)).copy()
                 for k, v in given.items()})
    return base


def test_the_equilibrium_is_a_fixed_point_of_a_constant_history():
    params = _params()
    history = History(epochs=(Epoch(generations=40), Epoch(generations=25, ends=40)))
    # (65 generations ago is the start itself: only later times test the recursion)
    out = history_frequencies(history, params, times=(0, 30))
    q_hat = autosomal_balance(params["mu"], params["s"], params["h"], params["F"]).q_hat
    for t in (0, 30):
        np.testing.assert_allclose(out.q[t], q_hat, rtol=1e-9)


def test_the_x_linked_equilibrium_is_a_fixed_point_too():
    params = _params()
    history = History(epochs=(Epoch(generations=30),))
    out = history_frequencies(history, params, inheritance="x-linked", times=(0,))
    eq = x_linked_balance(params["mu"], params["s"], params["h"], params["F"],
                          alpha=params["alpha"])
    np.testing.assert_allclose(out.q[0], eq.q_hat, rtol=1e-9)
    np.testing.assert_allclose(out.q_male[0], eq.q_male, rtol=1e-9)
    np.testing.assert_allclose(out.q_female[0], eq.q_female, rtol=1e-9)


def test_neutral_mutation_accumulates_as_the_closed_form():
    q0 = RNG.uniform(0.0, 0.3, N)
    params = _params(s=0.0, F=0.0, q_founder=q0)
    history = History(epochs=(Epoch(generations=120),),
                      founder=Founder(founders=50, generations_ago=120, frequency="q_founder"))
    out = history_frequencies(history, params, times=(0, 70))
    for t in (0, 70):
        elapsed = 120 - t
        expected = 1 - (1 - q0) * (1 - params["mu"]) ** elapsed
        np.testing.assert_allclose(out.q[t], expected, rtol=1e-10)


def test_a_recessive_lethal_falls_as_haldanes_closed_form():
    q0 = RNG.uniform(0.01, 0.3, N)
    params = _params(mu=0.0, s=1.0, h=0.0, F=0.0, q_founder=q0)
    history = History(epochs=(Epoch(generations=15),),
                      founder=Founder(founders=40, generations_ago=15, frequency="q_founder"))
    out = history_frequencies(history, params, times=(0, 5))
    for t in (0, 5):
        np.testing.assert_allclose(out.q[t], q0 / (1 + (15 - t) * q0), rtol=1e-12)


def test_a_long_epoch_of_changed_selection_reaches_its_own_equilibrium():
    # the map's stable fixed point attracts: after many generations under s/4 the
    # frequency is the exact balance at s/4, started from the balance at s
    params = _params(F=0.0, h=0.5, s=RNG.uniform(0.2, 1.0, N))
    quarter = params["s"] / 4
    params["s_treated"] = quarter
    history = History(epochs=(Epoch(generations=4000, values={"s": "s_treated"}),),
                      ancestral={})
    out = history_frequencies(history, params, times=(0, 4000))
    before = autosomal_balance(params["mu"], params["s"], 0.5).q_hat
    after = autosomal_balance(params["mu"], quarter, 0.5).q_hat
    np.testing.assert_allclose(out.q[4000], before, rtol=1e-12)
    np.testing.assert_allclose(out.q[0], after, rtol=1e-6)


def test_no_ancestral_balance_and_no_founder_frequency_gives_no_frequency():
    params = _params(mu=0.5, s=1e-3, h=0.5, F=0.0)  # mutation overwhelms selection
    out = history_frequencies(History(epochs=(Epoch(generations=3),)), params)
    assert not out.exists.any()
