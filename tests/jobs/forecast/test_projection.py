"""The forecast job: every posterior draw projected from its equilibrium.

References outside the project:

- Selection stopped (s = 0): q' = q(1 - nu) + (1 - q) mu, the change of q under
  mutation alone (Crow & Kimura 1970, An Introduction to Population Genetics Theory,
  ch. 6), so Δq ≈ mu per generation; a dominant's incidence 1 - p² then rises by about
  2 mu and a recessive's q² by about 2 q mu (derived here: 1 - p² = 2q - q² changes by
  2Δq(1 - q) - Δq², and q² by 2qΔq + Δq², with Δq ≈ mu).
- The textbook autosomal recursion, written here independently of the library:
  selection on zygotes in Hardy-Weinberg proportions, q_sel = (pq(1 - hs) + q²(1 - s)) /
  (1 - 2pqhs - q²s), then mutation (Crow & Kimura 1970, ch. 5 and 6).
- X-linked without selection or mutation: sons take their mother's frequency and
  daughters the mean of both parents', q_m' = q_f, q_f' = (q_m + q_f)/2, so the weighted
  mean (2 q_f + q_m)/3 stays put while q_m - q_f halves and changes sign each generation
  (Crow & Kimura 1970, ch. 2, sex-linked loci; common practice).
- An equilibrium is a fixed point of the recursion it solves (definition).
"""

import numpy as np
import pytest

from infer.errors import InputError
from infer.jobs.forecast.project import trajectories
from infer.jobs.forecast.run import PROBABILITIES, forecast
from infer.jobs.forecast.source import LIFE_CYCLE, ForecastSource

RNG = np.random.default_rng(17)
N = 2000


def _source(inheritance="autosomal", model="deterministic", fixed=(), mode=None, **draws):
    """A report's draws built directly (the reader is tested in test_source.py)."""
    defaults = {"mu": 1e-5, "s": 0.5, "h": 0.5, "F": 0.0, "nu": 0.0, "alpha": 1.0,
                "penetrance": 1.0}
    defaults.update(draws)
    size = max(np.size(v) for v in defaults.values())
    arrays = {k: np.broadcast_to(np.asarray(v, dtype=float), (size,)).copy()
              for k, v in defaults.items()}
    fixed = frozenset(fixed) | {k for k, v in defaults.items() if np.size(v) == 1}
    return ForecastSource(folder="invented", title="invented draws", inheritance=inheritance,
                          model=model, draws=arrays, fixed=fixed, mode=mode)


def _median_column(result, which):
    return getattr(result, which)[:, PROBABILITIES.index(0.5)]


def _collect(source, mode, changes, generations):
    before = dict(source.draws)
    after = dict(before, **{k: np.full(source.size, v) for k, v in changes.items()})
    rows = list(trajectories(source.inheritance, mode, before, after, generations))
    return np.array([r[1] for r in rows]), np.array([r[2] for r in rows])


def test_a_dominant_without_selection_gains_mu_per_gene_copy_per_generation():
    """s set to 0 (treatment restores fertility): q rises by mu(1 - q) - nu q each
    generation exactly, about mu; the incidence 2q - q² by about 2 mu (Crow & Kimura
    1970, ch. 6)."""
    mu = 3e-5
    source = _source(mu=mu, s=RNG.uniform(0.3, 1.0, N), h=1.0, nu=1e-8, mode="dominant")
    result = forecast(source, 10, {"s": 0.0})
    q = _median_column(result, "q")
    gains = np.diff(q)
    expected = mu * (1 - q[:-1]) - 1e-8 * q[:-1]   # the median draw's own step (monotone map)
    np.testing.assert_allclose(gains, expected, rtol=1e-9)
    np.testing.assert_allclose(gains, mu, rtol=0.01)   # q stays below 4e-4 over 10 generations
    incidence = _median_column(result, "incidence")
    np.testing.assert_allclose(np.diff(incidence)[:3], 2 * mu, rtol=0.01)
    assert result.first_change["q"] == pytest.approx(mu, rel=0.01)
    # mutation alone, both ways: q* = mu / (mu + nu) (Crow & Kimura 1970, ch. 6)
    after = result.equilibrium_after
    assert after["share"] == 1.0 and after["q"]["0.5"] == pytest.approx(mu / (mu + 1e-8),
                                                                        rel=1e-9), after


