"""The warnings of an estimate, read from its summary: one rule for the command and report.md.

``qhat estimate`` prints each as ``qhat: warning: ...`` on stderr and exits with status 4
when :func:`read_with_care` gives a reason; report.md lists the same warnings and opens
with the same reason (docs/command-line.md, 'Exit status'; docs/reports.md, 'report.md').
Everything here reads the summary.json document only, so a saved summary gives the same
warnings as the run that wrote it.
"""

from __future__ import annotations

__all__ = ["POOR_FIT_BELOW", "estimate_warnings", "largest_differences", "poorly_reproduced",
           "read_with_care"]

#: two-sided posterior predictive p-value below which an observation is poorly reproduced
#: (posterior predictive p-values: Gelman, Meng & Stern 1996, Statistica Sinica 6:733; the
#: 1 % level is common practice, and the one report.md has always used)
POOR_FIT_BELOW = 0.01


def poorly_reproduced(summary: dict) -> list[dict]:
    """Entries of ``summary["predictive"]`` whose p-value is below :data:`POOR_FIT_BELOW`."""
    return [p for p in summary.get("predictive", ())
            if p.get("p_value") is not None and p["p_value"] < POOR_FIT_BELOW]


def largest_differences(summary: dict) -> dict[str, float]:
    """Largest relative difference of a median or interval end (sampler vs exact), by name.

    Reads ``grid.parameters.<name>.<quantile>``, a number or a table holding
    ``relative_difference``; empty without a grid.
    """
    def relative(entry) -> float:
        return float(entry["relative_difference"] if isinstance(entry, dict) else entry)

    grid = summary.get("grid") or {}
    return {name: max(relative(v) for v in by_quantile.values())
            for name, by_quantile in (grid.get("parameters") or {}).items() if by_quantile}


def _exact_check_text(summary: dict) -> str:
    text = "the exact cross-check disagrees with the sampler"
    worst = largest_differences(summary)
    if worst:
        text += (" (largest relative difference of a median or interval end: "
                 + ", ".join(f"{name} {100 * value:.2f} %" for name, value in worst.items())
                 + ")")
    return text


def _messages(summary: dict) -> list[str]:
    """``diagnostics.messages``; "the sampler did not converge" when not converged without one."""
    diagnostics = summary["diagnostics"]
    messages = list(diagnostics.get("messages") or ())
    if not messages and not diagnostics["converged"]:
        messages = ["the sampler did not converge"]
    return messages


def _exact_check_warning(summary: dict) -> str | None:
    """The exact cross-check disagreeing, unless a diagnostics message already says so.

    Where ``diagnostics.verified`` is present an exact posterior that disagrees leaves
    its own message in ``diagnostics.messages``
    (docs/model.md, 'The sampler and its convergence rule'); an older summary without
    it has only ``grid.agrees``.
    """
    diagnostics = summary["diagnostics"]
    if "verified" in diagnostics:
        fails = diagnostics["verified"] is False and not diagnostics.get("messages")
    else:
        grid = summary.get("grid")
        fails = grid is not None and grid.get("agrees") is False
    return _exact_check_text(summary) if fails else None


def estimate_warnings(summary: dict) -> list[str]:
    """Every warning of an estimate, one sentence each, without a final full stop.

    In order: one per message of ``diagnostics.messages`` (prefixed ``not converged:``
    when ``diagnostics.converged`` is false), the exact cross-check disagreeing when no
    message says so, then one per observation the fitted model reproduces poorly
    (two-sided predictive p-value below :data:`POOR_FIT_BELOW`), then the flags on the
    data (``data_warnings``: fertility at or above the reference; an ``affected`` and a
    ``sporadic`` observation over the same births, which one ``registry`` should hold).

    Parameters
    ----------
    summary : dict
        The summary.json document of an estimate.

    Returns
    -------
    list of str
    """
    prefix = "" if summary["diagnostics"]["converged"] else "not converged: "
    found = [prefix + message for message in _messages(summary)]
    exact = _exact_check_warning(summary)
    if exact:
        found.append(exact)
    found += [f'observation "{p["label"]}": two-sided predictive p-value {p["p_value"]:.3g} '
              f"is below {POOR_FIT_BELOW:g}; the fitted model reproduces it poorly, so "
              "balance may not explain it" for p in poorly_reproduced(summary)]
    found += list(summary.get("data_warnings") or ())
    return found


def read_with_care(summary: dict) -> tuple[str, str] | None:
    """Why the whole estimate should be read with care, or None when it can be trusted.

    ``("Not converged", reason)`` when ``diagnostics.converged`` is false, else
    ``("Not verified", reason)`` when ``diagnostics.verified`` is false (an exact
    posterior disagrees with the sampler; absent or None means no exact check, which is
    no reason); ``qhat estimate`` exits with status 4 in both cases.
    """
    diagnostics = summary["diagnostics"]
    verified = diagnostics.get("verified")
    if diagnostics["converged"] and verified is not False:
        return None
    reasons = _messages(summary)
    if verified is False and not diagnostics.get("messages"):
        reasons.append(_exact_check_text(summary))
    reasons.append("read the exact cross-check under Diagnostics" if verified is False
                   else "rerun with a larger `max_steps` in `[sampler]`")
    reason = "; ".join(reasons)
    head = "Not converged" if not diagnostics["converged"] else "Not verified"
    return head, reason[0].upper() + reason[1:] + "."
