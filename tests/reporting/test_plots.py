"""Tests of the estimate report plots (infer/reporting/plots/figures.py and the modules
it draws with: posterior.py, fit.py, common.py; written through save.py).

The results are synthetic but well formed: posterior draws from known distributions,
exact closed-form grid marginals and binomial predictive draws, so every reference value
below comes from a closed form and not from the code under test. Figures are checked
by what was drawn on them (labels, titles, tick texts, numbers of lines, patches and
collections), files by their PNG signature, size and mode.
"""

from __future__ import annotations

import functools
import io
import math

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from scipy import stats  # noqa: E402

from infer.core.balance import q_hat  # noqa: E402
from infer.inference.exact import ExactPosterior  # noqa: E402
from infer.reporting.plots import figures as plots  # noqa: E402
from infer.reporting.plots.common import axis_label  # noqa: E402
from infer.reporting.plots.save import plain_text  # noqa: E402
from infer.jobs.estimate.results import EstimateResult  # noqa: E402
from infer.files.study import parse_study  # noqa: E402

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (W3C 2003), section 5.2


# ---------------------------------------------------------------- synthetic results


def _closed_form_q_dominant(mu, s):
    """Exact autosomal q_hat for h = 1, F = 0, nu = 0 (derived).

    docs/model.md: (1-F)(1-2h)s q^2 + [(1-F)hs(1+mu) + Fs] q = mu; with h = 1 and
    F = 0 this is s q^2 - s(1+mu) q + mu = 0, whose smaller (stable) root is
    q = [(1+mu) - sqrt((1+mu)^2 - 4 mu / s)] / 2, written cancellation-free as
    2 mu / (s [(1+mu) + sqrt((1+mu)^2 - 4 mu / s)]).
    """
    mu, s = np.asarray(mu, float), np.asarray(s, float)
    disc = (1 + mu) ** 2 - 4 * mu / s
    return np.where(disc >= 0, 2 * mu / (s * ((1 + mu) + np.sqrt(np.abs(disc)))), np.nan)


DEFAULT_OBSERVATIONS = [
    {"kind": "allele-count", "label": "island survey", "observed": 3, "sampled": 20000},
    {"kind": "genotype-count", "label": "clinic panel", "AA": 4990, "Aa": 10, "aa": 0},
    {"kind": "affected", "label": "birth registry", "affected": 12, "total": 100000,
     "mode": "dominant"},
]


