"""A history in words and as a JSON-ready record (estimate and check reports share them)."""

from __future__ import annotations

from infer.core.text import fmt

__all__ = ["describe_history", "history_summary"]


def _values_text(values: dict) -> str:
    return ", ".join(f"{k} = {fmt(v) if not isinstance(v, str) else v}"
                     for k, v in values.items())


def describe_history(history, sampled: dict) -> list[str]:
    """Sentences that say which history was assumed (for report.md).

    Parameters
    ----------
    history : infer.core.history.spec.History
    sampled : dict of str to int
        Observation label -> generations ago it was sampled.

    Returns
    -------
    list of str
    """
    lines = []
    for i, e in enumerate(history.epochs, start=1):
        changed = _values_text(dict(e.values)) or "present-day values"
        lines.append(f"Epoch {i}: from {e.begins} to {e.ends} generations ago "
                     f"({e.generations} generations), {changed}.")
    f = history.founder
    if f is not None:
        given = f.frequency if isinstance(f.frequency, str) else fmt(f.frequency)
        frequency = ("drawn from the population before it" if f.frequency is None
                     else f"founder frequency {given}")
        lines.append(f"Founder event {f.generations_ago} generations ago: {f.founders} "
                     f"founders ({2 * f.founders} genes), {frequency}.")
    ancestral = _values_text(history.ancestral_values) or "present-day values"
    lines.append(f"Before {history.length} generations ago the population was at "
                 f"equilibrium under {ancestral}; generations no epoch covers keep the "
                 "present-day values of [parameters].")
    for label, ago in sampled.items():
        lines.append(f'"{label}" was sampled {ago} generations ago.')
    return lines


def history_summary(history, sampled: dict) -> dict:
    """The history as summary.json and check.json store it.

    Keys ``length``, ``epochs`` (generations, begins, ends, values), ``founder`` (or
    None), ``ancestral`` and ``sampled``.
    """
    f = history.founder
    return {
        "length": history.length,
        "epochs": [{"generations": e.generations, "begins": e.begins, "ends": e.ends,
                    "values": dict(e.values)} for e in history.epochs],
        "founder": None if f is None else {"founders": f.founders,
                                           "generations_ago": f.generations_ago,
                                           "frequency": f.frequency},
        "ancestral": history.ancestral_values,
        "sampled": dict(sampled),
    }
