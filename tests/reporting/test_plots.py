"""Tests of the report plots (infer/reporting/plots.py).

The results are synthetic but well formed: posterior draws from known distributions,
exact closed-form grid marginals and binomial predictive draws, so every reference value
below comes from a closed form and not from the code under test.
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
from infer.inference.grid import GridPosterior  # noqa: E402
from infer.reporting.plots import figures as plots  # noqa: E402
from infer.estimate.results import EstimateResult  # noqa: E402
from infer.files.study import parse_study  # noqa: E402

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (W3C 2003), section 5.2


# ---------------------------------------------------------------- synthetic results


def _closed_form_q_dominant(mu, s):
    """Exact autosomal q_hat for h = 1, F = 0, nu = 0 (derived).

    DESIGN.md section 2: (1-F)(1-2h)s q^2 + [(1-F)hs(1+mu) + Fs] q = mu; with h = 1 and
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
                 observations=None, inheritance="autosomal", seed=0):
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
        "title": "Fictional island registry", "inheritance": inheritance,
        "model": "deterministic", "interval": 0.95,
        "parameters": {n: priors[n] if n in free else fixed[n] for n in fixed},
        "observations": DEFAULT_OBSERVATIONS if observations is None else observations,
    }
    study = parse_study(document, source="study.toml")
    assert study.free == list(free)
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
        grid_part = GridPosterior(list(free), axes, marginal, quantiles, points=301)
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


FREE_SETS = [("mu",), ("mu", "s"), ("mu", "s", "h")]


@functools.cache
def _cached(free):
    """(result, figures) for the default synthetic result; figures are only read."""
    result = _make_result(free)
    return result, plots.make_figures(result)


# ---------------------------------------------------------------- tests


@pytest.mark.parametrize("free", FREE_SETS[:2], ids=lambda f: "-".join(f))
def test_write_plots_writes_five_nontrivial_pngs(tmp_path, free):
    result = _make_result(free)
    written = plots.write_plots(result, tmp_path)
    assert written == plots.PLOT_FILES
    for name in written.values():
        path = tmp_path / name
        assert path.read_bytes()[:8] == PNG_SIGNATURE
        assert path.stat().st_size > 15_000
        image = plt.imread(path)
        assert image.shape[0] >= 300 and image.shape[1] >= 400
        assert image[..., :3].std() > 0.05  # not a blank canvas
    assert plt.get_fignums() == []  # nothing left open in pyplot


@pytest.mark.parametrize("free", FREE_SETS, ids=lambda f: "-".join(f))
def test_every_figure_is_titled_and_labelled(free):
    result, figures = _cached(free)
    assert set(figures) == set(plots.PLOT_FILES)
    for key, figure in figures.items():
        assert figure._suptitle is not None and figure._suptitle.get_text().strip(), key
        for ax in _visible_axes(figure):
            if not ax.has_data():
                continue
            assert _has_label(ax, "x"), (key, ax.get_title())
            assert _has_label(ax, "y"), (key, ax.get_title())
    for key in ("marginals", "pairs", "trace"):
        labels = " | ".join(_all_labels(figures[key]))
        for name in free:
            scale = result.study.parameters[name].sampling_scale_name
            assert plots.axis_label(name, scale) in labels, (key, name)
    assert "mu (per gene copy per generation, log10)" in _all_labels(figures["marginals"])
    assert plt.get_fignums() == []


def test_axis_labels_name_parameter_and_unit():
    assert plots.axis_label("mu", "log10") == "mu (per gene copy per generation, log10)"
    assert plots.axis_label("s") == "s (selection coefficient)"
    assert plots.axis_label("h") == "h (dominance)"
    assert plots.axis_label("q_hat") == "q_hat (deleterious allele frequency)"


def test_marginal_prior_density_of_log_uniform_is_flat_on_log10_scale():
    """log-uniform(a, b) is uniform on log10 x with density 1/log10(b/a) (closed form)."""
    figure = _cached(("mu", "s"))[1]["marginals"]
    ax = figure.axes[0]
    (prior_line,) = [line for line in ax.get_lines() if line.get_label() == "prior"]
    x, y = prior_line.get_data()
    inside = (x > -8) & (x < -3)
    np.testing.assert_allclose(y[inside], 1 / math.log10(1e-3 / 1e-8), rtol=1e-9)


@pytest.mark.parametrize("free", [("mu",), ("mu", "s")], ids=lambda f: "-".join(f))
def test_grid_marginal_is_overlaid_as_a_normalised_density(free):
    """The grid marginal of log10 mu is the N(-5, 0.01) pdf (closed form, by construction)."""
    figure = _cached(free)[1]["marginals"]
    for ax, name in zip(figure.axes, free, strict=False):
        (exact,) = [ln for ln in ax.get_lines() if ln.get_label() == "exact grid posterior"]
        x, y = exact.get_data()
        assert np.trapezoid(y, x) == pytest.approx(1.0, rel=1e-3)
        if name == "mu":
            np.testing.assert_allclose(y, stats.norm.pdf(x, -5.0, 0.01), rtol=1e-3, atol=1e-3)
    without = plots.make_figures(_make_result(free, grid=False))["marginals"]
    assert not any(ln.get_label() == "exact grid posterior"
                   for ax in without.axes for ln in ax.get_lines())


def test_pairs_with_one_free_parameter_says_so():
    figure = _cached(("mu",))[1]["pairs"]
    texts = [t.get_text() for ax in figure.axes for t in ax.texts]
    assert "one free parameter" in texts


def test_pairs_is_a_lower_triangle():
    figure = _cached(("mu", "s", "h"))[1]["pairs"]
    assert len(_visible_axes(figure)) == 6  # 3 diagonal + 3 below it