def _make_result(free, *, chains=4, draws=400, walkers=8, grid=True, nan_share=0.0,
                 observations=None, inheritance="autosomal", seed=0,
                 title="Fictional island registry"):
    """A well-formed EstimateResult with a known posterior.

    Posterior: log10 mu ~ N(-5, 0.01), s ~ N(0.3, 0.02), h ~ N(0.6, 0.05); priors
    mu log-uniform(1e-8, 1e-3), s and h uniform(0, 1); fixed values mu 1e-5, s 0.3, h 1.
    """
    rng = np.random.default_rng(seed)
    priors = {"mu": {"prior": "log-uniform", "low": 1e-8, "high": 1e-3},
              "s": {"prior": "uniform", "low": 0.0, "high": 1.0},
              "h": {"prior": "uniform", "low": 0.0, "high": 1.0}}
    fixed = {"mu": 1e-5, "s": 0.3, "h": 1.0}
    document = {
        "title": title, "inheritance": inheritance,
        "model": "deterministic", "interval": 0.95,
        "parameters": {n: priors[n] if n in free else fixed[n] for n in fixed},
        "observations": DEFAULT_OBSERVATIONS if observations is None else observations,
    }
    study = parse_study(document, source="study.toml")
    assert study.free == list(free), f"synthetic study frees {study.free}, wanted {free}"
    centre = {"mu": (-5.0, 0.01), "s": (0.3, 0.02), "h": (0.6, 0.05)}
    posterior, prior, summary_params = {}, {}, {}
    for name in free:
        m, sd = centre[name]
        z = rng.normal(m, sd, (chains, draws))
        posterior[name] = 10.0**z if name == "mu" else np.clip(z, 1e-6, 1.0)
        prior[name] = study.parameters[name].sample(rng, 2000)[None, :]
        lo, hi = np.quantile(posterior[name], [0.025, 0.975])
        summary_params[name] = {"median": float(np.median(posterior[name])), "lower": lo,
                                "upper": hi, "scale": study.parameters[name].sampling_scale_name}
    values = {n: posterior.get(n, fixed[n]) for n in ("mu", "s", "h")}
    q = q_hat(values["mu"], values["s"], values["h"]) * np.ones((chains, draws))
    if nan_share:
        q[rng.random(q.shape) < nan_share] = np.nan
    derived = {"q_hat": q.reshape(1, -1)}
    if inheritance == "x-linked":
        derived.update(q_male=1.5 * derived["q_hat"], q_female=0.75 * derived["q_hat"])
    replicated = [rng.binomial(20000, 1.5e-4, (1, chains * draws)).astype(float)
                  for _ in study.observations]
    predictive = [{"label": o.label, "kind": o.kind, "statistic": o.statistic_name,
                   "observed": float(o.statistic()), "expected_median": 3.0,
                   "p_value": 0.42 + 0.1 * i} for i, o in enumerate(study.observations)]
    steps = draws // walkers
    trace_walkers = {n: posterior[n].reshape(chains, steps, walkers) for n in free}
    grid_part = None
    if grid and len(free) <= 2:
        axes, marginal, quantiles = {}, {}, {}
        for name in free:
            m, sd = centre[name]
            if name == "mu":
                x = np.geomspace(10 ** (m - 6 * sd), 10 ** (m + 6 * sd), 301)
                # normal in log10 x -> density in x is the normal pdf / (x ln 10)
                marginal[name] = stats.norm.pdf(np.log10(x), m, sd) / (x * math.log(10))
            else:
                x = np.linspace(m - 6 * sd, m + 6 * sd, 301)
                marginal[name] = stats.norm.pdf(x, m, sd)
            axes[name] = x
            quantiles[name] = {"median": m, "lower": m - 1.96 * sd, "upper": m + 1.96 * sd}
        grid_part = ExactPosterior(list(free), axes, marginal, quantiles, points=301)
    return EstimateResult(
        study=study, free=list(free), posterior=posterior, prior=prior, derived=derived,
        trace_walkers=trace_walkers, burn_in=200,
        log_likelihood=np.zeros((chains, draws, len(study.observations))),
        replicated=replicated,
        summary={"interval": 0.95, "parameters": summary_params, "predictive": predictive},
        grid=grid_part,
    )


# ---------------------------------------------------------------- helpers


def _visible_axes(figure):
    return [ax for ax in figure.axes if ax.get_visible()]


def _has_label(ax, which):
    """The axis is labelled, or shares its axis with a labelled sibling."""
    get = (lambda a: a.get_xlabel()) if which == "x" else (lambda a: a.get_ylabel())
    shared = ax.get_shared_x_axes() if which == "x" else ax.get_shared_y_axes()
    return any(get(a).strip() for a in shared.get_siblings(ax))


def _all_labels(figure):
    return {" ".join(t.split()) for ax in figure.axes for t in (ax.get_xlabel(), ax.get_ylabel())}


def _labels(artists):
    """Legend labels of artists, leaving out matplotlib's private ``_child`` names."""
    return sorted(a.get_label() for a in artists if not a.get_label().startswith("_"))


def _tick_texts(ax):
    """Every non-empty tick label text of both axes (major and minor), after a draw."""
    texts = []
    for axis in (ax.xaxis, ax.yaxis):
        for minor in (False, True):
            texts += [t.get_text() for t in axis.get_ticklabels(minor=minor) if t.get_text()]
    return texts


def _drawn(figure):
    """Draw ``figure`` as qhat does (inside plain_text) so tick labels are formatted."""
    with plain_text():
        figure.savefig(io.BytesIO(), format="png", dpi=40)
    return figure


