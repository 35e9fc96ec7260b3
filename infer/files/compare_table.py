"""The optional ``[compare]`` table of a study file, read by ``qhat compare`` only.

::

    [compare]
    models = ["balance", "heterozygote-advantage"]      # default: every model built
    prior_odds = { balance = 1, heterozygote-advantage = 1 }   # default: equal
    heterozygote-advantage = { h = { prior = "uniform", low = -5, high = 0 } }
    founder = { generations_ago = 20, q_founder = { prior = "uniform", low = 0, high = 0.5 } }
    sensitivity = 2          # each extra prior is also tried widened and narrowed by this
    method = "auto"          # "auto" | "quadrature" | "bridge"

``qhat estimate`` ignores the table. The models and their default priors are listed in
:data:`MODELS` (docs/model.md, 'Model comparison').

A claim file's optional ``[alternatives]`` table takes the same model entries (no
``models``, ``prior_odds``, ``sensitivity`` or ``method``): the priors under which
``qhat check`` fits each alternative, and the founder model's ``generations_ago``
(:func:`parse_alternatives_table`)::

    [alternatives]
    founder = { generations_ago = 15 }
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from infer.errors import InputError
from infer.model.priors.parsing import Prior, Uniform, parse_parameter
from infer.validate import check_keys, choice, one_of, quote_value, real_number

__all__ = ["MODELS", "METHODS", "CompareSettings", "parse_compare_table",
           "parse_alternatives_table", "DEFAULT_EXTRA_PRIORS", "DEFAULT_SENSITIVITY"]

#: model name -> what it says (the built ones)
MODELS = {
    "balance": "mutation-selection balance as the study states it (its own priors on mu, s, h)",
    "heterozygote-advantage": "the heterozygote fitter than both homozygotes (h < 0): a "
                              "balanced polymorphism with mutation, mu and s as in the study",
    "founder": "a founder event generations_ago generations ago set the allele at q_founder; "
               "since then the deterministic life cycle (mu, s, h as in the study) has carried "
               "it to today, with no equilibrium assumed",
}
METHODS = ("auto", "quadrature", "bridge")
#: the prior on each model's extra parameters, unless the table gives one
DEFAULT_EXTRA_PRIORS: dict[str, dict[str, Prior]] = {
    "balance": {},
    "heterozygote-advantage": {"h": Uniform("h", -5.0, 0.0)},
    "founder": {"q_founder": Uniform("q_founder", 0.0, 0.5)},
}
#: each extra prior is also tried with its width multiplied and divided by this
DEFAULT_SENSITIVITY = 2.0


@dataclass(frozen=True)
class CompareSettings:
    """What ``qhat compare`` weighs and how.

    Attributes
    ----------
    models : tuple of str
        Models to weigh, in the order given.
    prior_odds : dict
        Model -> prior weight (normalised to prior probabilities).
    extra_priors : dict
        Model -> {parameter -> Prior} replacing the study's priors under that model.
    sensitivity : float
        Factor (> 1) by which each extra prior's width is widened and narrowed.
    method : str
        ``"auto"`` (quadrature up to three free parameters, bridge sampling above),
        ``"quadrature"`` or ``"bridge"``.
    """

    models: tuple[str, ...] = tuple(MODELS)
    prior_odds: dict[str, float] = field(default_factory=dict)
    extra_priors: dict[str, dict[str, Prior]] = field(
        default_factory=lambda: {k: dict(v) for k, v in DEFAULT_EXTRA_PRIORS.items()})
    sensitivity: float = DEFAULT_SENSITIVITY
    method: str = "auto"
    #: the founder model's age of the founding in generations (None: the model is skipped)
    founder_generations: int | None = None


def parse_models(value: Any, field_name: str) -> tuple[str, ...]:
    """A list of model names (or a comma-separated text): each built, none twice."""
    names = value.split(",") if isinstance(value, str) else value
    if not isinstance(names, list) or not names:
        raise InputError(f"{quote_value(value)} is not a list of model names", field=field_name)
    out = []
    for name in names:
        name = str(name).strip()
        choice(name, MODELS, field_name)
        if name in out:
            raise InputError(f'"{name}" is named twice', field=field_name)
        out.append(name)
    return tuple(out)


def parse_compare_table(table: Any, *, field_name: str = "compare") -> CompareSettings:
    """Validate a ``[compare]`` table (None or absent: every default).

    Raises
    ------
    InputError
        Unknown key or model, a prior odds weight that is not a positive number, an
        extra prior on a parameter the model does not add, a sensitivity not above 1,
        an unknown method.
    """
    if table is None:
        return CompareSettings()
    if not isinstance(table, dict):
        raise InputError(f"{quote_value(table)} is not a table", field=field_name)
    check_keys(table, (), ("models", "prior_odds", "sensitivity", "method", *MODELS),
               field_name)
    models = (parse_models(table["models"], f"{field_name}.models") if "models" in table
              else tuple(MODELS))
    odds = {}
    if "prior_odds" in table:
        given = table["prior_odds"]
        where = f"{field_name}.prior_odds"
        if not isinstance(given, dict):
            raise InputError(f"{quote_value(given)} is not a table of model weights", field=where)
        for name, weight in given.items():
            if name not in MODELS:
                raise InputError(f'unknown model "{name}"; {one_of(MODELS)}', field=where)
            number = real_number(weight, f"{where}.{name}")
            if not number > 0:
                raise InputError(f"{quote_value(weight)} is not above 0",
                                 field=f"{where}.{name}")
            odds[name] = float(number)
    extra = {k: dict(v) for k, v in DEFAULT_EXTRA_PRIORS.items()}
    founder_generations = None
    for name in MODELS:
        if name not in table:
            continue
        where = f"{field_name}.{name}"
        entries = table[name]
        if not isinstance(entries, dict):
            raise InputError(f"{quote_value(entries)} is not a table of priors", field=where)
        extra_keys = ("generations_ago",) if name == "founder" else ()
        check_keys(entries, (), (*DEFAULT_EXTRA_PRIORS[name], *extra_keys), where)
        if "generations_ago" in entries:
            founder_generations = _generations_ago(entries["generations_ago"],
                                                   f"{where}.generations_ago")
        for parameter, value in entries.items():
            if parameter == "generations_ago":
                continue
            prior = parse_parameter(parameter, value, field=f"{where}.{parameter}")
            if not isinstance(prior, Prior):
                raise InputError(f"{quote_value(value)}: give a prior table, not a fixed value "
                                 "(a model's extra parameter is weighed over its prior)",
                                 field=f"{where}.{parameter}")
            _check_extra_prior(name, prior, f"{where}.{parameter}")
            extra[name][parameter] = prior
    sensitivity = DEFAULT_SENSITIVITY
    if "sensitivity" in table:
        sensitivity = real_number(table["sensitivity"], f"{field_name}.sensitivity")
        if not (sensitivity > 1 and math.isfinite(sensitivity)):
            raise InputError(f"{quote_value(table['sensitivity'])} is not above 1 (the factor "
                             "by which each extra prior is widened and narrowed)",
                             field=f"{field_name}.sensitivity")
    method = choice(table.get("method", "auto"), METHODS, f"{field_name}.method")
    return CompareSettings(models=models, prior_odds=odds, extra_priors=extra,
                           sensitivity=float(sensitivity), method=method,
                           founder_generations=founder_generations)


def parse_alternatives_table(table: Any, *, field_name: str = "alternatives") -> CompareSettings:
    """Validate a claim's ``[alternatives]`` table (None or absent: every default).

    Raises
    ------
    InputError
        A key other than the models with extra parameters, or any problem
        :func:`parse_compare_table` finds in their entries.
    """
    if table is None:
        return CompareSettings()
    if not isinstance(table, dict):
        raise InputError(f"{quote_value(table)} is not a table", field=field_name)
    check_keys(table, (), tuple(name for name in MODELS if DEFAULT_EXTRA_PRIORS[name]),
               field_name)
    return parse_compare_table(table, field_name=field_name)


def _generations_ago(value: Any, field_name: str) -> int:
    """The founding's age: a whole number of generations, at least 1."""
    number = real_number(value, field_name)
    if number != int(number) or number < 1:
        raise InputError(f"{quote_value(value)} is not a whole number of generations >= 1",
                         field=field_name)
    return int(number)


def _check_extra_prior(model: str, prior: Prior, field_name: str) -> None:
    """Each model's extra prior is a uniform one within the range the model allows.

    The heterozygote-advantage model's h within [-10, 0]; the founder model's q_founder
    within [0, 1] (its sensitivity rows scale the width).
    """
    if model == "founder" and not isinstance(prior, Uniform):
        raise InputError(f"{prior.describe()}: the founder model needs a uniform prior on "
                         "q_founder within [0, 1]", field=field_name)
    if model == "heterozygote-advantage":
        if not isinstance(prior, Uniform) or prior.high > 0:
            raise InputError(f"{prior.describe()}: the heterozygote-advantage model needs a "
                             'uniform prior on h within [-10, 0] (h < 0: Aa fitter than AA)',
                             field=field_name)
