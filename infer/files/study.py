"""Study files: TOML (UTF-8) -> a validated :class:`Study` (docs/files.md, 'Study files').

All validation of a study happens here and in the parsers it calls
(:func:`infer.model.priors.parsing.parse_parameter`,
:func:`infer.model.observations.kinds.parse_observation`).
Every problem raises :class:`~infer.errors.InputError` carrying the file name as
given, the field (``observations[2].affected``, counted from 1) and the bad value,
so the command line prints one line and exits with status 2.

A study file::

    title = "Dominant disorder, island birth registry"
    inheritance = "autosomal"        # "autosomal" (default) | "x-linked"
    model = "deterministic"          # "deterministic" (default) | "drift"
    interval = 0.95                  # credible level, 0 < interval < 1 (default 0.95)

    [parameters]                     # omitted parameters take the documented defaults
    mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
    h = 1.0                          # a bare number fixes a parameter

    [[observations]]
    kind = "affected"
    affected = 12
    total = 94075
    mode = "dominant"

    [sampler]                        # optional
    seed = 1                         # integer >= 0
    walkers = 32                     # integer >= max(4, 2 x free parameters)
    max_steps = 200000               # integer >= 1: the step cap of each ensemble
    ensembles = 4                    # integer in [2, 64]
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from infer.core.choices import INHERITANCES, MODELS
from infer.core.supports import ASCERTAINMENT, NAMED_COMPLETENESS, SEX_SELECTION
from infer.core.x_linked import germ_line_rate_problem
from infer.errors import InputError
from infer.files.history import HISTORY_PARAMETERS, history_document, parse_history
from infer.files.reading import invalid_toml, read_text
from infer.model.balance_state import BalanceState
from infer.model.observations.base import Observation
from infer.model.observations.kinds import parse_observation
from infer.model.observations.published import Estimate
from infer.model.priors.parsing import (
    PARAMETERS,
    Fixed,
    Prior,
    SexAverage,
    defaults_for,
    is_placeholder,
    parse_parameter,
)
from infer.validate import (
    check_keys as _check_keys,
)
from infer.validate import (
    choice as _choice,
)
from infer.validate import (
    machine_memory,
)
from infer.validate import (
    quote_value as _fmt,
)
from infer.validate import (
    real_number as _real,
)

__all__ = [
    "Study",
    "load_study",
    "study_document",
    "parse_study",
    "TOP_LEVEL_KEYS",
    "SAMPLER_KEYS",
    "INHERITANCES",
    "MODELS",
    "SUPPORT_CHECK_DRAWS",
    "check_sampler_memory",
    "sampler_memory",
]

TOP_LEVEL_KEYS = (
    "title", "inheritance", "model", "interval", "parameters", "observations", "sampler",
    "history",
    "compare",  # read by qhat compare only (infer/files/compare_table.py)
)
SAMPLER_KEYS = ("seed", "walkers", "max_steps", "ensembles")
#: the sampler's defaults (infer.inference.sampling.SamplerSettings) for the memory estimate
DEFAULT_WALKERS, DEFAULT_ENSEMBLES = 48, 4
#: steps of stored chain the memory estimate counts per walker (exploration and the
#: first sampling blocks: 800 + 200)
STORED_STEPS = 1000
#: kept draws per walker the results step evaluates the model on, at most
KEPT_STEPS = 100
#: starting points drawn per walker (infer.model.posterior.Model.initial_points)
START_POOL = 40
#: bytes of work per point in one call of the model, by model (measured, rounded up)
ROW_BYTES = {"deterministic": 512, "drift": 4096}
#: prior draws used to check that the priors put mass where each observation can arise
SUPPORT_CHECK_DRAWS = 400
_DRIFT_SCOPE = "the drift model covers autosomal loci with F = 0"


@dataclass
class Study:
    """A validated study.

    Attributes
    ----------
    path : str
        The file name as given (or the ``source`` of :func:`parse_study`).
    title, inheritance, model : str
    interval : float
        Credible level of every reported interval.
    parameters : dict of str to Prior or Fixed
        Every life-cycle parameter, defaults filled, in canonical order.
    defaulted : set of str
        Names filled from the defaults (the report lists them).
    observations : list of Observation
    seed : int or None
        ``[sampler] seed``.
    sampler : dict
        The validated ``[sampler]`` settings as given (seed included).
    history : infer.core.history.spec.History or None
        The ``[history]`` (infer/files/history.py); None: the population is at equilibrium.
    sampled : dict of str to int
        Observation label -> generations ago it was sampled (absent: today).
    """

    path: str
    title: str
    inheritance: str
    model: str
    interval: float
    parameters: dict[str, Prior | Fixed]
    defaulted: set[str]
    observations: list[Observation]
    seed: int | None = None
    sampler: dict = field(default_factory=dict)
    history: Any = None
    sampled: dict = field(default_factory=dict)

    def __post_init__(self):
        # each observation reads the study's penetrance, completeness and phenocopy
        # unless its own table fixes them
        ascertainment = (*ASCERTAINMENT, *self.named_completeness)
        fixed = {name: float(value.value) for name, value in self.parameters.items()
                 if name in ascertainment and isinstance(value, Fixed)}
        free = [name for name in ascertainment if isinstance(self.parameters.get(name), Prior)]
        for observation in self.observations:
            observation.bind_ascertainment(fixed, free)

    @property
    def free(self) -> list[str]:
        """Names of the parameters with a prior, in canonical order."""
        return [name for name in (*PARAMETERS, *HISTORY_PARAMETERS, *self.named_completeness)
                if isinstance(self.parameters.get(name), Prior)]

    @property
    def named_completeness(self) -> list[str]:
        """Registries' own completeness parameters (``completeness_<tag>``), in file order."""
        return _named(self.parameters)

    @property
    def reported_parameters(self) -> list[str]:
        """The parameters a report lists, in canonical order.

        Every balance parameter; an ascertainment parameter (penetrance, completeness,
        phenocopy) only when the file gives it or an observation reads it.
        """
        read = {name for obs in self.observations for name in obs.ascertainment}
        return [name for name in PARAMETERS
                if not is_placeholder(self.parameters[name])
                and (name not in ASCERTAINMENT or name in read or name not in self.defaulted)
                ] + [name for name in HISTORY_PARAMETERS if name in self.parameters
                     ] + self.named_completeness

    @property
    def sex_specific(self) -> bool:
        """Selection differs between the sexes (s_male and s_female given; s their mean)."""
        return isinstance(self.parameters["s"], SexAverage)

    @property
    def fixed(self) -> dict[str, float]:
        """Fixed parameters and their values, in canonical order."""
        return {
            name: self.parameters[name].value
            for name in PARAMETERS
            if isinstance(self.parameters[name], Fixed)
            and not is_placeholder(self.parameters[name])
        } | {name: self.parameters[name].value
             for name in (*HISTORY_PARAMETERS, *self.named_completeness)
             if isinstance(self.parameters.get(name), Fixed)}