FREE_SETS = [("mu",), ("mu", "s"), ("mu", "s", "h")]
HEADINGS = {
    "marginals": "Prior and posterior marginals",
    "trace": "Traces of the independently started ensembles",
    "predictive": "Posterior predictive checks (two-sided p-values)",
}


@functools.cache
def _cached(free):
    """(result, figures) for the default synthetic result; figures are only read."""
    result = _make_result(free)
    with plain_text():
        return result, plots.estimate_figures(result)


# ---------------------------------------------------------------- files


@pytest.mark.parametrize("free", FREE_SETS[:2], ids=lambda f: "-".join(f))
def test_write_plots_writes_five_nontrivial_pngs(tmp_path, free, umask):
    """Each PNG has the PNG signature (W3C 2003, section 5.2), a non-blank canvas and the
    mode of a new file under the umask (0o666 & ~umask, POSIX open(2))."""
    mode = umask(0o027)
    result = _make_result(free)
    written = plots.write_plots(result, tmp_path)
    assert written == plots.PLOT_FILES, f"write_plots returned {written}, not PLOT_FILES"
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(plots.PLOT_FILES.values()), (
        f"folder holds {sorted(p.name for p in tmp_path.iterdir())}: a temporary file of "
        "save_figure was left behind, or a plot is missing")
    for name in written.values():
        path = tmp_path / name
        assert path.read_bytes()[:8] == PNG_SIGNATURE, f"{name} is not a PNG file"
        assert path.stat().st_size > 15_000, f"{name} is only {path.stat().st_size} bytes"
        assert path.stat().st_mode & 0o777 == mode, (
            f"{name} has mode {path.stat().st_mode & 0o777:o}, not {mode:o} = 0o666 & ~umask "
            "027: save_figure must chmod its temporary file before the rename")
        image = plt.imread(path)
        assert image.shape[0] >= 300 and image.shape[1] >= 400, f"{name} is {image.shape}"
        assert image[..., :3].std() > 0.05, f"{name} looks blank (pixel sd {image.std():.3f})"
    assert plt.get_fignums() == [], "write_plots left a figure open in pyplot"


@pytest.mark.parametrize("mask", [0o022, 0o002, 0o077])
def test_plot_files_follow_the_umask(tmp_path, umask, mask):
    """0o666 & ~umask for every PNG (POSIX open(2) default for a new file)."""
    mode = umask(mask)
    written = plots.write_plots(_make_result(("mu",)), tmp_path)
    modes = {name: (tmp_path / name).stat().st_mode & 0o777 for name in written.values()}
    assert set(modes.values()) == {mode}, f"umask {mask:03o}: modes {modes}, wanted {mode:o}"


def test_dollar_in_the_study_title_is_drawn_literally(tmp_path):
    """A "$" in user text stays text: "$\\frac{1$" would stop matplotlib's maths parser
    with a ValueError if text.parse_math were on (matplotlib mathtext documentation)."""
    title = "Cost $\\frac{1$ registry"
    result = _make_result(("mu", "s"), title=title)
    written = plots.write_plots(result, tmp_path)
    assert len(written) == 5, f"only {sorted(written)} written for a title with '$'"
    with plain_text():
        figures = plots.estimate_figures(result)
    for key, figure in figures.items():
        assert title in figure.get_suptitle(), (
            f"{key}: title {figure.get_suptitle()!r} does not hold the study title literally")


# ---------------------------------------------------------------- what is drawn


