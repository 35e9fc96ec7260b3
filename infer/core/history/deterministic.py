"""A history under the deterministic model: the exact life-cycle recursion through its epochs.

The ancestral state is the exact balance (:func:`infer.core.balance.autosomal_balance`,
:func:`infer.core.x_linked.x_linked_balance`) under the ancestral values; each generation
is one step of :mod:`infer.core.life_cycle` under the values in force. Rows are parameter
vectors; the only Python loop is over generations.

A founder event without a frequency leaves the deterministic frequency unchanged (the
founders' expected frequency is the population's); with one, the zygote frequency (X-linked:
eggs and sperm alike) is set to it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from infer.core.balance import autosomal_balance
from infer.core.history.spec import History, resolve, row_value
from infer.core.life_cycle import autosomal_step, newborn_frequency, x_linked_step
from infer.core.x_linked import x_linked_balance

__all__ = ["HistoryFrequencies", "history_frequencies"]


@dataclass(frozen=True)
class HistoryFrequencies:
    """Deterministic frequencies at the recorded times.

    Attributes
    ----------
    q : dict of int to ndarray
        Generations ago -> frequency among zygotes (X-linked: over all X chromosomes).
    q_male, q_female : dict of int to ndarray or None
        X-linked only: newborn sons' and daughters' frequencies.
    exists : ndarray of bool
        Every recorded frequency is finite (the ancestral balance exists, or a founder
        frequency replaced it).
    """

    q: dict
    q_male: dict | None
    q_female: dict | None
    exists: np.ndarray


def history_frequencies(history: History, params: dict, inheritance: str = "autosomal",
                        times=(0,)) -> HistoryFrequencies:
    """Carry the exact equilibrium through the history's epochs.

    Parameters
    ----------
    history : History
    params : dict of str to ndarray
        Every life-cycle parameter as an ``(n,)`` array (and any row parameter the
        history names, such as ``q_founder``).
    inheritance : str
        ``"autosomal"`` or ``"x-linked"``.
    times : iterable of int
        Generations ago to record (0 = today).

    Returns
    -------
    HistoryFrequencies
    """
    n = int(np.shape(params["mu"])[0])
    p = resolve(params, history.ancestral_values, n)
    x_linked = inheritance == "x-linked"
    if x_linked:
        eq = x_linked_balance(p["mu"], p["s"], p["h"], F=p["F"], nu=p["nu"], alpha=p["alpha"])
        x = np.asarray(eq.q_male, dtype=float)
        y = 2.0 * np.asarray(eq.q_female, dtype=float) - x
    else:
        eq = autosomal_balance(p["mu"], p["s"], p["h"], F=p["F"], nu=p["nu"])
        x = np.asarray(eq.q_hat, dtype=float)
        y = None
    # NaN where no ancestral balance exists, unless a founder frequency replaces it
    x = np.where(np.asarray(eq.exists, dtype=bool), x, np.nan)
    exists = np.ones(n, dtype=bool)
    q, q_male, q_female = {}, ({} if x_linked else None), ({} if x_linked else None)
    for action in history.schedule(times):
        if action[0] == "steps":
            _, values, count = action
            r = resolve(params, values, n)
            for _ in range(count):
                if x_linked:
                    x, y = x_linked_step(x, y, r["mu"], r["s"], r["h"], F=r["F"], nu=r["nu"],
                                         alpha=r["alpha"])
                else:
                    x = autosomal_step(x, r["mu"], r["s"], r["h"], F=r["F"], nu=r["nu"])
        elif action[0] == "found":
            if history.founder.frequency is not None:
                x = row_value(params, history.founder.frequency, n).copy()
                y = x.copy() if x_linked else None
        else:
            t = action[1]
            if x_linked:
                male, female, whole = newborn_frequency(x, y)
                q[t], q_male[t], q_female[t] = whole, male, female
            else:
                q[t] = np.asarray(x, dtype=float).copy()
    for value in q.values():
        exists &= np.isfinite(value)
    return HistoryFrequencies(q, q_male, q_female, exists)
