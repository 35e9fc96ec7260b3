"""The observation protocol: every kind complete, and no kind dispatch outside the kinds.

References beside each check: scipy.stats (``binom``, ``multinomial``, ``poisson``,
``norm``, ``beta``, ``chisquare``, ``kstest``, ``binomtest``) as independent
implementations; Hardy–Weinberg proportions with Wright's inbreeding coefficient F
(common practice); the direct method, 2·mu new dominant mutations per birth (Vogel &
Motulsky, *Human Genetics*) and mu_female = 3mu/(2 + alpha) per male birth (Haldane 1935,
J. Genet. 31:317); the raw moments of a beta distribution (closed form).

Statistical checks use fixed seeds, so they are deterministic; the thresholds (a
chi-square or Kolmogorov–Smirnov p-value above 1e-3, means within 5 standard errors)
would flag a wrong law, not chance.
"""

from __future__ import annotations

import ast
import math
import pathlib

import numpy as np
import pytest
from scipy import integrate, stats

from infer.core.stats import Z975
from infer.model.balance_state import BalanceState
from infer.model.observations.base import FREQUENCY_PROTOCOL, PROTOCOL, Observation
from infer.model.observations.kinds import KINDS, parse_observation

ROOT = pathlib.Path(__file__).resolve().parents[2]
PACKAGE = ROOT / "infer"
REPS = 4000

PARAMS = {"mu": 3e-5, "s": 0.3, "h": 0.4, "F": 0.02, "nu": 0.0, "Ne": math.inf,
          "alpha": 2.0}
Q = 0.03                        # autosomal frequency of the one-row states below
Q_MALE, Q_FEMALE = 0.02, 0.015  # X-linked


def one_row(inheritance="autosomal", **overrides):
    params = {k: np.array([v], float) for k, v in {**PARAMS, **overrides}.items()}
    if inheritance == "x-linked":
        q = (2 * Q_FEMALE + Q_MALE) / 3
        return BalanceState(params, "x-linked", np.array([q]), np.array([Q_MALE]),
                            np.array([Q_FEMALE]), np.array([True]))
    return BalanceState(params, "autosomal", np.array([Q]), None, None, np.array([True]))


def obs(table, inheritance="autosomal"):
    return parse_observation(table, field="observations[1]", inheritance=inheritance)


def hardy_weinberg(q, F):
    """AA p²(1−F)+pF, Aa 2pq(1−F), aa q²(1−F)+qF (Wright's F; common practice)."""
    p = 1 - q
    return np.array([p * p * (1 - F) + p * F, 2 * p * q * (1 - F), q * q * (1 - F) + q * F])


def daughters(x, qf, F):
    """Daughters' genotypes: egg X at x = q_male, sperm X at y = 2 q_female − x, plus a
    share F identical by descent at q_female (docs/model.md, 'X-linked equilibrium'; derived)."""
    y = 2 * qf - x
    return np.array([(1 - F) * (1 - x) * (1 - y) + F * (1 - qf),
                     (1 - F) * (x * (1 - y) + y * (1 - x)), (1 - F) * x * y + F * qf])


def draw_tables(o, state, seed=5, reps=REPS):
    rng = np.random.default_rng(seed)
    return [o.simulate_table(state, rng) for _ in range(reps)]


def pooled_chi_square(draws, law) -> float:
    """Pearson chi-square p-value of integer draws against a scipy.stats law, with
    neighbouring values pooled until every bin expects at least 5 (common practice)."""
    draws = np.asarray(draws, dtype=int)
    top = int(max(draws.max(), law.ppf(1 - 1e-9)))
    expected = draws.size * law.pmf(np.arange(top + 1))
    expected[-1] += draws.size * law.sf(top)
    observed = np.bincount(draws, minlength=top + 1)
    bins_o, bins_e, acc_o, acc_e = [], [], 0, 0.0
    for o_k, e_k in zip(observed, expected, strict=True):
        acc_o, acc_e = acc_o + o_k, acc_e + e_k
        if acc_e >= 5:
            bins_o.append(acc_o)
            bins_e.append(acc_e)
            acc_o, acc_e = 0, 0.0
    bins_o[-1] += acc_o
    bins_e[-1] += acc_e
    assert len(bins_o) >= 3, f"too few bins for a chi-square test: {bins_e}"
    return float(stats.chisquare(bins_o, bins_e).pvalue)