def test_a_recessive_incidence_rises_by_about_2_q_mu_at_first():
    """A recessive (h = 0) at q ≈ sqrt(mu/s): with s = 0 its incidence q² rises by
    2 q mu (1 - q) + mu²(1 - q)² per draw in the first generation, about 2 q mu."""
    mu = 1e-5
    source = _source(mu=mu, s=RNG.uniform(0.5, 1.0, N), h=0.0, mode="recessive")
    q, incidence = _collect(source, "recessive", {"s": 0.0}, 3)
    q0 = q[0]
    np.testing.assert_allclose(q0, np.sqrt(mu / source.draws["s"]), rtol=0.01)
    rise = incidence[1] - incidence[0]
    np.testing.assert_allclose(rise, 2 * q0 * mu * (1 - q0) + (mu * (1 - q0)) ** 2, rtol=1e-6)
    np.testing.assert_allclose(rise, 2 * q0 * mu, rtol=0.01)
    result = forecast(source, 3, {"s": 0.0})
    assert result.first_change["incidence"] == pytest.approx(
        float(np.median(2 * q0 * mu)), rel=0.01)


@pytest.mark.parametrize("inheritance", ["autosomal", "x-linked"])
def test_nothing_changed_stays_at_the_equilibrium(inheritance):
    """Each draw starts at its exact equilibrium, a fixed point of the life cycle, so
    with no change every quantile stays where it started (to 1e-9, relative)."""
    source = _source(inheritance, mu=10 ** RNG.uniform(-7, -4, N), s=RNG.uniform(0.05, 1, N),
                     h=RNG.uniform(0, 1, N), F=RNG.uniform(0, 0.1, N),
                     nu=10 ** RNG.uniform(-9, -7, N), alpha=RNG.uniform(0.5, 5, N),
                     penetrance=RNG.uniform(0.5, 1, N), mode="recessive")
    result = forecast(source, 30)
    for points in (result.q, result.incidence):
        np.testing.assert_allclose(points, np.broadcast_to(points[0], points.shape),
                                   rtol=1e-9, atol=0)
    assert result.first_change["q"] == pytest.approx(0.0, abs=1e-12)


def _textbook(q, mu, s, h, nu, generations):
    """Crow & Kimura (1970, ch. 5-6): selection on HW zygotes, then mutation."""
    out = [q]
    for _ in range(generations):
        p = 1 - q
        w = 1 - 2 * p * q * h * s - q * q * s
        q_sel = (p * q * (1 - h * s) + q * q * (1 - s)) / w
        q = q_sel * (1 - nu) + (1 - q_sel) * mu
        out.append(q)
    return np.array(out)


def test_a_few_draws_follow_the_textbook_recursion():
    """Draws moved off their balance (s to 0.05, h to 0.2, mu to 3e-5) follow the
    textbook recursion step by step, and the forecast's quantiles over draws are those of
    the textbook trajectories."""
    k, generations = 7, 40
    changes = {"s": 0.05, "h": 0.2, "mu": 3e-5}
    source = _source(mu=10 ** RNG.uniform(-6, -4, k), s=RNG.uniform(0.2, 1, k),
                     h=RNG.uniform(0, 1, k), nu=1e-8, mode="dominant")
    got, got_incidence = _collect(source, "dominant", changes, generations)
    expected = np.array([_textbook(got[0, row], 3e-5, 0.05, 0.2, 1e-8, generations)
                         for row in range(k)]).T
    np.testing.assert_allclose(got, expected, rtol=1e-12)
    np.testing.assert_allclose(got_incidence, 2 * expected - expected ** 2, rtol=1e-12)
    result = forecast(source, generations, changes)
    np.testing.assert_allclose(result.q, np.quantile(expected, PROBABILITIES, axis=1).T,
                               rtol=1e-12)


