"""Property-based tests (hypothesis) over the maths and the study parser (issue 7, item 2).

Inside the documented ranges -- mu 1e-10..1e-2, s 1e-6..1, h 0..1, F 0..0.5, Ne 10..1e7,
nu 1e-9..1e-5 -- no result is NaN or infinite where a result is promised, equilibria are
true stable fixed points of the life cycle (checked with mpmath on the recursion written
out from DESIGN.md section 2, not with the library's own polynomial), q_hat moves the way
the implicit-function theorem says it must, and the study parser either accepts a study or
raises an InputError of exactly one line (through the command line: exit 2, one stderr
line, no traceback, nothing written).

Sources are named beside each check: "derived" (derivation in the docstring), "closed form",
"common practice".
"""

from __future__ import annotations

import copy
import math
import subprocess
import sys
import tempfile
import tomllib
from pathlib import Path

import mpmath
import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from scipy.special import logsumexp

from infer.core import approximations
from infer.core import balance
from infer.core.drift import stationary as drift
from infer.errors import InputError
from infer.files.study import load_study, parse_study

ROOT = Path(__file__).resolve().parents[1]
SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
FEW = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])

# ---------------------------------------------------------------- parameter strategies


def log_uniform(low_exponent, high_exponent):
    return st.floats(low_exponent, high_exponent).map(lambda e: 10.0**e)


MU = log_uniform(-10, -2)
S = log_uniform(-6, 0)
H = st.one_of(st.sampled_from([0.0, 0.5, 1.0]), st.floats(0.0, 1.0))
F = st.one_of(st.just(0.0), st.floats(0.0, 0.5))
NE = log_uniform(1, 7)
NU = log_uniform(-9, -5)
NU_OR_ZERO = st.one_of(st.just(0.0), NU)
ALPHA = log_uniform(-1, 1)


def rows(*columns, max_size=24):
    """A list of parameter tuples, returned as one float array per column."""
    return st.lists(st.tuples(*columns), min_size=1, max_size=max_size).map(
        lambda r: tuple(np.array(c, dtype=float) for c in zip(*r, strict=True))
    )


# ---------------------------------------------------------------- the life cycle in mpmath
mpmath.mp.dps = 50


def autosomal_change(q, mu, s, h, F, nu):
    """q' - q for one generation of the autosomal life cycle, in 50-digit arithmetic.

    Written out from DESIGN.md section 2 (derived, independent of infer.core.balance):
    zygotes AA p²(1-F)+pF, Aa 2pq(1-F), aa q²(1-F)+qF; fitnesses 1, 1-hs, 1-s;
    q_sel = (Aa(1-hs)/2 + aa(1-s)) / w̄; q' = q_sel(1-nu) + (1-q_sel) mu.
    """
    q, mu, s, h, F, nu = (mpmath.mpf(float(v)) for v in (q, mu, s, h, F, nu))
    p = 1 - q
    AA, Aa, aa = p * p * (1 - F) + p * F, 2 * p * q * (1 - F), q * q * (1 - F) + q * F
    mean_fitness = AA + Aa * (1 - h * s) + aa * (1 - s)
    selected = (Aa * (1 - h * s) / 2 + aa * (1 - s)) / mean_fitness
    return selected * (1 - nu) + (1 - selected) * mu - q


def x_linked_change(x, mu, s, h, F, nu, alpha):
    """x' - x for the egg frequency of the X-linked life cycle, in 50-digit arithmetic.

    DESIGN.md section 2 (derived): mu_f = 3mu/(2+alpha), mu_m = alpha mu_f. Sons carry the
    egg's X (fitness 1, 1-s): sperm y = mu_m + (1-mu_m-nu)(1-s)x/(1-sx). Daughters get one
    X of each: aa = (1-F)xy + F(x+y)/2, Aa = (1-F)(x(1-y) + y(1-x)), fitnesses 1, 1-hs, 1-s;
    mothers after selection q_f* = (Aa(1-hs)/2 + aa(1-s)) / w̄_f; x' = mu_f + (1-mu_f-nu) q_f*.
    """
    x, mu, s, h, F, nu, alpha = (mpmath.mpf(float(v)) for v in (x, mu, s, h, F, nu, alpha))
    mu_f = 3 * mu / (2 + alpha)
    mu_m = alpha * mu_f
    y = mu_m + (1 - mu_m - nu) * (1 - s) * x / (1 - s * x)
    aa = (1 - F) * x * y + F * (x + y) / 2
    Aa = (1 - F) * (x * (1 - y) + y * (1 - x))
    mean_fitness = 1 - s * (h * Aa + aa)
    selected = (Aa * (1 - h * s) / 2 + aa * (1 - s)) / mean_fitness
    return mu_f + (1 - mu_f - nu) * selected - x


