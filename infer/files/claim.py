"""Claim files: a paper's published numbers, read for ``qhat check``.

A claim file has the layout of a study file (docs/files.md, 'Claim files') with every
life-cycle parameter at the value the paper claims, optionally the interval the
authors gave, an optional ``[claimed]`` table of the frequencies, incidence and load
the paper states and of the formula it used, and the observations it reports::

    title = "Invented et al.: a recessive disorder on the island of Tarrow"
    reference = "Invented et al. 2021, J. Invented Genet. 3:14"   # optional free text
    inheritance = "autosomal"          # as in a study file
    model = "deterministic"            # "drift" needs Ne (and then uses Wright's density)
    interval = 0.95                    # level of the intervals the check reports

    [parameters]                       # mu, s and h are required
    mu = { claimed = 2e-5, lower = 1e-5, upper = 4e-5 }   # the authors' 95 % interval
    s = 1.0                            # a bare number: claimed, no interval given
    h = 0.0
    # F, nu, Ne, alpha: bare numbers or { claimed = ... } too (defaults as in a study)

    [claimed]                          # optional: what the paper states
    mode = "recessive"                 # which births count as affected (with incidence)
    incidence = { claimed = 4e-4, lower = 3e-4, upper = 5e-4 }  # affected share of births
    carrier_frequency = 0.04           # share of heterozygous (Aa) newborns (daughters
                                       # at an X-linked locus)
    q = 0.02                           # allele frequency (X-linked: over all X)
    q_male = 1.8e-4                    # X-linked: among newborn sons
    load = 4e-4                        # mutation load, 1 - mean fitness
    approximation = "sqrt(mu/s)"       # the formula the authors used (see APPROXIMATIONS)
    mu_scale = "locus"                 # "locus" (default) or "nucleotide"
    species = "human"                  # the built-in mutation-rate ranges are human ones
    tolerance = 0.2                    # rounding allowed in stated numbers (default 0.2)

    [history]                          # optional, exactly as in a study file
    epochs = [ { generations = 16 } ]  # (infer/files/history.py, docs/files.md 'History')
    founder = { founders = 80, generations_ago = 16, frequency = 0.05 }

    [alternatives]                     # optional: how qhat check fits the alternatives
    founder = { generations_ago = 15 } # weigh a founding 15 generations ago (q_founder
                                       # ~ uniform(0, 0.5) unless a prior is given)
    heterozygote-advantage = { h = { prior = "uniform", low = -5, high = 0 } }

    [[observations]]                   # exactly as in a study file; none: arithmetic only
    kind = "affected"
    affected = 40
    total = 100_000
    mode = "recessive"

    [sampler]
    seed = 1                           # seed of the draws from the claim's uncertainty

A ``[history]`` is parsed by :func:`infer.files.history.parse_history` (through
``parse_study``, so a claim's history is refused exactly as a study's); the check then
reads the frequencies today and at each observation's sampling time from it. A claimed
``q_founder`` (bare or with an interval) is a value the history reads. An
``[alternatives]`` table is read by
:func:`infer.files.compare_table.parse_alternatives_table` (the model entries of a
study's ``[compare]``).

The authors' intervals (``lower``/``upper``) are read as central 95 % intervals. The
observations are validated by :mod:`infer.model.observations.kinds` and the parameters
by :mod:`infer.model.priors.parsing`, through :func:`infer.files.study.parse_study`: every
problem is an :class:`~infer.errors.InputError` naming the file, the field and the value.
The file is read by :func:`infer.files.reading.read_text` (the wording of every read or
decoding failure).
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field, replace
from typing import Any

from infer.core.choices import AUTOSOMAL_MODES, X_LINKED_MODES
from infer.errors import InputError
from infer.files.history import HISTORY_PARAMETERS
from infer.files.compare_table import CompareSettings, parse_alternatives_table
from infer.files.reading import invalid_toml, read_text
from infer.files.study import Study, check_germ_line_rates, parse_study
from infer.model.priors.parsing import (
    PARAMETERS,
    SUPPORT,
    Fixed,
    LogUniform,
    Uniform,
    parse_parameter,
)
from infer.validate import check_keys as _check_keys
from infer.validate import choice as _choice
from infer.validate import quote_value as _fmt
from infer.validate import real_number as _real

__all__ = [
    "Claim",
    "Statement",
    "load_claim",
    "parse_claim",
    "REQUIRED_PARAMETERS",
    "STATEMENTS",
    "APPROXIMATIONS",
    "MU_SCALES",
    "WIDE_PRIORS",
    "OTHER_WIDE_PRIORS",
    "DEFAULT_SEED",
    "DEFAULT_TOLERANCE",
]

#: parameters every claim must state
REQUIRED_PARAMETERS = ("mu", "s", "h")
#: quantities a ``[claimed]`` table may state, with their meaning
STATEMENTS = {
    "incidence": "affected share of births (of male births for x-linked-male)",
    "carrier_frequency": "share of heterozygous newborns (daughters at an X-linked locus)",
    "q": "allele frequency among newborns (over all X chromosomes at an X-linked locus)",
    "q_male": "allele frequency among newborn sons (X-linked)",
    "load": "mutation load, 1 - mean fitness (X-linked: in sons)",
}
#: formula names accepted in ``[claimed] approximation``, by inheritance. "indirect" is
#: Haldane's indirect method (mu = s x / 2, s x or s x / 3), the inverse of the
#: rare-allele forms mu/(hs) with h = 1, sqrt(mu/s) and 3mu/s.
APPROXIMATIONS = {
    "autosomal": ("mu/(hs)", "sqrt(mu/s)", "mu/(s(h(1-F)+F))", "quadratic", "indirect"),
    "x-linked": ("3mu/s", "rare-allele", "indirect"),
}
MU_SCALES = ("locus", "nucleotide")
_CLAIMED_KEYS = (*STATEMENTS, "mode", "approximation", "mu_scale", "tolerance", "species")
_VALUE_KEYS = ("claimed", "lower", "upper")
#: the wide priors the check uses to ask what the data alone imply about one parameter
#: (log-uniform for mu, uniform for s and h); also used to validate the observations
WIDE_PRIORS = {
    "mu": LogUniform("mu", 1e-12, 0.1),
    "s": Uniform("s", 0.0, 1.0),
    "h": Uniform("h", 0.0, 1.0),
}
#: wide priors of the other parameters whose implied intervals a check gives
#: (``infer.jobs.check.intervals``); the claim is not validated against them
OTHER_WIDE_PRIORS = {
    "alpha": LogUniform("alpha", 0.01, 100.0),
    "penetrance": Uniform("penetrance", 0.0, 1.0),
    "completeness": Uniform("completeness", 0.0, 1.0),
    "phenocopy": LogUniform("phenocopy", 1e-10, 0.01),
}
DEFAULT_SEED = 1
DEFAULT_TOLERANCE = 0.2


@dataclass(frozen=True)
class Statement:
    """A number the paper states, with the authors' 95 % interval if given."""

    name: str
    value: float
    lower: float | None = None
    upper: float | None = None

    @property
    def has_interval(self) -> bool:
        """True when the authors gave an interval."""
        return self.lower is not None


