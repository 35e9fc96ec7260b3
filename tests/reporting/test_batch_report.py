"""The rendering of ``qhat batch``: the BatchReport numbers, loci.csv, summary.json, figures.

Covers infer/jobs/batch/report.py (the numbers), infer/reporting/batch_report.py (loci.csv,
summary.json, the folder) and infer/reporting/plots/batch_figures.py (the figures).

References (named again beside each check):

* a log-uniform density on [a, b] is 1 / log10(b/a) per log10 unit (closed form); a
  log-normal prior truncated to [a, b] is a truncated normal in ln s_het
  (scipy.stats.truncnorm), times ln 10 per log10 unit (change of variables);
* a histogram drawn with ``density=True`` has area 1 (numpy.histogram documentation);
* ``numpy.quantile`` of the medians read back from loci.csv (an independent path through
  the file);
* a new file's mode is 0o666 & ~umask (POSIX open(2)).
"""

from __future__ import annotations

import csv
import importlib.util
import io
import math
import os
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from scipy import stats  # noqa: E402

from infer.jobs.batch import run as batch  # noqa: E402
from infer.jobs.batch.prior import SHetPrior  # noqa: E402
from infer.jobs.batch.report import MEDIAN_PROBABILITIES, prior_curve, summarise_batch  # noqa: E402
from infer.jobs.batch.summary import FLAGS  # noqa: E402
from infer.cli import main  # noqa: E402
from infer.files.loci import read_loci  # noqa: E402
from infer.reporting import batch_report  # noqa: E402
from infer.reporting.folder import MARKER  # noqa: E402
from infer.reporting.plots.batch_figures import BATCH_FIGURE_FILES, batch_figures  # noqa: E402
from infer.reporting.plots.save import plain_text  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
_spec = importlib.util.spec_from_file_location("make_batch_demo",
                                               ROOT / "benchmarks" / "make_batch_demo.py")
demo = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(demo)

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (W3C 2003), section 5.2
LOCI = 200


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    """(loci file, BatchReport) for 200 simulated loci under the log-uniform prior."""
    source = tmp_path_factory.mktemp("batch") / "loci.csv"
    demo.write_csv(source, demo.simulate(LOCI, 3))
    table = read_loci(source)
    sigma = batch.mu_sigma_from_interval(table.mu_lower, table.mu_upper, 0.95)
    result = batch.analyse(table.observed, table.sampled, table.mu, sigma, batch.BatchSettings())
    report = summarise_batch(table, result, sigma, requested_prior="log-uniform",
                             mu_level=0.95, chunk_size=512, timings={"read_seconds": 0.0})
    return source, report


def _written(report, folder):
    out = batch_report.write_batch_report(report, folder / "report")
    with open(out / "loci.csv", newline="", encoding="utf-8") as handle:
        return out, list(csv.DictReader(handle))


# ---------------------------------------------------------------- the numbers (batch/)


def test_prior_curve_of_the_log_uniform_prior_is_flat():
    """Closed form: 1 / log10(s_high / s_low) per log10 unit over the grid."""
    settings = batch.BatchSettings(s_low=1e-5, s_high=0.5, grid_points=400)
    x, y = prior_curve(SHetPrior(), settings)
    np.testing.assert_allclose(x, np.log10(np.geomspace(1e-5, 0.5, 400)), rtol=1e-12,
                               err_msg="prior curve x is not log10 of the s_het grid")
    np.testing.assert_allclose(y, 1 / math.log10(0.5 / 1e-5), rtol=1e-12,
                               err_msg="log-uniform prior is not 1/log10(b/a) per log10 unit")


