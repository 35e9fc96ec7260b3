"""``qhat equilibrium`` end to end, through ``python -m infer`` in a subprocess (and the
plot in-process, to see what was drawn).

References: at h = 1/2, F = 0, nu = 0 the balance quadratic of docs/model.md,
(1-2h)s q² + hs(1+mu) q - mu = 0, is linear, q = mu/(hs(1+mu)) (closed form); genotype
frequencies with inbreeding aa = q² + Fpq, AA = p² + Fpq (Morton, Crow & Muller 1956, PNAS
42:855); Haldane 1935 (J. Genet. 31:317) for X-linked sons; Kummer's integral
B(a,b)·1F1(a; a+b; -c) for Wright's density at h = 1/2 (mpmath.hyp1f1; REFERENCES.md).
"""

import json
import math
import re

import mpmath
import numpy as np
import pytest
from conftest import call_qhat, run_qhat


def equilibrium(*args, **options):
    return run_qhat("equilibrium", *args, timeout=120, **options)


def rare_allele_root(mu, s, h):
    """Smaller root of (1-2h)s q² + hs(1+mu) q - mu = 0 (F = 0, nu = 0; docs/model.md),
    written 2mu/(b + sqrt(b² + 4a·mu)) to avoid cancellation (closed form)."""
    a, b = (1 - 2 * h) * s, h * s * (1 + mu)
    return 2 * mu / (b + np.sqrt(b * b + 4 * a * mu))


def table_value(text: str, label: str) -> str:
    """The value printed after ``label`` on its line of the text table."""
    match = re.search(rf"^\s*{re.escape(label)}\s+(\S+)", text, flags=re.MULTILINE)
    assert match, f"no line starting {label!r} in the table:\n{text}"
    return match.group(1)


def test_table_default():
    done = equilibrium("--mu", "1e-5", "--s", "0.1", "--h", "0.5")
    assert done.returncode == 0, f"a valid locus must exit 0; {done}"
    out = done.stdout
    mu, s, h = 1e-5, 0.1, 0.5
    q = mu / (h * s * (1 + mu))  # closed form at h = 1/2 (module docstring)
    printed = float(table_value(out, "exact equilibrium q_hat"))
    assert printed == pytest.approx(q, rel=1e-8), (
        f"table q_hat {printed}, closed form mu/(hs(1+mu)) = {q}")
    # w̄ = (1-mu)(1 - hs q̂) at equilibrium (derived; tests/core/test_balance.py)
    fitness = (1 - mu) * (1 - h * s * q)
    assert float(table_value(out, "mean fitness")) == pytest.approx(fitness, rel=1e-9), (
        f"table mean fitness vs (1-mu)(1-hs q) = {fitness}")
    assert float(table_value(out, "load / mu")) == pytest.approx(2.0, abs=1e-4), (
        "load / mu must print 2.0000: load ≈ 2mu with heterozygous effect (Haldane 1937, "
        "Am. Nat. 71:337; from memory)")
    # approximation rows: value, relative error, in range (closed forms of each name)
    expected = {"mu/(hs)": (mu / (h * s), "yes"), "sqrt(mu/s)": (math.sqrt(mu / s), "no"),
                "mu/(s(h(1-F)+F))": (mu / (s * h), "yes"), "quadratic": (mu / (h * s), "yes")}
    for name, (value, in_range) in expected.items():
        row = re.search(rf"^  {re.escape(name)}\s+(\S+)\s+(\S+)\s+(yes|no)\s", out, re.MULTILINE)
        assert row, f"no approximation row for {name} in the table:\n{out}"
        assert float(row.group(1)) == pytest.approx(value, rel=1e-3), (
            f"{name} printed {row.group(1)}, closed form {value}")
        assert float(row.group(2)) == pytest.approx(value / q - 1, rel=1e-2, abs=1e-6), (
            f"{name} relative error printed {row.group(2)}, value/exact - 1 = {value / q - 1}")
        assert row.group(3) == in_range, (
            f"{name} must be flagged in range = {in_range} at h = 0.5 (sqrt(mu/s) needs "
            f"h << sqrt(mu/s) = 0.01); printed {row.group(3)}")
    load = float(table_value(out, "mutation load (1 - mean fitness)"))
    assert load == pytest.approx(1 - fitness, rel=1e-5), (
        f"table mutation load {load} vs 1 - (1-mu)(1-hs q) = {1 - fitness}")
    assert re.search(r"^  name\s+value\s+rel\. error\s+in range\s", out, re.MULTILINE), (
        f"the approximation table needs the header 'name value rel. error in range':\n{out}")
    dominant = float(table_value(out, "dominant (Aa + aa)"))
    assert dominant == pytest.approx(1 - (1 - q) ** 2, rel=1e-5), (
        f"dominant affected fraction {dominant} vs Hardy-Weinberg 1 - p² = {1 - (1 - q) ** 2}")
    recessive = float(table_value(out, "recessive (aa)"))
    assert recessive == pytest.approx(q * q, rel=1e-5), (
        f"recessive affected fraction {recessive} vs Hardy-Weinberg q² = {q * q}")
    assert "regime                            mutation-selection balance" in out, out