def assert_stable_fixed_point(change, root, *args):
    """The recursion moves up just below ``root`` and down just above it (stable root).

    The bracket is 1e-8 of the distance to the nearer boundary (0 or 1), never below
    64 ulps: the root is claimed to full double precision (DESIGN.md section 2).
    """
    width = max(1e-8 * min(root, 1.0 - root), 64 * np.spacing(root))
    below, above = change(root - width, *args), change(root + width, *args)
    assert below > 0 and above < 0, (root, args, float(below), float(above))


# ---------------------------------------------------------------- balance


@SETTINGS
@given(rows(MU, S, H, F, NU_OR_ZERO))
def test_autosomal_equilibrium_is_finite_and_a_stable_fixed_point(params):
    """exists => q_hat in (0, 1), mean fitness and load finite in [0, 1], and q_hat is a
    stable fixed point of the life-cycle recursion (derived, mpmath)."""
    mu, s, h, F, nu = params
    with np.errstate(over="raise", divide="raise", invalid="raise"):  # no warning swallowed
        result = balance.autosomal_balance(mu, s, h, F, nu)
    assert result.q_hat.shape == mu.shape
    ok = result.exists
    assert np.all(np.isnan(result.q_hat[~ok]))
    q = result.q_hat[ok]
    assert np.all(np.isfinite(q)) and np.all((q > 0) & (q < 1))
    for value in (result.load[ok], result.mean_fitness[ok]):
        assert np.all(np.isfinite(value)) and np.all((value >= 0) & (value <= 1))
    # load = 1 - w̄ (definition, DESIGN.md section 2)
    np.testing.assert_allclose(result.load[ok] + result.mean_fitness[ok], 1.0, rtol=1e-15)
    # q_hat is a shorthand for autosomal_balance(...).q_hat
    np.testing.assert_array_equal(balance.q_hat(mu, s, h, F, nu), result.q_hat)
    for i in np.flatnonzero(ok):
        assert_stable_fixed_point(autosomal_change, result.q_hat[i], mu[i], s[i], h[i], F[i], nu[i])


def quadratic_at_one(mu, s, h, F):
    """f(1) for f(q) = (1-F)(1-2h)s q² + [(1-F)hs(1+mu) + Fs] q - mu (DESIGN.md section 2)."""
    return s * ((1 - F) * (1 - h + h * mu) + F) - mu


@SETTINGS
@given(rows(MU, S, H, F))
def test_existence_condition_of_the_quadratic(params):
    """Derived from the quadratic f of DESIGN.md section 2 (nu = 0), f(0) = -mu < 0:

    - f(1) > 0: f changes sign in (0, 1), so a stable interior root exists;
    - f(1) < 0 and h <= 1/2: a = (1-F)(1-2h)s >= 0 and b >= 0 make f increasing on (0, 1),
      so no root lies in (0, 1): mutation overwhelms selection;
    - f(1) < 0 and h > 1/2: roots in (0, 1) exist iff the discriminant b² + 4a·mu > 0 and
      the vertex -b/(2a) lies in (0, 1).

    Points within 1e-9 (relative) of a boundary are skipped: there rounding decides.
    """
    mu, s, h, F = params
    result = balance.autosomal_balance(mu, s, h, F)
    f_one = quadratic_at_one(mu, s, h, F)
    scale = s + mu
    clear = np.abs(f_one) > 1e-9 * scale
    a = (1 - F) * (1 - 2 * h) * s
    b = (1 - F) * h * s * (1 + mu) + F * s
    disc = b * b + 4 * a * mu
    with np.errstate(divide="ignore", invalid="ignore"):
        vertex = -b / (2 * a)
    clear &= (np.abs(disc) > 1e-9 * b * b) & (np.abs(vertex - 1) > 1e-9)
    positive = clear & (f_one > 0)
    assert np.all(result.exists[positive])
    recessive_side = clear & (f_one < 0) & (h <= 0.5)
    assert not np.any(result.exists[recessive_side])
    dominant_side = clear & (f_one < 0) & (h > 0.5)
    expected = (disc > 0) & (vertex > 0) & (vertex < 1)
    np.testing.assert_array_equal(result.exists[dominant_side], expected[dominant_side])