def test_prior_curve_of_the_log_normal_prior_is_a_truncated_normal():
    """ln s_het ~ N(ln 0.01, 1) truncated to the grid (scipy.stats.truncnorm), x ln 10 per
    log10 unit; the trapezoid normalisation differs from the exact one by O(step^2)."""
    settings = batch.BatchSettings(s_low=1e-5, s_high=0.5, grid_points=400)
    x, y = prior_curve(SHetPrior("log-normal", median=0.01, sigma=1.0), settings)
    u = settings.log_s
    a, b = (u[0] - math.log(0.01)), (u[-1] - math.log(0.01))
    reference = stats.truncnorm(a, b, loc=math.log(0.01), scale=1.0).pdf(u) * math.log(10)
    np.testing.assert_allclose(y, reference, rtol=1e-3,
                               err_msg="log-normal prior curve is not the truncated normal")


def test_flag_counts_and_median_quantiles_agree_with_loci_csv(made, tmp_path):
    """Counted again from loci.csv's flags column, and numpy.quantile of its medians."""
    _, report = made
    _, rows = _written(report, tmp_path)
    assert len(rows) == LOCI, f"loci.csv has {len(rows)} rows for {LOCI} loci"
    for bit, (name, _) in FLAGS.items():
        from_file = sum(name in row["flags"].split(";") for row in rows)
        assert report.flag_counts[bit] == from_file, (
            f"flag {name}: BatchReport counts {report.flag_counts[bit]}, loci.csv {from_file}")
    assert report.flagged == sum(report.flag_counts.values()), "flagged is not the flag total"
    medians = np.array([float(r["s_het_median"]) for r in rows if r["s_het_median"]])
    assert list(report.median_quantiles) == list(MEDIAN_PROBABILITIES), (
        f"quantiles at {list(report.median_quantiles)}")
    for p, value in report.median_quantiles.items():
        assert value == pytest.approx(np.quantile(medians, p), rel=1e-5), (
            f"quantile {p} of the medians: {value:.6g} vs {np.quantile(medians, p):.6g} from "
            "loci.csv (6 significant digits)")
    assert report.loci_with_mu_interval == sum(bool(r["mu_lower"]) for r in rows), (
        "loci_with_mu_interval does not count the rows with mu_lower..mu_upper")


# ------------------------------------------------------------ loci.csv and summary.json


def test_loci_rows_header_and_number_formats(made):
    _, report = made
    rows = list(batch_report.loci_rows(report.table, report.result.loci))
    assert rows[0] == list(batch_report.LOCI_COLUMNS), f"header {rows[0]}"
    assert len(rows) == LOCI + 1, f"{len(rows)} rows for {LOCI} loci and a header"
    first = rows[1]
    assert first[0] == report.table.names[0], f"first locus {first[0]!r}"
    assert first[1] == f"{report.table.observed[0]:.0f}", f"observed written as {first[1]!r}"
    median = float(first[batch_report.LOCI_COLUMNS.index("s_het_median")])
    assert median == pytest.approx(report.result.loci["median"][0], rel=1e-5), (
        f"median written as {median}, computed {report.result.loci['median'][0]}")


def test_summary_document_keys_flags_and_files(made, tmp_path):
    _, report = made
    out, _ = _written(report, tmp_path)
    document = batch_report.batch_document(report)
    assert list(document) == [
        "schema_version", "qhat_version", "caution", "command", "input", "model", "settings",
        "prior", "log_marginal_likelihood", "expected_count", "flags", "medians_across_loci",
        "execution", "files"], (
        f"summary.json keys {list(document)}: a change breaks readers of the file")
    assert sorted(document["files"]) == sorted(
            p.name for p in out.iterdir() if p.name != MARKER), (
        f"summary lists {document['files']}, the folder holds {sorted(os.listdir(out))}")
    assert list(document["medians_across_loci"]) == ["q05", "q25", "q50", "q75", "q95"], (
        f"median quantile keys {list(document['medians_across_loci'])}")
    assert {k: v["count"] for k, v in document["flags"].items()} == {
        FLAGS[bit][0]: count for bit, count in report.flag_counts.items()}, "flag counts differ"
    assert document["prior"]["fitted"] is None, "a log-uniform run has no fitted prior"
    assert document["input"]["loci"] == LOCI, f"input.loci {document['input']['loci']}"


