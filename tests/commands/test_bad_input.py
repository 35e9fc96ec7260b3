"""The bad-input catalogue: malformed study, claim and batch files a user plausibly
writes. Each must end with exit status 2 and exactly one line on stderr that starts
``qhat: error:`` and names the place (file and field, or line and column), with no
traceback, and nothing written (docs/command-line.md, 'Exit status')."""

from __future__ import annotations

from pathlib import Path

import pytest
from conftest import DEMO, call_qhat

STUDY = """\
title = "Catalogue base study"
inheritance = "autosomal"
model = "deterministic"
interval = 0.95

[parameters]
mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }
s = { prior = "uniform", low = 0.0, high = 1.0 }
h = 1.0

[[observations]]
label = "births"
kind = "affected"
affected = 19
total = 182400
mode = "dominant"

[[observations]]
label = "new mutations"
kind = "sporadic"
cases = 15
births = 182400
mode = "dominant"

[[observations]]
label = "fertility"
kind = "fertility"
affected_people = 64
affected_children = 27
reference_people = 310
reference_children = 655
mode = "dominant"
"""

# (case id, text replaced, replacement, text the error line must contain)
STUDY_CASES = [
    ("kind typo", 'kind = "sporadic"', 'kind = "sporadik"', "observations[2].kind"),
    ("field typo", "cases = 15", "casse = 15", "observations[2]"),
    ("count above total", "affected = 19", "affected = 200000", "observations[1].affected"),
    ("negative count", "cases = 15", "cases = -3", "observations[2].cases"),
    ("fractional count", "affected = 19", "affected = 19.5", "observations[1].affected"),
    ("NaN count", "affected = 19", "affected = nan", "observations[1].affected"),
    ("infinite total", "total = 182400", "total = inf", "observations[1].total"),
    ("gigantic count", "total = 182400", "total = 1e400", "observations[1].total"),
    ("text count", "cases = 15", 'cases = "fifteen"', "observations[2].cases"),
    ("boolean count", "cases = 15", "cases = true", "observations[2].cases"),
    ("unknown top-level key", 'title = "Catalogue base study"',
     'titel = "Catalogue base study"', "titel"),
    ("unknown parameter", "\nh = 1.0", "\nhh = 1.0", "parameters"),
    ("unknown prior family", '"uniform", low = 0.0', '"flat", low = 0.0', "parameters.s"),
    ("prior low above high", "low = 1e-8, high = 1e-3", "low = 1e-3, high = 1e-8",
     "parameters.mu"),
    ("prior outside support", "low = 0.0, high = 1.0", "low = 0.0, high = 2.0",
     "parameters.s"),
    ("h beyond its range [-10, 10]", "\nh = 1.0", "\nh = 10.5", "parameters.h"),
    ("interval above 1", "interval = 0.95", "interval = 1.5", "interval"),
    ("unknown inheritance", 'inheritance = "autosomal"', 'inheritance = "y-linked"',
     "inheritance"),
    ("unknown model", 'model = "deterministic"', 'model = "stochastic"', "model"),
    ("unknown mode", 'mode = "dominant"\n\n[[observations]]\nlabel = "new',
     'mode = "codominant"\n\n[[observations]]\nlabel = "new', "observations[1].mode"),
    ("penetrance above 1", 'total = 182400\nmode = "dominant"',
     'total = 182400\nmode = "dominant"\npenetrance = 1.2', "observations[1].penetrance"),
    ("reference children negative", "reference_children = 655", "reference_children = -655",
     "observations[3].reference_children"),
    ("drift without Ne", 'model = "deterministic"', 'model = "drift"', "Ne"),
    ("sampler seed negative", 'mode = "dominant"\n"""', 'mode = "dominant"\n[sampler]\n'
     'seed = -1\n"""', "sampler.seed"),
    ("duplicate label", 'label = "new mutations"', 'label = "births"', "label"),
    ("missing field", "reference_people = 310\n", "", "observations[3]"),
]


