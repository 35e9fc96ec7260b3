"""Labels and units of the reports (issue 13, item 4).

References: the X-linked sex-specific rates mu_female = 3 mu/(2 + alpha) and
mu_male = alpha mu_female follow from mu = (2 mu_female + mu_male)/3 (closed form, the
definition of the sex-averaged rate per X chromosome; Haldane 1935, J. Genet. 31:317,
uses the same average). Number formats are common practice for reports (no negative
zero, whole counts as whole numbers).
"""

from __future__ import annotations

import glob
import math
from pathlib import Path

import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg

from infer.files.claim import load_claim
from infer.jobs.check.run import check_claim
from infer.reporting.labels import (
    fmt_contraction,
    fmt_count,
    fmt_level,
    fmt_percent,
    fmt_value,
    parameter_meanings,
)
from infer.reporting.plots.claim_balance import claim_balance_figure
from infer.reporting.plots.save import plain_text

DEMO = Path(__file__).resolve().parents[2] / "data_demo"


@pytest.mark.parametrize("path", sorted(glob.glob(str(DEMO / "claim-*.toml"))))
def test_check_balance_plot_draws_plain_ticks_and_a_whole_y_label(path):
    result = check_claim(load_claim(path))
    with plain_text():
        figure = claim_balance_figure(result)
        FigureCanvasAgg(figure)  # the canvas savefig uses for a PNG
        figure.canvas.draw()
        ax = figure.axes[0]
        texts = [t.get_text() for t in ax.get_yticklabels() + ax.get_xticklabels()]
        label = ax.yaxis.label.get_window_extent(figure.canvas.get_renderer())
    assert not any("\\mathdefault" in t or "$" in t for t in texts), (
        f"tick labels must be plain text (text.parse_math is off): {texts}")
    assert label.x0 >= 0, f"the y label is cut at the left edge (x0 = {label.x0:.1f} px)"
    decades = [t for t in (ax.get_ylim())]
    assert math.log10(decades[1] / decades[0]) <= 13, (
        f"the y axis spans more than 13 decades ({decades}): the band floor of a zero count "
        "must not drag it to 1e-300")


def test_tiny_values_and_negative_zero():
    assert fmt_value(1.13e-302) == "< 1e-12", "a median of 1e-302 must read as below 1e-12"
    assert fmt_value(0.0) == "0"
    assert fmt_value(2.49e-5) == "2.49e-05"
    assert fmt_contraction(-0.001) == "0.00", "no negative zero in a contraction"
    assert fmt_contraction(-0.31) == "-0.31", "a real negative contraction stays"
    assert fmt_contraction(None) == "—"


def test_counts_and_percentages():
    assert fmt_count(99999999999999991611392.0) == "1.00e+23", (
        "a float count beyond 1e15 must not print its binary expansion")
    assert fmt_count(94075.0) == "94,075"
    assert fmt_percent(1e-300) == "< 0.01 %", "a tiny share is clipped, not '1e-298%'"
    assert fmt_percent(0.1234) == "12.34 %"
    assert fmt_percent(-1e-9) == "0.00 %"
    assert fmt_level(0.95) == "95 %" and fmt_level(1e-300) == "< 0.01 %", (
        "an interval level of 1e-300 must not print as '1e-298 %'")


def test_s_is_described_for_the_study():
    fixed_h = lambda h: {"h": {"fixed": True, "median": h}}  # noqa: E731
    dominant = parameter_meanings("autosomal", fixed_h(1.0))["s"]
    assert "heterozygotes and homozygotes" in dominant and "against aa" not in dominant
    recessive = parameter_meanings("autosomal", fixed_h(0.0))["s"]
    assert "homozygotes aa" in recessive
    x_linked = parameter_meanings("x-linked", fixed_h(0.0))
    assert "hemizygous" in x_linked["s"], "x-linked s acts on hemizygous sons"
    assert "sex average per X chromosome" in x_linked["mu"]


@pytest.mark.slow
def test_x_linked_report_gives_sex_specific_rates(tmp_path):
    """An estimate of the Northholm demo: mu_female and mu_male from the posterior of mu."""

    from infer.files.study import load_study
    from infer.jobs.estimate.pipeline import estimate
    from infer.reporting.markdown import report_markdown

    study = load_study(DEMO / "northholm-x-linked.toml")
    result, _ = estimate(study, seed=3, grid=False)
    derived = result.summary["derived"]
    alpha = float(study.parameters["alpha"].value)
    mu = result.summary["parameters"]["mu"]
    # closed form: mu_female = 3 mu / (2 + alpha); medians map through a monotone function
    assert derived["mu_female"]["median"] == pytest.approx(
        3 * mu["median"] / (2 + alpha), rel=0.05)
    assert derived["mu_male"]["median"] == pytest.approx(
        alpha * derived["mu_female"]["median"], rel=1e-9)
    text = report_markdown(result, {})
    assert "mu_female" in text and "sex average per X chromosome" in text
    assert "hemizygous" in text
