"""Wright–Fisher simulation (infer.core.wright_fisher) and ``qhat simulate``.

Sources: the neutral Wright–Fisher martingale E[q_t] = q_0 and heterozygosity decay
E[2q(1-q)]_t = (1 - 1/(2N))^t · 2q_0(1-q_0) (Wright 1931, Genetics 16:97; common practice);
Wright's stationary density (infer.core.drift.stationary, itself checked against closed
forms and mpmath in tests/core/test_drift.py).
"""

from __future__ import annotations

import json

import mpmath
import numpy as np
import pytest
from conftest import run_qhat

from infer.core.drift import stationary as drift
from infer.core.wright_fisher import next_generation_expected, wright_fisher
from infer.errors import InputError


def test_expected_map_has_the_deterministic_equilibrium_as_fixed_point():
    """The life cycle's expected map leaves infer.core.balance.q_hat unchanged (docs/model.md:
    the same selection-then-mutation recursion defines q_hat)."""
    from infer.core.balance import q_hat

    for mu, s, h, nu in [(1e-5, 0.1, 0.5, 0.0), (1e-4, 1.0, 0.0, 0.0), (1e-3, 0.05, 0.9, 1e-4)]:
        q = float(q_hat(mu, s, h, nu=nu))
        after = float(next_generation_expected(q, mu, s, h, nu))
        assert after == pytest.approx(q, rel=1e-10), (
            f"q_hat {q!r} is not a fixed point of the expected map at (mu, s, h, nu) = "
            f"{(mu, s, h, nu)}: one generation gives {after!r}")


def test_expected_map_by_hand():
    """One generation written out: q = 0.2, s = 0.5, h = 0.5, mu = 0.01, nu = 0.001 (derived):
    w̄ = 0.64 + 0.32·0.75 + 0.04·0.5 = 0.9; q_sel = (0.16·0.75 + 0.04·0.5)/0.9 = 0.14/0.9."""
    q_sel = 0.14 / 0.9
    expected = q_sel * (1 - 0.001) + (1 - q_sel) * 0.01
    got = float(next_generation_expected(0.2, 0.01, 0.5, 0.5, 0.001))
    assert got == pytest.approx(expected, rel=1e-14), (
        f"one generation from q = 0.2 gives {got!r}; by hand {expected!r}")


def test_neutral_martingale_and_heterozygosity_decay():
    """No mutation or selection: E[q_t] = q_0 and E[2pq]_t = 2p_0q_0(1 - 1/(2N))^t (Wright 1931;
    common practice), checked within 4 Monte Carlo standard errors."""
    N, q0, t, R = 20, 0.3, 30, 20_000
    result = wright_fisher(
        N,
        0.0,
        0.0,
        0.5,
        0.0,
        rng=np.random.default_rng(5),
        replicates=R,
        generations=t,
        burn_in=t - 1,
        initial=q0,
    )
    q = result.trajectories[:, -1]
    se = q.std() / np.sqrt(R)
    assert abs(q.mean() - q0) < 4 * se, (
        f"neutral E[q_t] must stay q_0 = {q0}: mean {q.mean():.5f} is more than 4 standard "
        f"errors ({se:.2g}) away")
    het = 2 * q * (1 - q)
    expected = 2 * q0 * (1 - q0) * (1 - 1 / (2 * N)) ** t
    se = het.std() / np.sqrt(R)
    assert abs(het.mean() - expected) < 4 * se, (
        f"E[2pq] after {t} generations must be 2p0q0(1 - 1/2N)^t = {expected:.5f}: mean "
        f"{het.mean():.5f} is more than 4 standard errors ({se:.2g}) away")


