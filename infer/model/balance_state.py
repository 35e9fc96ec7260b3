"""The model state handed to observations: parameter arrays plus the equilibrium they imply.

One row per parameter vector (walker, grid point or prior draw).  Observations read
``state.params`` for rates and ``state.q`` (``q_male``, ``q_female`` for an X-linked
locus) for frequencies among newborns; nothing here loops over rows.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from infer.core.choices import INHERITANCES
from infer.core.supports import ASCERTAINMENT, BALANCE_PARAMETERS, SEX_SELECTION

__all__ = ["BalanceState", "broadcast_params", "with_sex_average", "INHERITANCES"]

_NAMES = (*BALANCE_PARAMETERS, *ASCERTAINMENT, *SEX_SELECTION)


def with_sex_average(params: dict) -> dict:
    """``params`` with s = (s_male + s_female)/2 where s is NaN and the sexes' are given.

    Selection by sex: the study gives no s of its own (infer.model.priors.parsing,
    ``SexAverage``); every kind that reads s reads the sexes' mean.
    """
    s = np.asarray(params.get("s", np.nan), dtype=float)
    male = np.asarray(params.get("s_male", np.nan), dtype=float)
    if np.isnan(s).any() and np.isfinite(male).any():
        mean = 0.5 * (male + np.asarray(params["s_female"], dtype=float))
        params["s"] = np.where(np.isnan(s), mean, s)
    return params


def broadcast_params(params: dict) -> dict[str, np.ndarray]:
    """Return every life-cycle parameter as a float array of one common shape ``(n,)``.

    Parameters
    ----------
    params : dict
        Maps each of mu, s, h, F, nu, Ne, alpha to a scalar or array; scalars
        (fixed parameters) are broadcast to the rows of the arrays. The ascertainment
        parameters (penetrance, completeness, phenocopy) take their neutral values
        (1, 1, 0) when absent, s_male and s_female NaN ("the same as s"); a NaN s
        beside given s_male and s_female becomes their mean.

    Raises
    ------
    KeyError
        When a life-cycle parameter is missing.
    """
    missing = [name for name in BALANCE_PARAMETERS if name not in params]
    if missing:
        raise KeyError(f"parameters missing from the state: {', '.join(missing)}")
    params = {**ASCERTAINMENT, **SEX_SELECTION, **params}
    arrays = {name: np.asarray(params[name], dtype=float) for name in _NAMES}
    # parameters of one observation (a registry's own completeness) travel along
    arrays.update({name: np.asarray(value, dtype=float) for name, value in params.items()
                   if name not in arrays})
    arrays = with_sex_average(arrays)
    shapes = {a.shape for a in arrays.values()}
    if len(shapes) == 1 and len(next(iter(shapes))) == 1:
        return arrays  # the common case: already (n,) arrays
    shape = np.broadcast_shapes(*shapes)
    if shape == ():
        shape = (1,)
    return {name: np.broadcast_to(a, shape).reshape(shape) for name, a in arrays.items()}


@dataclass
class BalanceState:
    """Parameters and equilibrium frequencies for ``n`` rows (the model's state).

    Named for the balance it carries, and so as not to be confused with ``emcee.State``.

    Attributes
    ----------
    params : dict of str to ndarray
        Every life-cycle parameter (mu, s, h, F, nu, Ne, alpha) as an ``(n,)`` array.
    inheritance : str
        ``"autosomal"`` or ``"x-linked"``.
    q : ndarray
        Frequency of the deleterious allele among zygotes (X-linked: over all X
        chromosomes); NaN where there is no stable interior equilibrium.
    q_male, q_female : ndarray or None
        X-linked only: frequency among newborn sons and among daughters' X chromosomes.
    exists : ndarray of bool
        A stable interior equilibrium exists in that row.
    balance : object, optional
        The full balance result (load, mean fitness...), when computed.
    """

    params: dict[str, np.ndarray]
    inheritance: str
    q: np.ndarray
    q_male: np.ndarray | None
    q_female: np.ndarray | None
    exists: np.ndarray
    balance: Any = None

    @property
    def n(self) -> int:
        """Number of rows."""
        return int(np.shape(self.exists)[0])

    @classmethod
    def deterministic(cls, params: dict, inheritance: str) -> BalanceState:
        """The exact deterministic equilibrium of each row (infinite population).

        Parameters
        ----------
        params : dict
            Every life-cycle parameter, scalars or ``(n,)`` arrays.
        inheritance : str
            ``"autosomal"`` or ``"x-linked"``.
        """
        from infer.core import balance

        p = broadcast_params(params)
        if inheritance == "autosomal" and np.isfinite(p["s_male"]).any():
            from infer.core.two_sex import two_sex_balance

            result = two_sex_balance(p["mu"], p["s_male"], p["s_female"], p["h"], F=p["F"],
                                     nu=p["nu"])
            q = np.asarray(result.q_hat, dtype=float)
            exists = np.asarray(result.exists, dtype=bool) & np.isfinite(q)
            return cls(p, inheritance, q, None, None, exists, result)
        if inheritance == "autosomal":
            # h outside [0, 1] reaches here only where a study allows it (files/study.py)
            result = balance.autosomal_balance(p["mu"], p["s"], p["h"], F=p["F"], nu=p["nu"],
                                               any_dominance=True)
            q = np.asarray(result.q_hat, dtype=float)
            exists = np.asarray(result.exists, dtype=bool) & np.isfinite(q)
            return cls(p, inheritance, q, None, None, exists, result)
        if inheritance == "x-linked":
            result = balance.x_linked_balance(
                p["mu"], p["s"], p["h"], F=p["F"], nu=p["nu"], alpha=p["alpha"]
            )
            q = np.asarray(result.q_hat, dtype=float)
            q_male = np.asarray(result.q_male, dtype=float)
            q_female = np.asarray(result.q_female, dtype=float)
            exists = (
                np.asarray(result.exists, dtype=bool)
                & np.isfinite(q)
                & np.isfinite(q_male)
                & np.isfinite(q_female)
            )
            return cls(p, inheritance, q, q_male, q_female, exists, result)
        raise ValueError(f"inheritance must be one of {', '.join(INHERITANCES)}: {inheritance!r}")

    @classmethod
    def at_frequency(cls, params: dict, q) -> BalanceState:
        """An autosomal state at given frequencies ``q`` (e.g. draws from Wright's density).

        Used for predictive draws under the drift model: every row exists.
        """
        p = broadcast_params(params)
        q = np.broadcast_to(np.asarray(q, dtype=float), p["mu"].shape).copy()
        return cls(p, "autosomal", q, None, None, np.ones(q.shape, dtype=bool))

    def tile(self, times: int) -> BalanceState:
        """The rows repeated ``times`` over, in order (``numpy.tile``), without ``balance``.

        Used to draw many predictive replicates per row in one vectorised call.
        """
        def repeat(values):
            return None if values is None else np.tile(values, times)

        return BalanceState({k: np.tile(v, times) for k, v in self.params.items()},
                            self.inheritance, repeat(self.q), repeat(self.q_male),
                            repeat(self.q_female), repeat(self.exists))

    @classmethod
    def without_frequency(cls, params: dict, inheritance: str) -> BalanceState:
        """Parameters only, for observation kinds that do not depend on the frequency."""
        p = broadcast_params(params)
        nan = np.full(p["mu"].shape, np.nan)
        x_linked = inheritance == "x-linked"
        return cls(
            p,
            inheritance,
            nan,
            nan.copy() if x_linked else None,
            nan.copy() if x_linked else None,
            np.ones(nan.shape, dtype=bool),
        )