@SETTINGS
@given(rows(MU, S, H, F, NU_OR_ZERO, ALPHA))
def test_x_linked_equilibrium_is_finite_and_a_stable_fixed_point(params):
    """exists => every reported frequency in (0, 1), loads and the new-mutation share in
    [0, 1], all finite; q_male is a stable fixed point of the X-linked recursion (derived,
    mpmath); q_female = (x + y)/2 and q_hat = (2 q_female + q_male)/3 (DESIGN.md section 2)."""
    mu, s, h, F, nu, alpha = params
    result = balance.x_linked_balance(mu, s, h, F, nu, alpha)
    ok = result.exists
    for name in ("q_male", "q_female", "q_hat"):
        value = getattr(result, name)[ok]
        assert np.all(np.isfinite(value)) and np.all((value > 0) & (value < 1)), name
    for name in ("load_male", "load_female", "new_mutation_share"):
        value = getattr(result, name)[ok]
        # 1 is reached exactly (s = h = 1: every a in a newborn is new); allow its rounding
        assert np.all(np.isfinite(value)) and np.all((value >= 0) & (value <= 1 + 1e-12)), name
    np.testing.assert_allclose(
        result.q_hat[ok], (2 * result.q_female[ok] + result.q_male[ok]) / 3, rtol=1e-14
    )
    for i in np.flatnonzero(ok):
        assert_stable_fixed_point(
            x_linked_change, result.q_male[i], mu[i], s[i], h[i], F[i], nu[i], alpha[i]
        )


@pytest.mark.filterwarnings("ignore:overflow encountered:RuntimeWarning")  # subnormal h·s:
# see test_tiny_dominance_gives_no_floating_point_warning
@SETTINGS
@given(rows(MU, S, H, F))
def test_autosomal_approximations_are_finite_and_honest_where_in_range(params):
    """Where an approximation is flagged in range its value and relative error are finite,
    relative_error = value / exact - 1 (the definition in infer.core.approximations), and the
    error is below twice the 10 % tolerance the flag promises (first-order estimate <= 10 %;
    second-order terms are smaller by the same factor -- derived)."""
    mu, s, h, F = params
    exact = balance.q_hat(mu, s, h, F)
    for name, approx in approximations.autosomal_approximations(mu, s, h, F).items():
        inside = approx.in_range
        assert np.all(np.isfinite(approx.value[inside])), name
        assert np.all(np.isfinite(approx.relative_error[inside])), name
        np.testing.assert_allclose(
            approx.relative_error[inside], approx.value[inside] / exact[inside] - 1, atol=1e-15
        )
        error = np.abs(approx.relative_error[inside])
        assert np.all(error <= 2 * approximations.RANGE_TOLERANCE), (name, error)


@SETTINGS
@given(rows(MU, S, H, ALPHA))
def test_x_linked_approximations_are_finite_and_honest_where_in_range(params):
    """As for the autosomal forms, against the exact q_male (Haldane 1935 3mu/s and the
    rare-allele form of infer.core.approximations)."""
    mu, s, h, alpha = params
    exact = balance.x_linked_balance(mu, s, h, 0.0, 0.0, alpha).q_male
    for name, approx in approximations.x_linked_approximations(mu, s, h, alpha).items():
        inside = approx.in_range
        assert np.all(np.isfinite(approx.value[inside])), name
        np.testing.assert_allclose(
            approx.relative_error[inside], approx.value[inside] / exact[inside] - 1, atol=1e-15
        )
        error = np.abs(approx.relative_error[inside])
        assert np.all(error <= 2 * approximations.RANGE_TOLERANCE), (name, error)


def test_tiny_dominance_gives_no_floating_point_warning():
    """h = 1e-320 is inside h's documented range [0, 1]; mu/(hs) is then out of range
    (flagged, NaN), but nothing is printed."""
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        result = approximations.autosomal_approximations(1e-5, 0.1, 1e-320)
    assert not result["mu/(hs)"].in_range


# ---------------------------------------------------------------- monotonicity
STEP = st.floats(1e-3, 1.0)  # relative or absolute change, far above rounding