ALLELE = {"kind": "allele-count", "observed": 3, "sampled": 400}
GENOTYPES = {"kind": "genotype-count", "AA": 150, "Aa": 9, "aa": 1}
AFFECTED = {"kind": "affected", "affected": 5, "total": 3000, "mode": "dominant",
            "penetrance": 0.8}
SPORADIC = {"kind": "sporadic", "cases": 4, "births": 50_000, "mode": "dominant",
            "penetrance": 0.9}
FERTILITY = {"kind": "fertility", "affected_people": 40, "affected_children": 20,
             "reference_people": 100, "reference_children": 210, "mode": "dominant"}
ESTIMATE = {"kind": "estimate", "parameter": "mu", "median": 2e-5, "lower": 1e-5,
            "upper": 4e-5}


# -- the registry and the protocol are complete -----------------------------------------

def test_every_kind_defines_the_whole_protocol():
    for name, cls in KINDS.items():
        assert issubclass(cls, Observation) and cls.kind == name, (
            f"KINDS[{name!r}] is {cls.__name__} with kind {cls.kind!r}: the registry key "
            "must be the class's kind")
        needed = PROTOCOL + (FREQUENCY_PROTOCOL if cls.depends_on_frequency else ())
        missing = [m for m in needed if getattr(cls, m) is getattr(Observation, m)]
        assert not missing, (f"{cls.__name__} ({name}) inherits the base stubs of {missing}: "
                             "define them in its module (DEVELOPERS.md, adding a kind)")
        for attribute in ("depends_on_frequency", "statistic_name", "required"):
            assert attribute in vars(cls), f"{cls.__name__} does not declare {attribute}"


def test_every_kind_lives_in_its_own_module_and_exports_itself():
    import importlib

    for name, cls in KINDS.items():
        module = importlib.import_module(cls.__module__)
        assert cls.__module__.startswith("infer.model.observations."), (
            f"{name} is defined in {cls.__module__}, outside infer/model/observations")
        assert cls.__name__ in module.__all__, (
            f"{cls.__module__}.__all__ does not list {cls.__name__}")
    kinds_module = importlib.import_module("infer.model.observations.kinds")
    assert set(kinds_module.__all__) == {"KINDS", "parse_observation"}, (
        "kinds.py is the registry only: import each kind from its own module, "
        f"not from kinds (it exports {kinds_module.__all__})")


# -- no dispatch on a kind's name outside the kinds ---------------------------------------

_EXEMPT = ("model/observations/", "files/")  # the kinds themselves; the parsers of tables


def _mentions_kind(node) -> bool:
    if isinstance(node, ast.Attribute):
        return node.attr == "kind"
    if isinstance(node, ast.Name):
        return "kind" in node.id
    if isinstance(node, ast.Subscript):
        return isinstance(node.slice, ast.Constant) and node.slice.value == "kind"
    return False


def _kind_names(node) -> set[str]:
    """Kind names among the string constants of a constant or a literal collection."""
    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        return {node.value} & set(KINDS)
    if isinstance(node, (ast.Tuple, ast.List, ast.Set)):
        return set().union(*(_kind_names(e) for e in node.elts)) if node.elts else set()
    if isinstance(node, ast.Dict):
        return set().union(*(_kind_names(k) for k in node.keys if k is not None))
    return set()


def kind_dispatch(source: str) -> list[tuple[int, str]]:
    """(line, what) of every dispatch on an observation kind in ``source``.

    A comparison of something named ``kind`` with a kind name (``obs.kind ==
    "affected"``, ``o["kind"] in (...)``), ``isinstance``/``issubclass`` with a kind's
    class, and a literal collection naming two or more kinds (``{"allele-count",
    "affected"}``, a dict keyed by kind).
    """
    classes = {cls.__name__ for cls in KINDS.values()}
    found = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Compare):
            sides = [node.left, *node.comparators]
            if any(map(_mentions_kind, sides)) and any(_kind_names(s) for s in sides):
                found.append((node.lineno, "compares a kind with a kind name"))
        elif (isinstance(node, ast.Call) and isinstance(node.func, ast.Name)
              and node.func.id in ("isinstance", "issubclass") and len(node.args) == 2):
            named = {n.id if isinstance(n, ast.Name) else getattr(n, "attr", "")
                     for n in ast.walk(node.args[1])}
            if named & classes:
                found.append((node.lineno, f"{node.func.id} with {sorted(named & classes)}"))
        elif isinstance(node, (ast.Tuple, ast.List, ast.Set, ast.Dict)):
            if len(_kind_names(node)) >= 2:
                found.append((node.lineno, f"lists kinds {sorted(_kind_names(node))}"))
    return found


