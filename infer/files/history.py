"""The ``[history]`` table of a study file -> :class:`infer.core.history.spec.History`.

A history (docs/files.md, 'History')::

    [history]
    epochs = [                                  # most recent first
      { generations = 12, Ne = 400 },           # 0-12 generations ago
      { generations = 30, Ne = 5000, s = 0.5 }, # 12-42 generations ago
    ]
    founder = { founders = 40, generations_ago = 12, frequency = "q_founder" }
    ancestral = { s = 0.9 }    # the equilibrium before the oldest epoch (default: its values)
    sampled = { "survey 1990" = 1 }   # observation label -> generations ago (default 0)

An epoch may give ``ends`` (generations ago it ends; default where the previous epoch
begins); generations no epoch covers keep the present-day values of ``[parameters]``. The
founder frequency is a number or ``"q_founder"``, a parameter of ``[parameters]`` (fixed or
with a prior). Every problem is an :class:`~infer.errors.InputError` naming the field.
"""

from __future__ import annotations

from typing import Any

from infer.core.history.spec import EPOCH_PARAMETERS, Epoch, Founder, History
from infer.core.supports import in_support, support_text
from infer.errors import InputError
from infer.validate import check_keys, quote_value, real_number

__all__ = ["HISTORY_KEYS", "HISTORY_PARAMETERS", "parse_history", "history_document",
           "load_history"]

HISTORY_KEYS = ("epochs", "founder", "ancestral", "sampled")
#: parameters of [parameters] that only a history reads
HISTORY_PARAMETERS = ("q_founder",)
_DRIFT_SCOPE = "the drift model covers autosomal loci with F = 0"