def _run_writing_nothing(tmp_path: Path, argv: list[str], capsys) -> tuple[int, str]:
    """``qhat *argv`` in-process; fails if anything appeared in (or left) ``tmp_path``."""
    before = sorted(p.name for p in tmp_path.iterdir())
    status, out, err = call_qhat(argv, capsys)
    after = sorted(p.name for p in tmp_path.iterdir())
    assert after == before, (
        f"bad input must write nothing (docs/command-line.md): folder went from {before} to "
        f"{after}; stderr: {err}")
    assert out == "", f"bad input must print nothing on stdout; printed {out!r}"
    return status, err


def _assert_one_line(status: int, err: str, *needles: str) -> None:
    assert status == 2, f"bad input must exit 2 (docs/command-line.md); got {status}: {err}"
    lines = err.strip().splitlines()
    assert len(lines) == 1, f"bad input must be exactly one stderr line; got {len(lines)}:\n{err}"
    assert lines[0].startswith("qhat: error:"), f"the line must start 'qhat: error:': {err}"
    assert "Traceback" not in err, f"bad input must not show a traceback:\n{err}"
    for needle in needles:
        assert needle in lines[0], f"the error line must name {needle!r}; got {lines[0]!r}"


@pytest.mark.parametrize("case,old,new,needle", STUDY_CASES, ids=[c[0] for c in STUDY_CASES])
def test_bad_study(tmp_path, capsys, case, old, new, needle):
    text = STUDY + '"""'  # a sentinel end marker for the cases that append
    assert old in text, f"test case {case!r} out of date: {old!r} is not in STUDY"
    text = text.replace(old, new, 1).removesuffix('"""')
    path = tmp_path / "study.toml"
    path.write_text(text, encoding="utf-8")
    status, err = _run_writing_nothing(tmp_path, ["estimate", path, "--out", tmp_path / "out"],
                                       capsys)
    _assert_one_line(status, err, "study.toml", needle)


@pytest.mark.parametrize("case,content,needle", [
    ("empty file", b"", "observations"),
    ("not UTF-8", STUDY.replace("Catalogue", "Catal\u00f6gue").encode("latin-1"), "UTF-8"),
    ("binary file", b"\x00\x01\x02\xff" * 10, "study.toml"),
    ("TOML syntax error", b'title = "unterminated\n', "line"),
    ("no observations", STUDY.split("[[observations]]")[0].encode(), "observations"),
    ("every parameter fixed",
     STUDY.replace('{ prior = "log-uniform", low = 1e-8, high = 1e-3 }', "1e-5")
          .replace('{ prior = "uniform", low = 0.0, high = 1.0 }', "0.8").encode(),
     "free parameter"),
], ids=lambda v: v if isinstance(v, str) and len(v) < 30 else "")
def test_bad_study_file(tmp_path, capsys, case, content, needle):
    path = tmp_path / "study.toml"
    path.write_bytes(content)
    status, err = _run_writing_nothing(tmp_path, ["estimate", path, "--out", tmp_path / "out"],
                                       capsys)
    _assert_one_line(status, err, "study.toml")
    assert needle.lower() in err.lower(), f"the error must mention {needle!r}: {err}"


def test_missing_study_file(tmp_path, capsys):
    status, err = _run_writing_nothing(
        tmp_path, ["estimate", tmp_path / "absent.toml", "--out", tmp_path / "out"], capsys)
    _assert_one_line(status, err, "absent.toml")


CLAIM = (DEMO / "claim-northholm-indirect.toml").read_text(encoding="utf-8")

CLAIM_CASES = [
    ("prior in a claim", "mu = { claimed = 5.1e-5, lower = 3.3e-5, upper = 7.6e-5 }",
     'mu = { prior = "log-uniform", low = 1e-8, high = 1e-3 }', "parameters.mu"),
    ("interval reversed", "lower = 3.3e-5, upper = 7.6e-5", "lower = 7.6e-5, upper = 3.3e-5",
     "parameters.mu"),
    ("claimed outside its interval", "claimed = 5.1e-5", "claimed = 9.1e-5", "parameters.mu"),
    ("unknown claimed key", "incidence = 1.81e-4", "incidense = 1.81e-4", "claimed"),
    ("incidence above 1", "incidence = 1.81e-4", "incidence = 1.81", "claimed.incidence"),
    ("unknown approximation", 'approximation = "indirect"', 'approximation = "guess"',
     "claimed.approximation"),
    ("missing mu", "mu = { claimed = 5.1e-5, lower = 3.3e-5, upper = 7.6e-5 }   # s x / 3\n",
     "", "mu"),
    ("negative s", "s = 0.85", "s = -0.85", "parameters.s"),
    ("count above total in a claim", "affected = 22", "affected = 221500",
     "observations[1].affected"),
    # a claim reads a [history] as a study does (infer/files/history.py): a bad one is
    # refused with the study's message (tests/jobs/check/test_check_history.py has more)
    ("bad history in a claim", "[sampler]\nseed = 7",
     "[sampler]\nseed = 7\n\n[history]\nepochs = [ { generations = -12 } ]",
     "history.epochs[1].generations: -12 is negative"),
]


