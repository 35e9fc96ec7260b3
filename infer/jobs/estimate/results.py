"""Turn a converged sampling run into the results a report renders.

Computed once here; text, JSON, Markdown and plots only read them
(``infer.reporting``). Everything is a pure function of the run and the generator.
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from infer.core.stats import central_quantiles, two_sided_p_value
from infer.core.text import CAUTION_LINE, fmt
from infer.inference.sampling import SamplingRun
from infer.jobs.estimate.direct_indirect import summarise_direct_indirect
from infer.model.observations.registry import shared_birth_warnings
from infer.model.priors.parsing import Fixed

__all__ = [
    "EstimateResult",
    "summarise",
    "contraction",
    "location",
    "identifiability",
    "drift_frequency",
    "predictive_counts",
    "data_warnings",
]


@dataclass
class EstimateResult:
    """Everything an estimate report shows (see DEVELOPERS.md for the array shapes)."""

    study: Any
    free: list[str]
    posterior: dict[str, np.ndarray]
    prior: dict[str, np.ndarray]
    derived: dict[str, np.ndarray]
    trace_walkers: dict[str, np.ndarray]
    burn_in: int
    log_likelihood: np.ndarray
    replicated: list[np.ndarray]
    summary: dict
    grid: Any = None
    log_prob: Any = None
    notes: list[str] = field(default_factory=list)

    # ``summary`` is the summary.json document; the reprs below only read it. Renderers
    # (the arviz tree, the plots) live in infer.reporting, which this layer may not
    # import: ``infer.reporting.notebook.EstimateReport`` adds them.

    def _shown_rows(self) -> list[tuple[str, dict]]:
        """(name, summary entry) of each free parameter, then q_hat."""
        rows = [(name, self.summary["parameters"][name]) for name in self.free]
        drift = self.summary.get("drift_frequency")
        if drift:  # Wright's distribution: its mean and predictive interval
            rows.append(("q_mean", {"median": drift["mean"], "lower": drift["lower"],
                                    "upper": drift["upper"], "contraction": None}))
        elif "q_hat" in self.summary["derived"]:
            rows.append(("q_hat", self.summary["derived"]["q_hat"]))
        return rows

    def _verdict(self) -> str:
        diagnostics = self.summary["diagnostics"]
        verdict = ("converged" if diagnostics["converged"]
                   else "NOT CONVERGED: " + " ".join(diagnostics["messages"]))
        verified = diagnostics.get("verified")
        if verified is not None:
            verdict += "; exact posterior " + ("agrees" if verified else "DISAGREES")
        return verdict

    def _fixed_text(self) -> str:
        fixed = [f"{name} = {fmt(p['median'])}" for name, p in self.summary["parameters"].items()
                 if p["fixed"] and not p["defaulted"]]
        return "fixed: " + ", ".join(fixed) if fixed else ""

    def __repr__(self) -> str:
        """A few lines: title, medians and intervals, the verdict and the caution."""
        s = self.summary
        lines = [f"<{type(self).__name__}: {s['title']}>",
                 f"{s['inheritance']}, {s['model']} model; medians with "
                 f"{100 * s['interval']:g} % equal-tailed intervals"]
        lines += [f"  {name:<6} {fmt(p['median']):>10}  [{fmt(p['lower'])}, {fmt(p['upper'])}]"
                  for name, p in self._shown_rows()]
        lines += [text for text in (self._fixed_text(), self._verdict(), CAUTION_LINE) if text]
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        """The same as an HTML table (shown by Jupyter)."""
        s = self.summary
        cells = "".join(
            f"<tr><td>{html.escape(name)}</td><td>{fmt(p['median'])}</td>"
            f"<td>{fmt(p['lower'])} – {fmt(p['upper'])}</td>"
            f"<td>{fmt(p.get('contraction'), 2)}</td></tr>"
            for name, p in self._shown_rows())
        fixed = self._fixed_text()
        return (
            f"<div><p><strong>{html.escape(s['title'])}</strong> "
            f"({html.escape(s['inheritance'])}, {html.escape(s['model'])} model)</p>"
            f"<table><thead><tr><th></th><th>median</th>"
            f"<th>{100 * s['interval']:g} % interval</th><th>contraction</th></tr></thead>"
            f"<tbody>{cells}</tbody></table>"
            + (f"<p>{html.escape(fixed)}</p>" if fixed else "")
            + f"<p>{html.escape(self._verdict())}</p>"
            f"<p><em>Caution: {html.escape(CAUTION_LINE)}.</em></p></div>")


def contraction(posterior_scaled: np.ndarray, prior_scaled: np.ndarray) -> float:
    """``1 - sd(posterior) / sd(prior)`` on the sampling scale (docs/model.md, 'Priors')."""
    prior_sd = float(np.std(prior_scaled))
    if not np.isfinite(prior_sd) or prior_sd == 0:
        return float("nan")
    return float(1.0 - np.std(posterior_scaled) / prior_sd)


def _log10(x):
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log10(np.asarray(x, dtype=float))


#: contraction at or above which the data decide a parameter (posterior sd < prior sd / 2)
DECIDE_CONTRACTION = 0.5
#: contraction below which the width is the prior's
WEAK_CONTRACTION = 0.1
#: the posterior median outside the prior's central half (its quartiles), or less than
#: this share of the posterior's central interval inside the prior's, counts as moved
MOVED_OVERLAP = 0.75


def location(posterior_scaled: np.ndarray, prior_scaled: np.ndarray,
             interval: float = 0.95) -> dict:
    """Where the posterior sits within the prior, on the sampling scale.

    Parameters
    ----------
    posterior_scaled, prior_scaled : numpy.ndarray
        Draws on the sampling scale (log10 for log-scale priors).
    interval : float
        Probability of the central intervals compared.

    Returns
    -------
    dict
        ``prior_quantile`` (the prior probability below the posterior median),
        ``overlap`` (the share of the posterior's central interval that lies inside the
        prior's), ``shift`` (posterior median minus prior median, on the sampling scale)
        and ``moved`` (median outside the prior's quartiles, or overlap below
        :data:`MOVED_OVERLAP`).
    """
    post = np.asarray(posterior_scaled, dtype=float).ravel()
    pri = np.asarray(prior_scaled, dtype=float).ravel()
    post, pri = post[np.isfinite(post)], pri[np.isfinite(pri)]
    if post.size < 10 or pri.size < 10:
        return {"prior_quantile": None, "overlap": None, "shift": None, "moved": False}
    tails = [(1 - interval) / 2, 0.5, (1 + interval) / 2]
    lo, med, hi = np.quantile(post, tails)
    plo, pmed, phi = np.quantile(pri, tails)
    below = float(np.mean(pri < med) + 0.5 * np.mean(pri == med))
    width = hi - lo
    inside = max(0.0, min(hi, phi) - max(lo, plo))
    overlap = float(inside / width) if width > 0 else float(plo <= med <= phi)
    moved = not 0.25 <= below <= 0.75 or overlap < MOVED_OVERLAP
    return {"prior_quantile": below, "overlap": overlap, "shift": float(med - pmed),
            "moved": bool(moved)}


def _ordinal(p: float) -> str:
    n = min(99, max(1, int(round(100 * p))))
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


def _moved_text(name: str, where: dict, scale: str) -> str:
    shift = where["shift"]
    if scale == "log10":
        factor = 10.0 ** shift
        how = (f"{factor:.2g}× the prior's" if factor >= 1 else f"1/{1 / factor:.2g} of the "
               "prior's")
    else:
        how = f"{'+' if shift >= 0 else '-'}{fmt(abs(shift))} from the prior's"
    return (f"{name} (median {how}, at the prior's {_ordinal(where['prior_quantile'])} "
            f"percentile; {100 * where['overlap']:.0f} % of its interval inside the prior's)")


def identifiability(free: list[str], posterior: dict, prior: dict, parameters_summary: dict,
                    frequency_only: bool, inheritance: str,
                    recessive: bool = False) -> list[str]:
    """Plain statements of what the data inform and what the prior decides.

    Each free parameter falls in one of three cases, judged by width and location
    together: **the data decide** (contraction at least :data:`DECIDE_CONTRACTION`),
    **the data move but do not narrow** (smaller contraction, but the posterior median
    lies outside the prior's quartiles or much of the posterior's central interval lies
    outside the prior's: :func:`location`), **the prior decides** (neither). A weak
    narrowing (contraction in [0.1, 0.5)) without a move is said to inform weakly.
    Location is read from ``parameters_summary[name]["location"]`` when present, else
    computed from the draws on the parameter's ``scale``.

    A combination of parameters (on the log10 scale) is said to be identified when its
    contraction is high while its parts' contractions stay low: the data then fix the
    product, not the factors. This is the classic situation of frequency data alone,
    which pin down q_hat ~ mu/(hs) (or mu/s for a complete recessive) but not mu, s and
    h separately.
    """
    statements = []
    informed, weak, moved, prior_decides = [], [], [], []
    for n in free:
        entry = parameters_summary[n]
        c = entry["contraction"]
        where = entry.get("location")
        if where is None:
            to_scale = _log10 if entry.get("scale") == "log10" else np.asarray
            where = location(to_scale(posterior[n]), to_scale(prior[n]))
        if c is not None and c >= DECIDE_CONTRACTION:
            informed.append(n)
        elif where["moved"]:
            moved.append(_moved_text(n, where, entry.get("scale", "linear")))
        elif c is not None and c >= WEAK_CONTRACTION:
            weak.append(n)
        else:
            prior_decides.append(n)
    if informed:
        statements.append("The data decide " + ", ".join(informed) +
                          " (posterior sd less than half the prior sd).")
    if moved:
        statements.append("The data move but do not narrow " + "; ".join(moved) +
                          ": the location is the data's, the width still mostly the prior's.")
    if weak:
        statements.append("The data inform " + ", ".join(weak) +
                          " only weakly (contraction between 0.1 and 0.5, posterior centred "
                          "where the prior is).")
    if prior_decides:
        its = "its interval" if len(prior_decides) == 1 else "their intervals"
        statements.append("The prior, not the data, decides " + ", ".join(prior_decides) +
                          f" (no narrowing, no move): read {its} as the prior's.")
    combos = []
    if {"mu", "s"} <= set(free) or ({"mu", "h"} <= set(free)):
        names = [n for n in ("mu", "s", "h") if n in free]
        signs = {"mu": 1.0, "s": -1.0, "h": -1.0}
        label = "mu/(h*s)" if "h" in names else "mu/s"
        if "h" in names and "s" not in names:
            label = "mu/h"
        combos.append((label, names, signs))
        if "h" in names and "s" in names:
            combos.append(("mu/s", ["mu", "s"], signs))
    for label, names, signs in combos:
        post = sum(signs[n] * _log10(posterior[n]).ravel() for n in names)
        pri = sum(signs[n] * _log10(prior[n]).ravel() for n in names)
        post, pri = post[np.isfinite(post)], pri[np.isfinite(pri)]
        if post.size < 10 or pri.size < 10:
            continue
        c = contraction(post, pri)
        parts = max(parameters_summary[n]["contraction"] for n in names)
        if c >= 0.5 and c - parts >= 0.2:
            statements.append(
                f"The data identify the combination {label} (contraction {c:.2f} on the log10 "
                f"scale) far better than its parts (at most {parts:.2f}): they fix the "
                "product, not the factors."
            )
            break
    if frequency_only:
        target = "mu/s" if inheritance == "x-linked" or recessive else "mu/(h*s)"
        statements.append(
            "Only frequency data (counts or affected births) were given: under balance they "
            f"identify at most {target} (the equilibrium frequency), not mu, s and h "
            "separately; separate values come from the priors."
        )
    return statements


def derived_quantities(model, params: dict, state, wright: bool = True
                       ) -> dict[str, np.ndarray]:
    """Equilibrium frequency, load and affected fractions for each row of ``params``.

    Under the drift model also Wright's mean and median (``q_mean_drift``,
    ``q_median_drift``), unless ``wright`` is False (they cost a quadrature per row).
    """
    from infer.core.balance import affected_fraction

    out = {"q_hat": np.asarray(state.q, dtype=float)}
    penetrance = 1.0
    F = params["F"]
    if model.inheritance == "x-linked":
        out["q_male"] = np.asarray(state.q_male, dtype=float)
        out["q_female"] = np.asarray(state.q_female, dtype=float)
        out["load_male"] = np.asarray(state.balance.load_male, dtype=float)
        out["load_female"] = np.asarray(state.balance.load_female, dtype=float)
        out["affected_male"] = affected_fraction("x-linked-male", state.q_male, F, penetrance)
        from infer.core.x_linked import sex_specific_rates

        # mu is the sex average per X chromosome, (2 mu_female + mu_male) / 3
        mu_female, mu_male = sex_specific_rates(params["mu"], params["alpha"])
        out["mu_female"] = np.asarray(mu_female, dtype=float)
        out["mu_male"] = np.asarray(mu_male, dtype=float)
    else:
        out["load"] = np.asarray(state.balance.load, dtype=float)
        out["affected_dominant"] = affected_fraction("dominant", state.q, F, penetrance)
        out["affected_recessive"] = affected_fraction("recessive", state.q, F, penetrance)
        if getattr(model, "sex_specific", False):  # selection by sex: their mean
            out["s_mean"] = np.asarray(params["s"], dtype=float)
    if model.drift and wright:
        from infer.core.drift import stationary as drift

        stats = drift.stationary_summary(params["Ne"], params["mu"], params["s"], params["h"],
                                         params["nu"], interval=0.95)
        out["q_mean_drift"] = np.asarray(stats["mean"], dtype=float)
        out["q_median_drift"] = np.asarray(stats["median"], dtype=float)
    return out


#: share of Wright's distribution below one copy in the population (x < 1/(2Ne)) above
#: which the report says that most of the mass is at 0
MASS_AT_ZERO = 0.5


def drift_frequency(params: dict, x: np.ndarray, means: np.ndarray, observations,
                    interval: float) -> dict:
    """What a drift study reports about the allele frequency: Wright's distribution.

    Computed over posterior draws (Wright 1931, Genetics 16:97; 1937, PNAS 23:307:
    the stationary density at constant Ne, :mod:`infer.core.drift.stationary`).

    Parameters
    ----------
    params : dict of numpy.ndarray
        Posterior draws of every life-cycle parameter (one row per draw).
    x : numpy.ndarray
        One draw of the allele frequency from Wright's density per row of ``params``
        (the posterior predictive frequency).
    means : numpy.ndarray
        The mean of Wright's density at each row (``q_mean_drift`` of
        :func:`derived_quantities`).
    observations : sequence of Observation
        The study's observations; those whose likelihood is binomial in the frequency
        (:meth:`~infer.model.observations.base.Observation.binomial_form`) give the
        sample size and the observed frequency.
    interval : float
        Probability of the central intervals.

    Returns
    -------
    dict
        ``mean`` (of the frequency, averaged over the posterior: the mean of the
        predictive mixture) with the central interval of the per-draw means
        (``mean_lower``, ``mean_upper``); ``median``, ``lower``, ``upper`` of the
        predictive frequency; ``below_one_copy`` (the share of it below 1/(2Ne)) and
        ``mostly_at_zero``; ``samples``, one entry per binomial observation with
        ``copies``, ``sample`` (allele copies), ``observed_frequency``, ``p_absent``
        (probability that a new sample of that size carries no copy: median, mean and
        interval over draws) and ``p_at_least_observed`` (predictive probability that the
        frequency is at least the observed one, with its Monte Carlo standard error).
    """
    from infer.core.drift import stationary as drift

    args = (params["Ne"], params["mu"], params["s"], params["h"], params["nu"])
    tails = [(1 - interval) / 2, 0.5, (1 + interval) / 2]
    x = np.asarray(x, dtype=float)
    means = np.asarray(means, dtype=float)
    lo, med, hi = (float(v) for v in np.quantile(x, tails))
    mlo, mhi = (float(v) for v in np.quantile(means, [tails[0], tails[2]]))
    below = float(np.mean(x < 1.0 / (2.0 * np.asarray(params["Ne"], float))))
    samples = []
    for obs in observations:
        form = obs.binomial_form() if obs.depends_on_frequency else None
        if form is None:
            continue
        k, n, _ = form
        absent = np.asarray(drift.probability_absent(n, *args), dtype=float)
        plo, pmed, phi = (float(v) for v in np.quantile(absent, tails))
        observed = k / n if n else float("nan")
        at_least = float(np.mean(x >= observed))
        samples.append({
            "label": obs.label, "copies": int(k), "sample": int(n),
            "observed_frequency": observed,
            "p_absent": {"mean": float(np.mean(absent)), "median": pmed, "lower": plo,
                         "upper": phi},
            "p_at_least_observed": at_least,
            "p_at_least_observed_se": float(np.sqrt(at_least * (1 - at_least) / x.size)),
        })
    return {"mean": float(np.mean(means)), "mean_lower": mlo, "mean_upper": mhi,
            "median": med, "lower": lo, "upper": hi, "below_one_copy": below,
            "mostly_at_zero": below > MASS_AT_ZERO, "draws": int(x.size), "samples": samples}


def predictive_counts(replicated: np.ndarray, interval: float = 0.95) -> dict:
    """Median and central interval of replicated statistics, as integers when they are.

    Parameters
    ----------
    replicated : numpy.ndarray
        Draws of the statistic from the posterior predictive distribution.
    interval : float
        Probability of the central predictive interval.

    Returns
    -------
    dict
        ``predictive_median``, ``predictive_lower``, ``predictive_upper`` (the lower and
        upper quantiles, ``numpy.quantile``'s "inverted_cdf" method so a count stays a
        count) and ``integer`` (every replicate is a whole number).
    """
    rep = np.asarray(replicated, dtype=float).ravel()
    rep = rep[np.isfinite(rep)]
    if rep.size == 0:
        return {"predictive_median": None, "predictive_lower": None,
                "predictive_upper": None, "integer": False}
    integer = bool(np.all(rep == np.round(rep)))
    tails = [(1 - interval) / 2, 0.5, (1 + interval) / 2]
    method = "inverted_cdf" if integer else "linear"
    lo, med, hi = (float(v) for v in np.quantile(rep, tails, method=method))
    if integer:
        lo, med, hi = int(lo), int(med), int(hi)
    return {"predictive_median": med, "predictive_lower": lo, "predictive_upper": hi,
            "integer": integer}


def data_warnings(study) -> list[str]:
    """Sentences about the data a practitioner expects flagged (summary ``data_warnings``).

    Each observation says what its own data undercut
    (:meth:`~infer.model.observations.base.Observation.data_warnings`).
    """
    return [line for obs in study.observations for line in obs.data_warnings()]


#: posterior draws (at most) behind Wright's mean, median and drift_frequency
DRIFT_DERIVED_DRAWS = 2_000


def _subsample(n_total: int, n_max: int, rng: np.random.Generator) -> np.ndarray:
    if n_total <= n_max:
        return np.arange(n_total)
    return np.sort(rng.choice(n_total, size=n_max, replace=False))


def summarise(model, run: SamplingRun, rng: np.random.Generator, grid=None,
              seed: int | None = None) -> EstimateResult:
    """Compute posterior summaries, derived quantities and predictive checks.

    Parameters
    ----------
    model : infer.model.posterior.Model
    run : SamplingRun
    rng : numpy.random.Generator
        Used for prior draws, subsampling and predictive replicates.
    grid : GridPosterior, optional
        The exact cross-check, when computed.
    seed : int, optional
        Recorded in the summary.
    """
    study = model.study
    interval = study.interval
    chains, draws, _ = run.z.shape
    flat_z = run.z.reshape(-1, model.ndim)
    params, _ = model.to_parameters(flat_z)
    posterior = {n: params[n].reshape(chains, draws) for n in model.free}
    # as many prior draws as posterior draws, in the same (chain, draw) layout, and derived
    # quantities and replicates at every posterior draw: posterior.nc's groups align
    prior = {n: v.reshape(chains, draws)
             for n, v in model.prior_draws(rng, chains * draws).items()}

    parameters = {}
    for j, name in enumerate(model.free):
        p = study.parameters[name]
        med, lo, hi = central_quantiles(posterior[name], interval)
        plo, phi = (float(v) for v in p.quantile(np.array([(1 - interval) / 2,
                                                           1 - (1 - interval) / 2])))
        parameters[name] = {
            "median": med, "mean": float(np.mean(posterior[name])),
            "sd": float(np.std(posterior[name])), "lower": lo, "upper": hi,
            "ess_bulk": float(run.ess_bulk[j]), "ess_tail": float(run.ess_tail[j]),
            "r_hat": float(run.r_hat[j]), "prior_lower": plo, "prior_upper": phi,
            "contraction": contraction(p.sampling_scale(posterior[name]),
                                       p.sampling_scale(prior[name])),
            "fixed": False, "prior": p.describe(), "scale": p.sampling_scale_name,
            "defaulted": name in study.defaulted,
            "location": location(p.sampling_scale(posterior[name]),
                                 p.sampling_scale(prior[name]), interval),
        }
    for name in study.reported_parameters:
        p = study.parameters[name]
        if isinstance(p, Fixed):
            v = float(p.value)
            parameters[name] = {
                "median": v, "mean": v, "sd": 0.0, "lower": v, "upper": v,
                "ess_bulk": None, "ess_tail": None, "r_hat": None, "prior_lower": v,
                "prior_upper": v, "contraction": None, "fixed": True, "prior": p.describe(),
                "scale": "linear", "defaulted": name in study.defaulted,
            }

    with np.errstate(all="ignore"):
        state = model.state(params)
        derived = {k: v.reshape(chains, draws)
                   for k, v in derived_quantities(model, params, state, wright=False).items()}
        predictive_state = state
        # Wright's stationary distribution describes the population only without a history
        if model.drift and getattr(model, "history", None) is None:
            from infer.core.drift import stationary as drift
            from infer.model.balance_state import BalanceState

            x = drift.sample_stationary(rng, params["Ne"], params["mu"], params["s"],
                                        params["h"], params["nu"])
            predictive_state = BalanceState.at_frequency(params, x)
            # Wright's mean and median cost a quadrature per draw: a subsample of draws
            keep = _subsample(chains * draws, DRIFT_DERIVED_DRAWS, rng)
            sub_params = {k: v[keep] for k, v in params.items()}
            wright = derived_quantities(model, sub_params, model.state(sub_params))
            derived.update({k: wright[k][None, :] for k in ("q_mean_drift", "q_median_drift")})
    derived_summary = {}
    for k, v in derived.items():
        med, lo, hi = central_quantiles(v, interval)
        derived_summary[k] = {"median": med, "lower": lo, "upper": hi,
                              "no_equilibrium_share": float(np.mean(~np.isfinite(v)))}

    replicated, predictive = [], []
    with np.errstate(all="ignore"):  # under a [history]: the state at each sampling time
        sampled_states = model.sampling_states(params, rng)
    for obs, sampled_state in zip(model.observations, sampled_states, strict=True):
        with np.errstate(all="ignore"):
            at = predictive_state if obs.depends_on_frequency else state
            at = at if sampled_state is None else sampled_state
            rep = np.asarray(obs.simulate(at, rng), dtype=float)
            expected = np.asarray(obs.expected(at), dtype=float)
        replicated.append(rep.reshape(chains, draws))
        observed = float(obs.statistic())
        predictive.append({
            "label": obs.label, "kind": obs.kind, "statistic": obs.statistic_name,
            "observed": observed,
            "expected_median": float(np.nanmedian(expected)) if np.isfinite(expected).any()
            else None,
            "p_value": two_sided_p_value(rep, observed),
            **predictive_counts(rep, 0.95),
        })

    frequency_only = all(o.frequency_statistic() is not None for o in model.observations)
    h_prior = study.parameters["h"]
    recessive = isinstance(h_prior, Fixed) and float(h_prior.value) == 0.0
    statements = identifiability(model.free, posterior, prior, parameters, frequency_only,
                                 study.inheritance, recessive)

    messages = list(run.messages)
    verification = None
    if grid is not None:
        from infer.inference.exact import verify_draws

        verification = verify_draws(grid, posterior, interval)
        messages += verification["messages"]
    verified = None if verification is None else verification["verified"]
    diagnostics = {
        # an exact posterior that disagrees overrules the sampler's own criteria
        "converged": bool(run.converged) and verified is not False,
        "verified": verified, "walkers": run.walkers,
        "ensembles": int(chains), "steps": run.steps, "burn_in": run.burn_in,
        "thin": run.thin, "draws": int(chains * draws),
        "autocorr_time": {n: float(t) for n, t in zip(model.free, run.autocorr_time,
                                                      strict=True)},
        "evaluations": int(run.evaluations), "exploration_steps": int(run.exploration_steps),
        "moved_walkers": int(run.moved_walkers), "messages": messages,
    }
    summary = {
        "title": study.title, "interval": interval, "inheritance": study.inheritance,
        "model": study.model, "seed": seed,
        "parameters": parameters, "derived": derived_summary, "diagnostics": diagnostics,
        "predictive": predictive, "identifiability": statements,
    }
    summary["data_warnings"] = data_warnings(study) + shared_birth_warnings(study.observations)
    classic = summarise_direct_indirect(study.observations, params["alpha"], rng, interval)
    if classic is not None:
        summary["direct_indirect"] = classic
    if model.drift and getattr(model, "history", None) is None:
        summary["drift_frequency"] = drift_frequency(sub_params, x[keep],
                                                     derived["q_mean_drift"].ravel(),
                                                     model.observations, interval)
    if verification is not None:
        summary["grid"] = {"quantiles": grid.quantiles, "evaluations": grid.points,
                           "settled": bool(grid.settled), "agrees": verified is True,
                           "parameters": verification["parameters"]}
    ll = run.blobs
    trace_params, _ = model.to_parameters(run.trace.reshape(-1, model.ndim))
    trace_walkers = {n: trace_params[n].reshape(run.trace.shape[:3]) for n in model.free}
    return EstimateResult(study=study, free=list(model.free), posterior=posterior, prior=prior,
                          derived=derived, trace_walkers=trace_walkers, burn_in=run.burn_in,
                          log_likelihood=ll, replicated=replicated, summary=summary, grid=grid)
