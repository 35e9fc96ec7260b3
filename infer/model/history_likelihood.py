"""What observations see when a study has a ``[history]`` (infer/files/history.py).

Deterministic model: each frequency-dependent observation reads the history's frequency
at its sampling time (:func:`infer.core.history.deterministic.history_frequencies`), as a
:class:`~infer.model.balance_state.BalanceState` whose load is the present-day one at that
frequency. Drift model: its probability is integrated over the allele-frequency
distribution at its sampling time, P(data) = Σ_p w_p P(data | x_p)
(:func:`infer.core.history.distribution.history_distributions`); a sample binomial in x
is averaged over each diffusion cell rather than read at its point
(:meth:`~infer.core.history.distribution.FrequencyDistribution.log_binomial`). Observations
that do not depend on the frequency are unchanged. Rows are parameter vectors; nothing
loops over them.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np

from infer.core.balance import load
from infer.core.history.deterministic import history_frequencies
from infer.core.history.distribution import history_distributions
from infer.core.x_linked import daughter_genotype_frequencies
from infer.model.balance_state import BalanceState, broadcast_params

__all__ = ["history_states", "history_log_likelihoods", "sampling_times", "frequency_times"]


def sampling_times(observations, sampled: dict) -> list[int]:
    """Generations ago each observation was sampled (0 unless ``sampled`` names it)."""
    return [int(sampled.get(obs.label, 0)) for obs in observations]


def frequency_times(observations, times) -> list[int]:
    """The distinct sampling times of the observations that read the frequency, sorted."""
    return sorted({t for obs, t in zip(observations, times, strict=True)
                   if obs.depends_on_frequency})


def history_states(history, params: dict, inheritance: str, times=(0,)) -> dict:
    """Deterministic states at the recorded times (generations ago -> BalanceState).

    ``balance`` carries the load at that frequency under the present-day s, h, F
    (X-linked: ``load_male`` = s·x, ``load_female`` = s(h·Aa + aa) of daughters).
    """
    out = history_frequencies(history, params, inheritance, times=times)
    p = broadcast_params(params)
    states = {}
    for t, q in out.q.items():
        exists = out.exists  # already false wherever a recorded frequency is not finite
        if inheritance == "x-linked":
            x = out.q_male[t]
            _, het, hom = daughter_genotype_frequencies(x, 2.0 * out.q_female[t] - x, p["F"])
            balance = SimpleNamespace(load_male=p["s"] * x,
                                      load_female=p["s"] * (p["h"] * het + hom))
            states[t] = BalanceState(p, inheritance, q, out.q_male[t], out.q_female[t],
                                     exists, balance)
        else:
            balance = SimpleNamespace(load=load(q, p["s"], p["h"], p["F"]))
            states[t] = BalanceState(p, inheritance, q, None, None, exists, balance)
    return states


def history_log_likelihoods(history, params: dict, observations, times, *, drift: bool,
                            inheritance: str, needed, forms) -> np.ndarray:
    """Per-observation log-likelihoods under the history, shape (n, n_observations).

    Parameters
    ----------
    history : infer.core.history.spec.History
    params : dict of str to ndarray
        ``(n,)`` arrays of every parameter (history parameters such as q_founder included).
    observations : list of Observation
    times : list of int
        Sampling time (generations ago) of each observation.
    drift : bool
        Integrate over the propagated distribution (the drift model).
    inheritance : str
    needed : list of int
        The sampling times of the frequency kinds (:func:`frequency_times`).
    forms : list
        Each observation's :meth:`~infer.model.observations.base.Observation.binomial_form`
        under drift (None otherwise), formed once by the model.
    """
    if drift:
        laws = history_distributions(history, params, times=needed) if needed else {}
    else:
        laws = history_states(history, params, inheritance, times=needed) if needed else {}
    plain = None
    columns = []
    for obs, t, form in zip(observations, times, forms, strict=True):
        if obs.depends_on_frequency and drift:
            law = laws[t]
            if form is not None:  # binomial in x: averaged over each diffusion cell
                k, size, constant = form
                ll = constant + law.log_binomial(k, size)
            else:
                ll = law.log_expectation(obs.log_likelihood_given_frequency(law.points, params))
        elif obs.depends_on_frequency:
            ll = obs.log_likelihood(laws[t])
        else:
            if plain is None:
                plain = BalanceState.without_frequency(params, inheritance)
            ll = obs.log_likelihood(plain)
        columns.append(np.asarray(ll, dtype=float))
    n = int(np.shape(params["mu"])[0])
    return np.column_stack(columns) if columns else np.zeros((n, 0))