def study_document(study: Study) -> dict:
    """The study as a TOML-shaped document, defaults written out.

    ``parse_study(study_document(study), source=study.path)`` rebuilds an equal study
    (except ``defaulted``, which then holds only Ne under the deterministic model, where Ne
    is not used and not written); reports use it to show every assumption.
    """
    document = {
        "title": study.title,
        "inheritance": study.inheritance,
        "model": study.model,
        "interval": study.interval,
        "parameters": {
            name: spec.as_dict() if isinstance(spec, Prior) else spec.value
            for name, spec in study.parameters.items()
            if not (study.model == "deterministic" and name == "Ne")
            and not is_placeholder(spec)
        },
        "observations": [observation.as_table() for observation in study.observations],
    }
    if study.sampler:
        document["sampler"] = dict(study.sampler)
    if study.history is not None:
        document["history"] = history_document(study.history, study.sampled)
    return document


def load_study(path, *, require_free: bool = True) -> Study:
    """Read and validate a study file.

    Parameters
    ----------
    path : str or os.PathLike
        The TOML file; error messages name it as given.
    require_free : bool, optional
        Refuse a study whose parameters are all fixed (default True: there is
        nothing to estimate).

    Raises
    ------
    InputError
        Unreadable file, not UTF-8, invalid TOML, or any error of :func:`parse_study`.
    """
    source = str(path)
    text = read_text(path)
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise invalid_toml(error, source=source) from None
    return parse_study(document, source=source, require_free=require_free)