@dataclass
class Claim:
    """A validated claim file.

    Attributes
    ----------
    path, title : str
    reference : str or None
        The paper, as the claim file names it.
    study : infer.files.study.Study
        The claim as a study whose parameters are all fixed at the claimed values.
    intervals : dict of str to (float, float)
        The authors' 95 % intervals of parameters, where given.
    statements : dict of str to Statement
        The ``[claimed]`` frequencies, incidence and load.
    mode : str or None
        Which births count as affected in ``statements["incidence"]``.
    approximation : str or None
        The formula the authors used.
    mu_scale : str
        ``"locus"`` or ``"nucleotide"``: what the claimed mu is a rate of.
    species : str or None
        The species studied (``[claimed] species``); None is read as human, the
        population of the built-in mutation-rate ranges.
    tolerance : float
        Relative rounding allowed between a stated number and the value implied.
    seed : int
        Seed of the draws from the claim's uncertainty.
    alternatives : infer.files.compare_table.CompareSettings
        The priors under which the check fits each alternative explanation, and the
        founding's age (``founder_generations``; None: no founder alternative).
    """

    path: str
    title: str
    reference: str | None
    study: Study
    intervals: dict[str, tuple[float, float]] = field(default_factory=dict)
    statements: dict[str, Statement] = field(default_factory=dict)
    mode: str | None = None
    approximation: str | None = None
    mu_scale: str = "locus"
    species: str | None = None
    tolerance: float = DEFAULT_TOLERANCE
    seed: int = DEFAULT_SEED
    alternatives: CompareSettings = field(default_factory=CompareSettings)

    @property
    def values(self) -> dict[str, float]:
        """Every life-cycle parameter at its claimed value, in canonical order."""
        return {name: float(self.study.parameters[name].value) for name in PARAMETERS}

    @property
    def history_values(self) -> dict[str, float]:
        """The claimed values only a ``[history]`` reads (``q_founder``), if given."""
        return {name: float(self.study.parameters[name].value)
                for name in HISTORY_PARAMETERS if name in self.study.parameters}

    @property
    def inheritance(self) -> str:
        """``"autosomal"`` or ``"x-linked"``."""
        return self.study.inheritance