@pytest.mark.parametrize("free", FREE_SETS, ids=lambda f: "-".join(f))
def test_every_figure_is_titled_and_labelled(free):
    result, figures = _cached(free)
    assert set(figures) == set(plots.PLOT_FILES), f"figures {sorted(figures)} != PLOT_FILES"
    for key, figure in figures.items():
        assert figure.get_suptitle().strip(), f"{key} has no title (suptitle)"
        assert figure.get_suptitle().endswith("\nFictional island registry"), (
            f"{key}: title {figure.get_suptitle()!r} does not end with the study title")
        for ax in _visible_axes(figure):
            if not ax.has_data():
                continue
            assert _has_label(ax, "x"), f"{key}: panel {ax.get_title()!r} has no x label"
            assert _has_label(ax, "y"), f"{key}: panel {ax.get_title()!r} has no y label"
    for key in ("marginals", "pairs", "trace"):
        labels = " | ".join(_all_labels(figures[key]))
        for name in free:
            scale = result.study.parameters[name].sampling_scale_name
            assert axis_label(name, scale) in labels, (
                f"{key}: no axis labelled {axis_label(name, scale)!r} among {labels}")
    assert "mu (per gene copy per generation, log10)" in _all_labels(figures["marginals"]), (
        "the marginal of mu is not labelled on its log10 sampling scale")
    for key, heading in HEADINGS.items():
        assert figures[key].get_suptitle().startswith(heading), (
            f"{key}: title {figures[key].get_suptitle()!r} does not start with {heading!r}")
    assert plt.get_fignums() == [], "building figures registered one with pyplot"


def test_axis_labels_name_parameter_and_unit():
    cases = {("mu", "log10"): "mu (per gene copy per generation, log10)",
             ("s", "linear"): "s (selection coefficient)", ("h", "linear"): "h (dominance)",
             ("q_hat", "linear"): "q_hat (deleterious allele frequency)"}
    for (name, scale), expected in cases.items():
        assert axis_label(name, scale) == expected, (
            f"axis_label({name!r}, {scale!r}) = {axis_label(name, scale)!r}, not {expected!r}")


@pytest.mark.parametrize("free", FREE_SETS, ids=lambda f: "-".join(f))
def test_marginal_panels_draw_prior_posterior_interval_and_median(free):
    """One panel per free parameter: the prior density as a line, the posterior draws as
    one step outline, the 95 % interval as one span, the median as one vertical line, and
    the exact grid marginal when the grid exists (one or two free parameters)."""
    result, figures = _cached(free)
    axes = _visible_axes(figures["marginals"])
    assert len(axes) == len(free), f"{len(axes)} marginal panels for {len(free)} parameters"
    lines = ["posterior median", "prior"] + (["exact grid posterior"] if len(free) <= 2 else [])
    for ax, name in zip(axes, free, strict=True):
        scale = result.study.parameters[name].sampling_scale_name
        assert ax.get_xlabel() == axis_label(name, scale), f"{name}: x label {ax.get_xlabel()!r}"
        unit = f"{'log10 ' if scale == 'log10' else ''}{name}"
        assert ax.get_ylabel() == f"density per unit of {unit}", (
            f"{name}: y label {ax.get_ylabel()!r}")
        assert _labels(ax.get_lines()) == sorted(lines), (
            f"{name}: lines {_labels(ax.get_lines())}, wanted {sorted(lines)}")
        assert _labels(ax.patches) == ["95 % interval", "posterior draws"], (
            f"{name}: patches {_labels(ax.patches)}: want one outline of the draws and one "
            "interval span")
        (median,) = [ln for ln in ax.get_lines() if ln.get_label() == "posterior median"]
        draws = np.log10(result.posterior[name]) if scale == "log10" else result.posterior[name]
        assert median.get_xdata()[0] == pytest.approx(np.median(draws)), (
            f"{name}: the median line is not at the median of the draws")


def test_marginal_prior_density_of_log_uniform_is_flat_on_log10_scale():
    """log-uniform(a, b) is uniform on log10 x with density 1/log10(b/a) (closed form)."""
    figure = _cached(("mu", "s"))[1]["marginals"]
    ax = figure.axes[0]
    (prior_line,) = [line for line in ax.get_lines() if line.get_label() == "prior"]
    x, y = prior_line.get_data()
    inside = (x > -8) & (x < -3)
    assert inside.sum() > 10, f"only {inside.sum()} prior points inside the prior's support"
    np.testing.assert_allclose(y[inside], 1 / math.log10(1e-3 / 1e-8), rtol=1e-9,
                               err_msg="log-uniform prior not flat at 1/log10(b/a) on log10 mu")


