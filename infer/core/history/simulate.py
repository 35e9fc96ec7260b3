"""Forward Wright–Fisher replicates of a history (the life cycle of docs/model.md, F = 0).

Each replicate starts from a draw of Wright's stationary density under the ancestral
values (:func:`infer.core.drift.stationary.sample_stationary`); each generation its zygotes
at x are selected and their gametes mutate (:func:`infer.core.life_cycle.autosomal_step`),
and the next zygotes are 2Ne genes drawn binomially (2Ne rounded to whole genes); a founder
event draws 2·founders genes from the zygotes. All replicates move at once; randomness comes
from the one generator passed in.
"""

from __future__ import annotations

import numpy as np

from infer.core.drift.stationary import sample_stationary
from infer.core.history.spec import History, resolve, row_value
from infer.core.life_cycle import autosomal_step

__all__ = ["simulate_history"]


def simulate_history(rng: np.random.Generator, history: History, params: dict,
                     replicates: int, times=(0,), start=None) -> dict:
    """Replicate frequencies among zygotes at each recorded time.

    Parameters
    ----------
    rng : numpy.random.Generator
    history : History
    params : dict of str to float
        One parameter vector (Ne, mu, s, h, nu and any row parameter the history names).
    replicates : int
    times : iterable of int
        Generations ago to record.
    start : array_like, optional
        Starting frequencies (default: draws from Wright's stationary density).

    Returns
    -------
    dict of int to ndarray
        Generations ago -> (replicates,) frequencies.
    """
    rows = {k: np.full(replicates, float(v)) for k, v in params.items()}
    ancestral = resolve(rows, history.ancestral_values, replicates)
    if start is None:
        x = sample_stationary(rng, ancestral["Ne"], ancestral["mu"], ancestral["s"],
                              ancestral["h"], ancestral["nu"])
    else:
        x = np.broadcast_to(np.asarray(start, dtype=float), (replicates,)).copy()
    recorded = {}
    for action in history.schedule(times):
        if action[0] == "steps":
            _, values, count = action
            r = resolve(rows, values, replicates)
            genes = int(np.rint(2.0 * r["Ne"][0]))
            for _ in range(count):
                q = autosomal_step(x, r["mu"], r["s"], r["h"], 0.0, r["nu"])
                x = rng.binomial(genes, np.clip(q, 0.0, 1.0)) / genes
        elif action[0] == "found":
            founder = history.founder
            if founder.frequency is not None:
                x = row_value(rows, founder.frequency, replicates).copy()
            else:
                genes = 2 * founder.founders
                x = rng.binomial(genes, x) / genes
        else:
            recorded[action[1]] = x.copy()
    return recorded
