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
mode       no        ``dominant`` or ``recessive`` (the disorder's mode; empty = not
                     known): s_het assumes h = 1/2, so recessive loci are flagged
========== ========= ===============================================================

Header names are matched without regard to case or surrounding spaces, and a name may
appear only once (a repeated column is refused, naming it); other columns are kept out
of the computation and listed in ``summary.json``. Every bad row raises ``InputError``
with ``field="line 7, column observed"``; with ``skip_bad_rows`` each bad row is left
out and listed instead.

The report folder is written by :mod:`infer.reporting.batch_report`.
"""

from __future__ import annotations

import csv
import math
from array import array
from collections import ChainMap
from dataclasses import dataclass, field

import numpy as np

from infer.errors import InputError
from infer.files.reading import open_text

__all__ = ["REQUIRED", "OPTIONAL", "LociTable", "LociBlock", "LociScan", "scan_loci", "read_loci",
           "describe_skipped"]

REQUIRED = ("locus", "observed", "sampled", "mu")
OPTIONAL = ("mu_lower", "mu_upper")
#: the optional column of the disorder's mode, read as ``recessive`` 1.0 / 0.0 / NaN
MODE_COLUMN = "mode"
MODE_VALUES = {"dominant": 0.0, "recessive": 1.0}


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
    recessive: np.ndarray = None  # 1.0 recessive, 0.0 dominant, NaN not given
    skipped: list = field(default_factory=list)   # {"line", "column", "message"}
    ignored_columns: list = field(default_factory=list)

    @property
    def count(self) -> int:
        """Number of good rows."""
        return len(self.names)


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


def _mode(cells, index) -> float:
    text = cells[index[MODE_COLUMN]].strip().lower() if MODE_COLUMN in index else ""
    if text == "":
        return math.nan
    if text not in MODE_VALUES:
        raise InputError(f"{text!r} is not dominant or recessive (or empty)", field=MODE_COLUMN)
    return MODE_VALUES[text]


def _parse_row(cells, index, seen):
    """The row's (name, observed, sampled, mu, mu_lower, mu_upper, recessive).

    Raises InputError(field=column).
    """
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
    return name, observed, sampled, mu, lower, upper, _mode(cells, index)


@dataclass
class LociBlock:
    """Consecutive good rows of a loci file (one block of :func:`scan_loci`)."""

    names: list
    lines: np.ndarray
    observed: np.ndarray
    sampled: np.ndarray
    mu: np.ndarray
    mu_lower: np.ndarray
    mu_upper: np.ndarray
    recessive: np.ndarray


@dataclass
class LociScan:
    """What :func:`scan_loci` learnt about a whole loci file (its rows are in the store)."""

    source: str
    count: int                    # good rows
    blocks: int                   # store keys 0 .. blocks - 1
    max_observed: float
    skipped: list = field(default_factory=list)
    ignored_columns: list = field(default_factory=list)


_COLUMNS = ("observed", "sampled", "mu", "mu_lower", "mu_upper", "recessive")


class _SeenNames:
    """Exact test of a locus name against every good row of earlier blocks.

    Earlier names are kept as sorted 64-bit hashes in levels of doubling size (8 bytes
    a locus); a hash hit is confirmed, with the first line, by reading the earlier
    blocks back from the store, so a collision never rejects a row.
    """

    def __init__(self, store):
        self._store, self._levels, self._blocks = store, [], 0

    @staticmethod
    def _hashes(names):
        return np.fromiter((hash(name) for name in names), dtype=np.int64, count=len(names))

    def earlier(self, names) -> dict:
        """Those of ``names`` that a good row of an earlier block holds: name -> line."""
        if not self._levels or not names:
            return {}
        hashes = self._hashes(names)
        hit = np.zeros(hashes.size, dtype=bool)
        for level in self._levels:
            at = np.minimum(np.searchsorted(level, hashes), level.size - 1)
            hit |= level[at] == hashes
        wanted = {name for name, h in zip(names, hit.tolist(), strict=True) if h}
        found = {}
        for index in range(self._blocks):
            if len(found) == len(wanted):
                break
            block = self._store[index]
            for name, line in zip(block.names, block.lines.tolist(), strict=True):
                if name in wanted and name not in found:
                    found[name] = line
        return found

    def add(self, names) -> None:
        """Remember the good names of the block just stored."""
        self._blocks += 1
        self._levels.append(np.sort(self._hashes(names)))
        while len(self._levels) > 1 and self._levels[-2].size <= self._levels[-1].size:
            top = self._levels.pop()
            self._levels[-1] = np.sort(np.concatenate([self._levels[-1], top]))


def _header(cells, line, source):
    header = [c.strip().lower() for c in cells]
    repeated = sorted({c for c in header if c and header.count(c) > 1}, key=header.index)
    if repeated:
        names = ", ".join(repr(c) for c in repeated)
        raise InputError(f"the header repeats the column{'s' * (len(repeated) > 1)} {names} "
                         "(each column may appear once)", source=source, field=f"line {line}")
    missing = [c for c in REQUIRED if c not in header]
    if missing:
        raise InputError(f"the header has no column {missing[0]!r} (needs "
                         f"{', '.join(REQUIRED)})", source=source, field=f"line {line}")
    return header, {name: header.index(name) for name in (*REQUIRED, *OPTIONAL, MODE_COLUMN)
                    if name in header}


def scan_loci(path, store, *, skip_bad_rows=False, block_rows=65536) -> LociScan:
    """Read and validate a loci CSV block by block, keeping the good rows in ``store``.

    Memory stays flat in the number of rows: only one block of ``block_rows`` rows is
    held at a time (and 8 bytes a locus for the test of repeated names).

    Parameters
    ----------
    path : str or os.PathLike
        The loci CSV (module docstring).
    store : mutable mapping
        Receives ``store[i] = LociBlock`` for i = 0, 1, ... (a dict, or a disk-backed
        mapping); a block holds the good rows among ``block_rows`` rows read.
    skip_bad_rows : bool
        Leave bad rows out (listed in ``skipped``) instead of raising.
    block_rows : int
        Rows read a block.

    Returns
    -------
    LociScan

    Raises
    ------
    InputError
        As :func:`read_loci`; the whole file is read before a bad row is reported, so
        the error counts the further bad rows.
    """
    source = str(path)
    handle = open_text(path, newline="")
    seen = _SeenNames(store)
    errors, bad_rows = [], 0
    header, index = None, None
    pending, blocks, count, most = [], 0, 0, 0.0

    def flush():
        nonlocal blocks, count, most, bad_rows
        earlier = seen.earlier([name for _, _, name in pending])
        block_seen, good, columns = {}, [], [array("d") for _ in _COLUMNS]
        for line, cells, _ in pending:
            try:
                parsed = _parse_row(cells, index, ChainMap(block_seen, earlier))
            except InputError as bad:
                bad_rows += 1
                if skip_bad_rows or not errors:
                    errors.append({"line": line, "column": bad.field, "message": bad.message})
                continue
            block_seen[parsed[0]] = line
            good.append(line)
            for column, value in zip(columns, parsed[1:], strict=True):
                column.append(value)
        pending.clear()
        if not good or (errors and not skip_bad_rows):
            return
        values = {name: np.frombuffer(column, dtype=float).copy()
                  for name, column in zip(_COLUMNS, columns, strict=True)}
        names = list(block_seen)
        store[blocks] = LociBlock(names=names, lines=np.asarray(good, dtype=np.int64),
                                  **values)
        seen.add(names)
        blocks, count = blocks + 1, count + len(names)
        most = max(most, float(np.max(values["observed"])))

    with handle:
        reader = csv.reader(handle)
        try:
            for cells in reader:
                line = reader.line_num
                blank = not cells or all(not c.strip() for c in cells)
                if blank or cells[0].lstrip().startswith("#"):
                    continue
                if header is None:
                    header, index = _header(cells, line, source)
                    continue
                if len(cells) != len(header):
                    flush()       # keep the errors in line order
                    bad_rows += 1
                    if skip_bad_rows or not errors:
                        errors.append({"line": line, "column": None,
                                       "message": f"{len(cells)} fields where the header has "
                                                  f"{len(header)}"})
                    continue
                pending.append((line, cells, cells[index["locus"]].strip()))
                if len(pending) >= block_rows:
                    flush()
            flush()
        except csv.Error as error:
            raise InputError(str(error), source=source, field=f"line {reader.line_num}") from None
    if header is None:
        raise InputError("the file is empty (no header line)", source=source)
    if errors and not skip_bad_rows:
        first = errors[0]
        more = bad_rows - 1
        note = f" ({more} more bad row{'s' * (more != 1)}; --skip-bad-rows leaves them out)" \
            if more else ""
        raise InputError(first["message"] + note, source=source, field=_where(first))
    if not count:
        raise InputError("no usable loci after the header", source=source)
    return LociScan(source=source, count=count, blocks=blocks, max_observed=most,
                    skipped=errors,
                    ignored_columns=[c for c in header
                                     if c not in (*REQUIRED, *OPTIONAL, MODE_COLUMN)])


def read_loci(path, *, skip_bad_rows=False) -> LociTable:
    """Read and validate a loci CSV (module docstring) into memory.

    Raises
    ------
    InputError
        ``source`` the file, ``field`` ``"line L, column C"``: the first bad row (with
        the count of further bad rows), unless ``skip_bad_rows``; always for a missing
        file, a repeated or missing column in the header, or no usable row.
    """
    blocks = {}
    scan = scan_loci(path, blocks, skip_bad_rows=skip_bad_rows)
    parts = [blocks[i] for i in range(scan.blocks)]
    arrays = {name: np.concatenate([getattr(b, name) for b in parts]) for name in _COLUMNS}
    return LociTable(source=scan.source, names=[n for b in parts for n in b.names],
                     lines=np.concatenate([b.lines for b in parts]), skipped=scan.skipped,
                     ignored_columns=scan.ignored_columns, **arrays)


def _where(error):
    if error["column"] is None:
        return f"line {error['line']}"
    return f"line {error['line']}, column {error['column']}"


def describe_skipped(error) -> str:
    """One line for stderr about a skipped row."""
    return f"skipped {_where(error)}: {error['message']}"