def load_claim(path) -> Claim:
    """Read and validate a claim file.

    Parameters
    ----------
    path : str or os.PathLike
        The TOML file; error messages name it as given.

    Raises
    ------
    InputError
        Unreadable, not UTF-8 or invalid TOML, or any problem of :func:`parse_claim`.
    """
    source = str(path)
    text = read_text(path)
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise invalid_toml(error, source=source) from None
    return parse_claim(document, source=source)


def parse_claim(document: Any, *, source: str) -> Claim:
    """Validate a parsed claim document and build the :class:`Claim`.

    Parameters
    ----------
    document : dict
        The output of ``tomllib``.
    source : str
        The file name for error messages.

    Raises
    ------
    InputError
        With ``source`` set and the field of the first problem found.
    """
    try:
        return _parse(document, source)
    except InputError as error:
        raise error.located(source=source) from None


def _parse(document: Any, source: str) -> Claim:
    if not isinstance(document, dict):
        raise InputError("a claim file must be a TOML document")
    reference = document.get("reference")
    if reference is not None and not isinstance(reference, str):
        raise InputError(f"{_fmt(reference)} is not a text", field="reference")
    table = document.get("parameters")
    if table is None:
        raise InputError("missing; a claim states mu, s and h in [parameters]",
                         field="parameters")
    if not isinstance(table, dict):
        raise InputError(f"{_fmt(table)} is not a table", field="parameters")
    for name in REQUIRED_PARAMETERS:
        if name not in table:
            raise InputError(
                f"missing; a claim states {name} (a bare number or "
                f"{{ claimed = ..., lower = ..., upper = ... }})",
                field=f"parameters.{name}",
            )
    values, intervals = {}, {}
    for name, entry in table.items():
        values[name], interval = _claimed_value(name, entry, f"parameters.{name}")
        if interval is not None:
            intervals[name] = interval

    # Validate everything else as a study: the observations are checked against the
    # wide priors of mu, s and h (so data the claim makes impossible is a finding of the
    # check, not an input error); then every parameter is fixed at its claimed value.
    study_document = {k: v for k, v in document.items()
                      if k not in ("claimed", "reference", "alternatives")}
    alternatives = parse_alternatives_table(document.get("alternatives"))
    # a claim with no observations is pure arithmetic (stated numbers against the claimed
    # parameters): validate it with a stand-in observation, then drop it
    arithmetic_only = "observations" not in document or document["observations"] == []
    if arithmetic_only:
        study_document["observations"] = [{"kind": "allele-count", "observed": 0,
                                           "sampled": 1}]
    study_document["parameters"] = {
        **{k: v for k, v in values.items() if k not in WIDE_PRIORS},
        **{k: p.as_dict() for k, p in WIDE_PRIORS.items()},
    }
    study = parse_study(study_document, source=source, require_free=False)
    parameters = dict(study.parameters)
    for name in REQUIRED_PARAMETERS:
        parameters[name] = Fixed(name, values[name])
    if study.inheritance == "x-linked":
        check_germ_line_rates(parameters)
    study = replace(study, parameters=parameters,
                    defaulted=study.defaulted - set(REQUIRED_PARAMETERS),
                    observations=[] if arithmetic_only else study.observations)

    claimed = document.get("claimed", {})
    if not isinstance(claimed, dict):
        raise InputError(f"{_fmt(claimed)} is not a table", field="claimed")
    _check_keys(claimed, (), _CLAIMED_KEYS, "claimed")
    statements = {
        name: _statement(name, claimed[name], study.inheritance)
        for name in STATEMENTS if name in claimed
    }
    mode = None
    if "mode" in claimed:
        allowed = X_LINKED_MODES if study.inheritance == "x-linked" else AUTOSOMAL_MODES
        mode = _choice(claimed["mode"], allowed, "claimed.mode")
    elif study.inheritance == "x-linked":
        mode = "x-linked-male"
    if "incidence" in statements and mode is None:
        raise InputError('missing; a claimed incidence needs mode = "dominant" or "recessive"',
                         field="claimed.mode")
    approximation = None
    if "approximation" in claimed:
        approximation = _choice(claimed["approximation"], APPROXIMATIONS[study.inheritance],
                                "claimed.approximation")
        if approximation == "indirect" and mode is None:
            raise InputError('missing; the indirect method needs mode = "dominant" or '
                             '"recessive"', field="claimed.mode")
    mu_scale = _choice(claimed.get("mu_scale", "locus"), MU_SCALES, "claimed.mu_scale")
    species = claimed.get("species")
    if species is not None and (not isinstance(species, str) or not species.strip()):
        raise InputError(f"{_fmt(species)} is not a name", field="claimed.species")
    tolerance = _real(claimed.get("tolerance", DEFAULT_TOLERANCE), "claimed.tolerance")
    if not 0.0 <= tolerance < 1.0:
        raise InputError(f"{_fmt(claimed['tolerance'])} is not in [0, 1)",
                         field="claimed.tolerance")
    return Claim(
        path=source,
        title=study.title,
        reference=reference,
        study=study,
        intervals=intervals,
        statements=statements,
        mode=mode,
        approximation=approximation,
        mu_scale=mu_scale,
        species=species.strip() if species else None,
        tolerance=tolerance,
        seed=DEFAULT_SEED if study.seed is None else study.seed,
        alternatives=alternatives,
    )