def test_json_autosomal():
    done = equilibrium("--mu", "2e-6", "--s", "0.3", "--h", "0.2", "--F", "0.01", "--nu",
                       "1e-8", "--penetrance", "0.9", "--json")
    assert done.returncode == 0, f"a valid locus must exit 0; {done}"
    result = json.loads(done.stdout)
    from infer.core import balance

    # the command prints the library's root (checked against mpmath in
    # tests/core/test_balance.py); the JSON must carry it unrounded
    exact = balance.autosomal_balance(2e-6, 0.3, 0.2, 0.01, 1e-8)
    assert result["q_hat"] == float(exact.q_hat), (
        f"JSON q_hat {result['q_hat']} is not the library's {float(exact.q_hat)}")
    assert result["load"] == float(exact.load), (
        f"JSON load {result['load']} is not the library's {float(exact.load)}")
    assert result["load"] == pytest.approx(1 - result["mean_fitness"], rel=1e-9), (
        "load must be 1 - mean fitness (definition, docs/model.md)")
    names = {"mu/(hs)", "sqrt(mu/s)", "mu/(s(h(1-F)+F))", "quadratic"}
    assert set(result["approximations"]) == names, (
        f"approximations must be {sorted(names)}; got {sorted(result['approximations'])}")
    for name, entry in result["approximations"].items():
        missing = {"value", "relative_error", "in_range"} - set(entry)
        assert not missing, f"approximation {name} lacks {sorted(missing)}"
    affected = result["affected"]
    assert set(affected) == {"dominant", "recessive", "x-linked-male"}, sorted(affected)
    q, F = result["q_hat"], 0.01
    p = 1 - q
    aa, AA = q * q + F * p * q, p * p + F * p * q  # Morton, Crow & Muller 1956
    assert affected["recessive"] == pytest.approx(0.9 * aa, rel=1e-12), (
        f"recessive affected {affected['recessive']} vs penetrance·(q² + Fpq) = {0.9 * aa}")
    assert affected["dominant"] == pytest.approx(0.9 * (1 - AA), rel=1e-9), (
        f"dominant affected {affected['dominant']} vs penetrance·(1 - p² - Fpq)")
    assert affected["x-linked-male"] is None, "an autosomal locus has no x-linked-male value"
    assert result["regime"] == "mutation-selection balance", result["regime"]


def test_json_x_linked():
    done = equilibrium("--mu", "1e-5", "--s", "1", "--h", "0", "--inheritance", "x-linked",
                       "--alpha", "1", "--json")
    assert done.returncode == 0, f"a valid X-linked locus must exit 0; {done}"
    result = json.loads(done.stdout)
    for key in ("q_male", "q_female", "q_hat", "load_male", "load_female",
                "new_mutation_share", "approximations", "affected"):
        assert key in result, f"X-linked JSON lacks {key!r}; has {sorted(result)}"
    # Haldane 1935, J. Genet. 31:317: 3mu/s in sons, one third new mutants (s = 1).
    assert result["q_male"] == pytest.approx(3e-5, rel=1e-3), (
        f"q_male {result['q_male']} vs Haldane's 3mu/s = 3e-5")
    assert result["new_mutation_share"] == pytest.approx(1 / 3, rel=1e-3), (
        f"new-mutation share {result['new_mutation_share']} vs Haldane's 1/3")
    assert result["affected"]["x-linked-male"] == pytest.approx(result["q_male"]), (
        "affected sons must be q_male at full penetrance (hemizygous: one copy affects)")
    # docs/model.md: q_hat = (2 q_female + q_male)/3 (two X in daughters, one in sons)
    mean = (2 * result["q_female"] + result["q_male"]) / 3
    assert result["q_hat"] == pytest.approx(mean, rel=1e-12), (
        f"q_hat {result['q_hat']} vs (2 q_female + q_male)/3 = {mean}")