@SETTINGS
@given(rows(MU, S, H, F, NU_OR_ZERO), STEP)
def test_q_hat_rises_with_mu(params, step):
    """Derived (implicit function theorem): at the stable root G(q) = 0 with dG/dq > 0, and
    dG/dmu = p[(1-F)hs q - 1] < 0 (G = p f + nu N of infer.core.balance, N free of mu), so
    dq_hat/dmu = -(dG/dmu)/(dG/dq) > 0, with or without back mutation."""
    mu, s, h, F, nu = params
    low = balance.q_hat(mu, s, h, F, nu)
    high = balance.q_hat(mu * (1 + step), s, h, F, nu)
    both = np.isfinite(low) & np.isfinite(high)
    assert np.all(high[both] > low[both])


@SETTINGS
@given(rows(MU, S, H, F), STEP)
def test_q_hat_falls_with_s(params, step):
    """Derived: f(q) = A q² + B q - mu with A, B proportional to s (B's mu term included), so
    df/ds = (A q² + B q)/s = mu/s > 0 at the root and dq_hat/ds = -(mu/s)/f'(q) < 0 (nu = 0)."""
    mu, s, h, F = params
    larger = np.minimum(s * (1 + step), 1.0)
    assume(np.any(larger > s))
    low = balance.q_hat(mu, larger, h, F)
    high = balance.q_hat(mu, s, h, F)
    both = np.isfinite(low) & np.isfinite(high) & (larger > s)
    assert np.all(low[both] < high[both])


@SETTINGS
@given(rows(MU, S, H, F), st.floats(1e-3, 0.5))
def test_q_hat_falls_with_h_while_the_allele_is_in_the_minority(params, step):
    """Derived: df/dh = (1-F)s q(1 + mu - 2q), positive while q < (1 + mu)/2, so q_hat falls
    as h rises wherever q_hat < 1/2 (nu = 0). (Above 1/2 it rises: next test.)"""
    mu, s, h, F = params
    higher = np.minimum(h + step, 1.0)
    before = balance.q_hat(mu, s, h, F)
    after = balance.q_hat(mu, s, higher, F)
    minority = np.isfinite(before) & np.isfinite(after) & (before < 0.45) & (higher > h)
    # where h and the capped h + step differ in the last digits (h within 1e-12 of 1), the
    # true change is below the root's accuracy (1e-10 relative against mpmath,
    # tests/test_balance.py), so the fall is checked within that accuracy
    assert np.all(after[minority] < before[minority] * (1 + 1e-10))
    clear = minority & (higher - h > 1e-6)
    assert np.all(after[clear] < before[clear])


@FEW
@given(log_uniform(-3, 0), st.floats(0.5, 0.95), st.floats(0.0, 0.3), st.floats(1e-3, 0.05))
def test_q_hat_rises_with_h_when_the_allele_is_in_the_majority(s, share, h, step):
    """Derived: with q_hat > (1 + mu)/2, df/dh = (1-F)s q(1 + mu - 2q) < 0, so q_hat rises
    with h: when a is common most a copies sit in aa, and raising h costs A (in Aa) more
    than a (marginal fitness gap w_A - w_a = s(hp + (1-h)q), d/dh = s(p - q) < 0).
    mu = share * s keeps q_hat ~ sqrt(share) > 0.7 at h = 0."""
    mu = share * s
    before = float(balance.q_hat(mu, s, h))
    after = float(balance.q_hat(mu, s, h + step))
    assume(math.isfinite(before) and math.isfinite(after))
    assume(min(before, after) > (1 + mu) / 2 + 0.05)
    assert after > before


# ---------------------------------------------------------------- drift


@FEW
@given(rows(NE, MU, S, H, NU, max_size=8))
def test_drift_normaliser_and_summary_are_finite(params):
    """log ∫φ finite; summary: 0 <= lower <= median <= upper <= 1, 0 <= mean <= 1,
    0 <= sd <= 1/2 (a variable on [0, 1] has variance <= 1/4: Popoviciu's inequality,
    common practice), all finite, over the documented ranges of Ne, mu, s, h, nu."""
    Ne, mu, s, h, nu = params
    log_z = drift.log_normaliser(Ne, mu, s, h, nu)
    assert log_z.shape == Ne.shape and np.all(np.isfinite(log_z))
    summary = drift.stationary_summary(Ne, mu, s, h, nu)
    for key in ("mean", "median", "lower", "upper", "sd"):
        assert np.all(np.isfinite(summary[key])), key
    assert np.all((summary["lower"] >= 0) & (summary["upper"] <= 1))
    assert np.all(summary["lower"] <= summary["median"])
    assert np.all(summary["median"] <= summary["upper"])
    assert np.all((summary["mean"] >= 0) & (summary["mean"] <= 1))
    assert np.all((summary["sd"] >= 0) & (summary["sd"] <= 0.5))


