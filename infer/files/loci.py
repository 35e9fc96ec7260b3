"""Reading for ``qhat batch``: the loci CSV, validated, as a :class:`LociTable`.

Input CSV (UTF-8, comma separated, one header line; blank lines and lines starting
with ``#`` are skipped but still counted in line numbers):

========== ========= ===============================================================
column     required  meaning
========== ========= ===============================================================
locus      yes       a name, unique in the file (never used in any file name)
observed   yes       copies of the deleterious allele(s) seen, whole number >= 0
sampled    yes       alleles sampled (2 × people for an autosome), whole number > 0
mu         yes       per-locus mutation rate per generation (median), 0 < mu < 1
mu_lower   no        lower end of a central interval for mu (log-normal)
mu_upper   no        upper end; both or neither, lower <= mu <= upper; empty = exact
========== ========= ===============================================================

Header names are matched without regard to case or surrounding spaces; other columns
are kept out of the computation and listed in ``summary.json``. Every bad row raises
``InputError`` with ``field="line 7, column observed"``; with ``skip_bad_rows`` each
bad row is left out and listed instead.

The report folder is written by :mod:`infer.reporting.batch_report`.
"""

from __future__ import annotations

import csv
import math
from array import array
from dataclasses import dataclass, field

import numpy as np

from infer.errors import InputError
from infer.files.reading import open_text

__all__ = ["REQUIRED", "OPTIONAL", "LociTable", "read_loci", "describe_skipped"]

REQUIRED = ("locus", "observed", "sampled", "mu")
OPTIONAL = ("mu_lower", "mu_upper")


@dataclass
class LociTable:
    """The good rows of a loci file, in file order."""

    source: str
    names: list
    lines: np.ndarray
    observed: np.ndarray
    sampled: np.ndarray
    mu: np.ndarray
    mu_lower: np.ndarray          # NaN where not given
    mu_upper: np.ndarray
    skipped: list = field(default_factory=list)   # {"line", "column", "message"}
    ignored_columns: list = field(default_factory=list)


def _number(text, column, *, whole=False):
    text = text.strip()
    if text == "":
        raise InputError("is empty", field=column)
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"{text!r} is not a number", field=column) from None
    if not math.isfinite(value):
        raise InputError(f"{text!r} is not a finite number", field=column)
    if whole and not value.is_integer():
        raise InputError(f"{text} is not a whole number", field=column)
    if value < 0:
        raise InputError(f"{text} is negative", field=column)
    return value


def _parse_row(cells, index, seen):
    """The row's (name, observed, sampled, mu, mu_lower, mu_upper); InputError(field=column)."""
    name = cells[index["locus"]].strip()
    if not name:
        raise InputError("is empty", field="locus")
    if name in seen:
        raise InputError(f"{name!r} repeats line {seen[name]}", field="locus")
    observed = _number(cells[index["observed"]], "observed", whole=True)
    sampled = _number(cells[index["sampled"]], "sampled", whole=True)
    if sampled == 0:
        raise InputError("0 alleles sampled", field="sampled")
    if observed > sampled:
        raise InputError(f"{observed:g} is more than sampled {sampled:g}", field="observed")
    mu = _number(cells[index["mu"]], "mu")
    if not 0 < mu < 1:
        raise InputError(f"{mu:g} is not between 0 and 1", field="mu")
    bounds = []
    for column in OPTIONAL:
        text = cells[index[column]].strip() if column in index else ""
        bounds.append(None if text == "" else _number(text, column))
    lower, upper = bounds
    if (lower is None) != (upper is None):
        given = "mu_lower" if lower is not None else "mu_upper"
        other = "mu_upper" if lower is not None else "mu_lower"
        raise InputError(f"given without {other}", field=given)
    if lower is not None:
        if not 0 < lower <= mu:
            raise InputError(f"{lower:g} is not in (0, mu = {mu:g}]", field="mu_lower")
        if not mu <= upper < 1:
            raise InputError(f"{upper:g} is not in [mu = {mu:g}, 1)", field="mu_upper")
    else:
        lower = upper = math.nan
    return name, observed, sampled, mu, lower, upper


def read_loci(path, *, skip_bad_rows=False) -> LociTable:
    """Read and validate a loci CSV (module docstring).

    Raises
    ------
    InputError
        ``source`` the file, ``field`` ``"line L, column C"``: the first bad row (with
        the count of further bad rows), unless ``skip_bad_rows``; always for a missing
        file, a missing column in the header, or no usable row.
    """
    source = str(path)
    handle = open_text(path, newline="")
    errors, seen = [], {}    # seen: locus name -> line, in file order
    values = {name: array("d") for name in ("observed", "sampled", "mu", "mu_lower", "mu_upper")}
    header, index = None, None
    with handle:
        reader = csv.reader(handle)
        try:
            for cells in reader:
                line = reader.line_num
                blank = not cells or all(not c.strip() for c in cells)
                if blank or cells[0].lstrip().startswith("#"):
                    continue
                if header is None:
                    header = [c.strip().lower() for c in cells]
                    missing = [c for c in REQUIRED if c not in header]
                    if missing:
                        raise InputError(f"the header has no column {missing[0]!r} (needs "
                                         f"{', '.join(REQUIRED)})", source=source,
                                         field=f"line {line}")
                    index = {name: header.index(name) for name in (*REQUIRED, *OPTIONAL)
                             if name in header}
                    continue
                if len(cells) != len(header):
                    errors.append({"line": line, "column": None,
                                   "message": f"{len(cells)} fields where the header has "
                                              f"{len(header)}"})
                    continue
                try:
                    parsed = _parse_row(cells, index, seen)
                except InputError as bad:
                    errors.append({"line": line, "column": bad.field, "message": bad.message})
                    continue
                seen[parsed[0]] = line
                for column, value in zip(values.values(), parsed[1:], strict=True):
                    column.append(value)
        except csv.Error as error:
            raise InputError(str(error), source=source, field=f"line {reader.line_num}") from None
    if header is None:
        raise InputError("the file is empty (no header line)", source=source)
    if errors and not skip_bad_rows:
        first = errors[0]
        more = len(errors) - 1
        note = f" ({more} more bad row{'s' * (more != 1)}; --skip-bad-rows leaves them out)" \
            if more else ""
        raise InputError(first["message"] + note, source=source, field=_where(first))
    if not seen:
        raise InputError("no usable loci after the header", source=source)
    arrays = {name: np.frombuffer(column, dtype=float).copy() for name, column in values.items()}
    return LociTable(source=source, names=list(seen),
                     lines=np.fromiter(seen.values(), dtype=np.int64, count=len(seen)),
                     skipped=errors, **arrays,
                     ignored_columns=[c for c in header if c not in (*REQUIRED, *OPTIONAL)])


def _where(error):
    if error["column"] is None:
        return f"line {error['line']}"
    return f"line {error['line']}, column {error['column']}"


def describe_skipped(error) -> str:
    """One line for stderr about a skipped row."""
    return f"skipped {_where(error)}: {error['message']}"

