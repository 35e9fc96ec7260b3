"""The values a forecast may change, and the range each accepts (docs/model.md, 'Life cycle').

The same bounds as the life cycle's parameters everywhere else in qhat: mu, F and nu in
[0, 1), s and h in [0, 1], alpha above 0 (X-linked loci only), penetrance in (0, 1].
Standard library only, so that the command line can offer the names without numpy.
"""

from __future__ import annotations

import math
from typing import NamedTuple

from infer.errors import InputError

__all__ = ["Bounds", "CHANGEABLE", "check_changes"]


class Bounds(NamedTuple):
    """The accepted range of one changeable value (``low_open``: the end is refused)."""

    low: float
    high: float | None
    low_open: bool = False
    high_open: bool = False


#: name -> accepted range, in the order the documents list them
CHANGEABLE: dict[str, Bounds] = {
    "s": Bounds(0.0, 1.0),
    "h": Bounds(0.0, 1.0),
    "mu": Bounds(0.0, 1.0, high_open=True),
    "F": Bounds(0.0, 1.0, high_open=True),
    "nu": Bounds(0.0, 1.0, high_open=True),
    "alpha": Bounds(0.0, None, low_open=True),
    "penetrance": Bounds(0.0, 1.0, low_open=True),
    "s_male": Bounds(0.0, 1.0),
    "s_female": Bounds(0.0, 1.0),
}


def _refusal(value: float, bounds: Bounds) -> str | None:
    """Why ``value`` is outside ``bounds`` (the wording of the command-line checks)."""
    if not math.isfinite(value):
        return f"{value:g} is not a finite number"
    if value < bounds.low or (value == bounds.low and bounds.low_open):
        if value < 0 <= bounds.low:
            return f"{value:g} is negative"
        return f"{value:g} must be {'above' if bounds.low_open else 'at least'} {bounds.low:g}"
    if bounds.high is not None and value > bounds.high:
        return f"{value:g} is above {bounds.high:g}"
    if bounds.high is not None and value == bounds.high and bounds.high_open:
        return f"{value:g} must be below {bounds.high:g}"
    return None


def check_changes(changes: dict, inheritance: str) -> dict[str, float]:
    """The changed values as floats, each checked against :data:`CHANGEABLE`.

    Parameters
    ----------
    changes : dict
        name -> new value.
    inheritance : {"autosomal", "x-linked"}
        ``alpha`` applies to X-linked loci only.

    Returns
    -------
    dict of str to float

    Raises
    ------
    infer.errors.InputError
        With ``field`` the name: an unknown name, a value that is not a number or is
        outside its range, ``alpha`` for an autosomal locus.
    """
    checked = {}
    for name, value in changes.items():
        if name not in CHANGEABLE:
            raise InputError(f"{name!r} is not one of {', '.join(CHANGEABLE)}", field=name)
        if isinstance(value, bool):
            raise InputError(f"{value!r} is not a number", field=name)
        try:
            number = float(value)
        except (TypeError, ValueError):
            raise InputError(f"{value!r} is not a number", field=name) from None
        why = _refusal(number, CHANGEABLE[name])
        if why is not None:
            raise InputError(why, field=name)
        if name == "alpha" and inheritance != "x-linked":
            raise InputError(f"{number:g} applies to x-linked loci only", field=name)
        if name in ("s_male", "s_female") and inheritance != "autosomal":
            raise InputError(f"{number:g} applies to autosomal loci only (an x-linked "
                             "locus has s for sons and h for daughters)", field=name)
        checked[name] = number
    return checked
