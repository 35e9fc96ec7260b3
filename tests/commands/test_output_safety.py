"""Output safety at the boundary: nothing lost, nothing wiped, one line instead of a traceback.

The contract is docs/command-line.md ('Report folders', 'Exit status'): a refused
destination or an operating-system error while writing ends with exit status 2 and one
line ``qhat: error: ...`` on stderr naming the path, nothing half-written; ``--force``
replaces only a folder qhat wrote (its ``.qhat-output`` marker lists every entry); a
second run with the same ``--out`` is refused while the first holds the lock; what a
SIGKILL leaves is removed by the next run; modes follow the umask.

References outside the project, all "common practice" (POSIX semantics):
open(2)/mkdir(2) give mode ``0o666 & ~umask`` / ``0o777 & ~umask``; setrlimit(2)
RLIMIT_FSIZE makes a longer write fail with EFBIG once SIGXFSZ is ignored; a closed
descriptor 1 makes any write to standard output fail with EBADF; /dev/full fails every
write with ENOSPC; kill(pid, 0) fails with ESRCH for a process that has ended.
"""

from __future__ import annotations

import json
import os
import resource
import signal
import socket
import stat
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest
from conftest import DEMO, ROOT, qhat_command, run_python, run_qhat

from infer.reporting.folder import MARKER

STUDY = DEMO / "island-dominant.toml"
CLAIM = DEMO / "claim-northholm-indirect.toml"     # a consistent claim: exit 0
LOCI = DEMO / "batch_loci.csv"
CHECK_FILES = ["balance.png", "check.json", "report.html", "report.md"]
EQUILIBRIUM = ["equilibrium", "--mu", "1e-5", "--s", "0.1", "--h", "0.5"]
SIMULATE = ["simulate", "--Ne", "50", "--mu", "1e-3", "--s", "0.1", "--h", "0.5",
            "--generations", "100", "--replicates", "3", "--seed", "1"]


def tree(root: Path) -> list[str]:
    """Every path below ``root`` (hidden ones included), sorted, relative."""
    return sorted(str(p.relative_to(root)) for p in root.rglob("*"))


def one_error_line(done, *needles) -> str:
    """Assert exit status 2, exactly one ``qhat: error:`` line holding ``needles``."""
    assert done.returncode == 2, f"expected exit status 2 (bad input); {done}"
    lines = done.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("qhat: error: "), (
        f"expected exactly one 'qhat: error:' line on stderr; {done}")
    assert "Traceback" not in done.stderr, f"a traceback reached the user; {done}"
    for needle in needles:
        assert str(needle) in lines[0], f"the error line must name {needle!r}; {done}"
    return lines[0]


def fake_report(folder: Path, files=("summary.json", "report.md"), listed=None) -> dict:
    """A folder as qhat writes it: the files and a marker listing them (or ``listed``)."""
    folder.mkdir(parents=True, exist_ok=True)
    for name in files:
        (folder / name).write_text(f"earlier {name}\n")
    (folder / MARKER).write_text(json.dumps(
        {"written_by": "qhat", "command": "qhat test", "files": sorted(listed or files)}))
    return {p.name: p.read_bytes() for p in folder.iterdir()}


def run_with(args, cwd, *, preexec=None, env=None, umask=-1, stdout=subprocess.PIPE,
             timeout=300):
    """``qhat args`` in a child changed by ``preexec`` (limits, closed descriptors)."""
    done = subprocess.run(qhat_command(*args), cwd=cwd, preexec_fn=preexec, umask=umask,
                          env={**os.environ, "PYTHONDONTWRITEBYTECODE": "1", **(env or {})},
                          stdin=subprocess.DEVNULL, stdout=stdout, stderr=subprocess.PIPE,
                          text=True, timeout=timeout)
    return done


def _file_limit(limit):
    def preexec():
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))
    return preexec


# --------------------------------------------------------------- --force and the marker


def test_force_refuses_a_folder_holding_a_subfolder_qhat_did_not_write(tmp_path):
    """The issue's case: report.md beside someone's thesis/ must survive --force."""
    out = tmp_path / "x"
    (out / "thesis").mkdir(parents=True)
    (out / "report.md").write_text("mine\n")
    (out / "thesis" / "ch1.tex").write_text("t\n")
    done = run_qhat("estimate", STUDY, "--out", out, "--force", cwd=tmp_path)
    one_error_line(done, "--out", out, "refusing to replace it")
    assert tree(tmp_path) == ["x", "x/report.md", "x/thesis", "x/thesis/ch1.tex"], (
        f"--force over a folder qhat did not write changed it: {tree(tmp_path)}")
    assert (out / "thesis" / "ch1.tex").read_text() == "t\n", "the thesis was changed"