def test_seeded_runs_repeat_and_shapes_follow_burn_in_and_thin():
    kwargs = dict(replicates=7, generations=100, burn_in=10, thin=3)
    one = wright_fisher(50, 1e-3, 0.05, 0.5, 1e-4, rng=np.random.default_rng(9), **kwargs)
    two = wright_fisher(50, 1e-3, 0.05, 0.5, 1e-4, rng=np.random.default_rng(9), **kwargs)
    np.testing.assert_array_equal(one.trajectories, two.trajectories,
                                  err_msg="the same seed must give the same trajectories")
    shape = (7, len(range(10, 100, 3)))
    assert one.trajectories.shape == shape, (
        f"7 replicates, generations 10..99 every 3rd: shape must be {shape}, got "
        f"{one.trajectories.shape}")
    np.testing.assert_array_equal(one.generations, np.arange(10, 100, 3),
                                  err_msg="recorded generations must be range(burn_in, end, thin)")
    assert one.genes == 100, f"Ne = 50 diploids carry 2Ne = 100 genes; got {one.genes}"
    counts = one.trajectories * 100  # frequencies are counts of 2Ne genes
    np.testing.assert_allclose(counts, np.round(counts), atol=1e-9,
                               err_msg="frequencies must be whole counts out of 2Ne = 100")


@pytest.mark.parametrize(
    "kwargs, field", [(dict(Ne=0), "Ne"), (dict(s=2.0), "s"), (dict(burn_in=100), "burn_in")]
)
def test_bad_arguments_raise_input_error(kwargs, field):
    params = dict(Ne=10, mu=1e-3, s=0.1, h=0.5, nu=0.0, burn_in=0, generations=100) | kwargs
    with pytest.raises(InputError) as error:
        wright_fisher(
            params.pop("Ne"),
            params.pop("mu"),
            params.pop("s"),
            params.pop("h"),
            params.pop("nu"),
            rng=np.random.default_rng(0),
            **params,
        )
    assert error.value.field == field, (
        f"{kwargs} must be rejected naming {field!r}; the error names {error.value.field!r}")


# Settings where the diffusion approximation should hold: Ne in the hundreds, mu and s small
# (≤ 0.025) so that per-generation changes are small, 4Ne·s moderate (0–40), and 4Ne·mu of
# order 1 so that the allele is rarely lost for long; mass near q = 1 is negligible except in
# the neutral case, where 4Ne·nu = 1 keeps the chains mixing. Each run: ~5e6 binomial draws.
DIFFUSION_SETTINGS = [
    (500, 5e-4, 0.01, 0.5, 5e-5),  # additive, 4Ne·s = 20
    (500, 1e-3, 0.02, 0.0, 1e-4),  # complete recessive, 4Ne·s = 40
    (400, 1e-3, 0.025, 1.0, 1e-4),  # complete dominance, 4Ne·s = 40
    (200, 2.5e-3, 0.0, 0.5, 1.25e-3),  # neutral: Beta(2, 1)
]


@pytest.mark.slow
@pytest.mark.parametrize("Ne, mu, s, h, nu", DIFFUSION_SETTINGS)
def test_simulation_agrees_with_wright_density(Ne, mu, s, h, nu):
    """Long-run mean and quartiles of 1500 replicates × 8000 generations (after 2000 of
    burn-in, every 4th kept) match Wright's stationary density within 4 Monte Carlo standard
    errors (from the spread over independent replicates). Quartiles are compared through the
    continuity-corrected empirical CDF at Wright's quartile x_p: each simulated frequency k/2N
    is spread uniformly over its lattice cell, so F_sim(x_p) should be p."""
    result = wright_fisher(
        Ne,
        mu,
        s,
        h,
        nu,
        rng=np.random.default_rng(2026),
        replicates=1500,
        generations=10_000,
        burn_in=2_000,
        thin=4,
    )
    wright = drift.stationary_summary(Ne, mu, s, h, nu, interval=0.5)
    setting = f"(Ne, mu, s, h, nu) = {(Ne, mu, s, h, nu)}"
    assert abs(result.mean - wright["mean"]) < 4 * result.mean_standard_error, (
        f"{setting}: simulated mean {result.mean:.5g} vs Wright's {float(wright['mean']):.5g}, "
        f"more than 4 standard errors ({result.mean_standard_error:.2g}) apart")
    assert result.sd == pytest.approx(wright["sd"], rel=0.1), (
        f"{setting}: simulated sd {result.sd:.4g} vs Wright's {float(wright['sd']):.4g} (10 %)")
    for p, key in [(0.25, "lower"), (0.5, "median"), (0.75, "upper")]:
        per_replicate = np.clip(
            (wright[key] - result.trajectories) * result.genes + 0.5, 0, 1
        ).mean(axis=1)
        se = per_replicate.std(ddof=1) / np.sqrt(len(per_replicate))
        assert abs(per_replicate.mean() - p) < 4 * se, (
            f"{setting}: the simulated CDF at Wright's {p} quantile is "
            f"{per_replicate.mean():.4f}, more than 4 standard errors ({se:.2g}) from {p}")


