"""The warnings of an estimate read from a summary dict (infer/jobs/estimate/warnings.py).

The reference is the contract of summary.json (docs/reports.md) and of the exit status
(docs/command-line.md, 'Exit status'): ``diagnostics.converged`` false or
``diagnostics.verified`` false means "read with care" (exit 4), ``verified`` absent or
None means no exact check; the 1 % predictive level is common practice (Gelman, Meng &
Stern 1996, Statistica Sinica 6:733, for the p-values themselves).
"""

from __future__ import annotations

import copy

import pytest

from infer.jobs.estimate.warnings import estimate_warnings, read_with_care

CLEAN = {
    "diagnostics": {"converged": True, "messages": []},
    "predictive": [{"label": "births", "p_value": 0.42}, {"label": "cases", "p_value": 0.01},
                   {"label": "no tails", "p_value": None}],
    "grid": {"agrees": True, "parameters": {"mu": {"median": 0.001, "lower": 0.01,
                                                   "upper": 0.02}}},
}


def changed(**parts):
    summary = copy.deepcopy(CLEAN)
    for key, value in parts.items():
        if key in summary and isinstance(value, dict):
            summary[key].update(value)
        else:
            summary[key] = value
    return summary


def test_a_clean_summary_has_no_warning():
    """Converged, the grid agrees, every p-value at or above 0.01 (0.01 itself is not below)."""
    assert estimate_warnings(CLEAN) == [], estimate_warnings(CLEAN)
    assert read_with_care(CLEAN) is None


def test_one_warning_per_convergence_message():
    messages = ["stopped at the step cap of 20 steps per ensemble before every criterion held",
                "3 walkers stayed stuck far below the posterior mode after two restarts"]
    summary = changed(diagnostics={"converged": False, "messages": messages})
    found = estimate_warnings(summary)
    assert len(found) == 2 and all(m in w for m, w in zip(messages, found, strict=True)), found
    head, reason = read_with_care(summary)
    assert head == "Not converged" and all(m[1:] in reason for m in messages), reason
    assert "max_steps" in reason, "the reason must say how to rerun"


def test_not_converged_without_a_message_still_warns():
    summary = changed(diagnostics={"converged": False, "messages": []})
    assert estimate_warnings(summary) == ["not converged: the sampler did not converge"]
    assert read_with_care(summary)[0] == "Not converged"


@pytest.mark.parametrize("verified", [None, "absent", True])
def test_verified_absent_none_or_true_is_no_reason(verified):
    summary = copy.deepcopy(CLEAN)
    if verified != "absent":
        summary["diagnostics"]["verified"] = verified
    assert read_with_care(summary) is None and estimate_warnings(summary) == []


def test_verified_false_is_a_reason_and_one_warning():
    summary = changed(diagnostics={"verified": False})
    assert read_with_care(summary)[0] == "Not verified", read_with_care(summary)
    found = estimate_warnings(summary)
    assert len(found) == 1 and found[0].startswith(
        "the exact cross-check disagrees with the sampler"), found


def test_grid_disagreeing_names_the_largest_difference_once():
    """grid.agrees false (and verified false, the same fact): one warning, with the largest
    relative difference of each parameter (2 % here, from upper)."""
    summary = changed(grid={"agrees": False}, diagnostics={"verified": False})
    found = estimate_warnings(summary)
    assert len(found) == 1 and "mu 2.00 %" in found[0], found


def test_poorly_reproduced_observations_warn_by_label():
    summary = changed(predictive=[{"label": "births", "p_value": 0.0},
                                  {"label": "cases", "p_value": 0.0099},
                                  {"label": "fertility", "p_value": 0.5}])
    found = estimate_warnings(summary)
    assert [w.split('"')[1] for w in found] == ["births", "cases"], found
    assert read_with_care(summary) is None, "a poor fit alone does not change the exit status"


def test_a_disagreement_already_in_the_messages_is_not_repeated():
    """The exact posterior overrules the sampler (docs/model.md): converged false, verified
    false and its own message; one warning for it, none added."""
    message = "the sampled posterior disagrees with the exact posterior"
    summary = changed(grid={"agrees": False},
                      diagnostics={"converged": False, "verified": False,
                                   "messages": [message]})
    assert estimate_warnings(summary) == [f"not converged: {message}"]
    head, reason = read_with_care(summary)
    assert head == "Not converged" and message[1:] in reason, reason


def test_an_older_summary_without_verified_warns_on_the_grid_but_keeps_status_0():
    """No ``verified`` key (absent counts as None): a disagreeing grid is a warning only."""
    summary = changed(grid={"agrees": False})
    found = estimate_warnings(summary)
    assert len(found) == 1 and found[0].startswith("the exact cross-check disagrees"), found
    assert read_with_care(summary) is None


def test_grid_entries_as_tables_of_relative_differences_are_read_too():
    """grid.parameters.<name>.<quantile> may be a table with ``relative_difference``."""
    from infer.jobs.estimate.warnings import largest_differences

    summary = changed(grid={"agrees": False, "parameters": {
        "mu": {k: {"relative_difference": v, "agrees": v < 0.02}
               for k, v in (("median", 0.01), ("lower", 0.03), ("upper", 0.002))}}})
    assert largest_differences(summary) == {"mu": 0.03}
    assert "mu 3.00 %" in estimate_warnings(summary)[0], estimate_warnings(summary)