@pytest.mark.parametrize("extra", ["notes.txt", "sub/"])
def test_force_refuses_a_qhat_folder_holding_anything_else(tmp_path, extra):
    out = tmp_path / "report"
    fake_report(out)
    if extra.endswith("/"):
        (out / extra).mkdir()
    else:
        (out / extra).write_text("mine\n")
    before = tree(tmp_path)
    done = run_qhat("estimate", STUDY, "--out", out, "--force", cwd=tmp_path)
    one_error_line(done, out, extra.rstrip("/"), "which qhat did not write")
    assert tree(tmp_path) == before, f"the refused folder changed: {tree(tmp_path)}"


def test_force_refuses_a_folder_without_the_marker(tmp_path):
    out = tmp_path / "report"
    out.mkdir()
    (out / "summary.json").write_text("{}\n")
    done = run_qhat("batch", LOCI, "--out", out, "--force", cwd=tmp_path)
    one_error_line(done, out, MARKER)
    assert tree(tmp_path) == ["report", "report/summary.json"], tree(tmp_path)


@pytest.mark.slow
def test_force_replaces_a_folder_qhat_wrote_and_the_marker_names_the_command(tmp_path):
    out = tmp_path / "report"
    first = run_qhat("check", CLAIM, "--out", out, cwd=tmp_path)
    assert first.returncode == 0, first
    marker = json.loads((out / MARKER).read_text())
    assert marker["files"] == CHECK_FILES and marker["command"].startswith("qhat check "), (
        f"the marker must list the files written and the command; got {marker}")
    (out / "check.json").write_text("stale\n")       # listed: qhat's own, may be replaced
    again = run_qhat("check", CLAIM, "--out", out, "--force", cwd=tmp_path)
    assert again.returncode == 0, again
    assert (out / "check.json").read_text() != "stale\n", "--force did not replace it"
    assert tree(tmp_path) == ["report", *(f"report/{n}" for n in [MARKER, *CHECK_FILES])], (
        f"debris beside or in the report: {tree(tmp_path)}")


def test_force_over_a_symlink_writes_into_its_target(tmp_path):
    """The link stays a link; the folder it names is replaced (not left empty)."""
    from infer.reporting.folder import atomic_folder

    real = tmp_path / "real"
    fake_report(real, files=("summary.json",))
    link = tmp_path / "link"
    link.symlink_to(real, target_is_directory=True)
    with atomic_folder(link, force=True) as folder:
        (folder / "summary.json").write_text("new\n")
    assert link.is_symlink() and os.readlink(link) == str(real), "the link was replaced"
    assert (real / "summary.json").read_text() == "new\n", "the target was not written"
    assert tree(tmp_path) == ["link", "real", f"real/{MARKER}", "real/summary.json"], (
        tree(tmp_path))


def test_a_dangling_symlink_out_is_refused(tmp_path):
    link = tmp_path / "link"
    link.symlink_to(tmp_path / "nowhere")
    done = run_qhat("estimate", STUDY, "--out", link, cwd=tmp_path)
    one_error_line(done, link, "does not exist")
    assert tree(tmp_path) == ["link"] and not (tmp_path / "nowhere").exists(), tree(tmp_path)


# ------------------------------------------------------------------- lock and stale runs

HOLD = """
import sys, time
from pathlib import Path
from infer.reporting.folder import check_destination
check_destination(Path(sys.argv[1]), force=False)
print("locked", flush=True)
time.sleep(60)
"""


