"""The history against equilibrium: the same data refitted with no history.

Reference: at equilibrium a recessive's frequency is sqrt(mu/s) (Haldane 1927; common
practice), so a frequency of a few per cent with mu = 1e-5 needs s near mu/q² ≈ 0.006,
while after a founder event 16 generations ago with founders at ~7 % the same frequency
fits strong selection (q_t = q_0/(1 + s t q_0) for a recessive, common practice).
"""

import numpy as np

from infer.files.study import load_study
from infer.jobs.estimate.history_comparison import (
    compare_history_with_equilibrium,
    equilibrium_twin,
)
from conftest import DEMO

STUDY = DEMO / "skerra-founder-island.toml"


def test_the_twin_drops_the_history_and_what_only_it_reads():
    study = load_study(STUDY)
    twin = equilibrium_twin(study)
    assert twin.history is None and twin.sampled == {}
    assert twin.free == ["s"] and "q_founder" not in twin.parameters


def test_the_founder_island_history_changes_the_answer():
    study = load_study(STUDY)
    rng = np.random.default_rng(3)
    # posterior draws near the history's answer (the comparison only reads their quantiles)
    posterior = {"s": rng.normal(0.6, 0.08, 4000), "q_founder": rng.normal(0.07, 0.005, 4000)}
    out = compare_history_with_equilibrium(study, posterior, rng)
    q_today = 170 / 4000
    assert out["history_matters"]
    assert out["left_out"] == ["q_founder"]
    # the equilibrium reads q ~ sqrt(mu/s): s near mu/q² (and the fertility data pull up)
    assert 0.3 * 1e-5 / q_today**2 < out["equilibrium"]["s"]["median"] < 0.05
    assert out["changes"]["s"] > 0.2
    assert "changes the answer" in out["statement"]
    assert out["history"]["founder"] == {"founders": 80, "generations_ago": 16,
                                         "frequency": "q_founder"}
    assert any("Founder event 16 generations ago" in line for line in out["description"])


def test_a_drift_history_is_headlined_with_its_frequency_today_not_the_balance():
    """The terminal's frequency line under a drift history is the history's mean today
    (frequency_today), never the deterministic balance (docs/reports.md)."""
    from types import SimpleNamespace

    from infer.reporting.markdown import terminal_summary

    summary = {
        "interval": 0.95,
        "parameters": {"s": {"median": 0.2, "lower": 0.01, "upper": 0.7, "contraction": 0.3}},
        "derived": {"q_hat": {"median": 1.6e-4, "lower": 4e-5, "upper": 3e-3}},
        "history_comparison": {"frequency_today": {"median": 0.053, "lower": 0.0067,
                                                   "upper": 0.098}},
        "diagnostics": {"converged": True, "messages": []},
    }
    result = SimpleNamespace(summary=summary, free=["s"],
                             study=SimpleNamespace(title="drift history", model="drift"))
    text = terminal_summary(result, "out")
    assert "q_today" in text and "0.053" in text and "0.00016" not in text
    assert "1.60e-04" not in text