# ------------------------------------------------------------------ command line
def _qhat(*args, **options):
    return run_qhat("simulate", *args, timeout=120, **options)


def test_cli_json_reports_simulation_and_wright_density():
    out = _qhat(
        "--Ne",
        "50",
        "--mu",
        "2e-3",
        "--s",
        "0.05",
        "--h",
        "0.5",
        "--nu",
        "2e-4",
        "--replicates",
        "50",
        "--generations",
        "2000",
        "--seed",
        "3",
        "--json",
    )
    assert out.returncode == 0, f"a valid simulation must exit 0; {out}"
    doc = json.loads(out.stdout)
    for key in ("mean", "sd", "quantiles", "mean_standard_error", "wright", "seed"):
        assert key in doc, f"simulate --json lacks {key!r}; has {sorted(doc)}"
    quantiles = {"0.025", "0.25", "0.5", "0.75", "0.975"}
    assert set(doc["quantiles"]) == quantiles, f"quantile keys {sorted(doc['quantiles'])}"
    # h = 1/2: Wright's mean is Z(a+1, b)/Z(a, b) with Z(A, B) = B(A,B)·1F1(A; A+B; -c),
    # a = 4Ne·mu, b = 4Ne·nu, c = 2Ne·s (Kummer's integral, derived; REFERENCES.md)
    with mpmath.workdps(30):
        a, b, c = 4 * 50 * 2e-3, 4 * 50 * 2e-4, 2 * 50 * 0.05

        def z(A, B):
            return mpmath.beta(A, B) * mpmath.hyp1f1(A, A + B, -c)

        expected = float(z(a + 1, b) / z(a, b))
    assert doc["wright"]["mean"] == pytest.approx(expected, rel=1e-9), (
        f"JSON Wright mean {doc['wright']['mean']} vs Kummer closed form {expected}")
    library = wright_fisher(
        50,
        2e-3,
        0.05,
        0.5,
        2e-4,
        rng=np.random.default_rng(3),
        replicates=50,
        generations=2000,
        burn_in=400,
    )
    # the simulated mean is the library's simulation for the same seed (a consistency check:
    # the simulation itself is checked against Wright's density above)
    assert doc["mean"] == pytest.approx(library.mean, rel=1e-12), (
        f"same seed, same answer: JSON mean {doc['mean']} vs library run {library.mean} "
        "(default burn-in must be generations / 5 = 400)")


def test_cli_text_without_back_mutation_says_density_needs_nu():
    out = _qhat(
        "--Ne",
        "20",
        "--mu",
        "1e-3",
        "--s",
        "0.1",
        "--h",
        "0.5",
        "--generations",
        "200",
        "--replicates",
        "5",
        "--seed",
        "1",
    )
    assert out.returncode == 0, f"a simulation without back mutation must exit 0; {out}"
    assert "time-averaged q" in out.stdout and "needs --nu > 0" in out.stdout, (
        f"without --nu the text must give the time-averaged q and say Wright's density "
        f"needs --nu > 0; {out}")


@pytest.mark.slow
def test_cli_plot_writes_a_labelled_png(tmp_path):
    target = tmp_path / "sim.png"
    out = _qhat(
        "--Ne",
        "30",
        "--mu",
        "2e-3",
        "--s",
        "0.05",
        "--h",
        "0.3",
        "--nu",
        "1e-3",
        "--generations",
        "500",
        "--replicates",
        "20",
        "--seed",
        "2",
        "--plot",
        str(target),
    )
    assert out.returncode == 0, f"simulate --plot must exit 0; {out}"
    data = target.read_bytes()
    # PNG signature (W3C PNG specification 2003, 5.2); a labelled two-panel plot is > 10 kB
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 10_000, (
        f"sim.png must be a PNG of some size; starts {data[:8]!r}, {len(data)} bytes")
    left = [p.name for p in tmp_path.iterdir()]
    assert left == ["sim.png"], f"a temporary file was left beside the plot: {left}"


