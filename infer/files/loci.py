"""Reading and writing for ``qhat batch``: the loci CSV in, the report folder out.

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
"""

from __future__ import annotations

import csv
import math
from array import array
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from infer.errors import InputError

__all__ = ["REQUIRED", "OPTIONAL", "LociTable", "read_loci", "write_report",
           "loci_rows", "make_figures", "describe_skipped", "ChunkStore"]

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
    try:
        handle = open(path, newline="", encoding="utf-8-sig")
    except OSError as error:
        raise InputError(f"cannot read the file ({error.strerror})", source=source) from None
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
        except UnicodeDecodeError:
            raise InputError("is not UTF-8 text", source=source) from None
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


def _g(value):
    return f"{value:.6g}" if math.isfinite(value) else ""


def loci_rows(table: LociTable, loci: dict, flags: dict):
    """Header and rows (lists of str) of loci.csv."""
    yield ["locus", "observed", "sampled", "mu", "mu_lower", "mu_upper", "s_het_median",
           "s_het_lower", "s_het_upper", "s_het_mean", "expected", "flags"]
    bits = sorted(flags)
    marks = {}
    columns = [np.asarray(c, dtype=float).tolist() for c in (
        table.observed, table.sampled, table.mu, table.mu_lower, table.mu_upper, loci["median"],
        loci["lower"], loci["upper"], loci["mean"], loci["expected"])]
    for i, (name, code) in enumerate(zip(table.names, np.asarray(loci["flags"]).tolist(),
                                              strict=True)):
        if code not in marks:
            marks[code] = ";".join(flags[b][0] for b in bits if code & b)
        k, n, mu, *rest = (column[i] for column in columns)
        yield [name, f"{k:.0f}", f"{n:.0f}", f"{mu:.6g}", *map(_g, rest), marks[code]]


def _log_norm(counts):
    from matplotlib.colors import LogNorm

    return LogNorm(vmin=1, vmax=max(float(counts.max()) if counts.count() else 1.0, 2.0))


def make_figures(table: LociTable, result, prior_curve):
    """The three figures: {file name: matplotlib Figure}.

    loci.csv's ``expected`` is n × the posterior median of q (deterministic model) or
    n × E[x] under Wright's density at the posterior median of s_het (drift model).

    ``prior_curve`` is ``(log10 s_het, density per log10 unit)`` of the prior used.
    """
    from matplotlib.figure import Figure  # no pyplot: a user's backend is left alone

    loci = result.loci
    ok = np.isfinite(loci["median"])
    medians = np.log10(loci["median"][ok])
    s = result.settings
    bins = np.linspace(math.log10(s.s_low), math.log10(s.s_high), 41)
    figures = {}

    fig = Figure(figsize=(6, 4), layout="tight")
    ax = fig.add_subplot()
    ax.hist(medians, bins=bins, color="#4c72b0", edgecolor="white")
    ax.set_xlabel("log10 posterior median of s_het")
    ax.set_ylabel("loci")
    ax.set_title(f"Per-locus estimates ({ok.sum()} loci)")
    figures["medians.png"] = fig

    fig = Figure(figsize=(6, 5), layout="tight")
    ax = fig.add_subplot()
    x = np.log10(loci["expected"][ok] + 1.0)
    y = np.log10(table.observed[ok] + 1.0)
    top = max(float(np.max(x, initial=1.0)), float(np.max(y, initial=1.0))) * 1.02
    edges = np.linspace(0.0, top, 61)
    counts, _, _ = np.histogram2d(x, y, bins=[edges, edges])
    shown = np.ma.masked_equal(counts.T, 0)
    image = ax.pcolormesh(edges, edges, shown, cmap="viridis", norm=_log_norm(shown))
    fig.colorbar(image, ax=ax, label="loci")
    ax.plot([0, top], [0, top], color="0.3", lw=1, label="observed = expected")
    what = "n × E[x] (drift)" if s.model == "drift" else "n × posterior median of q"
    ax.set_xlabel(f"log10(expected + 1), expected = {what}")
    ax.set_ylabel("log10(observed + 1)")
    ax.set_title("Observed vs expected allele copies")
    ax.legend(loc="upper left", fontsize=8)
    figures["observed_vs_expected.png"] = fig

    fig = Figure(figsize=(6, 4), layout="tight")
    ax = fig.add_subplot()
    ax.hist(medians, bins=bins, density=True, color="#bbbbbb", edgecolor="white",
            label="per-locus posterior medians")
    ax.plot(prior_curve[0], prior_curve[1], color="#c44e52", lw=2, label=result.prior.describe())
    ax.set_xlabel("log10 s_het")
    ax.set_ylabel("density per log10 unit")
    ax.set_title("Shared prior over the per-locus medians")
    ax.legend(loc="upper left", fontsize=8)
    figures["prior.png"] = fig
    return figures


def write_report(out, table: LociTable, result, summary: dict, flags: dict, prior_curve, *,
                 force=False) -> Path:
    """Write loci.csv, summary.json and the PNG figures into ``out`` atomically."""
    from infer.reporting.folder import atomic_folder
    from infer.reporting.jsonout import dumps

    out = Path(out)
    with atomic_folder(out, force=force) as folder:
        with open(folder / "loci.csv", "w", newline="", encoding="utf-8") as handle:
            csv.writer(handle, lineterminator="\n").writerows(loci_rows(table, result.loci, flags))
        for name, figure in make_figures(table, result, prior_curve).items():
            figure.savefig(folder / name, dpi=110)
        (folder / "summary.json").write_text(dumps(summary), encoding="utf-8")
    return out


class ChunkStore:
    """Disk-backed ``index -> array`` mapping in a private temporary folder.

    Keeps the drift model's per-chunk log-likelihoods between the two empirical-Bayes
    passes without holding them in memory. Use as a context manager; the folder goes
    away on exit.
    """

    def __init__(self):
        import tempfile

        self._folder = tempfile.TemporaryDirectory(prefix="qhat-batch-")

    def __setitem__(self, index, array):
        np.save(Path(self._folder.name) / f"{int(index)}.npy", np.asarray(array))

    def __getitem__(self, index):
        return np.load(Path(self._folder.name) / f"{int(index)}.npy")

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self._folder.cleanup()
