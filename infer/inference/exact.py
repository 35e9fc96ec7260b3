"""Exact posterior by quadrature, for studies with one, two or three free parameters.

The log posterior density in unconstrained coordinates z (``Model.log_posterior``) is
integrated in three steps.

1. **Locate.** Axis-aligned coarse passes, the first over the prior's range (its 1e-10
   and 1 - 1e-10 quantiles), zoom onto the box outside which each coarse marginal leaves
   less than 1e-8 of the mass on either side. (A box by density drop would be far too
   wide along a prior-dominated direction, whose density falls only exponentially in z.)
2. **Slice.** Each parameter j gets a grid of its own: nodes t of z_j over the box, and
   for every t the other coordinates on a triangular (nested) placement. With three
   parameters the middle coordinate is placed per slice, z_k = c_k(t) + s_k(t) v, and
   the inner one per row, z_l = c_l(t, z_k) + s_l(t, z_k) v' (the inner one is the
   coordinate the others pin down best); with two there is only the inner one. Centres
   c and scales s are each slice's (row's) own conditional mean and standard deviation:
   from the coarse pass at the first level, from the level before at every later one,
   so a thin diagonal ridge, an L-shaped or curved one, is followed rather than aliased.
   The map is triangular, so its Jacobian is the product of the per-axis steps, and the
   marginal density of z_j at t is a nested trapezoid sum, which converges
   geometrically for a smooth density that vanishes at the faces (Trefethen & Weideman
   2014, "The exponentially convergent trapezoidal rule", SIAM Review 56:385); v runs
   through a sinh map (:mod:`infer.inference.exact_slices`), so exponential tails cost
   few nodes. A grid that fails a check is repaired and evaluated again: one whose face
   borders on more than its share of 1e-7 of the mass is recentred on its own moments
   and widened by 1.5; one whose peak sits on a face jumps to the vertex of the parabola
   through its last three log densities (a Newton step); one whose mass sits on a
   single node zooms onto it. An end of the t axis that borders on mass moves out by a
   quarter of the box.
3. **Refine.** Points per axis grow by 1.5 per level until every reported quantile
   (median and both interval ends) moves by less than ``tolerance`` (relative to its
   value, but never to less than 1 % of the interval's width, so that a value at or
   near 0 is judged against the width) between two successive levels,
   or an evaluation cap is reached (the posterior is then "not settled"). The cap is a
   number of evaluations, never a clock: the same study gives the same answer.

The marginal distribution function integrates the cubic Hermite interpolant of the
marginal density (slopes by central differences, limited so it stays non-negative): the
trapezoid rule with its Euler-Maclaurin end correction, fourth order in the step
(Davis & Rabinowitz 1984, "Methods of Numerical Integration", section 2.9). Quantiles
solve that piecewise quartic in z and are mapped back to each parameter (the maps are
monotone, so quantiles carry over exactly).

Limits. Each slice or row is placed around one centre, so a conditional with two
separated modes (a ridge that folds back on itself, such as y = x^2 seen from y) is
resolved only once the nodes are finer than each mode, and may settle early on half of
it (measured on that parabola: 30 % off). The ridges of mutation-selection studies in
these coordinates are monotone (mu / (h s), h s and the like), which the placement
follows: thin, diagonal, curved or L-shaped.

Sampled draws are checked against the result in probability (:func:`verify_draws`): at
a sampled quantile q_p the exact distribution function F(q_p) should lie within Monte
Carlo error of p, whose standard deviation is sqrt(p (1 - p) / ESS) with ESS the
effective sample size of the indicator 1[x <= exact quantile] (Vehtari, Gelman, Simpson,
Carpenter & Bürkner 2021, Bayesian Analysis 16:667, section 4.3).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from infer.core.stats import central_quantiles
from infer.inference.exact_marginal import Marginal
from infer.inference.exact_slices import WIDENINGS, level, locate, nodes

__all__ = ["ExactPosterior", "exact_posterior", "verify_draws",
           "MAX_DIMENSIONS", "EVALUATION_CAP", "DRIFT_EVALUATION_CAP", "TOLERANCE"]

#: free parameters up to which the quadrature runs
MAX_DIMENSIONS = 3
#: evaluation cap of the refinement (deterministic: same study, same answer)
EVALUATION_CAP = 8_000_000
#: the cap under ``model = "drift"``, where each evaluation integrates Wright's density
DRIFT_EVALUATION_CAP = 3_000_000
#: default relative move of every quantile below which the refinement stops
TOLERANCE = 1e-3

#: the first level's points per axis, by dimension
_START = {1: 64, 2: 32, 3: 24}
#: growth of the points per axis from level to level
_GROWTH = 1.5
#: nodes of t per node of the other axes (t is one axis: its nodes are cheap)
_T_FACTOR = 2.0
_KEYS = ("median", "lower", "upper")


@dataclass
class ExactPosterior:
    """Marginal posteriors computed by quadrature.

    Attributes
    ----------
    names : list of str
    axes : dict
        name -> 2001 parameter values (constrained scale) spanning the quadrature's
        range of that parameter, increasing in z.
    marginal_density : dict
        name -> marginal posterior density at ``axes[name]`` (per unit of the parameter).
    quantiles : dict
        name -> {"median", "lower", "upper"} at the study's interval.
    points : int
        Posterior evaluations used in all.
    cdf : dict
        name -> marginal posterior distribution function at ``axes[name]``.
    settled : bool
        True when the last refinement of every parameter moved each of its quantiles by
        less than the tolerance.
    levels : list of tuple
        ``(points_per_axis, quantiles)`` of each refinement level (``quantiles`` as in
        the attribute of that name; a parameter that settled earlier keeps its value).
    change : float
        Largest relative move of a quantile at the last refinement of each parameter.
    """

    names: list[str]
    axes: dict[str, np.ndarray]
    marginal_density: dict[str, np.ndarray]
    quantiles: dict[str, dict[str, float]]
    points: int
    cdf: dict[str, np.ndarray] | None = None
    settled: bool = True
    levels: list = field(default_factory=list)
    change: float = 0.0
    _marginals: dict = field(default_factory=dict, repr=False)
    _priors: dict = field(default_factory=dict, repr=False)

    def range_of(self, name: str) -> tuple[float, float]:
        """Smallest and largest value ``name`` may take (its prior's range or grid)."""
        if name in self._priors:
            lower, upper = self._priors[name].quantile([0.0, 1.0])
            return float(lower), float(upper)
        return float(self.axes[name][0]), float(self.axes[name][-1])

    def cdf_at(self, name: str, value: float) -> float:
        """Marginal posterior probability that ``name`` is at most ``value``."""
        if name in self._marginals:
            prior = self._priors[name]
            lower, upper = self.range_of(name)
            # at or past an end of the prior's range (the unconstrained map is +-inf
            # or undefined there) all or none of the mass lies below
            if value >= upper:
                return 1.0
            if value <= lower:
                return 0.0
            z = prior.to_unconstrained(np.array([float(value)]))
            return float(self._marginals[name].cdf(z)[0])
        return float(np.interp(value, self.axes[name], self.cdf[name], left=0.0, right=1.0))



def marginal_quantiles(prior, marginal: Marginal, interval: float) -> dict:
    """Median and central ``interval`` of one parameter from its quadrature marginal."""
    tail = (1.0 - interval) / 2.0
    x, _ = prior.from_unconstrained(marginal.quantile([0.5, tail, 1.0 - tail]))
    return dict(zip(_KEYS, (float(v) for v in x), strict=True))


def largest_quantile_move(old: dict, new: dict) -> float:
    """Largest relative move of a quantile.

    Relative to the value, but never to less than 1 % of the interval's width: a
    quantile at (or next to) 0 is judged against the width instead.
    """
    width = abs(new["upper"] - new["lower"])
    worst = 0.0
    for key in _KEYS:
        scale = max(abs(new[key]), 0.01 * width)
        if scale > 0:
            worst = max(worst, abs(new[key] - old[key]) / scale)
    return worst


def exact_posterior(model, interval: float = 0.95, points: int | None = None,
                   tolerance: float = TOLERANCE,
                   max_evaluations: int | None = None,
                   hint: np.ndarray | None = None) -> ExactPosterior:
    """Posterior marginals of a model with one to three free parameters, by quadrature.

    Parameters
    ----------
    model : infer.model.posterior.Model
        Or any object with ``ndim``, ``free``, ``priors`` and a vectorised
        ``log_posterior`` of unconstrained rows.
    interval : float
        Credible level of the reported central interval.
    points : int, optional
        Points per axis of the first refinement level (default 64, 32 and 24 for one,
        two and three free parameters; the parameter's own axis gets twice as many).
        Callers that passed the old regular grid's points per axis may keep doing so.
    tolerance : float
        Refinement stops once no quantile moves by more than this (relative) between
        two successive levels.
    max_evaluations : int, optional
        Cap on posterior evaluations (default :data:`EVALUATION_CAP`, or
        :data:`DRIFT_EVALUATION_CAP` when the model integrates Wright's density).
    hint : numpy.ndarray, optional
        Unconstrained points (rows) where the posterior is known to have mass, such as
        the sampler's draws: the first coarse pass reaches their range plus its width on
        each side, so a posterior in the prior's far tail is found at once.

    Returns
    -------
    ExactPosterior

    Raises
    ------
    ValueError
        With more than :data:`MAX_DIMENSIONS` free parameters, or when the posterior has
        no mass anywhere on the grid.
    """
    ndim = model.ndim
    if not 1 <= ndim <= MAX_DIMENSIONS:
        raise ValueError(f"the exact posterior needs 1 to {MAX_DIMENSIONS} free parameters")
    if max_evaluations is None:
        drift = bool(getattr(model, "drift", False))
        max_evaluations = DRIFT_EVALUATION_CAP if drift else EVALUATION_CAP
    box, coarse, plans, evaluations = locate(model, hint)
    names, priors = list(model.free), list(model.priors)
    n = int(points or _START[ndim])
    state = [{"t": list(box[j]), "order": plans[j][0], "middle": plans[j][1],
              "inner": plans[j][2], "q": None, "marginal": coarse[j], "done": False,
              "move": np.inf} for j in range(ndim)]
    levels = []
    while True:
        pending = [j for j, s in enumerate(state) if not s["done"]]
        nt = int(round(_T_FACTOR * n))
        if not pending or (levels and evaluations + len(pending) * nt * n ** (ndim - 1)
                           > max_evaluations):
            break
        for j in pending:
            s = state[j]
            for _ in range(WIDENINGS):
                t = nodes(s["marginal"], s["t"][0], s["t"][1], nt)
                marginal, middle, inner, cost, ends, clean = level(
                    model, j, s["order"], t, s["middle"], s["inner"], n)
                evaluations += cost
                if not ends.any() or evaluations > max_evaluations:
                    break
                width = s["t"][1] - s["t"][0]
                s["t"] = [s["t"][0] - 0.25 * width * ends[0],
                          s["t"][1] + 0.25 * width * ends[1]]
            q = marginal_quantiles(priors[j], marginal, interval)
            if s["q"] is not None:
                s["move"] = largest_quantile_move(s["q"], q)
                # a level whose grid still borders on mass cannot be the last one
                s["done"] = bool(s["move"] < tolerance and clean and not ends.any())
            s.update(q=q, marginal=marginal, middle=middle, inner=inner)
        levels.append((n, {name: dict(s["q"]) for name, s in zip(names, state, strict=True)}))
        n = int(round(n * _GROWTH))
    axes, densities, cdfs, quantiles = {}, {}, {}, {}
    for name, prior, s in zip(names, priors, state, strict=True):
        marginal = s["marginal"]
        z = np.linspace(marginal.z[0], marginal.z[-1], 2001)
        x, log_jac = prior.from_unconstrained(z)
        axes[name] = np.asarray(x, dtype=float)
        densities[name] = marginal.density(z) * np.exp(-np.asarray(log_jac, dtype=float))
        cdfs[name] = marginal.cdf(z)
        quantiles[name] = s["q"]
    settled = all(s["done"] for s in state)
    change = max(float(s["move"]) for s in state)
    return ExactPosterior(names, axes, densities, quantiles, int(evaluations), cdfs, settled,
                         levels, change,
                         {nm: s["marginal"] for nm, s in zip(names, state, strict=True)},
                         dict(zip(names, priors, strict=True)))


def _quadrature_error(exact: ExactPosterior, name: str, key: str) -> float:
    """Probability the quadrature's remaining error at one quantile may span.

    Three times the quantile's own last move between refinement levels (which
    understates the remaining error: by up to five times on the curved test ridges),
    never less than 1e-5 of its scale, read through the density; one-sided where the
    step would leave the parameter's range (a posterior piled against a support end).
    Without two levels to compare, the largest relative move of any quantile is used.
    """
    q = exact.quantiles[name]
    scale = max(abs(q[key]), 0.01 * abs(q["upper"] - q["lower"]))
    moves = [abs(new[1][name][key] - old[1][name][key])
             for old, new in zip(exact.levels, exact.levels[1:], strict=False)]
    moves = [m for m in moves if m > 0]
    if moves:
        step = max(3.0 * moves[-1], 1e-5 * scale)
    else:
        change = float(exact.change) if np.isfinite(exact.change) else 0.0
        step = max(3.0 * change, 1e-5) * scale
    lower, upper = exact.range_of(name)
    at = exact.cdf_at(name, q[key])
    sides = [exact.cdf_at(name, q[key] + step) - at] if q[key] + step < upper else []
    if q[key] - step > lower:
        sides.append(at - exact.cdf_at(name, q[key] - step))
    return float(np.mean(np.abs(sides))) if sides else 0.0


def verify_draws(exact: ExactPosterior, chains_by_name: dict, interval: float,
                 z: float = 4.0) -> dict:
    """Judge sampled quantiles against the exact posterior, within Monte Carlo error.

    For each parameter and each p in (tail, 0.5, 1 - tail) the sampled quantile q_p is
    read through the exact distribution function: agreement when
    ``|F(q_p) - p| <= z * sqrt(p (1 - p) / ESS) + allowance``, with ESS the effective
    sample size of the indicator ``x <= exact quantile`` over the chains and the
    allowance the probability the quadrature's own last move spans.

    Parameters
    ----------
    exact : ExactPosterior
    chains_by_name : dict
        name -> posterior draws shaped (chains, draws) (a flat array counts as one
        chain).
    interval : float
        Credible level of the central interval (the tails are (1 - interval) / 2).
    z : float
        Monte Carlo standard deviations allowed.

    Returns
    -------
    dict
        ``verified``: True, False, or None when the quadrature did not settle;
        ``parameters``: name -> {"median", "lower", "upper"} -> {"sampled", "exact",
        "probability", "exact_probability_below_sampled", "monte_carlo_sd", "ess",
        "allowance", "relative_difference", "agrees"}; ``messages``: one plain sentence
        per disagreement (or the reason there is no verdict).
    """
    from infer.inference.diagnostics import ess_indicator

    tail = (1.0 - interval) / 2.0
    probabilities = {"median": 0.5, "lower": tail, "upper": 1.0 - tail}
    report, messages, agrees = {}, [], True
    for name in exact.names:
        x = np.asarray(chains_by_name[name], dtype=float)
        x = x.reshape(1, -1) if x.ndim == 1 else x.reshape(x.shape[0], -1)
        sampled = dict(zip(_KEYS, central_quantiles(x, interval), strict=True))
        exact_q = exact.quantiles[name]
        width = exact_q["upper"] - exact_q["lower"]
        entry = {}
        for key, p in probabilities.items():
            at = exact.cdf_at(name, sampled[key])
            ess = ess_indicator(x, exact_q[key])
            if not (np.isfinite(ess) and ess > 0):
                # every draw on one side of the exact quantile: no autocorrelation to
                # estimate, and the draws miss that side entirely
                ess = float(np.isfinite(x).sum())
            sd = float(np.sqrt(p * (1.0 - p) / ess))
            allowance = _quadrature_error(exact, name, key)
            scale = abs(exact_q[key]) if exact_q[key] != 0 else width
            relative = float(abs(sampled[key] - exact_q[key]) / scale) if scale > 0 else 0.0
            ok = bool(abs(at - p) <= z * sd + allowance)
            entry[key] = {"sampled": float(sampled[key]), "exact": float(exact_q[key]),
                          "probability": p, "exact_probability_below_sampled": at,
                          "monte_carlo_sd": sd, "ess": float(ess), "allowance": allowance,
                          "relative_difference": relative, "agrees": ok}
            if not ok:
                agrees = False
                messages.append(
                    f"the sampled {100 * p:g} % point of {name} is {sampled[key]:.3g} where "
                    f"the exact posterior puts it at {exact_q[key]:.3g} (exact probability "
                    f"below the sampled value {at:.4f}, Monte Carlo sd {sd:.4f})")
        report[name] = entry
    if not exact.settled:
        moved = (f"its quantiles still moved by {100 * exact.change:.2f} % at the last "
                 "refinement" if np.isfinite(exact.change) else "it was refined only once")
        return {"verified": None, "parameters": report, "messages": [
            f"the exact posterior did not settle within {exact.points:,} evaluations "
            f"({moved}), so the sampler is not verified"]}
    return {"verified": bool(agrees), "parameters": report, "messages": messages}