def test_the_dispatch_detector_sees_each_pattern():
    """A detector that finds nothing would make the next test pass vacuously."""
    samples = {
        'if obs.kind == "affected": pass': True,
        'x = [o for o in r if o["kind"] in ("affected", "sporadic")]': True,
        "frequency_kinds = {'allele-count', 'genotype-count'}": True,
        "ok = isinstance(o, Fertility)": True,
        'n = {"allele-count": 1, "genotype-count": 2}.get(kind)': True,
        'if data.dtype.kind == "f": pass': False,
        'commands = {"estimate": 1, "check": 2}': False,
    }
    for source, dispatches in samples.items():
        found = kind_dispatch(source)
        assert bool(found) == dispatches, (
            f"detector {'missed' if dispatches else 'wrongly flagged'} {source!r}: {found}")


def test_no_module_outside_the_kinds_dispatches_on_a_kind():
    offenders = []
    for path in sorted(PACKAGE.rglob("*.py")):
        relative = path.relative_to(PACKAGE).as_posix()
        if relative.startswith(_EXEMPT):
            continue
        for line, what in kind_dispatch(path.read_text(encoding="utf-8")):
            offenders.append(f"infer/{relative}:{line}: {what}")
    assert not offenders, ("dispatch on an observation kind outside infer/model/observations "
                           "(use a protocol method of Observation instead):\n"
                           + "\n".join(offenders))


# -- simulate_table: new data of the study's shape, against scipy.stats -----------------

def test_allele_count_tables_are_binomial():
    o = obs(ALLELE)
    tables = draw_tables(o, one_row())
    assert all(t["sampled"] == 400 and t["kind"] == "allele-count" for t in tables)
    p = pooled_chi_square([t["observed"] for t in tables], stats.binom(400, Q))
    assert p > 1e-3, f"allele-count draws are not Binomial(400, q): chi-square p = {p:.2g}"


@pytest.mark.parametrize("sex, q", [("male", Q_MALE), ("female", Q_FEMALE),
                                    ("all", (2 * Q_FEMALE + Q_MALE) / 3)])
def test_x_linked_allele_count_tables_use_the_chosen_frequency(sex, q):
    o = obs({**ALLELE, "sex": sex}, "x-linked")
    tables = draw_tables(o, one_row("x-linked"))
    p = pooled_chi_square([t["observed"] for t in tables], stats.binom(400, q))
    assert p > 1e-3, f"{sex} allele copies are not Binomial(400, {q}): p = {p:.2g}"


@pytest.mark.parametrize("inheritance", ["autosomal", "x-linked"])
def test_genotype_tables_are_multinomial(inheritance):
    o = obs(GENOTYPES, inheritance)
    F = PARAMS["F"]
    freqs = (daughters(Q_MALE, Q_FEMALE, F) if inheritance == "x-linked"
             else hardy_weinberg(Q, F))
    counts = np.array([[t["AA"], t["Aa"], t["aa"]] for t in
                       draw_tables(o, one_row(inheritance))])
    assert np.all(counts.sum(axis=1) == 160), "a genotype table changed its total"
    for column, name in ((1, "Aa"), (2, "aa")):
        p = pooled_chi_square(counts[:, column], stats.binom(160, freqs[column]))
        assert p > 1e-3, f"{name} is not the multinomial margin Binomial(160, p): p = {p:.2g}"
    # multinomial covariance -N p_Aa p_aa (scipy.stats.multinomial.cov): 5 standard errors
    reference = stats.multinomial(160, freqs).cov()[1, 2]
    sample = np.cov(counts[:, 1], counts[:, 2])[0, 1]
    se = math.sqrt(np.var(counts[:, 1]) * np.var(counts[:, 2]) / REPS)
    assert abs(sample - reference) < 5 * se, (sample, reference, se)


@pytest.mark.parametrize("mode, inheritance", [("dominant", "autosomal"),
                                               ("recessive", "autosomal"),
                                               ("x-linked-male", "x-linked")])
def test_affected_tables_are_binomial(mode, inheritance):
    total = 3000 if mode != "recessive" else 200_000
    o = obs({**AFFECTED, "mode": mode, "total": total}, inheritance)
    AA, Aa, aa = hardy_weinberg(Q, PARAMS["F"])
    fraction = 0.8 * {"dominant": Aa + aa, "recessive": aa, "x-linked-male": Q_MALE}[mode]
    tables = draw_tables(o, one_row(inheritance))
    p = pooled_chi_square([t["affected"] for t in tables], stats.binom(total, fraction))
    assert p > 1e-3, f"{mode} affected births are not Binomial(total, fraction): p = {p:.2g}"


