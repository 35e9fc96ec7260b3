"""``qhat equilibrium`` end to end, through ``python -m infer`` in a subprocess."""

import json
import re
import subprocess
import sys

import numpy as np
import pytest

from infer.core import balance


def qhat(*args):
    return subprocess.run([sys.executable, "-m", "infer", "equilibrium", *args],
                          capture_output=True, text=True, timeout=120)


def test_table_default():
    done = qhat("--mu", "1e-5", "--s", "0.1", "--h", "0.5")
    assert done.returncode == 0, done.stderr
    out = done.stdout
    for text in ("exact equilibrium q_hat", "mu/(hs)", "sqrt(mu/s)", "quadratic",
                 "mutation load", "dominant", "recessive", "in range"):
        assert text in out
    assert f"{float(balance.q_hat(1e-5, 0.1, 0.5)):.10g}" in out


def test_json_autosomal():
    done = qhat("--mu", "2e-6", "--s", "0.3", "--h", "0.2", "--F", "0.01", "--nu", "1e-8",
                "--penetrance", "0.9", "--json")
    assert done.returncode == 0, done.stderr
    result = json.loads(done.stdout)
    exact = balance.autosomal_balance(2e-6, 0.3, 0.2, 0.01, 1e-8)
    assert result["q_hat"] == float(exact.q_hat) and result["load"] == float(exact.load)
    assert set(result["approximations"]) == {"mu/(hs)", "sqrt(mu/s)", "mu/(s(h(1-F)+F))",
                                             "quadratic"}
    for entry in result["approximations"].values():
        assert {"value", "relative_error", "in_range"} <= set(entry)
    assert set(result["affected"]) == {"dominant", "recessive", "x-linked-male"}
    _, het, hom = balance.genotype_frequencies(exact.q_hat, 0.01)
    assert result["affected"]["recessive"] == pytest.approx(0.9 * float(hom), rel=1e-12)
    assert result["regime"] == "mutation-selection balance"


def test_json_x_linked():
    done = qhat("--mu", "1e-5", "--s", "1", "--h", "0", "--inheritance", "x-linked",
                "--alpha", "1", "--json")
    assert done.returncode == 0, done.stderr
    result = json.loads(done.stdout)
    for key in ("q_male", "q_female", "q_hat", "load_male", "load_female",
                "new_mutation_share", "approximations", "affected"):
        assert key in result
    # Haldane 1935, J. Genet. 31:317: 3mu/s in sons, one third new mutants (s = 1).
    assert result["q_male"] == pytest.approx(3e-5, rel=1e-3)
    assert result["new_mutation_share"] == pytest.approx(1 / 3, rel=1e-3)
    assert result["affected"]["x-linked-male"] == pytest.approx(result["q_male"])


def test_json_no_equilibrium_is_null_with_regime():
    done = qhat("--mu", "1e-2", "--s", "1e-3", "--h", "0.3", "--json")
    assert done.returncode == 0, done.stderr
    result = json.loads(done.stdout)
    assert result["q_hat"] is None and result["load"] is None
    assert "mutation overwhelms selection" in result["regime"]
    table = qhat("--mu", "1e-2", "--s", "1e-3", "--h", "0.3")
    assert "mutation overwhelms selection" in table.stdout
    assert re.search(r"\bnan\b", table.stdout) is None


def test_plot_written(tmp_path):
    path = tmp_path / "balance.png"
    done = qhat("--mu", "1e-5", "--s", "0.1", "--h", "0.2", "--plot", str(path))
    assert done.returncode == 0, done.stderr
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 10_000
    assert [p.name for p in tmp_path.iterdir()] == ["balance.png"]  # no temporary left


def test_stationary_with_drift():
    drift = pytest.importorskip("infer.core.drift.stationary")
    if not hasattr(drift, "stationary_summary"):
        pytest.skip("drift model not built yet")
    done = qhat("--mu", "1e-5", "--s", "0.01", "--h", "0.5", "--nu", "1e-6", "--Ne", "1000",
                "--sample", "500", "--interval", "0.9", "--json")
    assert done.returncode == 0, done.stderr
    result = json.loads(done.stdout)
    st = result["stationary"]
    assert set(st) >= {"mean", "median", "lower", "upper"}
    assert st["lower"] <= st["median"] <= st["upper"]
    assert 0 <= result["probability_absent"] <= 1


BAD = [
    (["--mu", "-1e-5", "--s", "0.1", "--h", "0.5"], "--mu: -1e-5 is negative"),
    (["--mu=-2e-5", "--s", "0.1", "--h", "0.5"], "--mu: -2e-5 is negative"),
    (["--mu", "abc", "--s", "0.1", "--h", "0.5"], "--mu: 'abc' is not a number"),
    (["--mu", "nan", "--s", "0.1", "--h", "0.5"], "--mu"),
    (["--mu", "1e-5", "--s", "1.5", "--h", "0.5"], "--s: 1.5 is above 1"),
    (["--mu", "1e-5", "--s", "0", "--h", "0.5"], "--s: 0"),
    (["--mu", "1e-5", "--s", "-0.1", "--h", "0.5"], "--s: -0.1 is negative"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "1.2"], "--h: 1.2 is above 1"),
    (["--mu", "1e-5", "--s", "0.1", "--h", "-0.2"], "--h: -0.2"),
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
    done = subprocess.run([sys.executable, "-m", "infer", "equilibrium", *args],
                          capture_output=True, text=True, timeout=120, cwd=tmp_path)
    assert done.returncode == 2
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("qhat: error:"), done.stderr
    assert expected in lines[0]
    assert "Traceback" not in done.stderr and done.stdout == ""
    assert list(tmp_path.iterdir()) == []


def test_parse_options_in_process():
    """The same validation without a subprocess (InputError names option and value)."""
    import argparse

    from infer.commands import equilibrium
    from infer.errors import InputError

    parser = argparse.ArgumentParser()
    equilibrium.add_arguments(parser)
    with pytest.raises(InputError, match=r"^--s: 1\.5 is above 1$"):
        equilibrium.parse_options(parser.parse_args(["--mu", "1e-5", "--s", "1.5", "--h", "0"]))
    options = equilibrium.parse_options(parser.parse_args(["--mu", "1e-5", "--s", "1", "--h", "0"]))
    assert options["F"] == 0.0 and options["alpha"] == 1.0 and np.isfinite(options["mu"])
