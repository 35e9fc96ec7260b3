"""Wright–Fisher simulation (infer.core.wright_fisher) and ``qhat simulate``.

Sources: the neutral Wright–Fisher martingale E[q_t] = q_0 and heterozygosity decay
E[2q(1-q)]_t = (1 - 1/(2N))^t · 2q_0(1-q_0) (Wright 1931, Genetics 16:97; common practice);
Wright's stationary density (infer.core.drift.stationary, itself checked against closed forms and mpmath).
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from infer.core.drift import stationary as drift
from infer.errors import InputError
from infer.core.wright_fisher import next_generation_expected, wright_fisher


def test_expected_map_has_the_deterministic_equilibrium_as_fixed_point():
    """The life cycle's expected map leaves infer.core.balance.q_hat unchanged (DESIGN.md §2: the
    same selection-then-mutation recursion defines q_hat)."""
    from infer.core.balance import q_hat

    for mu, s, h, nu in [(1e-5, 0.1, 0.5, 0.0), (1e-4, 1.0, 0.0, 0.0), (1e-3, 0.05, 0.9, 1e-4)]:
        q = float(q_hat(mu, s, h, nu=nu))
        assert float(next_generation_expected(q, mu, s, h, nu)) == pytest.approx(q, rel=1e-10)


def test_expected_map_by_hand():
    """One generation written out: q = 0.2, s = 0.5, h = 0.5, mu = 0.01, nu = 0.001 (derived):
    w̄ = 0.64 + 0.32·0.75 + 0.04·0.5 = 0.9; q_sel = (0.16·0.75 + 0.04·0.5)/0.9 = 0.14/0.9."""
    q_sel = 0.14 / 0.9
    expected = q_sel * (1 - 0.001) + (1 - q_sel) * 0.01
    assert float(next_generation_expected(0.2, 0.01, 0.5, 0.5, 0.001)) == pytest.approx(
        expected, rel=1e-14
    )


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
    assert abs(q.mean() - q0) < 4 * q.std() / np.sqrt(R)
    het = 2 * q * (1 - q)
    expected = 2 * q0 * (1 - q0) * (1 - 1 / (2 * N)) ** t
    assert abs(het.mean() - expected) < 4 * het.std() / np.sqrt(R)


def test_seeded_runs_repeat_and_shapes_follow_burn_in_and_thin():
    kwargs = dict(replicates=7, generations=100, burn_in=10, thin=3)
    one = wright_fisher(50, 1e-3, 0.05, 0.5, 1e-4, rng=np.random.default_rng(9), **kwargs)
    two = wright_fisher(50, 1e-3, 0.05, 0.5, 1e-4, rng=np.random.default_rng(9), **kwargs)
    np.testing.assert_array_equal(one.trajectories, two.trajectories)
    assert one.trajectories.shape == (7, len(range(10, 100, 3)))
    np.testing.assert_array_equal(one.generations, np.arange(10, 100, 3))
    assert one.genes == 100
    counts = one.trajectories * 100  # frequencies are counts of 2Ne genes
    np.testing.assert_allclose(counts, np.round(counts), atol=1e-9)


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
    assert error.value.field == field


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
    assert abs(result.mean - wright["mean"]) < 4 * result.mean_standard_error
    assert result.sd == pytest.approx(wright["sd"], rel=0.1)
    for p, key in [(0.25, "lower"), (0.5, "median"), (0.75, "upper")]:
        per_replicate = np.clip(
            (wright[key] - result.trajectories) * result.genes + 0.5, 0, 1
        ).mean(axis=1)
        se = per_replicate.std(ddof=1) / np.sqrt(len(per_replicate))
        assert abs(per_replicate.mean() - p) < 4 * se, (p, per_replicate.mean(), se)


# ------------------------------------------------------------------ command line
def _qhat(*args):
    return subprocess.run(
        [sys.executable, "-m", "infer", "simulate", *args],
        capture_output=True,
        text=True,
        timeout=120,
    )


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
    assert out.returncode == 0, out.stderr
    doc = json.loads(out.stdout)
    for key in ("mean", "sd", "quantiles", "mean_standard_error", "wright", "seed"):
        assert key in doc
    assert set(doc["quantiles"]) == {"0.025", "0.25", "0.5", "0.75", "0.975"}
    expected = drift.stationary_summary(50, 2e-3, 0.05, 0.5, 2e-4)
    assert doc["wright"]["mean"] == pytest.approx(float(expected["mean"]), rel=1e-12)
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
    assert doc["mean"] == pytest.approx(library.mean, rel=1e-12)  # same seed, same answer


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
    assert out.returncode == 0, out.stderr
    assert "time-averaged q" in out.stdout and "needs --nu > 0" in out.stdout


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
    assert out.returncode == 0, out.stderr
    data = target.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 10_000
    assert [p.name for p in tmp_path.iterdir()] == ["sim.png"]  # no temporary left behind


def test_plot_axes_are_labelled():
    import argparse

    from infer.commands.simulate import figure

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
    assert left.get_xlabel() == "generation" and "frequency" in left.get_ylabel()
    assert len(left.lines) == 10
    assert right.get_xlabel() == "frequency q" and right.get_ylabel() == "probability density"
    assert len(right.patches) > 0 and len(right.lines) == 1
    import matplotlib.pyplot as plt

    plt.close(fig)


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
    out = subprocess.run(
        [sys.executable, "-m", "infer", "simulate", *full],
        capture_output=True,
        text=True,
        timeout=60,
        cwd=tmp_path,
    )
    assert out.returncode == 2
    lines = out.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("qhat: error:") and needle in lines[0], (
        out.stderr
    )
    assert "Traceback" not in out.stderr and out.stdout == ""
    assert list(tmp_path.iterdir()) == []