def test_plot_axes_are_labelled():
    """Left: the first ten trajectories, as simulated; right: a density histogram (area 1,
    derived from density=True) under Wright's density evaluated at its own x."""
    import argparse

    from infer.reporting.plots.simulation import simulation_figure as figure

    result = wright_fisher(
        30,
        2e-3,
        0.05,
        0.3,
        1e-3,
        rng=np.random.default_rng(1),
        replicates=12,
        generations=300,
        burn_in=50,
    )
    args = argparse.Namespace(Ne=30, mu=2e-3, s=0.05, h=0.3, nu=1e-3, replicates=12)
    wright = {k: float(v) for k, v in drift.stationary_summary(30, 2e-3, 0.05, 0.3, 1e-3).items()}
    fig = figure(result, args, wright)
    left, right = fig.axes
    assert left.get_xlabel() == "generation" and "frequency" in left.get_ylabel(), (
        f"left axis labels: {left.get_xlabel()!r}, {left.get_ylabel()!r}")
    assert len(left.lines) == 10, f"10 of 12 trajectories must be drawn; {len(left.lines)} were"
    for row, line in enumerate(left.lines):
        x, y = line.get_data()
        np.testing.assert_array_equal(x, result.generations,
                                      err_msg=f"trajectory {row}: x must be the generations")
        np.testing.assert_array_equal(y, result.trajectories[row],
                                      err_msg=f"trajectory {row}: y must be its frequencies")
    assert right.get_xlabel() == "frequency q" and right.get_ylabel() == "probability density", (
        f"right axis labels: {right.get_xlabel()!r}, {right.get_ylabel()!r}")
    assert len(right.patches) > 0 and len(right.lines) == 1, (
        f"right axes must hold a histogram and one density line; {len(right.patches)} bars, "
        f"{len(right.lines)} lines")
    area = sum(bar.get_width() * bar.get_height() for bar in right.patches)
    assert area == pytest.approx(1.0, rel=1e-9), f"a density histogram has area 1; got {area}"
    x, y = right.lines[0].get_data()
    np.testing.assert_allclose(y, drift.stationary_density(x, 30, 2e-3, 0.05, 0.3, 1e-3),
                               rtol=1e-12, err_msg="the line must be Wright's density at its x")


@pytest.mark.parametrize(
    "args, needle",
    [
        (["--Ne", "0"], "--Ne: 0"),
        (["--Ne", "10", "--mu", "-1"], "--mu: -1"),
        (["--Ne", "10", "--h", "2"], "--h: 2"),
        (["--Ne", "10", "--nu", "1"], "--nu: 1"),
        (["--Ne", "10", "--burn-in", "500", "--generations", "100"], "--burn-in: 500"),
        (["--Ne", "10", "--replicates", "0"], "--replicates: 0"),
        (["--Ne", "10", "--plot", "/no/such/folder/x.png"], "--plot"),
        (["--Ne", "10", "--plot", "out.jpg"], "--plot: out.jpg"),
        (["--Ne", "ten"], "--Ne"),
    ],
)
def test_cli_bad_input_is_one_line_and_exit_2(args, needle, tmp_path):
    base = {"--mu": "1e-3", "--s": "0.1", "--h": "0.5"}
    given = dict(zip(args[::2], args[1::2], strict=True))
    full = [item for key, value in (base | given).items() for item in (key, value)]
    out = _qhat(*full, cwd=tmp_path)
    assert out.returncode == 2, f"bad input must exit 2 (docs/command-line.md); {out}"
    lines = out.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("qhat: error:") and needle in lines[0], (
        f"bad input must give one 'qhat: error:' line containing {needle!r}; {out}"
    )
    assert "Traceback" not in out.stderr and out.stdout == "", (
        f"bad input must print no traceback and nothing on stdout; {out}")
    left = list(tmp_path.iterdir())
    assert left == [], f"bad input wrote files: {left}"