@pytest.mark.parametrize("inheritance", ["autosomal", "x-linked"])
def test_sporadic_tables_are_binomial_on_the_direct_method_rate(inheritance):
    mode = "x-linked-male" if inheritance == "x-linked" else "dominant"
    o = obs({**SPORADIC, "mode": mode}, inheritance)
    mu, alpha = PARAMS["mu"], PARAMS["alpha"]
    rate = 0.9 * (3 * mu / (2 + alpha) if inheritance == "x-linked" else 2 * mu)
    tables = draw_tables(o, one_row(inheritance))
    p = pooled_chi_square([t["cases"] for t in tables], stats.binom(50_000, rate))
    assert p > 1e-3, f"sporadic cases are not Binomial(births, {rate:.3g}): p = {p:.2g}"


def test_fertility_tables_are_two_poisson_counts():
    """Both children counts Poisson, at the reference rate 210/100 as the baseline: the
    model the conditional binomial is derived from (docs/model.md, 'Observation models')."""
    o = obs(FERTILITY)
    w = 1 - PARAMS["h"] * PARAMS["s"]
    tables = draw_tables(o, one_row())
    for field, mean in (("affected_children", 40 * w * 2.1), ("reference_children", 210.0)):
        p = pooled_chi_square([t[field] for t in tables], stats.poisson(mean))
        assert p > 1e-3, f"{field} is not Poisson({mean:.3g}): p = {p:.2g}"


def test_estimate_tables_are_log_normal_with_the_same_interval_width():
    o = obs(ESTIMATE)
    tables = draw_tables(o, one_row())
    logs = np.log([t["median"] for t in tables])
    ks = stats.kstest(logs, stats.norm(math.log(PARAMS["mu"]), o.sigma).cdf).pvalue
    assert ks > 1e-3, f"published medians are not log-normal around mu: KS p = {ks:.2g}"
    assert Z975 == pytest.approx(stats.norm.ppf(0.975), rel=1e-14)
    for table in tables[:50]:
        again = parse_observation(table, field="observations[1]", inheritance="autosomal")
        assert again.sigma == pytest.approx(o.sigma, rel=1e-12), "interval width changed"
        assert table["lower"] * table["upper"] == pytest.approx(table["median"] ** 2,
                                                                rel=1e-12)


@pytest.mark.parametrize("table, inheritance", [
    (ALLELE, "autosomal"), (GENOTYPES, "autosomal"), (AFFECTED, "autosomal"),
    (SPORADIC, "autosomal"), (FERTILITY, "autosomal"), (ESTIMATE, "autosomal"),
    ({**ALLELE, "sex": "male"}, "x-linked"), (GENOTYPES, "x-linked"),
], ids=lambda v: v["kind"] if isinstance(v, dict) else v)
def test_simulated_tables_read_back_as_the_same_shape(table, inheritance):
    o = obs(table, inheritance)
    new = parse_observation(o.simulate_table(one_row(inheritance), np.random.default_rng(2)),
                            field="observations[1]", inheritance=inheritance)
    assert type(new) is type(o) and new.label == o.label
    kept = {"allele-count": ("sampled", "sex"), "genotype-count": ("total",),
            "affected": ("total", "mode", "penetrance"),
            "sporadic": ("births", "mode", "penetrance"),
            "fertility": ("affected_people", "reference_people", "mode"),
            "estimate": ("parameter",)}[o.kind]
    for name in kept:
        assert getattr(new, name) == getattr(o, name), f"{o.kind}: {name} changed"


def test_simulate_table_draws_the_stream_calibration_always_drew():
    """The same numpy calls in the same order as the calibration before the protocol, so
    calibration results do not move (numpy.random.Generator as the reference)."""
    state, seed = one_row(), 17
    mu, w = PARAMS["mu"], 1 - PARAMS["h"] * PARAMS["s"]
    expected = np.random.default_rng(seed)
    got = np.random.default_rng(seed)
    assert obs(ALLELE).simulate_table(state, got)["observed"] == expected.binomial(400, Q)
    g = obs(GENOTYPES).simulate_table(state, got)
    assert [g["AA"], g["Aa"], g["aa"]] == list(expected.multinomial(
        160, hardy_weinberg(Q, PARAMS["F"])))
    assert (obs(SPORADIC).simulate_table(state, got)["cases"]
            == expected.binomial(50_000, 2 * mu * 0.9))
    f = obs(FERTILITY).simulate_table(state, got)
    assert [f["affected_children"], f["reference_children"]] == [
        expected.poisson(40 * w * 2.1), expected.poisson(100 * 2.1)]
    median = obs(ESTIMATE).simulate_table(state, got)["median"]
    assert median == pytest.approx(mu * math.exp(obs(ESTIMATE).sigma * expected.normal()),
                                   rel=1e-15)