def test_json_no_equilibrium_is_nan_with_regime():
    """mu = 1e-2, s = 1e-3, h = 0.3: f(1) = s(1 - h + h·mu) - mu < 0 with h < 1/2, so the
    quadratic has no root in (0, 1) (derived; docs/model.md, 'Autosomal equilibrium').
    A number without a value is written as the string "nan", never as null, which means
    "does not apply" (docs/reports.md, 'JSON documents')."""
    done = equilibrium("--mu", "1e-2", "--s", "1e-3", "--h", "0.3", "--json")
    assert done.returncode == 0, f"no equilibrium is a result, not an error; {done}"
    result = json.loads(done.stdout)
    assert result["q_hat"] == "nan" and result["load"] == "nan", (
        f'without an equilibrium q_hat and load must be "nan"; got {result["q_hat"]!r}, '
        f"{result['load']!r}")
    assert "mutation overwhelms selection" in result["regime"], result["regime"]
    table = equilibrium("--mu", "1e-2", "--s", "1e-3", "--h", "0.3")
    assert "mutation overwhelms selection" in table.stdout, f"the table must say why; {table}"
    assert re.search(r"\bnan\b", table.stdout) is None, f"the table must not print nan; {table}"


def test_plot_written(tmp_path, capsys, monkeypatch):
    """The PNG is written without a temporary left behind, and the figure shows the exact
    q̂(h) curve (checked against the closed-form root), each approximation solid and dotted,
    the chosen h marked, and one row per approximation in the range strip."""
    import matplotlib.figure

    drawn = []
    real_savefig = matplotlib.figure.Figure.savefig

    def savefig(figure, *args, **kwargs):
        drawn.append(figure)
        return real_savefig(figure, *args, **kwargs)

    monkeypatch.setattr(matplotlib.figure.Figure, "savefig", savefig)
    path = tmp_path / "balance.png"
    status, out, err = call_qhat(["equilibrium", "--mu", "1e-5", "--s", "0.1", "--h", "0.2",
                                  "--plot", path, "--json"], capsys)
    assert status == 0, f"--plot must exit 0; stderr: {err}"
    data = path.read_bytes()
    # PNG signature (W3C PNG specification 2003, 5.2)
    assert data[:8] == b"\x89PNG\r\n\x1a\n", f"balance.png is not a PNG: {data[:8]!r}"
    assert len(data) > 10_000, f"balance.png is only {len(data)} bytes: nothing drawn?"
    left = [p.name for p in tmp_path.iterdir()]
    assert left == ["balance.png"], f"a temporary file was left beside the plot: {left}"
    assert len(drawn) == 1, f"expected one figure saved, got {len(drawn)}"
    top, strip = drawn[0].axes
    names = list(json.loads(out)["approximations"])
    assert "equilibrium frequency" in top.get_ylabel(), top.get_ylabel()
    assert top.get_yscale() == "log", "q̂ spans decades: the y axis must be logarithmic"
    assert strip.get_xlabel() == "dominance coefficient h", strip.get_xlabel()
    ticks = [t.get_text() for t in strip.get_yticklabels()]
    assert ticks == names, f"the range strip must label one row per approximation {names}; {ticks}"
    lines = top.get_lines()
    # exact curve + (in range, outside range) per approximation + the marker at h
    assert len(lines) == 1 + 2 * len(names) + 1, (
        f"expected {2 + 2 * len(names)} lines on the top axes, found {len(lines)}")
    h, exact = (np.asarray(v, dtype=float) for v in lines[0].get_data())
    assert h[0] == 0 and h[-1] == 1, f"the curve must span h in [0, 1]; spans {h[0]}..{h[-1]}"
    np.testing.assert_allclose(exact, rare_allele_root(1e-5, 0.1, h), rtol=1e-9,
                               err_msg="drawn exact curve vs the closed-form quadratic root")
    marker = np.asarray(lines[-1].get_xdata(), dtype=float)
    assert np.all(marker == 0.2), f"the dashed marker must stand at h = 0.2; at {marker}"
    legend = [t.get_text() for t in top.get_legend().get_texts()]
    assert legend == ["exact (this life cycle)", *names], f"legend entries: {legend}"


