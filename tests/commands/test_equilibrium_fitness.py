"""``qhat equilibrium`` with general genotype fitness: h < 0, h > 1, and --w-AA/--w-Aa/--w-aa.

References: Fisher (1922, "On the dominance ratio", Proc. Roy. Soc. Edinburgh 42:321), the
balanced polymorphism t/(s' + t) of fitnesses AA 1 - t, Aa 1, aa 1 - s' when mu -> 0; its
segregational load s't/(s' + t) (Crow & Kimura 1970, ch. 5; from memory).
"""

import json

import pytest
from conftest import call_qhat


def _json(capsys, *argv):
    status, out, err = call_qhat(["equilibrium", *argv, "--json"], capsys)
    assert status == 0, f"{argv} must exit 0; stderr {err}"
    return json.loads(out)


def test_fitnesses_reproduce_fisher(capsys):
    t, s_prime = 0.02, 0.05
    done = _json(capsys, "--mu", "1e-9", "--w-AA", str(1 - t), "--w-Aa", "1",
                 "--w-aa", str(1 - s_prime))
    assert done["q_hat"] == pytest.approx(t / (s_prime + t), rel=1e-6), (
        f"q_hat {done['q_hat']} vs Fisher's (1922) t/(s'+t) = {t / (s_prime + t)}")
    assert done["parameters"]["h"] == pytest.approx(-t / (s_prime - t), rel=1e-12), (
        "h = -t/(s'-t) on qhat's scale (derived: divide the fitnesses by w_AA)")
    assert done["load"] == pytest.approx(s_prime * t / (s_prime + t), rel=1e-5), (
        "load relative to the heterozygote: s't/(s'+t) (Crow & Kimura 1970, from memory)")
    assert done["fitnesses"] == {"w_AA": 1 - t, "w_Aa": 1.0, "w_aa": 1 - s_prime}
    assert done["approximations"]["overdominant"]["in_range"] is True
    assert "heterozygote advantage" in done["regime"]


def test_h_above_one_is_a_rare_allele(capsys):
    """h > 1, rare allele: q ≈ mu/(hs) (Haldane 1927, the rare-allele form; its error is
    about |1-2h| mu/(h² s), derived here: the quadratic's q² term (1-2h)s q² against the
    linear hs q gives a relative correction |1-2h| q/h ≈ 6e-6 at these values)."""
    done = _json(capsys, "--mu", "1e-6", "--s", "0.1", "--h", "3")
    assert done["q_hat"] == pytest.approx(1e-6 / 0.3, rel=1e-4), (
        f"q_hat {done['q_hat']} vs mu/(hs) = {1e-6 / 0.3}")


@pytest.mark.parametrize("argv, message", [
    (["--s", "0.5", "--h", "3"], "--h: 3 with s = 0.5 gives the heterozygote the fitness"),
    (["--s", "0.1", "--h", "-1", "--inheritance", "x-linked"], "--h: -1 is outside [0, 1]"),
    (["--s", "0.1", "--h", "-1", "--nu", "1e-8", "--Ne", "100"], "(not with --Ne)"),
    (["--w-AA", "0.9", "--w-Aa", "1", "--w-aa", "0.95"], "--w-aa: 0.95 is not below --w-AA"),
    (["--w-AA", "1", "--w-Aa", "1.1"], "--w-aa: missing"),
    (["--s", "0.1", "--w-AA", "1", "--w-Aa", "1.1", "--w-aa", "0.9"], "--s: 0.1: give either"),
    (["--s", "0.1"], "--h: missing"),
    (["--w-AA", "0", "--w-Aa", "1", "--w-aa", "0"], "--w-AA: 0 must be above 0"),
])
def test_refusals(capsys, argv, message):
    status, out, err = call_qhat(["equilibrium", "--mu", "1e-6", *argv], capsys)
    assert status == 2 and message in err and not out, (
        f"{argv}: expected exit 2 and {message!r}; got {status}, {err!r}")
    assert len(err.strip().splitlines()) == 1, f"one line on stderr, got {err!r}"