def _generations(value: Any, field: str) -> int:
    """A whole number of generations >= 0 (an integer, never 2.5, -1 or true)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{quote_value(value)} is not a whole number of generations",
                         field=field)
    if isinstance(value, float) and not value.is_integer():
        raise InputError(f"{quote_value(value)} is not a whole number of generations",
                         field=field)
    if value < 0:
        raise InputError(f"{quote_value(value)} is negative", field=field)
    if value > 10_000_000:
        raise InputError(f"{quote_value(value)} is more than 10,000,000 generations",
                         field=field)
    return int(value)


def _value(name: str, value: Any, field: str, model: str) -> float:
    number = real_number(value, field)
    if not bool(in_support(name, number)):
        raise InputError(f"{quote_value(value)} is outside {support_text(name)}", field=field)
    if model == "drift" and name == "F" and number != 0:
        raise InputError(f"{quote_value(value)}: {_DRIFT_SCOPE}", field=field)
    if model == "drift" and name in ("mu", "nu") and number == 0:
        raise InputError(f"{quote_value(value)}: the drift model needs {name} > 0", field=field)
    return number


def _values(table: Any, field: str, model: str, extra=()) -> dict:
    if not isinstance(table, dict):
        raise InputError(f"{quote_value(table)} is not a table", field=field)
    check_keys(table, (), (*extra, *EPOCH_PARAMETERS), field)
    return {name: _value(name, v, f"{field}.{name}", model)
            for name, v in table.items() if name in EPOCH_PARAMETERS}


def _epochs(tables: Any, model: str) -> tuple:
    if not isinstance(tables, list) or not all(isinstance(t, dict) for t in tables):
        raise InputError(f"{quote_value(tables)} is not a list of epoch tables",
                         field="history.epochs")
    epochs, begins = [], 0
    for index, table in enumerate(tables, start=1):
        where = f"history.epochs[{index}]"
        check_keys(table, ("generations",), ("ends", *EPOCH_PARAMETERS), where)
        generations = _generations(table["generations"], f"{where}.generations")
        ends = _generations(table.get("ends", begins), f"{where}.ends")
        if ends < begins:
            raise InputError(
                f"{ends} overlaps history.epochs[{index - 1}], which begins {begins} "
                "generations ago (epochs run from the present back, most recent first)",
                field=f"{where}.ends")
        values = _values({k: v for k, v in table.items() if k in EPOCH_PARAMETERS}, where,
                         model)
        epochs.append(Epoch(generations, ends, values))
        begins = ends + generations
    return tuple(epochs)


def _frequency(value: Any, field: str, parameters: dict):
    if isinstance(value, str):
        if value not in HISTORY_PARAMETERS:
            raise InputError(f'{quote_value(value)} is not a parameter a history reads; '
                             f'use a number or "{HISTORY_PARAMETERS[0]}"', field=field)
        if value not in parameters:
            raise InputError(f'"{value}" is not in [parameters]; give it there, e.g. '
                             f'{value} = {{ prior = "uniform", low = 0, high = 0.2 }}',
                             field=field)
        return value
    number = real_number(value, field)
    if not 0.0 <= number <= 1.0:
        raise InputError(f"{quote_value(value)} is not a frequency in [0, 1]", field=field)
    return number


def _fixed_ne(history_values: dict, parameters: dict):
    """The fixed Ne in force, or None (a prior, or the deterministic model's default)."""
    if "Ne" in history_values:
        return history_values["Ne"]
    spec = parameters.get("Ne")
    value = getattr(spec, "value", None)
    return None if value is None else float(value)


def parse_history(table: Any, *, model: str, inheritance: str, parameters: dict,
                  labels=(), ne_given: bool = True) -> tuple[History, dict]:
    """Validate a study's ``[history]`` table.

    Parameters
    ----------
    table : dict
        The table as read from TOML.
    model, inheritance : str
        The study's model and inheritance.
    parameters : dict of str to Prior or Fixed
        The study's validated parameters (history parameters such as ``q_founder``
        included when given).
    labels : iterable of str
        The observations' labels (``sampled`` refers to them).
    ne_given : bool
        Whether [parameters] gives Ne (a default Ne is not checked against founders).

    Returns
    -------
    (History, dict)
        The history and the sampling times, observation label -> generations ago.

    Raises
    ------
    InputError
        Unknown keys, negative or non-integer lengths, overlapping epochs, founders above
        Ne, a founder older than the history, a sampling time outside it.
    """
    if not isinstance(table, dict):
        raise InputError(f"{quote_value(table)} is not a table", field="history")
    check_keys(table, (), HISTORY_KEYS, "history")
    if not table.get("epochs") and "founder" not in table:
        raise InputError("gives neither epochs nor a founder", field="history")
    epochs = _epochs(table.get("epochs", []), model)
    ancestral = None
    if "ancestral" in table:
        ancestral = _values(table["ancestral"], "history.ancestral", model)
    founder = None
    if "founder" in table:
        founder = _founder(table["founder"], epochs, parameters, model, ne_given)
    history = History(epochs, founder, ancestral)
    for name in HISTORY_PARAMETERS:
        if name in parameters and name not in history.parameter_names:
            raise InputError(f"{name} is given but [history] does not use it",
                             field=f"parameters.{name}")
    sampled = _sampled(table.get("sampled", {}), history, labels)
    return history, sampled


def _founder(table: Any, epochs, parameters, model, ne_given) -> Founder:
    where = "history.founder"
    if not isinstance(table, dict):
        raise InputError(f"{quote_value(table)} is not a table", field=where)
    check_keys(table, ("founders", "generations_ago"), ("frequency",), where)
    founders = _generations(table["founders"], f"{where}.founders")
    if founders < 1:
        raise InputError(f"{founders} is not at least 1", field=f"{where}.founders")
    ago = _generations(table["generations_ago"], f"{where}.generations_ago")
    oldest = max((e.begins for e in epochs), default=ago)
    if ago > oldest:
        raise InputError(f"{ago} is older than the history, whose oldest epoch begins "
                         f"{oldest} generations ago", field=f"{where}.generations_ago")
    frequency = None
    if "frequency" in table:
        frequency = _frequency(table["frequency"], f"{where}.frequency", parameters)
    # the founded population's Ne: the epoch covering the generation after the founding
    values = History(epochs).values_at(ago) if ago > 0 else {}
    Ne = _fixed_ne(values, parameters if (ne_given or "Ne" in values) else {})
    if Ne is not None and founders > Ne:
        raise InputError(f"{founders} founders is more than Ne = {Ne:g} of the population "
                         "they found", field=f"{where}.founders")
    return Founder(founders, ago, frequency)


def _sampled(table: Any, history: History, labels) -> dict:
    if not isinstance(table, dict):
        raise InputError(f"{quote_value(table)} is not a table of observation labels",
                         field="history.sampled")
    labels = list(labels)
    out = {}
    for label, value in table.items():
        where = f"history.sampled.{label}"
        if label not in labels:
            raise InputError(f'"{label}" is not the label of an observation',
                             field=where)
        ago = _generations(value, where)
        if ago > history.length:
            raise InputError(f"{ago} is older than the history ({history.length} generations)",
                             field=where)
        out[label] = ago
    return out


def history_document(history: History, sampled: dict) -> dict:
    """The history as a ``[history]`` table (``parse_history`` reads it back)."""
    document: dict = {}
    if history.epochs:
        document["epochs"] = [
            {"generations": e.generations, "ends": e.ends, **dict(e.values)}
            for e in history.epochs
        ]
    if history.founder is not None:
        f = history.founder
        founder = {"founders": f.founders, "generations_ago": f.generations_ago}
        if f.frequency is not None:
            founder["frequency"] = f.frequency
        document["founder"] = founder
    if history.ancestral is not None:
        document["ancestral"] = dict(history.ancestral)
    if sampled:
        document["sampled"] = dict(sampled)
    return document


def load_history(path, values: dict) -> History:
    """The ``[history]`` of a file (a study file, or one holding only ``[history]``).

    Read as under the drift model of an autosomal locus, with ``values`` (Ne, mu, s, h,
    nu: one number each) as the present-day parameters; its ``sampled`` table, if any,
    is not used. ``qhat simulate --history`` runs it forward.

    Raises
    ------
    InputError
        Naming the file: missing or unreadable, not TOML, no ``[history]`` table, a
        founder frequency that is not a number (``"q_founder"`` needs a study), and every
        refusal of :func:`parse_history`.
    """
    import tomllib

    from infer.files.reading import invalid_toml, read_text
    from infer.model.priors.families import Fixed

    source = str(path)
    try:
        document = tomllib.loads(read_text(path))
    except tomllib.TOMLDecodeError as error:
        raise invalid_toml(error, source=source) from None
    table = document.get("history")
    if not isinstance(table, dict):
        raise InputError("no [history] table (epochs or a founder)", source=source,
                         field="history")
    table = {key: value for key, value in table.items() if key != "sampled"}
    founder = table.get("founder")
    if isinstance(founder, dict) and isinstance(founder.get("frequency"), str):
        raise InputError(f"{quote_value(founder['frequency'])}: a simulation needs the "
                         "founders' frequency as a number (or leave it out: drawn from the "
                         "population)", source=source, field="history.founder.frequency")
    parameters = {name: Fixed(name, float(value)) for name, value in values.items()}
    try:
        history, _ = parse_history(table, model="drift", inheritance="autosomal",
                                   parameters=parameters)
    except InputError as error:
        raise InputError(error.message, source=source, field=error.field) from None
    return history