# --------------------------------------------------------------- figures (reporting/)


def test_batch_figures_draw_histograms_density_and_diagonal(made):
    _, report = made
    with plain_text():
        figures = batch_figures(report)
    assert list(figures) == list(BATCH_FIGURE_FILES), f"figures {list(figures)}"
    finite = int(np.isfinite(report.result.loci["median"]).sum())

    ax = figures["medians.png"].axes[0]
    assert ax.get_title() == f"Per-locus estimates ({finite} loci)", ax.get_title()
    assert (ax.get_xlabel(), ax.get_ylabel()) == ("log10 posterior median of s_het", "loci"), (
        f"labels {ax.get_xlabel()!r}, {ax.get_ylabel()!r}")
    assert len(ax.patches) == 40, f"{len(ax.patches)} bars: want 40 bins over the grid"
    assert sum(p.get_height() for p in ax.patches) == finite, (
        "the histogram of medians does not hold every locus with a median once")

    figure = figures["observed_vs_expected.png"]
    ax, colour_axis = figure.axes
    assert ax.get_title() == "Observed vs expected allele copies", ax.get_title()
    assert ax.get_ylabel() == "log10(observed + 1)", ax.get_ylabel()
    assert ax.get_xlabel() == ("log10(expected + 1), expected = n × posterior median of q"), (
        ax.get_xlabel())
    assert len(ax.collections) == 1, f"{len(ax.collections)} collections: want one 2-D histogram"
    (diagonal,) = ax.get_lines()
    x, y = diagonal.get_data()
    assert list(x) == list(y) and x[0] == 0, f"the diagonal runs from x {list(x)} to y {list(y)}"
    assert colour_axis.get_ylabel() == "loci", f"colour bar label {colour_axis.get_ylabel()!r}"
    figure.savefig(io.BytesIO(), format="png", dpi=40)
    ticks = [t.get_text() for t in colour_axis.yaxis.get_ticklabels() if t.get_text()]
    assert ticks and not [t for t in ticks if "$" in t], (
        f"colour bar tick labels {ticks}: want plain numbers, not mathtext printed as text")

    ax = figures["prior.png"].axes[0]
    area = sum(p.get_height() * p.get_width() for p in ax.patches)
    assert area == pytest.approx(1.0, rel=1e-9), f"density histogram has area {area}"
    (line,) = ax.get_lines()
    np.testing.assert_array_equal(line.get_ydata(), report.prior_curve[1],
                                  err_msg="prior.png does not draw the report's prior curve")
    legend = sorted(t.get_text() for t in ax.get_legend().get_texts())
    assert legend == sorted(["per-locus posterior medians", "log-uniform on the grid bounds"]), (
        f"prior legend {legend}")


def test_write_batch_report_files_follow_the_umask(made, tmp_path, umask):
    mode = umask(0o027)
    _, report = made
    out, _ = _written(report, tmp_path)
    modes = {p.name: p.stat().st_mode & 0o777 for p in out.iterdir()}
    assert modes == {name: mode for name in (*batch_report.BATCH_FILES, MARKER)}, (
        f"umask 027: modes {modes}, want {mode:o} for each of {batch_report.BATCH_FILES}")
    for name in BATCH_FIGURE_FILES:
        assert (out / name).read_bytes()[:8] == PNG_SIGNATURE, f"{name} is not a PNG file"


def test_the_command_writes_files_with_the_umask_mode(made, tmp_path, umask, capsys):
    mode = umask(0o077)
    source, _ = made
    out = tmp_path / "cli"
    assert main(["batch", str(source), "--out", str(out), "--quiet"]) == 0, (
        capsys.readouterr().err)
    modes = {p.name: p.stat().st_mode & 0o777 for p in out.iterdir()}
    assert modes == {name: mode for name in (*batch_report.BATCH_FILES, MARKER)}, (
        f"umask 077: modes {modes}, want {mode:o} for each of {batch_report.BATCH_FILES}")