def parse_study(document: dict | str, *, source: str = "<study>",
                require_free: bool = True) -> Study:
    """Validate a study given as a dict or as TOML text and build the :class:`Study`.

    Parameters
    ----------
    document : dict or str
        The study laid out as the TOML file is (the output of ``tomllib``, or a dict
        written in Python), or the TOML text itself. In a dict, numpy scalars
        (``numpy.int64``, ``numpy.float32``, ``numpy.bool_``, ...) count as the Python
        numbers they hold and tuples as lists.
    source : str, optional
        The name error messages give (also ``Study.path`` and the default title);
        default ``"<study>"``.
    require_free : bool, optional
        Refuse a study without free parameters (default True).

    Raises
    ------
    InputError
        With ``source`` set and the field of the first problem found.

    Examples
    --------
    >>> study = parse_study({"parameters": {"mu": {"prior": "log-uniform", "low": 1e-8,
    ...                                            "high": 1e-3}, "s": 0.5, "h": 1.0},
    ...                      "observations": [{"kind": "affected", "affected": 19,
    ...                                        "total": 182_400, "mode": "dominant"}]},
    ...                     source="registry")
    >>> study.free
    ['mu']
    """
    if isinstance(document, str):
        try:
            document = tomllib.loads(document)
        except tomllib.TOMLDecodeError as error:
            raise InputError(f"invalid TOML: {error}", source=source) from None
    try:
        return _parse(_plain_values(document), source, require_free)
    except InputError as error:
        raise error.located(source=source) from None


