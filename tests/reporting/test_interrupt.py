"""Interruption and output paths of ``qhat estimate`` (issue 7, item 4).

docs/command-line.md: reports are written to a temporary folder and renamed into place, so
an interrupted run leaves nothing half-written; an existing folder is replaced only with
``--force``; the same seed gives the same summary.json. These tests interrupt real runs
(SIGINT as from Ctrl-C at a terminal, SIGTERM as from a batch scheduler), interrupt the
writing phase deterministically in-process, and check that neither a study title nor a
study file name can make qhat write outside the folder that ``--out`` (or the documented
default ``reports/<file stem>``) chooses.
"""

from __future__ import annotations

import io
import json
import os
import select
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from conftest import call_qhat, qhat_command, run_qhat
from hypothesis import given, settings
from hypothesis import strategies as st

import infer.reporting.plot_process
from infer import cli
from infer.commands.estimate import EXIT_NOT_CONVERGED, default_out
from infer.errors import InputError
from infer.reporting import folder as folder_module
from infer.reporting.folder import MARKER, atomic_folder, safe_name, terminate_as_interrupt

INTERRUPTED = "qhat: interrupted; nothing was written"
#: 128 + SIGINT (2): the shell's status for a run ended by Ctrl-C (POSIX shell convention,
#: common practice), which the CLI returns for SIGINT and SIGTERM alike
EXIT_INTERRUPTED = 130
#: FAST stops at its step cap: a finished fit exits 0, or 4 when not converged
#: (docs/command-line.md, 'Exit status')
FITTED = (0, EXIT_NOT_CONVERGED)

#: a few seconds of fitting: one free parameter, a small sampler, a step cap
FAST = """\
title = "{title}"
[parameters]
mu = {{ prior = "log-uniform", low = 1e-8, high = 1e-3 }}
s = 1.0
h = 1.0
[[observations]]
kind = "sporadic"
cases = 15
births = 182400
mode = "dominant"
[sampler]
seed = 4
walkers = 8
ensembles = 2
max_steps = 300
"""

#: sampling that lasts well beyond its first progress report (three free parameters on
#: the mu/(hs) ridge, convergence needs more than twice the first block of 500 steps)
LONG = """\
title = "Interrupt test island"
[parameters]
mu = { prior = "log-uniform", low = 1e-9, high = 1e-3 }
s = { prior = "uniform", low = 0.0, high = 1.0 }
h = { prior = "uniform", low = 0.0, high = 1.0 }
[[observations]]
kind = "affected"
affected = 19
total = 182400
mode = "dominant"
[sampler]
seed = 4
walkers = 96
max_steps = 10000000
"""


def mark_as_written(folder: Path) -> None:
    """Make ``folder`` look like a report qhat wrote (its marker lists its files)."""
    files = sorted(p.name for p in folder.iterdir() if p.name != MARKER)
    (folder / MARKER).write_text(json.dumps({"written_by": "qhat", "files": files}))


def tree(root: Path) -> list[str]:
    """Every file and folder below root, as sorted relative paths (hidden ones included)."""
    return sorted(str(p.relative_to(root)) for p in root.rglob("*"))


def _default_sigint():
    # A shell without job control starts background commands with SIGINT ignored, and
    # Python then never raises KeyboardInterrupt: these tests send SIGINT on purpose.
    signal.signal(signal.SIGINT, signal.SIG_DFL)


def start(args, cwd, stderr, env=None):
    return subprocess.Popen(qhat_command(*args), cwd=cwd, stdin=subprocess.DEVNULL,
                            stdout=subprocess.PIPE, stderr=stderr, env=env,
                            preexec_fn=_default_sigint)


def read_until(fd: int, marker: bytes, process, timeout: float = 300.0) -> bytes:
    """Read a pty until ``marker`` appears (or the process ends, or the timeout)."""
    seen = b""
    deadline = time.monotonic() + timeout
    while marker not in seen and time.monotonic() < deadline and process.poll() is None:
        ready, _, _ = select.select([fd], [], [], 0.2)
        if ready:
            try:
                seen += os.read(fd, 4096)
            except OSError:  # EIO: the child closed the terminal
                break
    return seen


def drain(fd: int) -> bytes:
    out = b""
    while True:
        ready, _, _ = select.select([fd], [], [], 0.5)
        if not ready:
            return out
        try:
            chunk = os.read(fd, 4096)
        except OSError:
            return out
        if not chunk:
            return out
        out += chunk