def _claimed_value(name: str, entry: Any, where: str):
    """(value, interval or None) of one ``[parameters]`` entry, validated."""
    if isinstance(entry, dict):
        if "prior" in entry:
            raise InputError(
                f"a claim holds {name} at its claimed value, not a prior; write "
                f"{{ claimed = ..., lower = ..., upper = ... }}",
                field=f"{where}.prior",
            )
        _check_keys(entry, ("claimed",), ("lower", "upper"), where)
        value = parse_parameter(name, entry["claimed"], field=f"{where}.claimed").value
        interval = _interval(entry, value, where, name)
        return value, interval
    return parse_parameter(name, entry, field=where).value, None


def _interval(entry: dict, value: float, where: str, name: str | None):
    """The authors' (lower, upper), or None; both ends or neither, lower < value < upper."""
    given = [k for k in ("lower", "upper") if k in entry]
    if not given:
        return None
    if len(given) == 1:
        missing = "upper" if given == ["lower"] else "lower"
        raise InputError("missing; an interval needs both lower and upper",
                         field=f"{where}.{missing}")
    lower = _real(entry["lower"], f"{where}.lower")
    upper = _real(entry["upper"], f"{where}.upper")
    if not lower < value:
        raise InputError(f"{_fmt(entry['lower'])} is not below the claimed value {value:g}",
                         field=f"{where}.lower")
    if not value < upper:
        raise InputError(f"{_fmt(entry['upper'])} is not above the claimed value {value:g}",
                         field=f"{where}.upper")
    if name is not None:
        low, high = SUPPORT[name]
        if lower < low:
            raise InputError(f"{_fmt(entry['lower'])} is below {low:g}, outside the range of "
                             f"{name}", field=f"{where}.lower")
        if upper > high:
            raise InputError(f"{_fmt(entry['upper'])} is above {high:g}, outside the range "
                             f"of {name}", field=f"{where}.upper")
        if name in ("mu", "Ne", "alpha") and lower <= 0:
            raise InputError(f"{_fmt(entry['lower'])} is not above 0", field=f"{where}.lower")
    return lower, upper


def _statement(name: str, entry: Any, inheritance: str) -> Statement:
    where = f"claimed.{name}"
    if name == "q_male" and inheritance != "x-linked":
        raise InputError('q_male applies only to inheritance = "x-linked"', field=where)
    if isinstance(entry, dict):
        _check_keys(entry, ("claimed",), ("lower", "upper"), where)
        value = _share(entry["claimed"], f"{where}.claimed")
        interval = _interval(entry, value, where, None)
        if interval is not None:
            lower, upper = interval
            if lower < 0 or upper > 1:
                bad = "lower" if lower < 0 else "upper"
                raise InputError(f"{_fmt(entry[bad])} is not a share in [0, 1]",
                                 field=f"{where}.{bad}")
            return Statement(name, value, lower, upper)
        return Statement(name, value)
    return Statement(name, _share(entry, where))


def _share(value: Any, where: str) -> float:
    number = _real(value, where)
    if not 0.0 < number < 1.0 or math.isnan(number):
        raise InputError(f"{_fmt(value)} is not a share strictly between 0 and 1", field=where)
    return number