@FEW
@given(rows(NE, MU, S, H, NU, max_size=8), st.integers(1, 16))
def test_drift_sample_probabilities_are_finite_and_sum_to_one(params, n):
    """Every log P(k copies in n) is finite and <= 0, and the n + 1 probabilities sum to 1
    (derived: sum_k C(n,k) x^k (1-x)^(n-k) = 1 under the integral) within 1e-6, the
    quadrature tolerance of DESIGN.md section 2."""
    Ne, mu, s, h, nu = params
    k = np.arange(n + 1)[:, None]
    log_p = drift.log_binomial_probability(k, n, Ne, mu, s, h, nu)
    assert log_p.shape == (n + 1, Ne.size)
    assert np.all(np.isfinite(log_p)) and np.all(log_p <= 1e-12)
    np.testing.assert_allclose(np.exp(logsumexp(log_p, axis=0)), 1.0, rtol=1e-6)


# ---------------------------------------------------------------- the study parser


def demo_documents():
    """The shipped demo studies (valid by construction) as parsed TOML documents."""
    names = ("island-dominant", "northholm-x-linked", "kestrel-captive-drift", "valley-recessive")
    return [tomllib.loads((ROOT / "data_demo" / f"{n}.toml").read_text("utf-8")) for n in names]


BASES = demo_documents()

ODD_TEXT = st.sampled_from([
    "NaN", "nan", "inf", "-inf", "1e999", "-1", "0x10", "", " ", "12 ", "true", "None",
    "dominant ", "Dominant", "x-linked-male\n", "../../etc/passwd", "ƒ(μ)", "漢字", "\u2028",
    "log-uniform", "beta", "a\x1b[31mb",
])
INT64 = st.integers(-(2**63), 2**63 - 1)  # TOML 1.0 integers are 64-bit
ODD_SCALAR = st.one_of(
    INT64, st.integers(-3, 3), st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0.0, -0.0, 1e-320, 1e308, -1e-9, 0.5, 1.0, 1.5, 2.0, 12.5]),
    st.booleans(), ODD_TEXT,
    st.text(st.characters(blacklist_categories=("Cs",)), max_size=12),
)
ODD_VALUE = st.one_of(
    ODD_SCALAR,
    st.lists(ODD_SCALAR, max_size=3),
    st.dictionaries(st.sampled_from(["prior", "low", "high", "x", "median"]), ODD_SCALAR,
                    max_size=3),
)
KEYS = st.one_of(
    st.sampled_from([
        "title", "inheritance", "model", "interval", "kind", "mode", "prior", "low", "high",
        "median", "sigma", "a", "b", "mean", "sd", "affected", "total", "cases", "births",
        "observed", "sampled", "sex", "AA", "Aa", "aa", "parameter", "lower", "upper",
        "penetrance", "label", "seed", "walkers", "max_steps", "ensembles", "mu", "s", "h",
        "F", "nu", "Ne", "alpha", "affected_people", "affected_children", "reference_people",
        "reference_children", "sporadik", "Mu",
    ]),
    # any key TOML can quote, line breaks and control characters included (InputError
    # folds them into one printable line)
    st.text(st.characters(blacklist_categories=("Cs",)), min_size=1, max_size=8),
)


def paths(document, prefix=()):
    """Every (path, value) in a document, tables and lists included."""
    out = []
    items = document.items() if isinstance(document, dict) else enumerate(document)
    for key, value in items:
        here = (*prefix, key)
        out.append(here)
        if isinstance(value, (dict, list)):
            out.extend(paths(value, here))
    return out


def parent_of(document, path):
    node = document
    for key in path[:-1]:
        node = node[key]
    return node


@st.composite
def studies(draw):
    """A demo study with 1-4 mutations: a value replaced by an odd one, a key deleted, an
    unknown key added, or a unicode title."""
    document = copy.deepcopy(draw(st.sampled_from(BASES)))
    for _ in range(draw(st.integers(1, 4))):
        action = draw(st.sampled_from(["replace", "replace", "delete", "add", "title"]))
        places = paths(document)
        if action == "title":
            document["title"] = draw(st.text(st.characters(blacklist_categories=("Cs",)),
                                             max_size=40))
            continue
        if not places:
            break
        path = draw(st.sampled_from(places))
        parent = parent_of(document, path)
        if action == "replace":
            parent[path[-1]] = draw(ODD_VALUE)
        elif action == "delete":
            del parent[path[-1]]
        elif isinstance(parent, dict):
            parent[draw(KEYS)] = draw(ODD_VALUE)
        else:
            parent.append(draw(ODD_VALUE))
    return document