# ---------------------------------------------------------------- real runs, real signals


@pytest.mark.parametrize("signum", [signal.SIGINT, signal.SIGTERM], ids=["SIGINT", "SIGTERM"])
def test_signal_at_a_terminal_while_sampling_leaves_nothing(tmp_path, signum):
    """stderr is a terminal, so qhat shows sampling progress; the signal is sent as soon as
    the first progress report appears (the sampler is then mid-run). Expected: non-zero
    exit, the one-line interrupted message, no traceback, no report folder and no
    ``.report.*.partial`` sibling (the parent folder holds only the study)."""
    (tmp_path / "study.toml").write_text(LONG)
    master, slave = os.openpty()
    try:
        process = start(["estimate", "study.toml", "--out", "report"], tmp_path, slave)
        os.close(slave)
        seen = read_until(master, b"qhat: sampling", process)
        assert b"qhat: sampling" in seen, f"no progress line on the terminal; saw {seen!r}"
        assert process.poll() is None, "the run ended before it could be interrupted"
        process.send_signal(signum)
        process.wait(timeout=120)
        seen += drain(master)
    finally:
        os.close(master)
        if process.poll() is None:
            process.kill()
    text = seen.decode("utf-8", "replace").replace("\r\n", "\n")
    assert process.returncode == EXIT_INTERRUPTED, (
        f"an interrupted run must exit {EXIT_INTERRUPTED}; got {process.returncode}:\n{text}")
    assert "Traceback" not in text, f"an interrupt must not show a traceback:\n{text}"
    assert text.endswith(INTERRUPTED + "\n"), f"the terminal must end with {INTERRUPTED!r}:\n{text}"
    # Progress is redrawn in place with \r; apart from it there is the one message line.
    # (It currently follows the last progress text on the same line: see
    # test_interrupted_message_starts_its_own_line_on_a_terminal.)
    assert text.count(INTERRUPTED) == 1, f"the interrupted message must appear once:\n{text}"
    shown = [line for line in text.replace("\r", "\n").split("\n") if line.strip()]
    for line in shown:
        assert line == INTERRUPTED or line.startswith("qhat: sampling"), (
            f"only progress and the interrupted message may be shown; got {line!r}")
    stdout = process.stdout.read()
    assert stdout == b"", f"an interrupted run must print nothing on stdout: {stdout!r}"
    left = tree(tmp_path)
    assert left == ["study.toml"], f"an interrupted run left files behind: {left}"


@pytest.mark.parametrize("signum", [signal.SIGINT, signal.SIGTERM], ids=["SIGINT", "SIGTERM"])
def test_signal_in_a_batch_job_leaves_nothing(tmp_path, signum):
    """stderr is a pipe (a scheduler's log): no progress is shown, so the run is caught
    after the default report parent ``reports/`` appears (docs/command-line.md: the study
    has been read; sampling is starting) plus a second. stderr must be exactly the one
    interrupted line; ``reports/``, made by this run, is removed again with anything in it
    (a hidden temporary folder, the destination lock)."""
    (tmp_path / "study.toml").write_text(LONG)
    process = start(["estimate", "study.toml"], tmp_path, subprocess.PIPE)
    try:
        deadline = time.monotonic() + 300
        while not (tmp_path / "reports").exists() and time.monotonic() < deadline:
            assert process.poll() is None, (
                f"the run ended before reports/ appeared: {process.stderr.read()!r}")
            time.sleep(0.05)
        time.sleep(1.0)
        assert process.poll() is None, "the run ended before it could be interrupted"
        process.send_signal(signum)
        stdout, stderr = process.communicate(timeout=120)
    finally:
        if process.poll() is None:
            process.kill()
    assert process.returncode == EXIT_INTERRUPTED, (
        f"an interrupted run must exit {EXIT_INTERRUPTED}; got {process.returncode}: {stderr!r}")
    assert stderr.decode() == INTERRUPTED + "\n", (
        f"stderr must be exactly the interrupted line; got {stderr.decode()!r}")
    assert stdout == b"", f"an interrupted run must print nothing on stdout: {stdout!r}"
    left = tree(tmp_path)
    assert left == ["study.toml"], (
        f"the reports/ folder the run made, and any hidden temporary, must be gone after "
        f"the interrupt; found {left}")


