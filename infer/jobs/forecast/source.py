"""Reading back the report folder of ``qhat estimate`` for a forecast.

What the folder holds (docs/reports.md, 'The estimate report folder'): ``summary.json``
names the inheritance and the model and, under ``parameters``, every parameter with
``fixed`` and (for a fixed one) its value as ``median``; ``posterior.nc`` holds the draws
of the free parameters in its ``posterior`` group, shaped (chain, draw)
(:mod:`infer.reporting.netcdf`). The draws are read with h5netcdf, as they were written;
every failure is one :class:`~infer.errors.InputError` naming the file.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from infer.core.choices import INHERITANCES
from infer.errors import InputError
from infer.files.reading import read_text

__all__ = ["ForecastSource", "LIFE_CYCLE", "read_report"]

#: the parameters a forecast reads from the report (penetrance 1 when the report has none;
#: s_male and s_female NaN, "as s", unless the study gave selection by sex, whose s is
#: then their mean)
LIFE_CYCLE = ("mu", "s", "h", "F", "nu", "alpha", "penetrance", "s_male", "s_female")
_OPTIONAL = {"penetrance": 1.0, "s_male": float("nan"), "s_female": float("nan")}
#: a summary.json without these keys is not the one ``qhat estimate`` writes
SUMMARY_KEYS = ("parameters", "inheritance", "model", "diagnostics", "derived")


@dataclass(frozen=True)
class ForecastSource:
    """The draws of an estimate report, one row per posterior draw.

    Attributes
    ----------
    folder : str
        The report folder as given.
    title, inheritance, model : str
        From summary.json.
    draws : dict of str to numpy.ndarray
        Every parameter of :data:`LIFE_CYCLE`, shape (n,) (fixed ones broadcast).
    fixed : frozenset of str
        The parameters the study held fixed.
    mode : str or None
        The mode of the study's pooled counts (summary.json ``direct_indirect.mode``)
        when the report names one.
    trusted : bool or None
        The estimate converged and (where it had one) agreed with its exact cross-check
        (summary.json ``diagnostics``); None when the report does not say.
    """

    folder: str
    title: str
    inheritance: str
    model: str
    draws: dict
    fixed: frozenset
    mode: str | None = None
    trusted: bool | None = None

    @property
    def size(self) -> int:
        """Number of draws."""
        return int(next(iter(self.draws.values())).shape[0])


def _not_estimate(path: Path, why: str) -> InputError:
    return InputError(f"{why}; give a report folder written by qhat estimate",
                      source=str(path))


def _summary(folder: Path) -> dict:
    path = folder / "summary.json"
    if not path.exists():
        raise _not_estimate(path, "no such file")
    try:
        document = json.loads(read_text(path))
    except ValueError as error:
        raise InputError(f"not a JSON document ({error})", source=str(path)) from None
    if not isinstance(document, dict):
        raise _not_estimate(path, "not a summary of qhat estimate")
    for key in SUMMARY_KEYS:
        if key not in document:
            raise _not_estimate(path, f"no {key!r} key: not a summary of qhat estimate")
    if document["inheritance"] not in INHERITANCES:
        raise InputError(f"inheritance: {document['inheritance']!r} is not one of "
                         f"{', '.join(INHERITANCES)}", source=str(path))
    if not isinstance(document["parameters"], dict):
        raise _not_estimate(path, "'parameters' is not a table")
    return document


def _fixed_value(path: Path, name: str, entry) -> float:
    try:
        value = float(entry["median"])   # "inf" for a fixed Ne of infinity
    except (TypeError, KeyError, ValueError):
        raise InputError(f"parameters.{name}.median: {entry!r} is not a number",
                         source=str(path)) from None
    return value


def _posterior(path: Path, names: list[str]) -> dict[str, np.ndarray]:
    """The posterior draws of ``names``, flattened chain-major, from posterior.nc."""
    if not path.exists():
        raise _not_estimate(path, "no such file")
    import h5netcdf

    try:
        with h5netcdf.File(path, "r") as root:
            if "posterior" not in root.groups:
                raise _not_estimate(path, "no 'posterior' group")
            group = root["posterior"]
            found = {}
            for name in names:
                if name not in group.variables:
                    raise _not_estimate(path, f"posterior: no draws of {name!r}, which "
                                              "summary.json calls free")
                found[name] = np.asarray(group[name][...], dtype=float).reshape(-1)
    except InputError:
        raise
    except (OSError, ValueError, KeyError, TypeError) as error:
        raise InputError(f"cannot read the draws: {error}", source=str(path)) from None
    sizes = {v.size for v in found.values()}
    if len(sizes) > 1:
        raise InputError(f"posterior: the variables have different sizes {sorted(sizes)}",
                         source=str(path))
    if sizes == {0}:
        raise InputError("posterior: no draws", source=str(path))
    return found


def read_report(folder) -> ForecastSource:
    """Read the draws of every life-cycle parameter from an estimate report folder.

    Parameters
    ----------
    folder : str or os.PathLike
        The report folder ``qhat estimate`` wrote.

    Returns
    -------
    ForecastSource

    Raises
    ------
    infer.errors.InputError
        A missing folder or file, a folder not written by ``qhat estimate``, an
        unreadable summary.json or posterior.nc, naming the file.
    """
    folder = Path(folder)
    if not folder.exists():
        raise InputError("no such folder", source=str(folder))
    if not folder.is_dir():
        raise _not_estimate(folder, "not a folder")
    summary = _summary(folder)
    path = folder / "summary.json"
    parameters = summary["parameters"]
    free, fixed_values = [], {}
    for name in LIFE_CYCLE:
        entry = parameters.get(name)
        if entry is None:
            if name in _OPTIONAL or (name == "s" and "s_male" in parameters):
                fixed_values[name] = _OPTIONAL.get(name, float("nan"))
                continue
            raise _not_estimate(path, f"parameters: no {name!r}")
        if not isinstance(entry, dict) or not isinstance(entry.get("fixed"), bool):
            raise InputError(f"parameters.{name}.fixed: not true or false", source=str(path))
        if entry["fixed"]:
            fixed_values[name] = _fixed_value(path, name, entry)
        else:
            free.append(name)
    draws = _posterior(folder / "posterior.nc", free)
    size = next(iter(draws.values())).size if draws else 1
    for name, value in fixed_values.items():
        draws[name] = np.full(size, value)
    if "s" not in parameters:  # selection by sex: s is the mean of the sexes'
        draws["s"] = 0.5 * (draws["s_male"] + draws["s_female"])
        fixed_values.pop("s", None)
    mode = (summary.get("direct_indirect") or {}).get("mode")
    diagnostics = summary.get("diagnostics") if isinstance(summary.get("diagnostics"),
                                                           dict) else {}
    converged, verified = diagnostics.get("converged"), diagnostics.get("verified")
    trusted = None if converged is None else bool(converged) and verified is not False
    return ForecastSource(
        folder=str(folder), title=str(summary.get("title") or folder.name),
        inheritance=summary["inheritance"], model=str(summary["model"]),
        draws={name: draws[name] for name in LIFE_CYCLE},
        fixed=frozenset(name for name, value in fixed_values.items() if value == value),
        mode=mode if isinstance(mode, str) else None, trusted=trusted)