@pytest.mark.parametrize("case,old,new,needle", CLAIM_CASES, ids=[c[0] for c in CLAIM_CASES])
def test_bad_claim(tmp_path, capsys, case, old, new, needle):
    assert old in CLAIM, f"test case {case!r} out of date: {old!r} is not in the demo claim"
    path = tmp_path / "claim.toml"
    path.write_text(CLAIM.replace(old, new, 1), encoding="utf-8")
    status, err = _run_writing_nothing(tmp_path, ["check", path], capsys)
    _assert_one_line(status, err, "claim.toml", needle)


# Batch CSVs: the rest of the catalogue (empty file, missing column, text, negative,
# above total, duplicated locus, NaN, half an interval, short row, fractional count,
# mu above 1, header only) is in tests/jobs/batch/test_batch.py.
BATCH_HEADER = "locus,observed,sampled,mu,mu_lower,mu_upper\n"
BATCH_GOOD = "GENE0001,3,1000,1e-6,5e-7,2e-6\n"


@pytest.mark.parametrize("case,content,needle", [
    ("not UTF-8", (BATCH_HEADER + BATCH_GOOD + "G\u00e9NE2,1,1000,1e-6,,\n").encode("latin-1"),
     "UTF-8"),
    ("gigantic count", (BATCH_HEADER + BATCH_GOOD + "GENE0002,1e400,1000,1e-6,,\n").encode(),
     "line 3, column observed"),
    ("interval not around mu", (BATCH_HEADER + BATCH_GOOD
                                + "GENE0002,1,1000,1e-6,2e-6,3e-6\n").encode(), "line 3"),
    ("zero alleles sampled", (BATCH_HEADER + BATCH_GOOD + "GENE0002,0,0,1e-6,,\n").encode(),
     "line 3, column sampled"),
], ids=lambda v: v if isinstance(v, str) and len(v) < 30 else "")
def test_bad_batch_file(tmp_path, capsys, case, content, needle):
    path = tmp_path / "loci.csv"
    path.write_bytes(content)
    status, err = _run_writing_nothing(tmp_path, ["batch", path, "--out", tmp_path / "out"],
                                       capsys)
    _assert_one_line(status, err, "loci.csv")
    assert needle.lower() in err.lower(), f"the error must mention {needle!r}: {err}"


# Sizes and extreme numbers: each refused before anything is allocated or written, with
# the limit and its reason in the line. (case id, text replaced, replacement, what the
# line must contain: field, value, limit)
BIG = 10**29  # above int64 (9.2e18) and above the count bound 1e15 (infer.validate.MAX_COUNT)

SIZE_CASES = [
    ("47 GiB of walkers", 'mode = "dominant"\n"""',
     'mode = "dominant"\n[sampler]\nwalkers = 100000\nensembles = 64\n"""',
     ("sampler.walkers", "100000", "635 GB", "the 25 GB of this machine")),
    ("126 GB of walkers", 'mode = "dominant"\n"""',
     'mode = "dominant"\n[sampler]\nseed = 1\nensembles = 64\nwalkers = 20000\n"""',
     ("sampler.walkers", "20000", "ensembles = 64", "127 GB", "the 25 GB")),
    ("log-normal sigma 1e-15", '{ prior = "log-uniform", low = 1e-8, high = 1e-3 }',
     '{ prior = "log-normal", median = 1e-5, sigma = 1e-15 }',
     ("parameters.mu.sigma", "1e-15", "too narrow", "1e-10")),
    ("normal sd 1e-300", '{ prior = "uniform", low = 0.0, high = 1.0 }',
     '{ prior = "normal", mean = 0.5, sd = 1e-300 }',
     ("parameters.s.sd", "1e-300", "too narrow")),
    ("total above int64", "total = 182400", f"total = {BIG}",
     ("observations[1].total", str(BIG), "1e+15")),
    ("births above int64", "births = 182400", f"births = {BIG}",
     ("observations[2].births", str(BIG), "1e+15")),
    ("reference people above int64", "reference_people = 310", f"reference_people = {BIG}",
     ("observations[3].reference_people", str(BIG), "1e+15")),
    ("count just above the bound", "total = 182400", f"total = {10**15 + 1}",
     ("observations[1].total", str(10**15 + 1), "1e+15")),
]