def toml_string(text):
    """A TOML basic string (escapes quotes, backslashes, control characters)."""
    out = []
    for ch in text:
        if ch in '"\\':
            out.append("\\" + ch)
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def toml_value(value):
    """An inline TOML value (common practice: TOML 1.0 spelling of nan, inf, booleans)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return toml_string(value)
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{toml_string(str(k))} = {toml_value(v)}"
                               for k, v in value.items()) + "}"
    raise TypeError(type(value))


def to_toml(document):
    """TOML text whose ``tomllib.loads`` equals ``document`` (all tables written inline,
    arrays of tables as arrays of inline tables)."""
    return "".join(f"{toml_string(str(k))} = {toml_value(v)}\n" for k, v in document.items())


def test_toml_writer_round_trips_the_demo_studies():
    """The test's own TOML writer is checked against tomllib (the standard library's reader)."""
    for document in BASES:
        assert tomllib.loads(to_toml(document)) == document


def check_one_line(error: InputError, source: str):
    text = str(error)
    assert len(text.splitlines()) == 1, text
    assert text.startswith(source + ": "), text  # names the file first
    assert text.strip() == text and text


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(studies())
def test_parser_accepts_or_raises_one_line_input_error(document):
    """parse_study never raises anything but InputError, whose str() is one line naming the
    file; a document that passes has a valid interval and at least one observation."""
    source = "generated.toml"
    try:
        study = parse_study(document, source=source)
    except InputError as error:
        check_one_line(error, source)
    else:
        assert 0 < study.interval < 1
        assert study.observations and study.free


@FEW
@given(studies())
def test_study_file_round_trip_accepts_or_raises_one_line(document):
    """The same through TOML text on disk (load_study): file reading, decoding, parsing."""
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "generated.toml"
        path.write_text(to_toml(document), encoding="utf-8")
        try:
            load_study(path)
        except InputError as error:
            check_one_line(error, str(path))


@pytest.mark.parametrize("value", [10**400, -(10**400)], ids=["huge", "huge-negative"])
def test_integer_beyond_float_range_is_an_input_error(value):
    """A count like ``affected = 1000...0`` (400 digits) must end as one-line bad input."""
    document = copy.deepcopy(BASES[0])
    document["observations"][0]["affected"] = value
    with pytest.raises(InputError) as caught:
        parse_study(document, source="huge.toml")
    check_one_line(caught.value, "huge.toml")


@pytest.mark.parametrize("key", ["bad\nkey", "bad\u2028key", "bad\rkey"])
def test_line_break_in_a_key_still_gives_one_line(key):
    """An unknown key spelled with a line break (TOML allows any quoted key) is named on
    one line."""
    document = copy.deepcopy(BASES[0])
    document[key] = 1
    with pytest.raises(InputError) as caught:
        parse_study(document, source="keys.toml")
    check_one_line(caught.value, "keys.toml")


def qhat(*args, cwd):
    return subprocess.run([sys.executable, "-m", "infer", *map(str, args)], cwd=cwd,
                          capture_output=True, text=True, timeout=600)


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(studies())
def test_bad_generated_study_exits_2_with_one_line_and_writes_nothing(document):
    """Through the command line (DESIGN.md section 3): exit 2, exactly one stderr line
    ``qhat: error: <file>: ...`` equal to the library's message, no traceback, and nothing
    written beside the study."""
    try:
        parse_study(document, source="bad.toml")
    except InputError:
        pass
    else:
        assume(False)  # only rejected studies here (an accepted one would run a full fit)
    with tempfile.TemporaryDirectory() as folder:
        folder = Path(folder)
        study = folder / "bad.toml"
        study.write_text(to_toml(document), encoding="utf-8")
        with pytest.raises(InputError) as expected:
            load_study(study)
        done = qhat("estimate", "bad.toml", "--out", "report", cwd=folder)
        assert done.returncode == 2, done.stderr
        assert "Traceback" not in done.stderr
        lines = done.stderr.splitlines()
        assert len(lines) == 1 and lines[0].startswith("qhat: error: bad.toml: "), done.stderr
        message = str(expected.value).replace(str(study), "bad.toml", 1)
        assert lines[0] == f"qhat: error: {message}"
        assert done.stdout == ""
        assert sorted(p.name for p in folder.iterdir()) == ["bad.toml"]
