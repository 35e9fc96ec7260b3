"""Every command's bad options: exit status 2, one line naming the option and the value,
nothing written (docs/command-line.md; the wording is infer.commands.options).

Each case is run in this process through ``infer.cli.main`` (conftest.call_qhat) with
every output path inside the test's own folder, so "nothing written" is checked by
listing that folder before and after.
"""

from __future__ import annotations

import argparse

import pytest
from conftest import DEMO, call_qhat

from infer.commands import options
from infer.errors import InputError

EQUILIBRIUM = ["equilibrium", "--mu", "1e-5", "--s", "0.1", "--h", "0.5"]
SIMULATE = ["simulate", "--Ne", "50", "--mu", "1e-3", "--s", "0.1", "--h", "0.5",
            "--replicates", "2", "--generations", "20"]
STUDY = DEMO / "island-dominant.toml"
CLAIM = DEMO / "claim-northholm-indirect.toml"
LOCI = DEMO / "batch_loci.csv"

# (command line after the base, the exact error line after "qhat: error: ")
CASES = {
    "equilibrium": [
        (["--mu", "abc"], "--mu: 'abc' is not a number"),
        (["--mu", "-1e-5"], "--mu: -1e-5 is negative"),
        (["--s", "1.5"], "--s: 1.5 is above 1"),
        (["--s", "0"], "--s: 0 needs --Ne (and --nu > 0): without selection there is no "
         "mutation-selection balance; with --Ne it is Wright's neutral distribution"),
        (["--h", "nan"], "--h: nan is not a finite number"),
        (["--F", "1"], "--F: 1 must be below 1"),
        (["--penetrance", "inf"], "--penetrance: inf is not a finite number"),
        (["--inheritance", "y-linked"],
         "--inheritance: 'y-linked' is not one of autosomal, x-linked"),
        (["--alpha", "2"], "--alpha: 2 applies to x-linked loci only"),
        (["--sample", "10"], "--sample: 10 needs --Ne"),
        (["--nu", "1e-6", "--Ne", "100", "--sample", "2.5"],
         "--sample: 2.5 is not a whole number"),
        (["--interval", "0.9"], "--interval: 0.9 needs --Ne"),
        (["--plot", "q.jpg"], "--plot: q.jpg must end in .png"),
        (["--mu"], "--mu: expected one argument"),
    ],
    "simulate": [
        (["--Ne", "0"], "--Ne: 0 must be above 0"),
        (["--Ne", "0.2"], "--Ne: 0.2 is too small: 2Ne must be at least 1 gene"),
        (["--Ne", "ten"], "--Ne: 'ten' is not a number"),
        (["--nu", "1"], "--nu: 1 must be below 1"),
        (["--replicates", "0"], "--replicates: 0 must be at least 1"),
        (["--replicates", "2.5"], "--replicates: 2.5 is not a whole number"),
        (["--thin", "abc"], "--thin: 'abc' is not a number"),
        (["--seed", "-1"], "--seed: -1 is negative"),
        (["--burn-in", "20"], "--burn-in: 20 must be below --generations 20"),
        (["--replicates", "100000", "--generations", "1000000"],
         "--replicates: 100000 replicates x 800000 kept generations is more than 50000000 "
         "values; use --thin or fewer replicates"),
        (["--plot", "sim.gif"], "--plot: sim.gif must end in .png"),
        (["--q0", "1.5"], "--q0: 1.5 is above 1"),
    ],
    # options are checked before the report folder is read (it does not exist here)
    "forecast": [
        (["--generations", "-3"], "--generations: -3 is negative"),
        (["--generations", "2.5"], "--generations: 2.5 is not a whole number"),
        (["--set", "Ne=10"],
         "--set: 'Ne' is not one of s, h, mu, F, nu, alpha, penetrance, s_male, s_female"),
        (["--set", "s=1.5"], "--set s: 1.5 is above 1"),
        (["--set", "penetrance=0"], "--set penetrance: 0 must be above 0"),
        (["--mode", "both"], "--mode: 'both' is not one of dominant, recessive"),
    ],
    "compare": [
        (["--models", "drift"], '--models: "drift" is not allowed; must be one of balance, '
         "heterozygote-advantage, founder"),
        (["--models", "balance,balance"], '--models: "balance" is named twice'),
        (["--method", "nested"], "--method: 'nested' is not one of auto, quadrature, bridge"),
        (["--seed", "-3"], "--seed: -3 is negative"),
    ],
    "estimate": [
        (["--seed", "abc"], "--seed: 'abc' is not a number"),
        (["--seed", "-3"], "--seed: -3 is negative"),
        (["--seed", "1.5"], "--seed: 1.5 is not a whole number"),
    ],
    "check": [
        (["--threshold", "abc"], "--threshold: 'abc' is not a number"),
        (["--threshold", "0"], "--threshold: 0 must be above 0"),
        (["--threshold", "1"], "--threshold: 1 must be below 1"),
        (["--threshold", "2"], "--threshold: 2 is above 1"),
    ],
    "batch": [
        (["--model", "stochastic"], "--model: 'stochastic' is not one of deterministic, drift"),
        (["--prior", "flat"], "--prior: 'flat' is not one of log-uniform, empirical"),
        (["--s-low", "0"], "--s-low: 0 must be above 0"),
        (["--s-low", "0.3", "--s-high", "0.2"], "--s-low: 0.3 must be below --s-high 0.2"),
        (["--s-high", "0.6"],
         "--s-high: 0.6 is above 0.5 (aa fitness 1 - 2 s_het would be negative)"),
        (["--grid-points", "10"], "--grid-points: 10 must be at least 20"),
        (["--interval", "1"], "--interval: 1 must be below 1"),
        (["--mu-level", "abc"], "--mu-level: 'abc' is not a number"),
        (["--jobs", "1.5"], "--jobs: 1.5 is not a whole number"),
        (["--chunk-size", "0"], "--chunk-size: 0 must be at least 1"),
        (["--Ne", "100"], "--Ne: --Ne applies only with --model drift"),
        (["--model", "drift"], "--Ne: the drift model needs --Ne"),
        (["--model", "drift", "--Ne", "100", "--nu", "0"],
         "--nu: 0 must be above 0 for Wright's density"),
        (["--jobs", "2", "--scheduler", "tcp://127.0.0.1:1"],
         "--jobs: give either --jobs or --scheduler, not both"),
    ],
}