def test_x_linked_without_selection_or_mutation_keeps_the_mean_and_halves_the_gap():
    """q_m' = q_f, q_f' = (q_m + q_f)/2: the X-chromosome mean stays, and the affected
    share of sons (penetrance x q_m) approaches it with the gap halving and changing sign
    each generation (Crow & Kimura 1970, ch. 2)."""
    source = _source("x-linked", mu=10 ** RNG.uniform(-6, -4, 50), s=RNG.uniform(0.3, 1, 50),
                     h=0.0, alpha=RNG.uniform(0.5, 4, 50), penetrance=0.8)
    q, incidence = _collect(source, "x-linked-male", {"s": 0.0, "mu": 0.0}, 12)
    np.testing.assert_allclose(q, np.broadcast_to(q[0], q.shape), rtol=1e-12)
    gap = incidence / 0.8 - q[0]
    np.testing.assert_allclose(gap[1:], -0.5 * gap[:-1], rtol=1e-8, atol=1e-18)
    result = forecast(source, 12, {"s": 0.0, "mu": 0.0})
    assert result.incidence_of == "male births" and result.mode == "x-linked-male"


def test_penetrance_and_inbreeding_change_from_the_next_generation():
    """Generation 0 is born already: its incidence uses the report's F and penetrance;
    generation 1 on uses the new ones (aa share q(q(1 - F) + F), common practice)."""
    source = _source(mu=1e-5, s=1.0, h=0.0, F=0.0, mode="recessive")
    result = forecast(source, 2, {"F": 0.05, "penetrance": 0.5})
    q = _median_column(result, "q")
    incidence = _median_column(result, "incidence")
    assert incidence[0] == pytest.approx(q[0] ** 2, rel=1e-12)
    assert incidence[1] == pytest.approx(0.5 * q[1] * (q[1] * 0.95 + 0.05), rel=1e-12)


def test_draws_without_an_equilibrium_are_left_out_and_counted():
    """mu = 1e-2, s = 1e-3, h = 0.3 has no stable interior balance (the quadratic has no
    root in (0, 1); docs/model.md): such draws cannot start a forecast."""
    mu = np.array([1e-5, 1e-2, 2e-5, 1e-2])
    s = np.array([0.5, 1e-3, 0.5, 1e-3])
    result = forecast(_source(mu=mu, s=s, h=0.3, mode="dominant"), 5, {"s": 0.1})
    assert result.draws == 2 and result.draws_without_equilibrium == 2
    assert np.all(np.isfinite(result.q))
    with pytest.raises(InputError, match="no posterior draw has a stable equilibrium"):
        forecast(_source(mu=1e-2, s=1e-3, h=0.3, mode="dominant"), 5)


@pytest.mark.parametrize(("kwargs", "field", "needle"), [
    ({"changes": {"Ne": 10}}, "Ne", "is not one of s, h, mu, F, nu, alpha, penetrance"),
    ({"changes": {"s": 1.5}}, "s", "1.5 is above 1"),
    ({"changes": {"mu": 1.0}}, "mu", "1 must be below 1"),
    ({"changes": {"penetrance": 0}}, "penetrance", "0 must be above 0"),
    ({"changes": {"h": -0.1}}, "h", "-0.1 is negative"),
    ({"changes": {"s": "a lot"}}, "s", "'a lot' is not a number"),
    ({"changes": {"alpha": 2.0}}, "alpha", "applies to x-linked loci only"),
    ({"generations": 0}, "generations", "0 must be at least 1"),
    ({"generations": -3}, "generations", "-3 must be at least 1"),
    ({"generations": 2.5}, "generations", "2.5 is not a whole number"),
    ({"generations": 10**6}, "generations", "is above 10000"),
    ({"mode": "x-linked-male"}, "mode", "is not one of dominant, recessive"),
])
def test_bad_settings_are_refused_by_field(kwargs, field, needle):
    settings = {"generations": 5, "changes": None, "mode": None} | kwargs
    with pytest.raises(InputError) as caught:
        forecast(_source(mode="dominant"), settings["generations"], settings["changes"],
                 mode=settings["mode"])
    assert caught.value.field == field and needle in caught.value.message, str(caught.value)


