"""Does drift matter? The drift posterior beside the deterministic one on the same data.

Under drift the allele frequency of a finite population wanders around the balance value;
the spread is large when the expected number of copies of the allele in the population,
about 4·Ne·q_hat, is small (Wright 1931, Genetics 16:97; the rule of thumb that
drift dominates when Ne times the deterministic force is of order one is common practice).
This module refits a drift study with the deterministic balance (same priors, same
observations, less what only drift has: Ne and any observation that reads Ne alone) and
states whether the two answers differ.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from infer.model.priors.parsing import Fixed

__all__ = ["DRIFT_ONLY", "deterministic_twin", "left_out", "compare_drift_with_deterministic"]

#: 4·Ne·q_hat below this: drift dominates the frequency (common practice: order 1-10)
DRIFT_MATTERS_BELOW = 10.0
#: relative change of a median, or of an interval end on the log scale, that counts
CHANGE = 0.2
#: parameters of the drift model that the deterministic balance does not have
DRIFT_ONLY = frozenset({"Ne"})
#: bulk ESS asked of the deterministic refit when it is sampled (it is a comparison only)
TWIN_TARGET_ESS = 400.0


def _reads_only_drift(observation) -> bool:
    return observation.parameters_used("drift") <= DRIFT_ONLY


def deterministic_twin(study):
    """The same study under ``model = "deterministic"``.

    Ne is dropped (held at infinity, which the deterministic balance never reads), and so
    is every observation that reads only Ne (an outside estimate of Ne): under the
    deterministic model it could only be impossible.
    """
    parameters = dict(study.parameters)
    parameters["Ne"] = Fixed("Ne", float("inf"))
    kept = [o for o in study.observations if not _reads_only_drift(o)]
    return dataclasses.replace(study, model="deterministic", parameters=parameters,
                               observations=kept)


def left_out(study) -> dict:
    """What the comparison leaves out: ``{"parameters": [...], "observations": [labels]}``.

    The free parameters the deterministic model does not have, and the labels of the
    observations that read only them.
    """
    return {"parameters": [n for n in study.free if n in DRIFT_ONLY],
            "observations": [o.label for o in study.observations if _reads_only_drift(o)]}


def _posterior_quantiles(posterior: dict, names, interval) -> dict:
    from infer.core.stats import central_quantiles

    return {name: dict(zip(("median", "lower", "upper"),
                           central_quantiles(posterior[name], interval), strict=True))
            for name in names}


def _deterministic_quantiles(twin, rng, settings=None, near=None) -> dict:
    """Quantiles of the twin: exact (nested quadrature) up to three free parameters.

    ``near`` (name -> drift posterior draws) extends the quadrature's search box to where
    the drift posterior lies, which may be the prior's far tail.
    """
    from infer.model.posterior import Model

    model = Model(twin)
    if model.ndim <= 3:
        from infer.inference.exact import exact_posterior

        hint = None
        if near is not None:
            with np.errstate(all="ignore"):
                hint = model.to_unconstrained({n: np.ravel(near[n]) for n in model.free})
            hint = hint[np.all(np.isfinite(hint), axis=1)]
            hint = hint if len(hint) > 1 else None
        return exact_posterior(model, twin.interval, hint=hint).quantiles
    from infer.inference.sampling import SamplerSettings, run_to_convergence

    if settings is None:
        settings = SamplerSettings(target_ess=TWIN_TARGET_ESS)
    else:
        settings = dataclasses.replace(settings,
                                       target_ess=min(settings.target_ess, TWIN_TARGET_ESS))
    run = run_to_convergence(model, model.initial_points, model.ndim, rng, settings)
    params, _ = model.to_parameters(run.z.reshape(-1, model.ndim))
    return _posterior_quantiles(params, model.free, twin.interval)


def _relative_change(a: float, b: float) -> float:
    if a > 0 and b > 0:
        return float(abs(np.log(a / b)))
    scale = max(abs(a), abs(b))
    return float(abs(a - b) / scale) if scale > 0 else 0.0


def _and(words: list[str]) -> str:
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " and " + words[-1]


def _left_out_sentence(dropped: dict) -> str:
    """The sentence saying what the comparison leaves out ("" when nothing)."""
    names = sorted(DRIFT_ONLY)
    things = list(dropped["parameters"])
    things += [f'the observation "{label}" (it informs only {_and(names)})'
               for label in dropped["observations"]]
    if not things:
        return ""
    verb = "is" if len(things) == 1 else "are"
    return (f"The deterministic model has no {_and(names)}: {_and(things)} {verb} left out "
            "of the comparison.")


def compare_drift_with_deterministic(study, drift_posterior: dict, rng,
                                     settings=None) -> dict:
    """Compare a drift posterior with the deterministic posterior of the same data.

    The parameters compared are those free under both models (every free parameter but
    Ne); an observation that reads only Ne is left out of the deterministic refit.

    Parameters
    ----------
    study : infer.files.study.Study
        A study with ``model = "drift"``.
    drift_posterior : dict
        name -> posterior draws of the free parameters under drift.
    rng : numpy.random.Generator
    settings : infer.inference.sampling.SamplerSettings, optional
        Settings of the deterministic refit when it is sampled (three or more free
        parameters; fewer use the exact grid); its target ESS is capped at
        :data:`TWIN_TARGET_ESS`. Default: the sampler's defaults with that target.

    Returns
    -------
    dict
        ``deterministic`` (per compared parameter: median and interval), ``drift`` (the
        same under drift), ``four_Ne_q_hat`` (4·Ne·q_hat at the drift posterior medians,
        Ne's included when it is free, with the deterministic q_hat there),
        ``deterministic_q_hat``, ``changes`` (largest relative change per compared
        parameter), ``left_out`` (:func:`left_out`), ``drift_matters`` (bool) and
        ``statement`` (plain words for the report).
    """
    from infer.core.balance import q_hat

    twin = deterministic_twin(study)
    dropped = left_out(study)
    drift_q = _posterior_quantiles(drift_posterior, study.free, study.interval)
    compared = [n for n in study.free if n in twin.free]
    det_q = (_deterministic_quantiles(twin, rng, settings, near=drift_posterior)
             if compared and twin.observations else {})
    compared = [n for n in compared if n in det_q]
    changes = {n: max(_relative_change(drift_q[n][k], det_q[n][k])
                      for k in ("median", "lower", "upper")) for n in compared}
    values = {}
    for name, p in study.parameters.items():
        values[name] = drift_q[name]["median"] if name in drift_q else float(p.value)
    q = float(q_hat(values["mu"], values["s"], values["h"], values["F"], values["nu"]))
    four_ne_q = 4.0 * values["Ne"] * q if np.isfinite(q) else float("nan")
    differ = [n for n, c in changes.items() if c > CHANGE]
    small = np.isfinite(four_ne_q) and four_ne_q < DRIFT_MATTERS_BELOW
    matters = bool(differ) or bool(small)
    ne = "posterior median" if "Ne" in drift_q else "fixed"
    parts = [f"At the posterior median, 4·Ne·q_hat = {four_ne_q:.3g} "
             f"(Ne = {values['Ne']:.3g}, {ne}; deterministic q_hat = {q:.3g})."]
    parts += [s for s in (_left_out_sentence(dropped),) if s]
    if not compared:
        parts.append("No parameter is free under both models, so there is no posterior to "
                     "compare" + ("; the population holds few copies of the allele, so keep "
                                  "the drift model." if small else "."))
    elif differ:
        parts.append("Drift changes the answer: the posterior of " + ", ".join(differ)
                     + " moves by more than 20 % (median or interval end) when drift is "
                     "ignored, so the deterministic balance would give wrong bounds.")
    elif small:
        parts.append("The population holds few copies of the allele, so its frequency "
                     "wanders far from q_hat; the deterministic answer happens to be close "
                     "on these data, but keep the drift model.")
    else:
        parts.append("Drift barely moves the posterior (every median and interval end "
                     "within 20 %): the deterministic answer is good enough here.")
    return {"deterministic": det_q, "drift": {n: drift_q[n] for n in compared},
            "four_Ne_q_hat": four_ne_q, "deterministic_q_hat": q, "changes": changes,
            "left_out": dropped, "drift_matters": matters, "statement": " ".join(parts)}