@pytest.mark.parametrize("free", [("mu",), ("mu", "s")], ids=lambda f: "-".join(f))
def test_grid_marginal_is_overlaid_as_a_normalised_density(free):
    """The grid marginal of log10 mu is the N(-5, 0.01) pdf (closed form, by construction)."""
    figure = _cached(free)[1]["marginals"]
    for ax, name in zip(figure.axes, free, strict=False):
        (exact,) = [ln for ln in ax.get_lines() if ln.get_label() == "exact grid posterior"]
        x, y = exact.get_data()
        assert np.trapezoid(y, x) == pytest.approx(1.0, rel=1e-3), (
            f"{name}: the grid marginal integrates to {np.trapezoid(y, x):.4f}, not 1")
        if name == "mu":
            np.testing.assert_allclose(y, stats.norm.pdf(x, -5.0, 0.01), rtol=1e-3, atol=1e-3,
                                       err_msg="grid marginal of log10 mu is not N(-5, 0.01)")
    with plain_text():
        without = plots.estimate_figures(_make_result(free, grid=False))["marginals"]
    assert not any(ln.get_label() == "exact grid posterior"
                   for ax in without.axes for ln in ax.get_lines()), (
        "an exact grid posterior is drawn for a result without a grid")


def test_pairs_with_one_free_parameter_says_so():
    figure = _cached(("mu",))[1]["pairs"]
    texts = [t.get_text() for ax in figure.axes for t in ax.texts]
    assert "one free parameter" in texts, f"pairs of one parameter shows texts {texts}"
    assert figure.get_suptitle().startswith("Posterior pairs\n"), figure.get_suptitle()


@pytest.mark.parametrize("free", FREE_SETS[1:], ids=lambda f: "-".join(f))
def test_pairs_is_a_lower_triangle_of_histograms_scatters_and_contours(free):
    """k(k+1)/2 panels: an outline histogram on the diagonal, below it a scatter of the
    draws (all 1,600, fewer than the 2,000-point cap) with contour lines."""
    result, figures = _cached(free)
    figure = figures["pairs"]
    k = len(free)
    visible = _visible_axes(figure)
    assert len(visible) == k * (k + 1) // 2, f"{len(visible)} visible panels for k = {k}"
    grid = np.asarray(figure.axes).reshape(k, k)
    for i in range(k):
        for j in range(i + 1):
            ax = grid[i, j]
            if i == j:
                assert len(ax.patches) == 1 and not ax.get_lines(), (
                    f"diagonal {free[i]}: {len(ax.patches)} patches, {len(ax.get_lines())} "
                    "lines; want one histogram outline")
                assert ax.get_ylabel() == "draws", f"diagonal y label {ax.get_ylabel()!r}"
                continue
            (scatter,) = ax.get_lines()
            assert scatter.get_marker() == "." and len(scatter.get_xdata()) == 1600, (
                f"({free[i]}, {free[j]}): scatter of {len(scatter.get_xdata())} points, "
                "wanted all 1600 draws")
            assert len(ax.collections) >= 1, f"({free[i]}, {free[j]}): no contour drawn"
    assert figure.get_suptitle().startswith(
        "Posterior pairs (contours hold 39 % and 86 % of the draws)"), figure.get_suptitle()


def test_trace_has_one_colour_per_ensemble():
    result = _make_result(("mu", "s"), chains=3)
    with plain_text():
        figure = plots.estimate_figures(result)["trace"]
    axes = _visible_axes(figure)
    assert len(axes) == 2, f"{len(axes)} trace panels for 2 free parameters"
    for ax in axes:
        assert len(ax.get_lines()) == 6, (
            f"{len(ax.get_lines())} lines: want 2 per ensemble (walker median, thin walkers)")
    labels = _labels(axes[0].get_lines())
    assert labels == ["ensemble 1", "ensemble 2", "ensemble 3"], f"trace legend {labels}"
    colours = {ln.get_color() for ln in axes[0].get_lines() if ln.get_label() in labels}
    assert len(colours) == 3, f"ensembles share colours: {colours}"
    legend = [t.get_text() for t in axes[0].get_legend().get_texts()]
    assert legend == labels, f"legend texts {legend}"
    assert "burn-in of 200 steps" in axes[-1].get_xlabel(), axes[-1].get_xlabel()