def _plain_values(value: Any) -> Any:
    """``value`` with numpy scalars as Python scalars and tuples as lists (copied, recursively).

    So a study written in Python validates exactly as the same study read from TOML;
    anything else (arrays, sets, ...) is left for the validators to refuse by name.
    """
    if isinstance(value, dict):
        return {key: _plain_values(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain_values(item) for item in value]
    if isinstance(value, (np.bool_, np.integer, np.floating, np.str_)):
        return value.item()
    return value


def _parse(document: Any, source: str, require_free: bool) -> Study:
    if not isinstance(document, dict):
        raise InputError("a study file must be a TOML document")
    for key, value in document.items():
        if key not in TOP_LEVEL_KEYS:
            what = "section" if isinstance(value, (dict, list)) else "key"
            raise InputError(
                f'unknown {what} "{key}"; must be one of {", ".join(TOP_LEVEL_KEYS)}', field=key
            )
    title = document.get("title", Path(source).stem)
    if not isinstance(title, str):
        raise InputError(f"{_fmt(title)} is not a text", field="title")
    inheritance = _choice(document.get("inheritance", "autosomal"), INHERITANCES, "inheritance")
    model = _choice(document.get("model", "deterministic"), MODELS, "model")
    interval = _real(document.get("interval", 0.95), "interval")
    if not 0.0 < interval < 1.0:
        raise InputError(f"{_fmt(document['interval'])} is not between 0 and 1", field="interval")
    if model == "drift" and inheritance != "autosomal":
        raise InputError(f'{_DRIFT_SCOPE}; inheritance is "{inheritance}"', field="model")

    parameters, defaulted = _parse_parameters(document.get("parameters", {}), model, inheritance)
    observations = _parse_observations(document.get("observations"), inheritance)
    _check_observations_fit(observations, parameters, model, require_free)
    _check_named_completeness(observations, parameters)

    history, sampled = None, {}
    if "history" in document:
        if "s_male" in parameters and not is_placeholder(parameters["s_male"]):
            raise InputError("selection by sex (s_male, s_female) is not built into "
                             "histories yet: a [history] carries one s", field="history")
        history, sampled = parse_history(
            document["history"], model=model, inheritance=inheritance, parameters=parameters,
            labels=[o.label for o in observations],
            ne_given="Ne" in document.get("parameters", {}))
    else:
        for name in HISTORY_PARAMETERS:
            if name in parameters:
                raise InputError(f"{name} is read only by a [history]; this study has none",
                                 field=f"parameters.{name}")
    free = [name for name in (*PARAMETERS, *HISTORY_PARAMETERS, *_named(parameters))
            if isinstance(parameters.get(name), Prior)]
    if require_free and not free:
        raise InputError(
            "no free parameter to estimate: every parameter is fixed", field="parameters"
        )
    sampler = _parse_sampler(document.get("sampler", {}), len(free))
    check_sampler_memory(sampler, len(free), len(observations), model)
    study = Study(
        path=source,
        title=title,
        inheritance=inheritance,
        model=model,
        interval=interval,
        parameters=parameters,
        defaulted=defaulted,
        observations=observations,
        seed=sampler.get("seed"),
        sampler=sampler,
        history=history,
        sampled=sampled,
    )
    _check_prior_support(study)
    return study


def _parse_parameters(table: Any, model: str, inheritance: str):
    if not isinstance(table, dict):
        raise InputError(f"{_fmt(table)} is not a table", field="parameters")
    given = {
        name: parse_parameter(name, value, field=f"parameters.{name}")
        for name, value in table.items()
    }
    defaults = defaults_for(model)
    if model == "drift":
        if "Ne" not in given:
            raise InputError(
                "missing; the drift model needs Ne, the effective population size "
                "(a number or a prior)",
                field="parameters.Ne",
            )
        F = given.get("F")
        if isinstance(F, Prior) or (isinstance(F, Fixed) and F.value != 0):
            shown = F.describe() if isinstance(F, Prior) else _fmt(table["F"])
            raise InputError(f"{shown}: {_DRIFT_SCOPE}", field="parameters.F")
        nu = given.get("nu")
        if isinstance(nu, Fixed) and nu.value == 0:
            raise InputError(
                f"{_fmt(table['nu'])}: the drift model needs back mutation nu > 0 (Wright's "
                "density cannot be normalised at nu = 0); omit nu for the default 1e-09",
                field="parameters.nu",
            )
    elif isinstance(given.get("Ne"), Prior):
        raise InputError(
            f'{given["Ne"].describe()}: Ne is used only by model = "drift"; '
            "the deterministic model has no Ne to estimate",
            field="parameters.Ne",
        )
    if inheritance == "autosomal" and isinstance(given.get("alpha"), Prior):
        raise InputError(
            f'{given["alpha"].describe()}: alpha (male-to-female mutation ratio) is used only '
            'by inheritance = "x-linked"',
            field="parameters.alpha",
        )
    _check_sex_selection(given, model, inheritance)
    _check_general_dominance(given.get("h"), model, inheritance)
    if "s_male" in given:
        given["s"] = SexAverage("s", math.nan)
    parameters = {name: given.get(name, defaults.get(name)) for name in PARAMETERS}
    parameters.update({name: given[name] for name in HISTORY_PARAMETERS if name in given})
    # a registry's own completeness, after the life-cycle parameters, in the file's order
    parameters.update({name: given[name] for name in _named(given)})
    defaulted = {name for name in PARAMETERS if name not in given}
    if inheritance == "x-linked":
        check_germ_line_rates(parameters)
    return parameters, defaulted


def _named(parameters: dict) -> list[str]:
    return [name for name in parameters if NAMED_COMPLETENESS.fullmatch(name)]


def _check_named_completeness(observations, parameters: dict) -> None:
    """Every named completeness is declared in [parameters] and read by an observation.

    ``completeness = "completeness_<tag>"`` in a count names the parameter.
    """
    read = set()
    for index, observation in enumerate(observations, start=1):
        name = getattr(observation, "completeness", None)
        if isinstance(name, str):
            if name not in parameters:
                raise InputError(
                    f'"{name}" is not in [parameters]; declare it there (a number or a prior, '
                    'e.g. { prior = "beta", a = 8, b = 2 })',
                    field=f"observations[{index}].completeness")
            read.add(name)
    for name in _named(parameters):
        if name not in read:
            raise InputError(f"no observation reads it; name it in a registry's table as "
                             f'completeness = "{name}"', field=f"parameters.{name}")


def _check_sex_selection(given: dict, model: str, inheritance: str) -> None:
    """s_male and s_female come as a pair, in place of s, for an autosomal locus."""
    named = [name for name in SEX_SELECTION if name in given]
    if not named:
        return
    field = f"parameters.{named[0]}"
    if len(named) == 1:
        other = "s_female" if named[0] == "s_male" else "s_male"
        raise InputError(f"given without {other}; sex-specific selection needs both "
                         "s_male and s_female (or neither, for one s)", field=field)
    if "s" in given:
        raise InputError("given with s; write s_male and s_female in place of s (s is "
                         "then their mean) or s alone", field="parameters.s")
    if inheritance != "autosomal":
        raise InputError(f'inheritance is "{inheritance}"; sex-specific selection is for '
                         "autosomal loci (an x-linked locus has s for hemizygous males and "
                         "h for carrier females)", field=field)
    if model != "deterministic":
        raise InputError(f'model is "{model}"; sex-specific selection needs the '
                         'deterministic model (Wright\'s density has one s)', field=field)
    for name in SEX_SELECTION:
        spec = given[name]
        if isinstance(spec, Fixed) and spec.value == 0 and all(
                isinstance(given[other], Fixed) and given[other].value == 0
                for other in SEX_SELECTION):
            raise InputError("0 in both sexes: no selection to balance mutation",
                             field=f"parameters.{name}")


def _check_general_dominance(h, model: str, inheritance: str) -> None:
    """Refuse h outside [0, 1] (heterozygote advantage, Aa below aa) elsewhere.

    General genotype fitness is built for the autosomal deterministic balance only
    (infer.core.balance).
    """
    if h is None or (model == "deterministic" and inheritance == "autosomal"):
        return
    low, high = (h.value, h.value) if isinstance(h, Fixed) else h.interval(1.0)
    if low < 0 or high > 1:
        shown = h.describe() if isinstance(h, Prior) else _fmt(h.value)
        raise InputError(
            f"{shown} reaches outside [0, 1]: h < 0 and h > 1 are built for the autosomal "
            f'deterministic model only (this study is {inheritance}, model "{model}")',
            field="parameters.h",
        )


def check_germ_line_rates(parameters: dict) -> None:
    """Refuse a fixed mu and alpha whose germ-line rates reach 1 (infer.core.x_linked)."""
    mu, alpha = parameters["mu"], parameters["alpha"]
    if isinstance(mu, Fixed) and isinstance(alpha, Fixed):
        problem = germ_line_rate_problem(mu.value, alpha.value)
        if problem is not None:
            raise InputError(problem, field="parameters.mu")


def _parse_observations(tables: Any, inheritance: str) -> list[Observation]:
    if tables is None:
        raise InputError(
            "missing; a study needs at least one [[observations]] table", field="observations"
        )
    if not isinstance(tables, list) or not all(isinstance(t, dict) for t in tables):
        raise InputError(
            f"{_fmt(tables)} is not a list of [[observations]] tables", field="observations"
        )
    if not tables:
        raise InputError("empty; a study needs at least one observation", field="observations")
    observations: list[Observation] = []
    labels: dict[str, int] = {}
    for index, table in enumerate(tables, start=1):
        where = f"observations[{index}]"
        observation = parse_observation(table, field=where, inheritance=inheritance)
        if observation.label in labels:
            raise InputError(
                f'"{observation.label}" is already the label of '
                f"observations[{labels[observation.label]}]",
                field=f"{where}.label",
            )
        labels[observation.label] = index
        observations.append(observation)
    return observations


def _check_observations_fit(observations, parameters, model, require_free=True) -> None:
    """Outside estimates must be of a parameter the model estimates.

    In a study (not a claim, whose parameters are all fixed) an observation that only
    informs parameters must find them free.
    """
    for index, observation in enumerate(observations, start=1):
        for name in sorted(observation.needs_free() if require_free else ()):
            if isinstance(parameters[name], Fixed):
                raise InputError(
                    f'{observation.kind} data inform {name}, which is fixed at '
                    f'{parameters[name].value:g} in [parameters]; give {name} a prior '
                    '(e.g. { prior = "beta", a = 2, b = 1 })',
                    field=f"observations[{index}]")
        if not isinstance(observation, Estimate):
            continue
        where = f"observations[{index}].parameter"
        name = observation.parameter
        if name not in parameters:
            raise InputError(f'"{name}" is not in [parameters]; declare it there with a '
                             "prior for an outside estimate of it to inform it", field=where)
        if name == "Ne" and model != "drift":
            raise InputError(
                '"Ne": the deterministic model has no Ne; use model = "drift"', field=where
            )
        if isinstance(parameters[name], Fixed):
            raise InputError(
                f'"{name}" is fixed at {parameters[name].value:g} in [parameters]; an outside '
                "estimate of it would change nothing (give it a prior)",
                field=where,
            )


def _parse_sampler(table: Any, n_free: int) -> dict:
    if not isinstance(table, dict):
        raise InputError(f"{_fmt(table)} is not a table", field="sampler")
    _check_keys(table, (), SAMPLER_KEYS, "sampler")
    least_walkers = max(4, 2 * n_free)
    limits = {
        "seed": (0, None, "a seed is an integer >= 0"),
        "walkers": (least_walkers, 100_000,
                    f"need at least {least_walkers} walkers (4, and twice the free parameters)"),
        "max_steps": (1, 100_000_000, "the step cap is at least 1"),
        "ensembles": (2, 64, "between 2 and 64 ensembles (R-hat compares ensembles)"),
    }
    settings = {}
    for key, value in table.items():
        where = f"sampler.{key}"
        if not isinstance(value, int) or isinstance(value, bool):
            raise InputError(f"{_fmt(value)} is not a whole number", field=where)
        number = value
        low, high, why = limits[key]
        if number < low or (high is not None and number > high):
            raise InputError(f"{_fmt(value)} is out of range: {why}", field=where)
        settings[key] = int(number)
    return settings


def sampler_memory(sampler: dict, n_free: int, n_observations: int, model: str):
    """Bytes a run with these ``[sampler]`` settings needs, and how the figure is made.

    Derived from what the sampler keeps (``infer.inference.sampling``): every walker of
    every ensemble stores, per step, its coordinates, its log posterior and one
    log-likelihood per observation (8 bytes each) for up to :data:`STORED_STEPS` steps;
    the largest single call of the model evaluates :data:`START_POOL` x walkers starting
    points, or :data:`KEPT_STEPS` kept draws per walker, at :data:`ROW_BYTES` bytes a
    point. The per-point figures were measured with ``tracemalloc`` on the demo studies
    (about 420 bytes a point for the deterministic model, 3,100 under drift) and the
    whole at about half the peak resident size of runs of 2,000 and 8,000 walkers.

    Returns
    -------
    (int, str)
        The estimate in bytes and the arithmetic behind it, for a message.
    """
    walkers = max(sampler.get("walkers", DEFAULT_WALKERS), 2 * n_free + 2)
    walkers += walkers % 2
    total = walkers * sampler.get("ensembles", DEFAULT_ENSEMBLES)
    steps = min(sampler.get("max_steps", STORED_STEPS), STORED_STEPS)
    columns = n_free + 1 + n_observations
    row = ROW_BYTES[model]
    points = max(START_POOL * walkers, total * min(steps, KEPT_STEPS))
    need = total * columns * 8 * steps + points * row
    how = (f"{total} walkers x {columns} stored columns x {steps} steps x 8 bytes, plus "
           f"{row} bytes a point in each call of the model")
    return need, how


def check_sampler_memory(sampler: dict, n_free: int, n_observations: int,
                         model: str, memory: int | None = None) -> None:
    """Refuse ``[sampler]`` settings whose run would not fit in this machine's memory.

    ``memory`` defaults to :func:`infer.validate.machine_memory`; the message names the
    field, its value, the estimate (:func:`sampler_memory`) and the limit.
    """
    if not ({"walkers", "ensembles"} & set(sampler)):
        return
    memory = machine_memory() if memory is None else memory
    need, how = sampler_memory(sampler, n_free, n_observations, model)
    if memory is None or need <= memory:
        return
    key = "walkers" if "walkers" in sampler else "ensembles"
    shown = ", ".join(f"{k} = {sampler[k]}" for k in ("walkers", "ensembles") if k in sampler)
    raise InputError(
        f"{sampler[key]} is too many: {shown} needs about {_gigabytes(need)} of memory "
        f"({how}), more than the {_gigabytes(memory)} of this machine; use fewer walkers "
        "or ensembles",
        field=f"sampler.{key}",
    )


def _gigabytes(size: int) -> str:
    return f"{size / 1e9:.3g} GB"


def _check_prior_support(study: Study) -> None:
    """Refuse priors that put no mass where an observation can arise.

    Evaluates each observation's log-likelihood on ``SUPPORT_CHECK_DRAWS`` prior draws
    (a fixed internal seed, so the check is reproducible and touches no global
    state): an observation that is impossible in every draw is an error naming it.
    Under the drift model frequency kinds are skipped (the stationary density
    spreads over every frequency).
    """
    rng = np.random.default_rng(20_240_601)
    n = SUPPORT_CHECK_DRAWS if study.free else 1
    params = {
        name: (spec.sample(rng, n) if isinstance(spec, Prior) else np.full(n, spec.value))
        for name, spec in study.parameters.items()
    }
    with np.errstate(all="ignore"):
        # frequency kinds under a history see its frequency (infer.model.posterior)
        skip_frequency = study.model == "drift" or study.history is not None
        if skip_frequency:
            state = BalanceState.without_frequency(params, study.inheritance)
        else:
            state = BalanceState.deterministic(params, study.inheritance)
        total = np.zeros(n)
        checked = False
        for index, observation in enumerate(study.observations, start=1):
            if skip_frequency and observation.depends_on_frequency:
                continue
            ll = observation.log_likelihood(state)
            if not np.isfinite(ll).any():
                draws = (
                    f"every one of {n} draws from the priors" if study.free
                    else "the fixed parameters"
                )
                if observation.depends_on_frequency and not state.exists.any():
                    reason = (
                        f"there is no stable equilibrium under {draws}: mutation overwhelms "
                        "selection (check the priors of mu, s and h)"
                    )
                else:
                    reason = f"the priors put no mass where these data can arise ({draws})"
                raise InputError(
                    f"{observation.statistic_name} = {observation.statistic():g} has probability "
                    f"0: {reason}",
                    field=f"observations[{index}]",
                )
            total = total + ll
            checked = True
    if checked and not np.isfinite(total).any():
        raise InputError(
            f"the observations together have probability 0 under every one of {n} draws "
            "from the priors",
            field="observations",
        )
