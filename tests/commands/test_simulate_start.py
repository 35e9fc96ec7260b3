"""``qhat simulate --q0 Q``: every replicate starts at Q.

References outside the simulation: under neutral Wright-Fisher sampling of 2N genes
with no mutation, q is a martingale, E[q_t] = q0, and Var(q_t) = q0 (1 - q0)
(1 - (1 - 1/(2N))^t) (Wright 1931, Evolution in Mendelian populations; Crow & Kimura
1970, ch. 7); the mean over replicates is checked against its own Monte Carlo standard
error, the pooled variance against the formula averaged over the recorded generations.
"""

import json

import numpy as np
import pytest
from conftest import call_qhat, call_qhat_on_terminal

NEUTRAL = ["simulate", "--Ne", "20", "--mu", "0", "--s", "0", "--h", "0.5",
           "--replicates", "4000", "--generations", "10", "--burn-in", "0", "--seed", "7"]


def test_a_neutral_start_at_q0_keeps_its_mean_and_spreads_as_wright_said(capsys):
    q0, genes = 0.3, 40
    status, stdout, err = call_qhat([*NEUTRAL, "--q0", str(q0), "--json"], capsys)
    assert status == 0, err
    document = json.loads(stdout)
    assert document["q0"] == q0
    se = document["mean_standard_error"]
    assert abs(document["mean"] - q0) < 4 * se, (document["mean"], se)
    t = np.arange(1, 11)   # the recorded generations are the first ten after the start
    variance = q0 * (1 - q0) * np.mean(1 - (1 - 1 / genes) ** t)
    assert document["sd"] ** 2 == pytest.approx(variance, rel=0.08)


def test_without_q0_the_start_is_the_equilibrium_and_the_text_says_so(capsys):
    args = ["simulate", "--Ne", "50", "--mu", "1e-3", "--s", "0.1", "--h", "0.5",
            "--replicates", "5", "--generations", "100", "--seed", "1"]
    status, stdout, _ = call_qhat([*args, "--json"], capsys)
    assert status == 0 and json.loads(stdout)["q0"] is None
    status, stdout, _ = call_qhat(args, capsys)
    assert status == 0 and "from the deterministic equilibrium" in stdout, stdout
    status, stdout, _ = call_qhat([*args, "--q0", "0.25"], capsys)
    assert status == 0 and "from q0 = 0.25" in stdout, stdout


def test_q0_zero_without_mutation_stays_at_zero(capsys):
    """q = 0 with mu = 0 is absorbing: no copy can appear (common practice)."""
    status, stdout, err = call_qhat([*NEUTRAL, "--q0", "0", "--json"], capsys)
    assert status == 0, err
    document = json.loads(stdout)
    assert document["mean"] == 0 and document["sd"] == 0


def test_the_progress_bar_is_drawn_with_q0_on_a_terminal():
    status, _, err = call_qhat_on_terminal([*NEUTRAL, "--q0", "0.5"])
    assert status == 0 and "qhat simulate" in err and "100%" in err, err
    status, _, err = call_qhat_on_terminal([*NEUTRAL, "--q0", "0.5", "-q"])
    assert status == 0 and err == "", err


@pytest.mark.parametrize(("value", "needle"), [
    ("1.5", "--q0: 1.5 is above 1"),
    ("-0.1", "--q0: -0.1 is negative"),
    ("half", "--q0: 'half' is not a number"),
    ("nan", "--q0: nan is not a finite number"),
])
def test_a_bad_q0_is_one_line_and_exit_2(capsys, value, needle):
    status, stdout, err = call_qhat([*NEUTRAL, "--q0", value], capsys)
    assert status == 2 and err == f"qhat: error: {needle}\n" and stdout == "", err
