"""The report.md section of the classic direct and indirect estimates of mu.

Renders ``summary["direct_indirect"]`` (:mod:`infer.jobs.estimate.direct_indirect`);
nothing when the study lacks new-mutation, affected-birth or fertility data.
"""

from __future__ import annotations

from infer.core.text import fmt

__all__ = ["direct_indirect_lines"]


def direct_indirect_lines(summary: dict, pct: str) -> list[str]:
    """Markdown lines of the section, starting with a blank line; empty without the key."""
    d = summary.get("direct_indirect")
    if not d:
        return []
    direct, indirect, ratio = d["direct"], d["indirect"], d["ratio"]
    rows = [
        ["direct (new-mutation cases alone)", f"`{direct['formula']}`", fmt(direct["estimate"]),
         f"{fmt(direct['lower'])} – {fmt(direct['upper'])}"],
        ["indirect (incidence and fertility)", f"`{indirect['formula']}`",
         fmt(indirect["estimate"]), f"{fmt(indirect['lower'])} – {fmt(indirect['upper'])}"],
        ["ratio indirect / direct", "", fmt(ratio["estimate"]),
         f"{fmt(ratio['lower'])} – {fmt(ratio['upper'])}"],
    ]
    lines = ["", "## Direct and indirect estimates of mu", "",
             f"The classic estimates ({d['mode']}), each from its own data only: the direct "
             f"method from {direct['cases']} new-mutation cases in {direct['births']:,} births, "
             f"the indirect method from the incidence x = {fmt(indirect['incidence'])} and "
             f"the relative fertility f = {fmt(indirect['f'])} "
             f"({fmt(indirect['f_lower'])} – {fmt(indirect['f_upper'])}) of affected people "
             "(equilibrium assumed). Intervals: Jeffreys posteriors of the counts.", "",
             "| estimate | formula | value | " + pct + " interval |", "|---|---|---|---|"]
    lines += ["| " + " | ".join(row) + " |" for row in rows]
    lines += ["", d["statement"]]
    return lines