def test_the_mode_comes_from_the_report_or_must_be_given():
    """Pooled counts name the mode; h fixed at 1 or 0 says it; otherwise ask."""
    assert forecast(_source(h=1.0), 1).mode == "dominant"
    assert forecast(_source(h=0.0), 1).mode == "recessive"
    assert forecast(_source(h=0.3, mode="recessive"), 1).mode == "recessive"
    with pytest.raises(InputError, match="does not say which genotypes") as caught:
        forecast(_source(h=RNG.uniform(0, 1, 20)), 1)
    assert caught.value.field == "mode"
    assert forecast(_source(h=RNG.uniform(0, 1, 20)), 1, mode="dominant").mode == "dominant"
    assert forecast(_source("x-linked", h=0.3), 1).mode == "x-linked-male"
    with pytest.raises(InputError, match="forecasts affected sons") as caught:
        forecast(_source("x-linked"), 1, mode="dominant")
    assert caught.value.field == "mode"


def test_a_drift_report_is_not_forecast():
    with pytest.raises(InputError, match="drift-model report is not forecast") as caught:
        forecast(_source(model="drift", mode="dominant"), 5)
    assert caught.value.field == "model"


def test_every_life_cycle_value_is_reported_before_and_after():
    s = RNG.uniform(0.2, 0.4, 99)
    result = forecast(_source(mode="dominant", s=s), 2, {"s": 0.0})
    # s_male and s_female only when the study gave selection by sex
    assert list(result.values) == [n for n in LIFE_CYCLE if n not in ("s_male", "s_female")]
    assert result.values["s"] == {"before": pytest.approx(float(np.median(s)), rel=1e-12),
                                  "after": 0.0, "fixed": False, "changed": True}
    assert result.values["mu"] == {"before": 1e-5, "after": 1e-5, "fixed": True,
                                   "changed": False}


def test_selection_by_sex_stays_at_its_two_sex_balance_and_stopping_one_sex_raises_it():
    """With selection by sex (infer.core.two_sex) nothing set keeps the two-sex fixed
    point; ending selection in males only raises the newborns' frequency by about half
    the loss it stops: Δq ≈ h·s_male·q/2 at first (derived here: to first order the sperm
    lose h·s_male·q of their copies to male selection, the eggs none to it, and the
    newborns draw half their genes from each), here with h = 1."""
    from infer.core.two_sex import two_sex_balance
    from infer.jobs.forecast.project import trajectories

    n = 5
    mu = np.full(n, 2e-5)
    s_male, s_female = np.linspace(0.5, 0.9, n), np.linspace(0.1, 0.3, n)
    before = {"mu": mu, "s": 0.5 * (s_male + s_female), "h": np.ones(n), "F": np.zeros(n),
              "nu": np.zeros(n), "alpha": np.ones(n), "penetrance": np.ones(n),
              "s_male": s_male, "s_female": s_female}
    q0 = two_sex_balance(mu, s_male, s_female, 1.0).q_hat
    steady = [q for _, q, _ in trajectories("autosomal", "dominant", before, before, 5)]
    np.testing.assert_allclose(steady[-1], q0, rtol=1e-9)
    after = {**before, "s_male": np.zeros(n), "s": 0.5 * s_female}
    moved = [q for _, q, _ in trajectories("autosomal", "dominant", before, after, 1)]
    np.testing.assert_allclose(moved[1] - moved[0], 0.5 * s_male * q0, rtol=0.02)