#: put on PYTHONPATH as sitecustomize: every command's run raises KeyboardInterrupt inside
#: a string exec, as when Ctrl-C lands while a lazy import builds a dataclass
INTERRUPT_INSIDE_EXEC = """\
import types
import infer.cli

_build = infer.cli.build_parser


def build_parser():
    parser = _build()
    parse = parser.parse_args

    def parse_args(argv):
        args = parse(argv)
        args._module = types.SimpleNamespace(
            run=lambda args: exec("raise KeyboardInterrupt", {}))
        return args

    parser.parse_args = parse_args
    return parser


infer.cli.build_parser = build_parser
"""


def test_interrupt_raised_inside_a_string_exec_still_exits_130(tmp_path):
    """CPython 3.12 under ``python -m`` ends the process with SIGINT (status -2) after a
    KeyboardInterrupt raised in a string ``exec``, even when the program caught it
    (Modules/main.c, Py_RunMain). A Ctrl-C that lands during a lazy import did exactly
    that in CI; the interrupted run must still exit 130 with its one line."""
    (tmp_path / "sitecustomize.py").write_text(INTERRUPT_INSIDE_EXEC)
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(
        p for p in (str(tmp_path), os.environ.get("PYTHONPATH", "")) if p)}
    done = subprocess.run(qhat_command("equilibrium", "--mu", "1e-6", "--s", "0.1"),
                          cwd=tmp_path, env=env, capture_output=True, text=True,
                          stdin=subprocess.DEVNULL, timeout=120)
    assert (done.returncode, done.stderr) == (EXIT_INTERRUPTED, INTERRUPTED + "\n"), (
        f"got {done.returncode}: {done.stderr!r}")


# ---------------------------------------------------------------- the writing phase


def test_interrupt_inside_atomic_folder_removes_the_temporary_folder(tmp_path):
    out = tmp_path / "report"
    with pytest.raises(KeyboardInterrupt):
        with atomic_folder(out) as temporary:
            assert temporary.parent == tmp_path and temporary.name.startswith(".report."), (
                f"the temporary folder must be a hidden sibling '.report.*' of --out; got "
                f"{temporary}")
            (temporary / "summary.json").write_text("{}")
            raise KeyboardInterrupt
    left = tree(tmp_path)
    assert left == [], f"an interrupt inside atomic_folder left {left}"


def test_interrupt_while_replacing_with_force_leaves_the_old_report_untouched(tmp_path):
    out = tmp_path / "report"
    out.mkdir()
    (out / "summary.json").write_bytes(b'{"old": true}\n')
    mark_as_written(out)
    with pytest.raises(KeyboardInterrupt):
        with atomic_folder(out, force=True) as temporary:
            (temporary / "summary.json").write_text('{"new": true}\n')
            raise KeyboardInterrupt
    left = tree(tmp_path)
    assert left == ["report", f"report/{MARKER}", "report/summary.json"], (
        f"after the interrupt the tree is {left}")
    old = (out / "summary.json").read_bytes()
    assert old == b'{"old": true}\n', f"the earlier report was changed to {old!r}"


def test_sigterm_inside_the_block_becomes_an_interrupt_and_cleans_up(tmp_path):
    """terminate_as_interrupt turns SIGTERM into KeyboardInterrupt (so clean-up runs) and
    restores the previous handler afterwards."""
    before = signal.getsignal(signal.SIGTERM)
    out = tmp_path / "report"
    with pytest.raises(KeyboardInterrupt):
        with terminate_as_interrupt(), atomic_folder(out) as temporary:
            (temporary / "summary.json").write_text("{}")
            handler = signal.getsignal(signal.SIGTERM)
            # never send SIGTERM without a handler: it would end the test run itself
            assert handler not in (signal.SIG_DFL, signal.SIG_IGN), (
                f"terminate_as_interrupt installed no SIGTERM handler ({handler})")
            os.kill(os.getpid(), signal.SIGTERM)
            time.sleep(5)  # the handler raises before this ends
    after = signal.getsignal(signal.SIGTERM)
    assert after == before, f"the SIGTERM handler was not restored: {after} != {before}"
    left = tree(tmp_path)
    assert left == [], f"SIGTERM inside atomic_folder left {left}"