def test_simulate_table_needs_one_row():
    two = BalanceState.without_frequency({k: np.full(2, v) for k, v in PARAMS.items()},
                                         "autosomal")
    with pytest.raises(ValueError, match="one row"):
        obs(SPORADIC).simulate_table(two, np.random.default_rng(0))


# -- expected values against closed forms ------------------------------------------------

def test_expected_values_are_the_closed_forms():
    F, mu, alpha = PARAMS["F"], PARAMS["mu"], PARAMS["alpha"]
    auto, x = one_row(), one_row("x-linked")
    AA, Aa, aa = hardy_weinberg(Q, F)
    w = 1 - PARAMS["h"] * PARAMS["s"]
    cases = [
        # (observation, state, closed form, source)
        (obs(ALLELE), auto, 400 * Q, "binomial mean n q"),
        (obs({**ALLELE, "sex": "female"}, "x-linked"), x, 400 * Q_FEMALE, "n q_female"),
        # Aa + 2 aa over N people: 2N q whatever F (p + q = 1; derived)
        (obs(GENOTYPES), auto, 2 * 160 * Q, "2N q"),
        (obs(GENOTYPES, "x-linked"), x, 2 * 160 * Q_FEMALE, "2N q_female (daughters)"),
        (obs(AFFECTED), auto, 3000 * 0.8 * (Aa + aa), "total·pen·(Aa + aa)"),
        (obs({**AFFECTED, "mode": "recessive"}), auto, 3000 * 0.8 * aa, "total·pen·aa"),
        (obs({**AFFECTED, "mode": "x-linked-male"}, "x-linked"), x, 3000 * 0.8 * Q_MALE,
         "total·pen·q_male"),
        (obs(SPORADIC), auto, 50_000 * 2 * mu * 0.9, "direct method 2·mu·pen"),
        (obs({**SPORADIC, "mode": "x-linked-male"}, "x-linked"), x,
         50_000 * 3 * mu / (2 + alpha) * 0.9, "Haldane: mu_female·pen"),
        (obs(FERTILITY), auto, 230 * 40 * w / (40 * w + 100), "T·Aw/(Aw + R)"),
        (obs(ESTIMATE), auto, mu, "the parameter (median of the log-normal)"),
    ]
    for o, state, closed, source in cases:
        got = float(o.expected(state)[0])
        assert got == pytest.approx(closed, rel=1e-12), f"{o.kind}: {got} against {source}"


# -- exact predictive tails against scipy.stats ------------------------------------------

ROWS = {"mu": np.array([1e-5, 3e-5, 1e-4]), "s": np.array([0.2, 0.5, 0.9]),
        "h": np.array([0.1, 0.5, 1.0]), "F": np.zeros(3), "nu": np.zeros(3),
        "Ne": np.full(3, np.inf), "alpha": np.ones(3)}


@pytest.mark.parametrize("table", [ALLELE, GENOTYPES, AFFECTED, SPORADIC, FERTILITY],
                         ids=lambda t: t["kind"])
def test_binomial_tails_match_scipy(table):
    o = obs(table)
    q = np.array([0.002, 0.01, np.nan])
    state = BalanceState(ROWS, "autosomal", q, None, None, np.isfinite(q))
    n = o.statistic_trials(state)
    p = o.expected(state) / n
    p = p[np.isfinite(p)]
    t = o.statistic()
    lower, upper, law = o.predictive_tails(state)
    assert law == "binomial"
    assert lower == pytest.approx(np.mean(stats.binom.cdf(t, n, p)), rel=1e-10)
    assert upper == pytest.approx(np.mean(stats.binom.sf(t - 1, n, p)), rel=1e-10)


def test_estimate_tails_are_log_normal():
    o = obs(ESTIMATE)
    state = BalanceState.without_frequency(ROWS, "autosomal")
    lower, upper, law = o.predictive_tails(state)
    reference = np.mean(stats.norm.cdf(math.log(2e-5), np.log(ROWS["mu"]), o.sigma))
    assert law == "log-normal" and lower == pytest.approx(reference, rel=1e-12)
    assert upper == pytest.approx(1 - reference, rel=1e-12)