def test_balance_curve_against_s_matches_closed_form():
    """With h = 1 fixed the median curve is q_hat(median mu, s) (derived closed form)."""
    result, figures = _cached(("mu", "s"))
    figure = figures["balance"]
    ax = figure.axes[0]
    assert ax.get_xlabel().startswith("s (selection coefficient)"), ax.get_xlabel()
    assert ax.get_xscale() == "log", f"x scale {ax.get_xscale()} against s"
    assert figure.get_suptitle().startswith(
        "Mutation-selection balance: exact q_hat against s"), figure.get_suptitle()
    assert _labels(ax.get_lines()) == ["q_hat: posterior median",
                                       "q_hat: posterior median point"], _labels(ax.get_lines())
    assert len(ax.collections) == 1, f"{len(ax.collections)} bands over the draws, want 1"
    assert len(ax.patches) == 2, (
        f"{len(ax.patches)} observed bands: want one per allele- or genotype-count datum (2)")
    (median,) = [ln for ln in ax.get_lines() if ln.get_label() == "q_hat: posterior median"]
    s, q = median.get_data()
    mu = np.median(result.posterior["mu"])
    # the median over draws of a function increasing in mu; log10 mu has sd 0.01
    np.testing.assert_allclose(q, _closed_form_q_dominant(mu, s), rtol=0.01,
                               err_msg="median balance curve is not q_hat(median mu, s)")


def test_log_axes_have_plain_tick_labels():
    """Log-scale tick labels are plain numbers ("1e−04"), not mathtext, which parse_math
    off would print as "$\\mathdefault{10^{-4}}$" (matplotlib ticker documentation)."""
    result = _make_result(("mu", "s"))
    with plain_text():
        figures = plots.estimate_figures(result)
    for key, figure in figures.items():
        for ax in _visible_axes(_drawn(figure)):
            bad = [t for t in _tick_texts(ax) if "$" in t]
            assert not bad, f"{key}: tick labels {bad} are mathtext drawn as text"
    ax = figures["balance"].axes[0]
    assert ax.get_yscale() == "log", "the balance plot's q_hat axis should be log here"
    labels = [t.get_text() for t in ax.yaxis.get_ticklabels() if t.get_text()]
    assert len(labels) >= 2, f"balance y axis has tick labels {labels}"


def test_balance_observed_band_is_clopper_pearson():
    """3 of 20000 alleles: the band is the exact interval (Clopper & Pearson 1934,
    Biometrika 26:404), i.e. the beta quantiles Beta(k, n-k+1).ppf(0.025) and
    Beta(k+1, n-k).ppf(0.975), here from scipy.stats.beta."""
    low = stats.beta(3, 20000 - 3 + 1).ppf(0.025)
    high = stats.beta(3 + 1, 20000 - 3).ppf(0.975)
    ax = _cached(("mu", "s", "h"))[1]["balance"].axes[0]
    assert ax.get_xlabel() == "h (dominance)", f"x label {ax.get_xlabel()!r} against h"
    assert ax.get_ylabel() == "q_hat (deleterious allele frequency)", ax.get_ylabel()
    bands = [p for p in ax.patches if p.get_label().startswith("observed island survey")]
    assert len(bands) == 1, f"{len(bands)} bands for the island survey"
    assert "3/20000 (95 % Clopper-Pearson)" in bands[0].get_label(), bands[0].get_label()
    corners = bands[0].get_transform().transform(bands[0].get_path().vertices)
    y_data = ax.transData.inverted().transform(corners)[:, 1]
    np.testing.assert_allclose([y_data.min(), y_data.max()], [low, high], rtol=1e-6,
                               err_msg="the observed band is not the Clopper-Pearson interval")
    genotype = [p for p in ax.patches if p.get_label().startswith("observed clinic panel")]
    assert len(genotype) == 1 and "10/10000" in genotype[0].get_label(), (
        f"genotype band {[p.get_label() for p in genotype]}: want Aa + 2 aa = 10 of 2N = 10000")