def test_stationary_with_drift():
    """h = 1/2: Wright's density is x^(a-1)(1-x)^(b-1)e^(-cx) with a = 4Ne·mu, b = 4Ne·nu,
    c = 2Ne·s, whose integral is Z(a, b) = B(a,b)·1F1(a; a+b; -c) (Kummer, derived). So
    E[q] = Z(a+1, b)/Z(a, b) and P(no copy in n) = E[(1-q)^n] = Z(a, b+n)/Z(a, b)."""
    pytest.importorskip("infer.core.drift.stationary")
    done = equilibrium("--mu", "1e-5", "--s", "0.01", "--h", "0.5", "--nu", "1e-6", "--Ne",
                       "1000", "--sample", "500", "--interval", "0.9", "--json")
    assert done.returncode == 0, f"a drift query must exit 0; {done}"
    result = json.loads(done.stdout)
    st = result["stationary"]
    missing = {"mean", "median", "lower", "upper"} - set(st)
    assert not missing, f"stationary summary lacks {sorted(missing)}"
    assert st["lower"] <= st["median"] <= st["upper"], f"quantiles out of order: {st}"
    with mpmath.workdps(30):
        a, b, c = 4 * 1000 * 1e-5, 4 * 1000 * 1e-6, 2 * 1000 * 0.01

        def z(A, B):
            return mpmath.beta(A, B) * mpmath.hyp1f1(A, A + B, -c)

        mean, absent = float(z(a + 1, b) / z(a, b)), float(z(a, b + 500) / z(a, b))
    assert st["mean"] == pytest.approx(mean, rel=1e-6), (
        f"stationary mean {st['mean']} vs Kummer closed form {mean}")
    assert result["probability_absent"] == pytest.approx(absent, rel=1e-6), (
        f"P(absent in 500) {result['probability_absent']} vs Kummer closed form {absent}")


def test_neutral_stationary_is_beta():
    """--s 0 with --Ne: Wright's neutral density Beta(4Ne·mu, 4Ne·nu) (Wright 1931;
    scipy.stats.beta): mean, sd, median and the central 90 % interval, and P(no copy in n)
    = B(a, b + n)/B(a, b) (beta-binomial at 0, scipy.stats.betabinom)."""
    from scipy import stats

    done = equilibrium("--mu", "2e-4", "--s", "0", "--h", "0.5", "--nu", "5e-5", "--Ne",
                       "2000", "--sample", "100", "--interval", "0.9", "--json")
    assert done.returncode == 0, f"s = 0 with --Ne must be accepted (the neutral density); {done}"
    result = json.loads(done.stdout)
    a, b = 4 * 2000 * 2e-4, 4 * 2000 * 5e-5
    beta = stats.beta(a, b)
    expected = {"mean": beta.mean(), "sd": beta.std(), "median": beta.median(),
                "lower": beta.ppf(0.05), "upper": beta.ppf(0.95)}
    for key, value in expected.items():
        assert result["stationary"][key] == pytest.approx(value, rel=1e-7), (
            f"s = 0: stationary {key} {result['stationary'][key]} vs scipy.stats.beta {value}")
    absent = stats.betabinom.pmf(0, 100, a, b)
    assert result["probability_absent"] == pytest.approx(absent, rel=1e-7), (
        f"P(absent in 100) {result['probability_absent']} vs scipy betabinom {absent}")
    assert result["regime"].startswith("no selection"), f"regime line: {result['regime']!r}"
    assert result["q_hat"] == pytest.approx(2e-4 / (2e-4 + 5e-5), rel=1e-12), (
        f"s = 0: the deterministic point is mu/(mu + nu) (closed form); got {result['q_hat']}")


@pytest.mark.parametrize("Ne", ["1e12", "1e300"])
def test_stationary_at_huge_ne_is_the_deterministic_limit(Ne):
    """Huge Ne (the general quadrature alone printed mean 1 at 1e300, sd 0.0 at 1e12): the
    density concentrates on the balance with the linear-noise sd sqrt(V/(2|M'|)),
    V = x(1-x)/(2Ne), M' = -mu - nu - s/2 at h = 1/2 (derived; Kimura 1964; Ewens 2004,
    §4.5): 6.32e-9 at Ne = 1e12; the mean is within O(mu) of the exact q_hat printed
    beside it (the diffusion drops the 1 + mu factor of the recursion, docs/model.md)."""
    done = equilibrium("--mu", "1e-5", "--s", "0.5", "--h", "0.5", "--nu", "1e-9", "--Ne", Ne,
                       "--json")
    assert done.returncode == 0, f"--Ne {Ne} must run; {done}"
    result = json.loads(done.stdout)
    st = result["stationary"]
    assert st["mean"] == pytest.approx(result["q_hat"], rel=3e-5), (
        f"Ne = {Ne}: stationary mean {st['mean']} vs the deterministic q_hat {result['q_hat']}")
    x = st["mean"]
    slope = 1e-5 + 1e-9 + 0.5 * (1 - 2 * x) / 2  # |M'(x)|, s = 0.5
    sd = math.sqrt(x * (1 - x) / (2 * float(Ne)) / (2 * slope))
    assert st["sd"] == pytest.approx(sd, rel=1e-6), (
        f"Ne = {Ne}: sd {st['sd']} vs the linear-noise sd {sd}")
    assert st["lower"] <= st["median"] <= st["upper"], f"quantiles out of order: {st}"