def test_interrupt_between_the_two_renames_of_a_forced_replacement(tmp_path, monkeypatch):
    out = tmp_path / "report"
    out.mkdir()
    (out / "summary.json").write_bytes(b'{"old": true}\n')
    mark_as_written(out)
    real_rename = os.rename
    calls = []

    def rename(source, destination):
        calls.append((source, destination))
        if len(calls) == 2:  # old report moved aside; the new one not yet in place
            raise KeyboardInterrupt
        return real_rename(source, destination)

    monkeypatch.setattr(folder_module.os, "rename", rename)
    with pytest.raises(KeyboardInterrupt):
        with atomic_folder(out, force=True) as temporary:
            (temporary / "summary.json").write_text('{"new": true}\n')
    monkeypatch.undo()
    # the third rename puts the old report back where it was
    assert len(calls) == 3 and calls[2][1] == out, (
        f"expected move-aside, (interrupted) move-in, move-back; renames were {calls}")
    left = tree(tmp_path)
    assert left == ["report", f"report/{MARKER}", "report/summary.json"], (
        f"after the interrupt the tree is {left}")
    old = (out / "summary.json").read_bytes()
    assert old == b'{"old": true}\n', f"the earlier report was changed to {old!r}"


@pytest.mark.parametrize("name", [".", ".."])
def test_out_naming_the_current_or_parent_folder_is_refused(tmp_path, monkeypatch, name):
    """``--out . --force`` must be refused as bad input before anything is created."""
    work = tmp_path / "a" / "b"
    work.mkdir(parents=True)
    monkeypatch.chdir(work)
    try:
        with pytest.raises(InputError):
            with atomic_folder(Path(name), force=True) as temporary:
                (temporary / "summary.json").write_text("{}")
    finally:
        monkeypatch.chdir(tmp_path)
        leftovers = tree(tmp_path)
    assert leftovers == ["a", "a/b"], f"--out {name} --force created or removed {leftovers}"


def write_study(path: Path, title: str = "Fast test island") -> Path:
    path.write_text(FAST.format(title=title.replace("\\", "\\\\").replace('"', '\\"')),
                    encoding="utf-8")
    return path


def plots_that_get_interrupted(how: str):
    """A stand-in for write_plots: a plot file half-written, then SIGTERM or Ctrl-C."""

    def write_plots(result, folder):
        (Path(folder) / "marginals.png").write_bytes(b"\x89PNG half")
        if how == "SIGTERM":
            handler = signal.getsignal(signal.SIGTERM)
            # never send SIGTERM without a handler: it would end the test run itself
            assert handler not in (signal.SIG_DFL, signal.SIG_IGN, None), (
                f"the command installed no SIGTERM handler while writing ({handler})")
            os.kill(os.getpid(), signal.SIGTERM)
            time.sleep(5)
        raise KeyboardInterrupt

    return write_plots


def plot_process_that_gets_interrupted(how: str):
    """A stand-in for PlotProcess.write: the child draws every plot into the temporary
    folder, then the parent is interrupted before it writes report.md."""
    interrupt = plots_that_get_interrupted(how)
    real_write = infer.reporting.plot_process.PlotProcess.write

    def write(self, result, folder):
        drawn = real_write(self, result, folder)
        assert drawn is not None, f"the plot process failed to draw: {self.failure}"
        return interrupt(result, folder)

    return write