def _base(command: str, folder) -> list:
    out = folder / "out"
    return {"equilibrium": EQUILIBRIUM,
            "simulate": SIMULATE,
            "estimate": ["estimate", STUDY, "--out", out],
            "compare": ["compare", STUDY, "--out", out],
            "check": ["check", CLAIM, "--out", out],
            "batch": ["batch", LOCI, "--out", out],
            "forecast": ["forecast", folder.parent / "no-report", "--generations", "5",
                         "--out", out]}[command]


def _merge(base: list, extra: list) -> list:
    """``base`` with each ``--option value`` of ``extra`` replacing or adding to it."""
    argv = [str(a) for a in base]
    index = 0
    while index < len(extra):
        option = extra[index]
        value = extra[index + 1: index + 2]
        if option in argv and value:
            argv[argv.index(option) + 1] = value[0]
        else:
            argv += [option, *value]
        index += 2
    return argv


@pytest.mark.parametrize(("command", "extra", "expected"),
                         [(c, e, x) for c, cases in CASES.items() for e, x in cases],
                         ids=[f"{c} {' '.join(e)}" for c, cases in CASES.items() for e, _ in cases])
def test_bad_option_is_one_line_exit_2_and_writes_nothing(tmp_path, monkeypatch, capsys,
                                                          command, extra, expected):
    monkeypatch.chdir(tmp_path)
    argv = _merge(_base(command, tmp_path), extra)
    status, stdout, stderr = call_qhat(argv, capsys)
    assert status == 2, f"qhat {' '.join(argv)} exited {status}, not 2: {stderr}"
    assert stderr == f"qhat: error: {expected}\n", (
        f"want exactly one line 'qhat: error: {expected}'; got {stderr!r}")
    assert stdout == "", f"nothing belongs on stdout for bad input: {stdout!r}"
    assert list(tmp_path.iterdir()) == [], f"bad input wrote {list(tmp_path.iterdir())}"


def test_every_command_with_options_is_covered():
    """Each command whose options carry values appears in the catalogue above."""
    from infer.cli import COMMANDS

    assert set(COMMANDS) - {"demo"} == set(CASES), (
        f"commands without bad-option cases: {sorted(set(COMMANDS) - {'demo'} - set(CASES))}")


# --- the converters themselves ---------------------------------------------------------

def test_number_returns_the_value_typed():
    """Definition: the decimal text's nearest double (Python float), ints for whole numbers."""
    assert options.number("1e-5", "--mu") == 1e-5
    assert options.number("1e3", "--n", options.Range(low=1, whole=True)) == 1000
    assert isinstance(options.number("12", "--n", options.Range(whole=True)), int)
    assert options.number(None, "--mu") is None, "an option not given stays None"
    assert options.number(0.5, "--h", options.Range(0.0, 1.0)) == 0.5, "numbers pass through"


@pytest.mark.parametrize(("value", "accepted", "message"), [
    ("true", options.Range(), "'true' is not a number"),
    (True, options.Range(), "True is not a number"),
    ("-inf", options.Range(), "-inf is not a finite number"),
    ("0.5", options.Range(low=1.0), "0.5 must be at least 1"),
    ("-2", options.Range(low=-1.0), "-2 must be at least -1"),
])
def test_number_messages(value, accepted, message):
    with pytest.raises(InputError) as caught:
        options.number(value, "--x", accepted)
    assert str(caught.value) == f"--x: {message}", str(caught.value)


def test_equilibrium_defaults_are_the_documented_ones():
    """qhat equilibrium --help: F = 0, nu = 0, alpha = 1, penetrance = 1, interval 0.95."""
    from infer.commands import equilibrium

    parser = argparse.ArgumentParser()
    equilibrium.add_arguments(parser)
    parsed = options.equilibrium_options(parser.parse_args(EQUILIBRIUM[1:]))
    assert (parsed["F"], parsed["nu"], parsed["alpha"], parsed["penetrance"],
            parsed["interval"]) == (0.0, 0.0, 1.0, 1.0, 0.95), parsed


def test_simulate_burn_in_defaults_to_a_fifth():
    from infer.commands import simulate

    parser = argparse.ArgumentParser()
    simulate.add_arguments(parser)
    args = parser.parse_args(SIMULATE[1:] + ["--generations", "1000"])
    options.simulate_options(args)
    assert (args.burn_in, args.generations, args.replicates) == (200, 1000, 2), vars(args)
    assert isinstance(args.Ne, float) and isinstance(args.thin, int), vars(args)