BAD = [
    (["--mu", "-1e-5", "--s", "0.1", "--h", "0.5"], "--mu: -1e-5 is negative"),
    (["--mu=-2e-5", "--s", "0.1", "--h", "0.5"], "--mu: -2e-5 is negative"),
    (["--mu", "abc", "--s", "0.1", "--h", "0.5"], "--mu: 'abc' is not a number"),
    (["--mu", "nan", "--s", "0.1", "--h", "0.5"], "--mu"),
    (["--mu", "1e-5", "--s", "1.5", "--h", "0.5"], "--s: 1.5 is above 1"),
    (["--mu", "1e-5", "--s", "0", "--h", "0.5"], "--s: 0 needs --Ne"),
    (["--mu", "0.5", "--s", "0.5", "--h", "0.5", "--inheritance", "x-linked", "--alpha", "1000"],
     "--mu: 0.5 with --alpha 1000 gives mu_male = 1.497 per gamete"),
    (["--mu", "0.9", "--s", "0.5", "--h", "0.5", "--inheritance", "x-linked", "--alpha", "0.01"],
     "--mu: 0.9 with --alpha 0.01 gives mu_female = 1.343 per gamete"),
    (["--mu", "1e-5", "--s", "-0.1", "--h", "0.5"], "--s: -0.1 is negative"),
    # h outside [0, 1] is general genotype fitness (tests/commands/test_equilibrium_fitness.py);
    # refused where the heterozygote's fitness 1 - hs would be negative, or not autosomal
    (["--mu", "1e-5", "--s", "0.1", "--h", "12"], "--h: 12 with s = 0.1 gives"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "-0.2", "--inheritance", "x-linked"],
     "--h: -0.2 is outside [0, 1]"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--F", "1"], "--F: 1"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--F", "-0.1"], "--F: -0.1"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--nu", "1"], "--nu: 1"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--inheritance", "y-linked"],
     "--inheritance: 'y-linked'"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--inheritance", "x-linked", "--alpha", "0"],
     "--alpha: 0"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--penetrance", "1.1"], "--penetrance: 1.1"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--Ne", "-5", "--nu", "1e-6"], "--Ne: -5"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--Ne", "100"], "--Ne"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--sample", "10"], "--sample"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "0.5", "--plot", "/no/such/folder/x.png"], "--plot"),
    (["--s", "0.1", "--h", "0.5"], "--mu"),
]


@pytest.mark.parametrize("args, expected", BAD, ids=[b[1] for b in BAD])
def test_bad_input_exit_2_one_line(args, expected, tmp_path):
    done = equilibrium(*args, cwd=tmp_path)
    assert done.returncode == 2, f"bad input must exit 2 (docs/command-line.md); {done}"
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("qhat: error:"), (
        f"bad input must give exactly one 'qhat: error:' line; {done}")
    assert expected in lines[0], f"the error line must contain {expected!r}; got {lines[0]!r}"
    assert "Traceback" not in done.stderr and done.stdout == "", (
        f"bad input must print no traceback and nothing on stdout; {done}")
    left = list(tmp_path.iterdir())
    assert left == [], f"bad input wrote files: {left}"


def test_parse_options_in_process():
    """The same validation without a subprocess (InputError names option and value)."""
    import argparse

    from infer.commands import equilibrium as command
    from infer.errors import InputError

    parser = argparse.ArgumentParser()
    command.add_arguments(parser)
    with pytest.raises(InputError, match=r"^--s: 1\.5 is above 1$"):
        command.parse_options(parser.parse_args(["--mu", "1e-5", "--s", "1.5", "--h", "0"]))
    options = command.parse_options(parser.parse_args(["--mu", "1e-5", "--s", "1", "--h", "0"]))
    # documented defaults (qhat equilibrium --help): F = 0, alpha = 1
    assert options["F"] == 0.0 and options["alpha"] == 1.0, (
        f"defaults must be F = 0 and alpha = 1; got F = {options['F']}, "
        f"alpha = {options['alpha']}")
    assert options["mu"] == 1e-5, f"--mu 1e-5 parsed as {options['mu']}"