@pytest.mark.parametrize("case,old,new,needles", SIZE_CASES, ids=[c[0] for c in SIZE_CASES])
def test_sizes_in_a_study(tmp_path, capsys, monkeypatch, case, old, new, needles):
    # the machine's memory, fixed at 25 GB so the line does not depend on the test machine
    monkeypatch.setattr("infer.files.study.machine_memory", lambda: 25 * 10**9)
    text = STUDY + '"""'
    assert old in text, f"test case {case!r} out of date: {old!r} is not in STUDY"
    path = tmp_path / "study.toml"
    path.write_text(text.replace(old, new, 1).removesuffix('"""'), encoding="utf-8")
    status, err = _run_writing_nothing(tmp_path, ["estimate", path, "--out", tmp_path / "out"],
                                       capsys)
    _assert_one_line(status, err, "study.toml", *needles)


def test_memory_estimate_is_compared_with_the_stated_limit():
    """The sampler's memory estimate (infer.files.study.sampler_memory) against a limit
    given in bytes: the default settings fit in 1 GB, 100000 x 64 walkers do not; derived:
    6,400,000 walkers x (2 free + 1 + 3 observations) columns x 1000 steps x 8 bytes."""
    from infer.errors import InputError
    from infer.files.study import check_sampler_memory, sampler_memory

    check_sampler_memory({"walkers": 48, "ensembles": 4}, 2, 3, "deterministic",
                         memory=10**9)
    need, _ = sampler_memory({"walkers": 100_000, "ensembles": 64}, 2, 3, "deterministic")
    assert need >= 6_400_000 * 6 * 1000 * 8, f"the estimate {need} must count the chains"
    with pytest.raises(InputError) as caught:
        check_sampler_memory({"ensembles": 64, "walkers": 100_000}, 2, 3, "drift",
                             memory=10**12)
    assert caught.value.field == "sampler.walkers", caught.value
    assert "1e+03 GB" in str(caught.value) or "1000 GB" in str(caught.value), caught.value


def test_step_cap_of_one_runs_and_says_not_converged(tmp_path, capsys):
    """``[sampler] max_steps = 1`` is allowed: the run ends at the cap and says so (exit 4,
    docs/command-line.md 'Exit status'), with no traceback."""
    path = tmp_path / "study.toml"
    path.write_text(STUDY + "\n[sampler]\nseed = 3\nmax_steps = 1\n", encoding="utf-8")
    status, out, err = call_qhat(["estimate", path, "--out", tmp_path / "out", "--quiet"],
                                 capsys)
    assert "Traceback" not in err, f"max_steps = 1 must not crash:\n{err}"
    assert status == 4, f"a run stopped at its step cap exits 4; got {status}: {err}"
    assert "step cap of 1" in out + err, f"the run must say it stopped at the cap: {out}{err}"
    assert (tmp_path / "out" / "summary.json").is_file(), "the report is still written"


@pytest.mark.parametrize("options,needles", [
    (["--grid-points", "10000000"], ("--grid-points", "10000000", "above 5000", "square")),
    (["--grid-points", "100000"], ("--grid-points", "100000", "above 5000")),
    (["--mu-level", "1e-12"], ("--mu-level", "1e-12", "at least 0.5", "spread")),
], ids=lambda v: " ".join(v) if isinstance(v, list) else "")
def test_batch_sizes(tmp_path, capsys, options, needles):
    path = tmp_path / "loci.csv"
    path.write_text(BATCH_HEADER + BATCH_GOOD, encoding="utf-8")
    status, err = _run_writing_nothing(
        tmp_path, ["batch", path, "--out", tmp_path / "out", *options], capsys)
    _assert_one_line(status, err, *needles)