def _holder(out: Path):
    process = subprocess.Popen([sys.executable, "-c", HOLD, str(out)], cwd=out.parent,
                               stdout=subprocess.PIPE, text=True,
                               env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert process.stdout.readline().strip() == "locked", "the holder could not lock"
    return process


def test_a_second_run_with_the_same_out_is_refused_while_the_first_works(tmp_path):
    out = tmp_path / "report"
    holder = _holder(out)
    try:
        done = run_qhat("estimate", STUDY, "--out", out, cwd=tmp_path)
        one_error_line(done, out, "another qhat run", f"pid {holder.pid}")
    finally:
        holder.kill()
        holder.wait()
    assert not out.exists(), "the refused run created --out"


def test_a_lock_left_by_a_killed_run_is_taken_over_and_removed(tmp_path):
    """kill -9 leaves .report.qhat-lock; the next check of the folder removes it."""
    from infer.reporting.folder import check_destination, release_locks

    out = tmp_path / "report"
    holder = _holder(out)
    holder.kill()          # SIGKILL: no clean-up in the holder
    holder.wait()
    assert (tmp_path / ".report.qhat-lock").exists(), "the killed holder left no lock"
    check_destination(out, force=False)
    release_locks()
    assert tree(tmp_path) == [], f"a stale lock or folder stayed: {tree(tmp_path)}"


KILLED = """
import os, signal, sys
from pathlib import Path
from infer.reporting.folder import atomic_folder
with atomic_folder(Path(sys.argv[1]), force=True) as folder:
    (folder / "summary.json").write_text("{}")
    os.kill(os.getpid(), signal.SIGKILL)
"""


def test_partial_folders_of_killed_runs_are_removed_by_the_next_run(tmp_path):
    """Each SIGKILLed writer leaves its partial folder and lock; the next run towards any
    folder beside them removes both (their owner process has ended)."""
    def killed_writer(name):
        killed = subprocess.run([sys.executable, "-c", KILLED, name], cwd=tmp_path,
                                env={**os.environ, "PYTHONPATH": str(ROOT)})
        assert killed.returncode == -signal.SIGKILL, f"the writer was not killed: {killed}"
        return sorted(p for p in tree(tmp_path) if "/" not in p)

    def debris_of(name, left):
        partial = [p for p in left if p.startswith(f".{name}.") and p.endswith(".partial")]
        return len(left) == 2 and len(partial) == 1 and f".{name}.qhat-lock" in left

    first = killed_writer("a")
    assert debris_of("a", first), f"the killed run should leave a partial and a lock: {first}"
    second = killed_writer("b")
    assert debris_of("b", second), (
        f"the second run must have removed the first one's debris: {second}")
    from infer.reporting.folder import check_destination, release_locks

    check_destination(tmp_path / "c", force=False)
    release_locks()
    assert tree(tmp_path) == [], f"stale partial folders or locks stayed: {tree(tmp_path)}"


def test_the_partial_folder_of_a_live_run_is_left_alone(tmp_path):
    from infer.reporting.folder import check_destination, release_locks

    live = tmp_path / ".report.abc123.partial"
    live.mkdir()
    (live / MARKER).write_text(json.dumps({"owner": {
        "host": socket.gethostname(), "pid": os.getppid(), "start": None}}))
    check_destination(tmp_path / "other", force=False)
    release_locks()
    assert live.is_dir(), "the partial folder of a running process was removed"


def test_an_old_report_moved_aside_by_a_killed_replacement_is_put_back(tmp_path):
    """Killed between the two renames of --force: the next run restores the old report."""
    from infer.reporting.folder import check_destination, release_locks

    retired = tmp_path / ".report.xyz.old"
    fake_report(retired / "old", files=("summary.json",))
    (retired / MARKER).write_text(json.dumps({
        "owner": {"host": socket.gethostname(), "pid": 2**22 + 12345, "start": None},
        "destination": str(tmp_path / "report")}))
    check_destination(tmp_path / "other", force=False)
    release_locks()
    assert tree(tmp_path) == ["report", f"report/{MARKER}", "report/summary.json"], (
        f"the old report was not put back: {tree(tmp_path)}")


def _children(pid: int) -> set[int]:
    """Every descendant of ``pid`` (Linux /proc)."""
    found, todo = set(), [pid]
    while todo:
        parent = todo.pop()
        for entry in Path("/proc").iterdir():
            if entry.name.isdigit():
                try:
                    ppid = int((entry / "stat").read_text().rsplit(")", 1)[1].split()[1])
                except (OSError, IndexError, ValueError):
                    continue
                if ppid == parent and int(entry.name) not in found:
                    found.add(int(entry.name))
                    todo.append(int(entry.name))
    return found


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


@pytest.mark.slow
@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="needs Linux /proc")
def test_batch_workers_die_with_their_parent_and_the_next_run_cleans_up(tmp_path):
    """kill -9 of `batch --jobs 2`: workers, forkserver and resource tracker end within
    seconds; the chunk folder in TMPDIR is removed by the next qhat batch."""
    lines = LOCI.read_text().splitlines()
    with open(tmp_path / "big.csv", "w") as handle:
        handle.write(lines[0] + "\n")
        for k in range(20):
            for line in lines[1:]:
                name, rest = line.split(",", 1)
                handle.write(f"{name}_{k},{rest}\n")
    temporary = tmp_path / "tmp"
    temporary.mkdir()
    env = {**os.environ, "TMPDIR": str(temporary)}
    process = subprocess.Popen(
        qhat_command("batch", "big.csv", "--out", "out", "--jobs", 2, "--model", "drift",
                     "--Ne", 10000, "--prior", "empirical", "--quiet"),
        cwd=tmp_path, env=env, stderr=subprocess.DEVNULL, stdout=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline and not (
                list(temporary.glob("qhat-batch-*")) and len(_children(process.pid)) >= 4):
            assert process.poll() is None, "the batch ended before it could be killed"
            time.sleep(0.2)
        time.sleep(1.0)
        family = _children(process.pid)
        assert len(family) >= 4, f"expected tracker, forkserver and 2 workers: {family}"
    finally:
        process.kill()
        process.wait()
    deadline = time.monotonic() + 15
    while time.monotonic() < deadline and any(_alive(pid) for pid in family):
        time.sleep(0.2)
    left = [pid for pid in family if _alive(pid)]
    for pid in left:
        os.kill(pid, signal.SIGKILL)
    assert not left, f"processes outlived the killed batch by 15 s: {left}"
    assert list(temporary.glob("qhat-batch-*")), "the killed run left no chunk folder to test"
    again = run_qhat("batch", LOCI, "--out", "small", "--quiet", cwd=tmp_path,
                     env={"TMPDIR": str(temporary)})
    assert again.returncode == 0, again
    assert list(temporary.iterdir()) == [], (
        f"the next batch did not remove the stale chunk folder: {list(temporary.iterdir())}")
    assert not [p for p in tree(tmp_path) if p.startswith(".")], (
        f"stale lock or partial folder beside the reports: {tree(tmp_path)}")


# -------------------------------------------------------------------------------- umask


@pytest.mark.slow
def test_the_report_folder_and_its_files_follow_the_umask(tmp_path):
    done = run_with(["check", CLAIM, "--out", "report"], tmp_path, umask=0o027)
    assert done.returncode == 0, done.stderr
    out = tmp_path / "report"
    folder_mode = stat.S_IMODE(out.stat().st_mode)
    assert folder_mode == 0o750, f"umask 027: folder mode {folder_mode:o}, want 750 (mkdir(2))"
    modes = {p.name: stat.S_IMODE(p.stat().st_mode) for p in out.iterdir()}
    assert modes == {name: 0o640 for name in [MARKER, *CHECK_FILES]}, (
        f"umask 027: file modes {modes}, want 640 (open(2))")


# ------------------------------------------------------------- unwritable destinations


@pytest.fixture
def unwritable(tmp_path):
    """A folder this process cannot write in (/sys as root, else a 0555 folder)."""
    if os.geteuid() == 0:
        probe = Path("/sys") / "qhat-probe"
        try:
            probe.mkdir()
        except OSError:
            yield Path("/sys")
            return
        probe.rmdir()
        pytest.skip("no folder is read-only for root here")
    folder = tmp_path / "read-only"
    folder.mkdir()
    folder.chmod(0o555)
    yield folder
    folder.chmod(0o755)


@pytest.mark.parametrize("command", [
    ["estimate", STUDY, "--out", "{dir}/x"],
    ["check", CLAIM, "--out", "{dir}/x"],
    ["batch", LOCI, "--out", "{dir}/x"],
    [*EQUILIBRIUM, "--plot", "{dir}/x.png"],
    [*SIMULATE, "--plot", "{dir}/x.png"],
], ids=["estimate", "check", "batch", "equilibrium-plot", "simulate-plot"])
def test_an_unwritable_destination_is_one_line(tmp_path, unwritable, command):
    args = [str(a).replace("{dir}", str(unwritable)) for a in command]
    done = run_qhat(*args, cwd=tmp_path)
    one_error_line(done, unwritable, "cannot write")
    assert tree(tmp_path) == [] or tree(tmp_path) == ["read-only"], tree(tmp_path)


def test_the_default_reports_folder_in_an_unwritable_folder_is_one_line(unwritable):
    done = run_qhat("estimate", STUDY, cwd=unwritable)
    one_error_line(done, "--out", unwritable / "reports")
    assert not (unwritable / "reports").exists()


# ------------------------------------------------------------------------ a full disk


@pytest.mark.parametrize("command,limit", [
    (["check", CLAIM, "--out", "out"], 20_000),
    (["batch", LOCI, "--out", "out", "--quiet"], 20_000),
    ([*EQUILIBRIUM, "--plot", "out.png"], 10_000),
    ([*SIMULATE, "--plot", "out.png"], 10_000),
    pytest.param(["estimate", STUDY, "--out", "out", "--quiet"], 100_000,
                 marks=pytest.mark.slow),
], ids=["check", "batch", "equilibrium-plot", "simulate-plot", "estimate"])
def test_a_file_size_limit_is_one_line_and_leaves_nothing(tmp_path, command, limit):
    """RLIMIT_FSIZE stands in for a full disk: the first write past it fails (EFBIG)."""
    done = run_with(command, tmp_path, preexec=_file_limit(limit))
    one_error_line(done, "out", "File too large", "nothing was written")
    assert tree(tmp_path) == [], f"a failed write left {tree(tmp_path)}"


# --------------------------------------------------------------------- standard streams


def test_stdout_on_dev_full_is_one_line(tmp_path):
    with open("/dev/full", "w") as full:
        done = run_with(EQUILIBRIUM, tmp_path, stdout=full)
    one_error_line(done, "standard output", "No space left on device")


def test_a_closed_stdout_is_refused_before_any_work(tmp_path):
    done = run_with(["check", CLAIM, "--out", "out"], tmp_path, preexec=lambda: os.close(1),
                    stdout=None)
    one_error_line(done, "standard output is closed")
    assert tree(tmp_path) == [], f"a run with no stdout wrote {tree(tmp_path)}"


def test_with_stderr_closed_the_error_line_does_not_go_to_stdout(tmp_path):
    # --h 12 with --s 0.1: the heterozygote's fitness 1 - hs would be negative
    done = subprocess.run(qhat_command(*EQUILIBRIUM[:-1], "12"), cwd=tmp_path,
                          stdin=subprocess.DEVNULL, stdout=subprocess.PIPE, text=True,
                          preexec_fn=lambda: os.close(2), timeout=300)
    assert done.returncode == 2, f"--h 12 must be refused (exit 2); got {done.returncode}"
    assert done.stdout == "", f"the error went to stdout: {done.stdout!r}"


def test_an_ascii_terminal_gets_escapes_not_a_traceback(tmp_path):
    study = tmp_path / "study.toml"
    study.write_text(STUDY.read_text(encoding="utf-8").replace(
        'inheritance = "autosomal"', 'inheritance = "autosómal"'), encoding="utf-8")
    assert "autosómal" in study.read_text(encoding="utf-8"), "the demo study changed shape"
    done = run_qhat("estimate", study, cwd=tmp_path, env={"PYTHONIOENCODING": "ascii"})
    one_error_line(done, "study.toml", "autos\\xf3mal")


# ------------------------------------------------------------------ odd destinations


@pytest.mark.parametrize("command", [
    ["estimate", STUDY, "--out", ""],
    ["check", CLAIM, "--out", ""],
    ["batch", LOCI, "--out", ""],
], ids=["estimate", "check", "batch"])
def test_an_empty_out_is_refused_not_replaced_by_the_default(tmp_path, command):
    done = run_qhat(*command, cwd=tmp_path)
    one_error_line(done, "--out", "empty folder name")
    assert tree(tmp_path) == [], f"--out '' wrote {tree(tmp_path)}"


def test_a_name_too_long_for_the_file_system_is_one_line(tmp_path):
    done = run_qhat("estimate", STUDY, "--out", "a" * 300, cwd=tmp_path)
    one_error_line(done, "--out", "300 bytes long")
    assert tree(tmp_path) == []


@pytest.mark.parametrize("command", [EQUILIBRIUM, SIMULATE], ids=["equilibrium", "simulate"])
def test_a_plot_naming_a_folder_is_one_line(tmp_path, command):
    (tmp_path / "figure.png").mkdir()
    done = run_qhat(*command, "--plot", "figure.png", cwd=tmp_path)
    one_error_line(done, "--plot", "figure.png is a folder")
    assert tree(tmp_path) == ["figure.png"], tree(tmp_path)


@pytest.mark.slow
def test_out_with_missing_parents_creates_them(tmp_path):
    done = run_qhat("check", CLAIM, "--out", "a/b/report", cwd=tmp_path)
    assert done.returncode == 0, done
    assert sorted(p.name for p in (tmp_path / "a/b/report").iterdir()) == sorted(
        [MARKER, *CHECK_FILES]), tree(tmp_path)


def test_parents_made_for_a_run_that_failed_are_removed_again(tmp_path):
    from infer.reporting.folder import check_destination, release_locks

    (tmp_path / "a").mkdir()
    check_destination(tmp_path / "a/b/c/report", force=False)
    assert (tmp_path / "a/b/c").is_dir(), "the missing parents were not created"
    release_locks(failed=True)
    assert tree(tmp_path) == ["a"], f"the parents made for the run stayed: {tree(tmp_path)}"


# ------------------------------------------------------------------ matplotlib backend


@pytest.mark.parametrize("command", [
    [*EQUILIBRIUM, "--plot", "out.png"],
    pytest.param(["check", CLAIM, "--out", "out"], marks=pytest.mark.slow),
    pytest.param(["batch", LOCI, "--out", "out", "--quiet"], marks=pytest.mark.slow),
], ids=["equilibrium", "check", "batch"])
def test_a_nonsense_mplbackend_does_not_break_the_figures(tmp_path, command):
    done = run_qhat(*command, cwd=tmp_path, env={"MPLBACKEND": "nonsense"})
    assert done.returncode == 0 and "Traceback" not in done.stderr, done
    assert (tmp_path / "out").exists() or (tmp_path / "out.png").exists(), tree(tmp_path)


# ---------------------------------------------------------------------- --scheduler


def _listener(greeting: bytes | None):
    """A TCP server on a free local port that sends ``greeting`` (None: stays silent)."""
    server = socket.socket()
    server.bind(("127.0.0.1", 0))
    server.listen()
    held = []

    def serve():
        while True:
            try:
                connection, _ = server.accept()
            except OSError:
                return
            held.append(connection)
            if greeting:
                connection.sendall(greeting)

    threading.Thread(target=serve, daemon=True).start()
    return server, held


@pytest.mark.parametrize("greeting,needle,seconds", [
    (b"SSH-2.0-OpenSSH_9.6\r\n", "not a dask scheduler", 5.0),
    pytest.param(None, "nothing answered", 12.0, marks=pytest.mark.slow),
], ids=["ssh-like", "silent"])
def test_a_scheduler_address_that_is_no_scheduler_fails_fast(tmp_path, greeting, needle,
                                                            seconds):
    """An SSH-like greeting reads as an 8-byte length of about 5.8e18 (distributed.comm.tcp
    frames start with a native uint64 length): refused without allocating it."""
    pytest.importorskip("distributed")
    server, held = _listener(greeting)
    port = server.getsockname()[1]
    try:
        started = time.monotonic()
        done = run_qhat("batch", LOCI, "--out", "out", "--scheduler", f"tcp://127.0.0.1:{port}",
                        cwd=tmp_path, timeout=120)
        took = time.monotonic() - started
    finally:
        server.close()
        for connection in held:
            connection.close()
    one_error_line(done, "--scheduler", f"127.0.0.1:{port}", needle)
    assert took < seconds, f"refusing took {took:.1f} s, want under {seconds} s"
    assert tree(tmp_path) == [], tree(tmp_path)


def test_a_scheduler_port_nobody_listens_on_is_one_line(tmp_path):
    pytest.importorskip("distributed")
    probe = socket.socket()
    probe.bind(("127.0.0.1", 0))
    port = probe.getsockname()[1]
    probe.close()
    done = run_qhat("batch", LOCI, "--out", "out", "--scheduler", f"127.0.0.1:{port}",
                    cwd=tmp_path)
    one_error_line(done, "--scheduler", "Connection refused")
    assert tree(tmp_path) == [], tree(tmp_path)


def test_the_output_helpers_import_nothing_heavy():
    """cli.main imports folder.py on every command: keep it to the standard library."""
    done = run_python("import sys, infer.reporting.folder; "
                      "print(sorted(m for m in ('numpy', 'matplotlib', 'socket') "
                      "if m in sys.modules))")
    assert done.returncode == 0 and done.stdout.strip() == "[]", done
