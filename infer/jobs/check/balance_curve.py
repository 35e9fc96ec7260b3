"""The balance curve of a claim: the quantity the data measure, against mu.

With the other parameters held at their claimed values, :func:`claim_balance_curve`
evaluates the exact deterministic balance over a log grid of mu for the quantity the
first frequency observation measures (an incidence, an allele frequency), and the exact
binomial interval of that observation (Clopper & Pearson 1934, Biometrika 26:404). It
is what the check's balance plot draws; nothing here draws or touches files. Under a
``[history]`` the curve is still the equilibrium's (labelled so, for comparison), and the
quantity today under the history at the claimed values is given beside it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from infer.jobs.check.implied import implied_quantities
from infer.jobs.check.trade import PER_LOCUS_RANGE, PER_NUCLEOTIDE_RANGE
from infer.core.stats import clopper_pearson
from infer.files.claim import Claim
from infer.model.balance_state import BalanceState

__all__ = ["MU_GRID", "ObservedBand", "ClaimBalanceCurve", "claim_balance_curve"]

#: (lowest, highest, points) of the log grid of mu the curve is evaluated on
MU_GRID = (1e-9, 1e-2, 241)


@dataclass(frozen=True)
class ObservedBand:
    """An observed count as a fraction with its exact central interval.

    Attributes
    ----------
    count, total : int
        k of n.
    lower, upper : float
        Clopper-Pearson limits at ``level`` (0 when k = 0, 1 when k = n).
    level : float
        Central level of the interval (the study's ``interval``).
    """

    count: int
    total: int
    lower: float
    upper: float
    level: float


@dataclass(frozen=True)
class ClaimBalanceCurve:
    """What the balance plot of ``qhat check`` shows.

    Attributes
    ----------
    quantity : str
        Key of the implied quantity plotted (``q_hat``, ``incidence_dominant``, ...).
    label : str
        What the values are, in words (the y axis).
    mu : numpy.ndarray
        Grid of mu, log spaced over ``MU_GRID``.
    values : numpy.ndarray
        The quantity at each mu (times the observation's penetrance), NaN where no
        interior equilibrium exists.
    claimed_mu, claimed_value : float
        The claimed mu and the quantity it implies (times the penetrance).
    measured_range : tuple of float
        Measured mutation rates on the claim's ``mu_scale`` (``infer.jobs.check.trade``).
    mu_scale : str
        ``"locus"`` or ``"nucleotide"``.
    band : ObservedBand or None
        The observation compared, or None when no frequency observation exists.
    title : str
        What the curve is, for the plot's title.
    today_value : float or None
        Under a ``[history]``: the quantity today under it at the claimed values (times
        the penetrance); the curve and ``claimed_value`` are then the equilibrium's, for
        comparison. None without a history.
    """

    quantity: str
    label: str
    mu: np.ndarray
    values: np.ndarray
    claimed_mu: float
    claimed_value: float
    measured_range: tuple[float, float]
    mu_scale: str
    band: ObservedBand | None
    title: str = "balance under the claim (others held at claimed values)"
    today_value: float | None = None


def _plotted_quantity(claim):
    """(implied key, observed fraction, count, trials, label) for the first frequency datum."""
    for o in claim.study.observations:
        share = o.frequency_statistic()
        if share is not None:
            return share.quantity, share.count, share.trials, share.description, share.scale
    return "q_hat", None, None, "q_hat (equilibrium allele frequency)", 1.0


def claim_balance_curve(claim: Claim, implied: dict) -> ClaimBalanceCurve:
    """The claim's balance curve against mu, the others held at their claimed values.

    Parameters
    ----------
    claim : infer.files.claim.Claim
        A validated claim.
    implied : dict
        The quantities the claimed parameters imply (``CheckResult.implied``).

    Returns
    -------
    ClaimBalanceCurve
    """
    key, k, n, label, penetrance = _plotted_quantity(claim)
    mu = np.geomspace(MU_GRID[0], MU_GRID[1], MU_GRID[2])
    params = {name: np.full(mu.size, value) for name, value in claim.values.items()}
    params["mu"] = mu
    with np.errstate(all="ignore"):
        state = BalanceState.deterministic(params, claim.inheritance)
        values = penetrance * np.where(state.exists, implied_quantities(claim, state)[key],
                                       np.nan)
    band = None
    if n:
        level = claim.study.interval
        band = ObservedBand(k, n, *clopper_pearson(k, n, level), level=level)
    measured = PER_NUCLEOTIDE_RANGE if claim.mu_scale == "nucleotide" else PER_LOCUS_RANGE
    extra = {}
    at_balance = implied
    if "history" in implied:  # the curve is the equilibrium's; today's point beside it
        at_balance = implied["equilibrium"]
        label = f"{label} at equilibrium"
        extra = {"title": "equilibrium, for comparison: the claim assumes a [history]",
                 "today_value": penetrance * implied.get(key, np.nan)}
    return ClaimBalanceCurve(quantity=key, label=label, mu=mu, values=values,
                             claimed_mu=claim.values["mu"],
                             claimed_value=penetrance * at_balance.get(key, np.nan),
                             measured_range=measured, mu_scale=claim.mu_scale, band=band,
                             **extra)
