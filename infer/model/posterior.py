"""The vectorised log posterior of a study, in unconstrained coordinates.

A row of ``z`` holds one value per free parameter on the real line; each prior maps it
to the parameter's support and returns log|dx/dz|, so the density in z is

    log p(z | data) = sum_j [log prior_j(x_j) + log|dx_j/dz_j|] + sum_i log L_i(x) + const.

Under ``model = "deterministic"`` every observation sees the exact balance frequency;
under ``model = "drift"`` each frequency-dependent observation's probability is
integrated over Wright's stationary density (docs/model.md, 'Observation models').
A study with a ``[history]`` sees the history's frequency, or its propagated distribution,
at each observation's sampling time instead (:mod:`infer.model.history_likelihood`).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from infer.core.drift import stationary as drift
from infer.core.history.distribution import history_distributions
from infer.model.balance_state import BalanceState, with_sex_average
from infer.model.history_likelihood import (
    frequency_times,
    history_log_likelihoods,
    history_states,
    sampling_times,
)
from infer.model.priors.parsing import PARAMETERS, Fixed

__all__ = ["Model"]


class Model:
    """Log posterior of a study over arrays of parameter vectors.

    Parameters
    ----------
    study : infer.files.study.Study
        A validated study.

    Attributes
    ----------
    free : list of str
        Free parameter names, in canonical order (the columns of ``z``).
    """

    def __init__(self, study):
        self.study = study
        self.free = list(study.free)
        self.priors = [study.parameters[name] for name in self.free]
        self.fixed = {
            name: float(p.value) for name, p in study.parameters.items() if isinstance(p, Fixed)
        }
        self.observations = list(study.observations)
        self.inheritance = study.inheritance
        self.drift = study.model == "drift"
        #: the study's [history] (None: at equilibrium) and each observation's sampling time
        self.history = getattr(study, "history", None)
        self.sampling_times = sampling_times(study.observations,
                                             getattr(study, "sampled", {}) or {})
        self.sex_specific = bool(getattr(study, "sex_specific", False))
        #: the distinct sampling times of the frequency kinds under a history
        self._history_times = frequency_times(self.observations, self.sampling_times)
        # (k, n, constant) of the drift model's binomial sample probabilities, formed once
        self._binomial_forms = [
            obs.binomial_form() if self.drift and obs.depends_on_frequency else None
            for obs in self.observations
        ]
        missing = [n for n in PARAMETERS if n not in self.fixed and n not in self.free]
        if missing:
            raise KeyError(f"parameters without a value: {missing}")

    @property
    def ndim(self) -> int:
        """Number of free parameters."""
        return len(self.free)

    # -- coordinates -------------------------------------------------------------------
    def to_parameters(self, z: np.ndarray) -> tuple[dict[str, np.ndarray], np.ndarray]:
        """Map unconstrained rows ``z`` (n, ndim) to parameter arrays and log|dx/dz|."""
        z = np.atleast_2d(np.asarray(z, dtype=float))
        n = z.shape[0]
        params = self.complete({}, n)
        log_jacobian = np.zeros(n)
        for j, (name, prior) in enumerate(zip(self.free, self.priors, strict=True)):
            x, log_jac = prior.from_unconstrained(z[:, j])
            params[name] = np.asarray(x, dtype=float)
            log_jacobian = log_jacobian + log_jac
        return self._with_sex_average(params), log_jacobian

    def to_unconstrained(self, params: Mapping[str, np.ndarray]) -> np.ndarray:
        """Map free-parameter arrays to unconstrained rows (n, ndim)."""
        columns = [prior.to_unconstrained(np.asarray(params[name], dtype=float))
                   for name, prior in zip(self.free, self.priors, strict=True)]
        return np.column_stack(columns)

    def complete(self, free_values: Mapping[str, np.ndarray], n: int) -> dict[str, np.ndarray]:
        """Every life-cycle parameter as an (n,) array: the given free ones, the fixed ones."""
        params = {name: np.full(n, value) for name, value in self.fixed.items()}
        for name, value in free_values.items():
            params[name] = np.broadcast_to(np.asarray(value, dtype=float), (n,)).copy()
        return self._with_sex_average(params)

    def _with_sex_average(self, params: dict) -> dict:
        """Set s to (s_male + s_female)/2 when the study gives selection by sex."""
        return with_sex_average(params) if self.sex_specific else params

    # -- densities ---------------------------------------------------------------------
    def log_prior(self, params: Mapping[str, np.ndarray]) -> np.ndarray:
        """Sum of the free parameters' log prior densities on their own scale."""
        n = len(next(iter(params.values())))
        total = np.zeros(n)
        for name, prior in zip(self.free, self.priors, strict=True):
            total = total + prior.log_density(params[name])
        return total

    def state(self, params: Mapping[str, np.ndarray]) -> BalanceState:
        """The deterministic balance state of each row.

        Under a deterministic ``[history]``: the history's state today.
        """
        if self.history is not None and not self.drift:
            return history_states(self.history, dict(params), self.inheritance)[0]
        return BalanceState.deterministic(dict(params), self.inheritance)

    def sampling_states(self, params: Mapping[str, np.ndarray],
                        rng: np.random.Generator) -> list[BalanceState | None]:
        """Under a history, the state each frequency kind is drawn at (else None).

        Deterministic: the history's state at the observation's sampling time; drift: a
        frequency per row drawn from the propagated distribution at that time (for
        predictive draws). None for kinds that do not read the frequency, and for every
        observation when the study has no history.
        """
        states = [None] * len(self.observations)
        if self.history is None:
            return states
        needed = self._history_times
        if self.drift:
            laws = history_distributions(self.history, dict(params), times=needed)
            at = {t: BalanceState.at_frequency(params, law.draw(rng)) for t, law in laws.items()}
        else:
            at = history_states(self.history, dict(params), self.inheritance, times=needed)
        for i, (o, t) in enumerate(zip(self.observations, self.sampling_times, strict=True)):
            if o.depends_on_frequency:
                states[i] = at[t]
        return states

    def log_likelihoods(self, params: Mapping[str, np.ndarray]) -> np.ndarray:
        """Per-observation log-likelihoods, shape (n, n_observations).

        The deterministic balance is solved only when some observation reads it (under
        ``model = "drift"`` the frequency-dependent ones integrate over Wright's density).
        """
        if self.history is not None:
            return history_log_likelihoods(
                self.history, dict(params), self.observations, self.sampling_times,
                drift=self.drift, inheritance=self.inheritance, needed=self._history_times,
                forms=self._binomial_forms)
        state = None
        columns = []
        for observation, form in zip(self.observations, self._binomial_forms, strict=True):
            if self.drift and observation.depends_on_frequency:
                rates = (params["Ne"], params["mu"], params["s"], params["h"], params["nu"])
                if form is not None:
                    k, n, constant = form
                    ll = constant + drift.log_binomial_probability(k, n, *rates)
                else:
                    ll = drift.log_expectation(observation.frequency_likelihood(params), *rates)
            else:
                if state is None:
                    state = self.state(params)
                ll = observation.log_likelihood(state)
            columns.append(np.asarray(ll, dtype=float))
        if columns:
            return np.column_stack(columns)
        return np.zeros((len(self.state(params).q), 0))  # no observations

    def __call__(self, z: np.ndarray) -> np.ndarray:
        """Log posterior and per-observation log-likelihoods for rows ``z``.

        Returns
        -------
        ndarray, shape (n, 1 + n_observations)
            Column 0 is the log posterior density in z (``-inf`` outside the support or
            where no balance exists); the rest are the log-likelihood terms.
        """
        with np.errstate(all="ignore"):
            params, log_jacobian = self.to_parameters(z)
            lp = self.log_prior(params) + log_jacobian
            ll = self.log_likelihoods(params)
            total = lp + ll.sum(axis=1)
        total = np.where(np.isfinite(total), total, -np.inf)
        return np.column_stack([total, ll])

    def log_posterior(self, z: np.ndarray) -> np.ndarray:
        """Column 0 of :meth:`__call__`: the log posterior density in z."""
        return self(z)[:, 0]

    # -- starting points ---------------------------------------------------------------
    def prior_draws(self, rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
        """Draws of the free parameters from their priors."""
        return {name: np.asarray(prior.sample(rng, n), dtype=float)
                for name, prior in zip(self.free, self.priors, strict=True)}

    def initial_points(self, rng: np.random.Generator, n: int, pool: int = 40) -> np.ndarray:
        """Starting rows for n walkers: the best of ``pool * n`` prior draws.

        Each ensemble calls this with its own share of the generator, so ensembles start
        from independent prior draws.
        """
        for _ in range(20):
            draws = self.prior_draws(rng, pool * n)
            z = self.to_unconstrained(draws)
            lp = self.log_posterior(z)
            finite = np.flatnonzero(np.isfinite(lp))
            if finite.size >= n:
                best = finite[np.argsort(lp[finite])[::-1][:n]]
                return z[best]
        raise RuntimeError("no starting point with finite posterior density was found")