def test_trace_has_one_colour_per_ensemble():
    result = _make_result(("mu", "s"), chains=3)
    ax = plots.make_figures(result)["trace"].axes[0]
    labels = [ln.get_label() for ln in ax.get_lines() if not ln.get_label().startswith("_")]
    assert labels == ["ensemble 1", "ensemble 2", "ensemble 3"]
    colours = {ln.get_color() for ln in ax.get_lines() if ln.get_label() in labels}
    assert len(colours) == 3


def test_balance_curve_against_s_matches_closed_form():
    """With h = 1 fixed the median curve is q_hat(median mu, s) (derived closed form)."""
    result, figures = _cached(("mu", "s"))
    ax = figures["balance"].axes[0]
    assert ax.get_xlabel().startswith("s (selection coefficient)")
    assert ax.get_xscale() == "log"
    (median,) = [ln for ln in ax.get_lines() if ln.get_label() == "q_hat: posterior median"]
    s, q = median.get_data()
    mu = np.median(result.posterior["mu"])
    # the median over draws of a function increasing in mu; log10 mu has sd 0.01
    np.testing.assert_allclose(q, _closed_form_q_dominant(mu, s), rtol=0.01)


def test_balance_observed_band_is_clopper_pearson():
    """3 of 20000 alleles: the band is the exact interval (Clopper & Pearson 1934).

    Independent reference: the Clopper-Pearson limits are the beta quantiles
    Beta(k, n-k+1).ppf(0.025) and Beta(k+1, n-k).ppf(0.975) — computed here with
    scipy.special.betaincinv, a different routine from scipy.stats.beta.ppf.
    Zero copies: the upper limit is 1 - 0.025**(1/n) (closed form).
    """
    from scipy.special import betaincinv

    low, high = plots._clopper_pearson(3, 20000)
    assert low == pytest.approx(betaincinv(3, 19998, 0.025), rel=1e-9)
    assert high == pytest.approx(betaincinv(4, 19997, 0.975), rel=1e-9)
    assert plots._clopper_pearson(0, 50) == pytest.approx((0.0, 1 - 0.025 ** (1 / 50)))
    assert plots._clopper_pearson(50, 50) == pytest.approx((0.025 ** (1 / 50), 1.0))
    ax = _cached(("mu", "s", "h"))[1]["balance"].axes[0]
    assert ax.get_xlabel() == "h (dominance)"
    assert ax.get_ylabel() == "q_hat (deleterious allele frequency)"
    bands = [p for p in ax.patches if p.get_label().startswith("observed island survey")]
    assert len(bands) == 1
    corners = bands[0].get_transform().transform(bands[0].get_path().vertices)
    y_data = ax.transData.inverted().transform(corners)[:, 1]
    np.testing.assert_allclose([y_data.min(), y_data.max()], [low, high], rtol=1e-6)
    genotype = [p for p in ax.patches if p.get_label().startswith("observed clinic panel")]
    assert len(genotype) == 1 and "10/10000" in genotype[0].get_label()


def test_predictive_panels_show_observed_and_p_value():
    result, figures = _cached(("mu", "s"))
    figure = figures["predictive"]
    axes = _visible_axes(figure)
    assert len(axes) == len(result.replicated)
    for ax, check in zip(axes, result.summary["predictive"], strict=False):
        assert f"p = {check['p_value']:.3g}" in ax.get_title()
        assert check["label"] in ax.get_title()
        vertical = [ln for ln in ax.get_lines() if ln.get_label() == "observed"]
        assert vertical and vertical[0].get_xdata()[0] == check["observed"]


def test_nan_in_derived_and_replicated_draws_is_tolerated(tmp_path):
    result = _make_result(("mu", "s", "h"), nan_share=0.3)
    result.replicated[0][0, :50] = np.nan
    result.posterior["h"][0, :5] = np.nan
    written = plots.write_plots(result, tmp_path)
    assert all((tmp_path / name).stat().st_size > 15_000 for name in written.values())
    assert plt.get_fignums() == []


def test_no_observations_gives_a_labelled_empty_predictive_panel():
    result = _make_result(("mu", "s"))
    result.study.observations, result.replicated, result.summary["predictive"] = [], [], []
    figure = plots.make_figures(result)["predictive"]
    assert "no observations" in [t.get_text() for ax in figure.axes for t in ax.texts]
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png")
    assert buffer.getvalue()[:8] == PNG_SIGNATURE


def test_x_linked_male_counts_are_compared_with_q_male():
    """Male allele counts go against q_male from x_linked_balance (DESIGN.md section 2).

    Reference: with s = 1, h irrelevant for sons and alpha = 1, F = nu = 0, the exact
    x_linked_balance gives q_male; the plotted median curve must equal it at the
    median mu when mu is the only parameter varying between draws (h is the x axis).
    """
    from infer.core.balance import x_linked_balance

    observations = [{"kind": "allele-count", "label": "male X survey", "observed": 4,
                     "sampled": 20000, "sex": "male"}]
    result = _make_result(("mu", "h"), inheritance="x-linked", observations=observations)
    ax = plots.make_figures(result)["balance"].axes[0]
    (median,) = [ln for ln in ax.get_lines() if ln.get_label().startswith("q_male")
                 and ln.get_label().endswith("posterior median")]
    h, q = median.get_data()
    reference = x_linked_balance(np.median(result.posterior["mu"]), 0.3, h).q_male
    np.testing.assert_allclose(q, reference, rtol=0.01)
    assert any(p.get_label().startswith("observed male X survey: 4/20000") for p in ax.patches)