@pytest.mark.parametrize("where", ["this process", "plot process"])
@pytest.mark.parametrize("how", ["SIGINT", "SIGTERM"])
def test_interrupt_while_writing_the_report(tmp_path, monkeypatch, capsys, how, where):
    """The whole command in-process; the plots (drawn here, or by the plot process) are
    interrupted after summary.json and posterior.nc are in the temporary folder. A new
    --out is not created; an existing report replaced with --force stays byte for byte as
    it was; no plot process is left running."""
    import infer.reporting.plots.figures

    if where == "plot process":
        monkeypatch.setattr(infer.reporting.plot_process.PlotProcess, "write",
                            plot_process_that_gets_interrupted(how))
    else:
        monkeypatch.setattr(infer.reporting.plot_process.PlotProcess, "write",
                            lambda self, result, folder: None)  # the child "failed"
    children_before = set(child_processes())
    study = write_study(tmp_path / "study.toml")
    (tmp_path / "kept").mkdir()  # an earlier report
    for name in ("summary.json", "report.md", "marginals.png"):
        (tmp_path / "kept" / name).write_bytes(f"earlier {name}\n".encode())
    mark_as_written(tmp_path / "kept")
    kept = {p.name: p.read_bytes() for p in (tmp_path / "kept").iterdir()}
    monkeypatch.setattr(infer.reporting.plots.figures, "write_plots",
                        plots_that_get_interrupted(how))
    for out, extra in (("new", []), ("kept", ["--force"])):
        status, stdout, err = call_qhat(
            ["estimate", study, "--out", tmp_path / out, *extra, "--quiet"], capsys)
        assert status == EXIT_INTERRUPTED, (
            f"--out {out} {extra}: an interrupt must exit {EXIT_INTERRUPTED}; got {status}: "
            f"{err}")
        assert err == INTERRUPTED + "\n", f"--out {out}: stderr must be {INTERRUPTED!r}; {err!r}"
    top = sorted(p for p in tree(tmp_path) if "/" not in p)
    assert top == ["kept", "study.toml"], f"a new --out was created, or debris left: {top}"
    now = {p.name: p.read_bytes() for p in (tmp_path / "kept").iterdir()}
    assert now == kept, f"the earlier report replaced with --force changed: {now}"
    running = set(child_processes()) - children_before
    assert not running, f"plot processes left running: {sorted(running)}"


def child_processes() -> list[int]:
    """Process ids of this process's running children (Linux /proc)."""
    me = str(os.getpid())
    found = []
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            fields = stat.read_text().rsplit(")", 1)[1].split()
        except OSError:
            continue
        if fields[1] == me and fields[0] != "Z":
            found.append(int(stat.parent.name))
    return found


class FakeTerminal(io.StringIO):
    def isatty(self):
        return True


def test_interrupted_message_starts_its_own_line_on_a_terminal(tmp_path, monkeypatch):
    import infer.jobs.estimate.pipeline

    def estimate(study, seed=None, progress=None, **_):
        progress(600, 40_000)
        raise KeyboardInterrupt

    monkeypatch.setattr(infer.jobs.estimate.pipeline, "estimate", estimate)
    terminal = FakeTerminal()
    monkeypatch.setattr(sys, "stderr", terminal)
    study = write_study(tmp_path / "study.toml")
    status = cli.main(["estimate", str(study), "--out", str(tmp_path / "report")])
    assert status == EXIT_INTERRUPTED, f"an interrupt must exit {EXIT_INTERRUPTED}; got {status}"
    lines = terminal.getvalue().replace("\r", "\n").splitlines()
    assert INTERRUPTED in lines, (
        f"after a progress line the message must start its own line: {terminal.getvalue()!r}")


# ---------------------------------------------------------------- same seed, same bytes; paths


@pytest.fixture(scope="module")
def two_runs(tmp_path_factory):
    """The same study (title "../../x") run twice in fresh processes with different hash
    seeds: once into --out report, once into the default folder."""
    root = tmp_path_factory.mktemp("runs")
    runs = {}
    for name, extra, hash_seed in (("a", ["--out", "report"], "0"), ("b", [], "12345")):
        work = root / name / "deep" / "work"  # room for "../../x" to land, were it used
        work.mkdir(parents=True)
        write_study(work / "study.toml", title="../../x")
        done = run_qhat("estimate", "study.toml", *extra, "--quiet", cwd=work,
                        env={"PYTHONHASHSEED": hash_seed})
        assert done.returncode in FITTED, (
            f"run {name} (PYTHONHASHSEED={hash_seed}) failed; {done}")
        runs[name] = work
    return root, runs


@pytest.mark.slow  # two fresh fits with plots: > 10 s on 2 loaded cores
def test_same_seed_gives_byte_identical_summary(two_runs):
    """docs/reports.md: the summary depends on the study and the seed alone (wall
    times go to timing.json), whatever the process, hash seed or output folder."""
    _, runs = two_runs
    first = (runs["a"] / "report" / "summary.json").read_bytes()
    second = (runs["b"] / "reports" / "study" / "summary.json").read_bytes()
    assert first == second, (
        "the same study and seed gave different summary.json bytes in two processes with "
        "different hash seeds and output folders")
    assert b'"title": "../../x"' in first, "summary.json must keep the title as written"