SIMULATE = ["simulate", "--mu", "1e-5", "--s", "0.5", "--h", "0.5", "--nu", "1e-8"]


@pytest.mark.parametrize("options,needles", [
    (["--Ne", "1e19"], ("--Ne", "1e19", "above 1e+15", "2**53")),
    (["--Ne", "100", "--generations", "1e9", "--thin", "1e6"],
     ("--generations", "1000000000", "replicate-generations", "5e+09")),
    (["--Ne", "100", "--generations", "1e7", "--replicates", "1000", "--thin", "1000"],
     ("--generations", "10000000", "1000 replicates", "1.4e+10")),
], ids=lambda v: " ".join(v) if isinstance(v, list) else "")
def test_simulate_sizes(tmp_path, capsys, options, needles):
    status, err = _run_writing_nothing(
        tmp_path, [*SIMULATE, *options, "--plot", tmp_path / "sim.png"], capsys)
    _assert_one_line(status, err, *needles)


CLAIM_SIZE_CASES = [
    ("total above int64", "total = 121_500", f"total = {BIG}",
     ("observations[1].total", str(BIG), "1e+15")),
    ("affected children above int64", "affected_children = 13",
     f"affected_children = {BIG}", ("observations[2].affected_children", str(BIG))),
]


@pytest.mark.parametrize("case,old,new,needles", CLAIM_SIZE_CASES,
                         ids=[c[0] for c in CLAIM_SIZE_CASES])
def test_sizes_in_a_claim(tmp_path, capsys, case, old, new, needles):
    assert old in CLAIM, f"test case {case!r} out of date: {old!r} is not in the demo claim"
    path = tmp_path / "claim.toml"
    path.write_text(CLAIM.replace(old, new, 1), encoding="utf-8")
    status, err = _run_writing_nothing(tmp_path, ["check", path, "--out", tmp_path / "out"],
                                       capsys)
    _assert_one_line(status, err, "claim.toml", *needles)


def test_drift_claim_with_a_huge_Ne_is_answered(tmp_path, capsys):
    """A drift claim with Ne = 1e300 is checked, not crashed on: Wright's density then
    sits on the deterministic balance (Wright 1931, Evolution in Mendelian populations:
    its variance falls as 1/Ne), so the implied allele copies among 412 genotyped animals
    are 2 x 412 x q_hat, with q_hat the exact deterministic equilibrium."""
    import json

    text = (DEMO / "claim-kestrel-captive.toml").read_text(encoding="utf-8")
    for old, new in (('model = "deterministic"', 'model = "drift"'),
                     ("Ne = 60 ", "Ne = 1e300 ")):
        assert old in text, f"the demo claim changed: {old!r} is not in it"
        text = text.replace(old, new, 1)
    path = tmp_path / "claim.toml"
    path.write_text(text, encoding="utf-8")
    status, out, err = call_qhat(["check", path, "--json"], capsys)
    assert "Traceback" not in err, f"Ne = 1e300 must not crash qhat check:\n{err}"
    assert status in (0, 3), f"a checked claim exits 0 or 3; got {status}: {err}"
    implied = json.loads(out)["implied"]
    # q_hat is a fixed point of the life cycle (docs/model.md, 'Life cycle'), written out
    # here: selection on zygotes, then mutation in gametes (nu = 1e-9, the drift default)
    q, mu, s, h, nu = implied["q_hat"], 2e-5, 0.3, 0.2, 1e-9
    p = 1 - q
    selected = (p * q * (1 - h * s) + q * q * (1 - s)) / (
        p * p + 2 * p * q * (1 - h * s) + q * q * (1 - s))
    next_q = selected * (1 - nu) + (1 - selected) * mu
    assert next_q == pytest.approx(q, rel=1e-6), f"q_hat {q} is not the balance ({next_q})"
    copies = implied["observations"][0]["implied"]
    assert copies == pytest.approx(2 * 412 * implied["q_hat"], rel=1e-3), (
        f"implied copies {copies} vs 2 n q_hat = {2 * 412 * implied['q_hat']} "
        "(the large-Ne limit of Wright's density)")