def test_predictive_panels_show_observed_and_p_value():
    result, figures = _cached(("mu", "s"))
    figure = figures["predictive"]
    axes = _visible_axes(figure)
    assert len(axes) == len(result.replicated), (
        f"{len(axes)} predictive panels for {len(result.replicated)} observations")
    for ax, check in zip(axes, result.summary["predictive"], strict=True):
        title = ax.get_title()
        assert f"p = {check['p_value']:.3g}" in title, f"p-value missing from {title!r}"
        assert check["label"] in title, f"label {check['label']!r} missing from {title!r}"
        assert ax.get_xlabel() == check["statistic"], f"x label {ax.get_xlabel()!r}"
        assert _labels(ax.patches) == ["replicated"], f"patches {_labels(ax.patches)}"
        vertical = [ln for ln in ax.get_lines() if ln.get_label() == "observed"]
        assert len(vertical) == 1 and vertical[0].get_xdata()[0] == check["observed"], (
            f"{check['label']}: the observed line is not at {check['observed']}")


def test_nan_in_derived_and_replicated_draws_is_tolerated(tmp_path):
    result = _make_result(("mu", "s", "h"), nan_share=0.3)
    result.replicated[0][0, :50] = np.nan
    result.posterior["h"][0, :5] = np.nan
    written = plots.write_plots(result, tmp_path)
    assert written == plots.PLOT_FILES, f"with NaN draws only {sorted(written)} written"
    sizes = {name: (tmp_path / name).stat().st_size for name in written.values()}
    assert min(sizes.values()) > 15_000, f"a plot with NaN draws is nearly empty: {sizes}"
    with plain_text():
        figures = plots.estimate_figures(result)
    ax = figures["balance"].axes[0]
    assert len(ax.get_lines()) == 2 and len(ax.collections) == 1, (
        "with 30 % NaN derived draws the balance median, its point and band are still drawn")
    assert len(_visible_axes(figures["predictive"])) == 3, "a predictive panel went missing"
    assert plt.get_fignums() == [], "write_plots left a figure open in pyplot"


def test_no_observations_gives_a_labelled_empty_predictive_panel():
    result = _make_result(("mu", "s"))
    result.study.observations, result.replicated, result.summary["predictive"] = [], [], []
    with plain_text():
        figure = plots.estimate_figures(result)["predictive"]
    texts = [t.get_text() for ax in figure.axes for t in ax.texts]
    assert "no observations" in texts, f"empty predictive figure shows {texts}"
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png")
    assert buffer.getvalue()[:8] == PNG_SIGNATURE, "the empty predictive figure is no PNG"


def test_x_linked_male_counts_are_compared_with_q_male():
    """Male allele counts go against q_male from x_linked_balance (docs/model.md).

    Reference: with s = 1, h irrelevant for sons and alpha = 1, F = nu = 0, the exact
    x_linked_balance gives q_male; the plotted median curve must equal it at the
    median mu when mu is the only parameter varying between draws (h is the x axis).
    """
    from infer.core.balance import x_linked_balance

    observations = [{"kind": "allele-count", "label": "male X survey", "observed": 4,
                     "sampled": 20000, "sex": "male"}]
    result = _make_result(("mu", "h"), inheritance="x-linked", observations=observations)
    with plain_text():
        ax = plots.estimate_figures(result)["balance"].axes[0]
    (median,) = [ln for ln in ax.get_lines() if ln.get_label().startswith("q_male")
                 and ln.get_label().endswith("posterior median")]
    h, q = median.get_data()
    reference = x_linked_balance(np.median(result.posterior["mu"]), 0.3, h).q_male
    np.testing.assert_allclose(q, reference, rtol=0.01,
                               err_msg="male-count curve is not x_linked_balance's q_male")
    assert any(p.get_label().startswith("observed male X survey: 4/20000") for p in ax.patches), (
        f"no band for the male survey among {[p.get_label() for p in ax.patches]}")