@pytest.mark.slow  # shares the two runs above
def test_title_does_not_choose_where_files_go(two_runs):
    """Every file of both runs is inside the chosen folder; nothing anywhere else in the
    temporary tree (``x`` two levels up would be the title's path)."""
    root, runs = two_runs
    names = ("summary.json", "report.md", "posterior.nc", "timing.json")
    for name, report in (("a", "report"), ("b", "reports/study")):
        files = tree(root / name)
        outside = [f for f in files
                   if not (f.startswith(f"deep/work/{report}/") or f in
                           {"deep", "deep/work", "deep/work/study.toml", f"deep/work/{report}",
                            "deep/work/reports"})]
        assert outside == [], f"run {name} wrote outside {report}/: {outside}"
        missing = [n for n in names if f"deep/work/{report}/{n}" not in files]
        assert not missing, f"run {name}: {report}/ lacks {missing}"
    top = sorted(p.name for p in root.iterdir())
    assert top == ["a", "b"], f"something was written beside the two work folders: {top}"


def test_absolute_title_and_odd_study_names_stay_under_reports(tmp_path, monkeypatch, capsys):
    """A title "/etc/passwd" and a study file named "..toml" write reports/study/ only."""
    passwd = Path("/etc/passwd")
    before = passwd.stat().st_mtime_ns if passwd.exists() else None
    monkeypatch.chdir(tmp_path)
    write_study(tmp_path / "..toml", title="/etc/passwd")
    status, _, err = call_qhat(["estimate", "..toml", "--quiet"], capsys)
    assert status in FITTED, f"a study named '..toml' titled '/etc/passwd' must fit; {err}"
    files = tree(tmp_path)
    stray = [f for f in files
             if not (f in ("..toml", "reports", "reports/study") or f.startswith("reports/study/"))]
    assert not stray, f"files written outside reports/study/: {stray}"
    assert "reports/study/summary.json" in files, f"no reports/study/summary.json in {files}"
    if before is not None:
        assert passwd.stat().st_mtime_ns == before, "/etc/passwd was modified"


@settings(max_examples=200, deadline=None)
@given(st.text(max_size=60))
def test_default_folder_is_always_one_plain_name_under_reports(stem):
    """default_out(any path) is reports/<name> with a name that is not hidden, not '.' or
    '..', has no separator, and at most 80 characters (safe_name's contract)."""
    out = default_out(stem + ".toml")
    assert out.parent == Path("reports"), f"{stem!r}.toml -> {out}: not directly in reports/"
    name = out.name
    assert name and name not in (".", "..") and not name.startswith((".", "-")), (
        f"{stem!r}.toml -> folder name {name!r}: empty, '.', '..', hidden or option-like")
    assert "/" not in name and "\\" not in name and "\x00" not in name and len(name) <= 80, (
        f"{stem!r}.toml -> folder name {name!r}: a separator, NUL or over 80 characters")
    assert all(c.isalnum() or c in "-_" for c in name), (
        f"{stem!r}.toml -> folder name {name!r}: only letters, digits, '-' and '_' allowed")
    twice = safe_name(safe_name(stem))
    assert safe_name(stem) == twice, f"safe_name is not idempotent on {stem!r}: -> {twice!r}"


def test_title_with_dollar_signs_is_plain_text(tmp_path, monkeypatch, capsys):
    """A title is free text (docs/files.md, 'Study files'): "$x^$" is written, not typeset."""
    monkeypatch.chdir(tmp_path)
    write_study(tmp_path / "study.toml", title="Cost $x^$ per test")
    status, _, err = call_qhat(["estimate", "study.toml", "--out", "report", "--quiet"], capsys)
    assert status in FITTED, f"a title with dollar signs must fit; {err}"
    text = (tmp_path / "report" / "report.md").read_text()
    # a run that did not converge opens with one "read with care" line above the title
    heading = next(line for line in text.splitlines() if line.startswith("# "))
    assert heading == "# Cost $x^$ per test", (
        f"report.md must open with the title as written; starts {text[:60]!r}")
    summary = json.loads((tmp_path / "report" / "summary.json").read_text())
    assert summary["title"] == "Cost $x^$ per test", f"summary.json title {summary['title']!r}"
    # the plot process drew the titles itself (a crash there would fall back silently)
    timing = json.loads((tmp_path / "report" / "timing.json").read_text())
    assert timing["plots_drawn_by"] == "plot process", (
        f"the plot process must draw a '$' title without failing; timing.json says {timing}")