def test_genotypes_have_no_binomial_tails_when_inbred_or_x_linked():
    inbred = BalanceState({**ROWS, "F": np.array([0.0, 0.05, 0.0])}, "autosomal",
                          np.full(3, 0.01), None, None, np.ones(3, bool))
    assert obs(GENOTYPES).predictive_tails(inbred) is None, (
        "with F > 0 the two copies of a person are dependent: Aa + 2aa is not binomial")
    assert obs(GENOTYPES, "x-linked").statistic_trials(one_row("x-linked")) is None


# -- frequency statistics: the observed band and the drift share -------------------------

def test_frequency_statistics_of_each_kind():
    got = {k: obs(t, i).frequency_statistic() for k, t, i in [
        ("allele", ALLELE, "autosomal"), ("male", {**ALLELE, "sex": "male"}, "x-linked"),
        ("genotypes", GENOTYPES, "autosomal"), ("daughters", GENOTYPES, "x-linked"),
        ("affected", AFFECTED, "autosomal"),
        ("sons", {**AFFECTED, "mode": "x-linked-male"}, "x-linked")]}
    summary = {k: (v.count, v.trials, v.quantity, v.scale, v.of_alleles)
               for k, v in got.items()}
    assert summary == {
        "allele": (3, 400, "q_hat", 1.0, True), "male": (3, 400, "q_male", 1.0, True),
        "genotypes": (11, 320, "q_hat", 1.0, True),
        "daughters": (11, 320, "q_female", 1.0, True),
        "affected": (5, 3000, "incidence_dominant", 0.8, False),
        "sons": (5, 3000, "q_male", 0.8, False)}, summary
    for table in (SPORADIC, FERTILITY, ESTIMATE):
        assert obs(table).frequency_statistic() is None, (
            f"{table['kind']} informs mu or s directly, not the allele frequency")
    # exact interval against scipy.stats.binomtest's Clopper-Pearson interval
    ci = stats.binomtest(3, 400).proportion_ci(0.95, method="exact")
    assert got["allele"].clopper_pearson() == pytest.approx((ci.low, ci.high), rel=1e-9)


@pytest.mark.parametrize("mode", ["dominant", "recessive"])
def test_affected_share_and_its_mean_over_a_density(mode):
    """Share of affected births at F = 0: 1 − (1 − x)² (dominant), x² (recessive), times
    the penetrance (Hardy–Weinberg); its mean over Beta(a, b) from the beta moments
    E[x] = a/(a+b), E[x²] = a(a+1)/((a+b)(a+b+1)) (closed form) against a quadrature of
    the share times scipy.stats.beta's density."""
    statistic = obs({**AFFECTED, "mode": mode}).frequency_statistic()
    x = np.array([0.0, 1e-4, 0.03, 0.5, 1.0])
    closed = 0.8 * (1 - (1 - x) ** 2 if mode == "dominant" else x ** 2)
    np.testing.assert_allclose(statistic.share(x), closed, rtol=1e-12, atol=1e-300)
    a, b = 0.7, 40.0
    mean, second = a / (a + b), a * (a + 1) / ((a + b) * (a + b + 1))
    integral, _ = integrate.quad(lambda v: float(statistic.share(v)) * stats.beta.pdf(v, a, b),
                                 0, 1, points=[1e-3, 0.05], limit=200)
    assert statistic.expected_count(mean, second) == pytest.approx(3000 * integral, rel=1e-7)


def test_fertility_declares_its_assumption_for_the_report():
    assumption = KINDS["fertility"].assumption
    assert assumption and "fertility alone" in assumption, (
        "docs/files.md, 'fertility': a fertility datum assumes selection acts through fertility "
        "alone, and the report must say so")
    # capture-recapture states the independence of its two sources
    assert "independently" in KINDS["capture-recapture"].assumption
    assert all(KINDS[k].assumption is None for k in KINDS
               if k not in ("fertility", "capture-recapture"))


def test_tile_repeats_rows_like_numpy():
    state = BalanceState.deterministic(ROWS, "x-linked")
    tiled = state.tile(3)
    assert tiled.n == 9 and tiled.balance is None
    np.testing.assert_array_equal(tiled.q_male, np.tile(state.q_male, 3))
    np.testing.assert_array_equal(tiled.params["s"], np.tile(ROWS["s"], 3))
    np.testing.assert_array_equal(tiled.exists, np.tile(state.exists, 3))
