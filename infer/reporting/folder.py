"""Report folders: checked, locked, written atomically, marked as qhat's own.

The contract (docs/command-line.md, 'Report folders'):

- A report is written into a hidden temporary sibling ``.NAME.*.partial`` and renamed
  into place when complete. An interrupted run (an exception, SIGINT, or SIGTERM turned
  into an exception by :func:`terminate_as_interrupt`) removes it.
- Every finished folder holds :data:`MARKER`, a small JSON file naming the command that
  wrote it and the files it wrote. ``--force`` replaces only a folder whose every entry
  is a file listed there; anything else (a subfolder, a file qhat did not write, a folder
  without the marker) is refused.
- While a run works towards a destination it holds an advisory lock on
  ``.NAME.qhat-lock`` beside it, so a second run with the same ``--out`` is refused at
  once instead of silently replacing the first one's report.
- A run killed outright (SIGKILL, a power cut) cannot clean up. Its temporary folder
  records the owner's host, process id and start time; the next run writing into the
  same parent folder removes such folders (and stale locks) whose owner is gone.
- Folders and files get the modes the user's umask gives (no forced modes).
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import json
import os
import shlex
import shutil
import signal
import sys
import tempfile
from collections.abc import Iterator
from pathlib import Path

from infer.errors import InputError

__all__ = ["MARKER", "atomic_folder", "check_destination", "check_file", "file_error",
           "note_work_path", "out_path", "release_locks", "remove_stale_work_folders",
           "safe_name", "set_command_line", "terminate_as_interrupt", "work_folder"]

#: the file every report folder qhat writes holds (JSON: command, files)
MARKER = ".qhat-output"
_LOCK_SUFFIX = ".qhat-lock"
_COMMAND: list[str] | None = None
#: destination (real path) -> (lock file descriptor, lock path)
_LOCKS: dict[str, tuple[int, Path]] = {}
#: parent folders this process created for a destination, removed again if the run fails
_CREATED: dict[str, list[Path]] = {}


def safe_name(text: str, fallback: str = "report") -> str:
    """A file-name-safe slug of ``text`` (letters, digits, ``-``, ``_``); never a path."""
    slug = "".join(c if c.isalnum() or c in "-_" else "-" for c in str(text)).strip("-._")
    while "--" in slug:
        slug = slug.replace("--", "-")
    return slug[:80] or fallback


def set_command_line(argv) -> None:
    """Record the command line written into each report's :data:`MARKER`."""
    global _COMMAND
    _COMMAND = ["qhat", *map(str, argv)]


def _command_line() -> str:
    if _COMMAND is not None:
        return shlex.join(_COMMAND)
    return "python " + shlex.join(map(str, sys.argv))


def out_path(text: str | os.PathLike | None, option: str = "--out") -> Path | None:
    """``--out`` as a path: None when not given, refused when given empty."""
    if text is None:
        return None
    if not str(text).strip():
        raise InputError("an empty folder name; name the folder to write", source=option)
    return Path(text)


# -- owners: which process a temporary folder belongs to -------------------------------

def _start_time(pid: int) -> int | None:
    """Start time of process ``pid`` in clock ticks since boot (Linux), else None."""
    try:
        with open(f"/proc/{pid}/stat", "rb") as handle:
            fields = handle.read().rsplit(b")", 1)[1].split()
        return int(fields[19])
    except (OSError, IndexError, ValueError):
        return None


def _host() -> str:
    import socket

    return socket.gethostname()


def _owner() -> dict:
    pid = os.getpid()
    return {"host": _host(), "pid": pid, "start": _start_time(pid)}


def _owner_gone(owner) -> bool:
    """True when ``owner`` (from :func:`_owner`) names a process of this host that ended."""
    if os.name == "nt" or not isinstance(owner, dict) or owner.get("host") != _host():
        return False          # (on Windows os.kill would end the process, not probe it)
    pid = owner.get("pid")
    if not isinstance(pid, int) or pid <= 0:
        return False
    if pid == os.getpid():
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except OSError:       # it exists but belongs to someone else
        return False
    start = owner.get("start")
    now = _start_time(pid)
    return start is not None and now is not None and now != start  # the pid was reused


def _read_json(path: Path):
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None


def _write_json(path: Path, document: dict) -> None:
    path.write_text(json.dumps(document, indent=2) + "\n", encoding="utf-8")


def _mine(entry: os.DirEntry) -> bool:
    try:
        return entry.is_dir(follow_symlinks=False) and (
            not hasattr(os, "getuid") or entry.stat(follow_symlinks=False).st_uid == os.getuid())
    except OSError:
        return False


def _remove_stale(parent: Path) -> None:
    """Remove temporary folders and locks in ``parent`` left by qhat runs that died."""
    try:
        entries = list(os.scandir(parent))
    except OSError:
        return
    for entry in entries:
        name = entry.name
        if not name.startswith("."):
            continue
        if name.endswith(_LOCK_SUFFIX):
            _remove_stale_lock(Path(entry.path))
        elif (name.endswith(".partial") or name.endswith(".old")) and _mine(entry):
            owner = _read_json(Path(entry.path) / MARKER)
            if not isinstance(owner, dict) or not _owner_gone(owner.get("owner")):
                continue
            old, destination = Path(entry.path) / "old", owner.get("destination")
            if name.endswith(".old") and old.is_dir() and isinstance(destination, str):
                # killed between the two renames of --force: put the old report back
                with contextlib.suppress(OSError):
                    if not os.path.lexists(destination):
                        os.rename(old, destination)
            shutil.rmtree(entry.path, ignore_errors=True)


# -- locks ------------------------------------------------------------------------------

def _lock_path(target: Path) -> Path:
    name = target.name
    if len(os.fsencode(name)) > 200:
        name = name[:100] + "-" + hashlib.sha256(os.fsencode(name)).hexdigest()[:16]
    return target.parent / f".{name}{_LOCK_SUFFIX}"


def _try_lock(path: Path) -> int | None:
    """A descriptor of ``path`` locked exclusively, or None if another process holds it."""
    try:
        import fcntl
    except ImportError:   # no advisory locks: an exclusively created file instead
        try:
            return os.open(path, os.O_RDWR | os.O_CREAT | os.O_EXCL, 0o666)
        except FileExistsError:
            return None
    for _ in range(5):
        fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o666)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            os.close(fd)
            return None
        try:
            same = os.stat(path).st_ino == os.fstat(fd).st_ino
        except FileNotFoundError:
            same = False
        if same:
            return fd
        os.close(fd)      # the file was removed by its last holder meanwhile: try again
    return None


def _remove_stale_lock(path: Path) -> None:
    """Remove ``path`` if no process holds its lock (its holder died)."""
    try:
        import fcntl
    except ImportError:
        return
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:
        return
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        if os.stat(path).st_ino == os.fstat(fd).st_ino:
            os.unlink(path)
    except OSError:
        pass
    finally:
        os.close(fd)


def _acquire(target: Path, out: Path, option: str) -> None:
    key = str(target)
    if key in _LOCKS:
        return
    path = _lock_path(target)
    try:
        fd = _try_lock(path)
    except OSError as error:
        raise InputError(f"cannot write in the folder {target.parent}: "
                         f"{_reason(error)}", source=option) from None
    if fd is None:
        holder = _read_json(path) or {}
        pid = holder.get("pid") if isinstance(holder, dict) else None
        who = f" (pid {pid})" if isinstance(pid, int) else ""
        raise InputError(f"{out} is being written by another qhat run{who}; wait for it "
                         f"or name another folder (if no such run is going on, remove {path})",
                         source=option)
    try:
        os.ftruncate(fd, 0)
        os.write(fd, (json.dumps(dict(_owner(), command=_command_line())) + "\n").encode())
    except OSError:
        pass            # the lock holds without its note
    _LOCKS[key] = (fd, path)


def _release(target: Path, failed: bool = False) -> None:
    held = _LOCKS.pop(str(target), None)
    if held is not None:
        fd, path = held
        with contextlib.suppress(OSError):
            os.unlink(path)
        with contextlib.suppress(OSError):
            os.close(fd)
    created = _CREATED.pop(str(target), [])
    if failed:
        for folder in reversed(created):
            with contextlib.suppress(OSError):
                folder.rmdir()   # only if still empty


def release_locks(failed: bool = True) -> None:
    """Release every destination lock this process holds (the command line's last step).

    With ``failed``, parent folders created for a destination that was never written are
    removed again if they are empty.
    """
    for key in list(_LOCKS) + [k for k in _CREATED if k not in _LOCKS]:
        _release(Path(key), failed=failed and not os.path.lexists(key))


# -- checks -------------------------------------------------------------------------------

def _reason(error: OSError) -> str:
    if error.errno == errno.ENAMETOOLONG:
        return "the name is too long for the file system"
    return error.strerror or str(error)


def _name_max(folder: Path) -> int:
    probe = folder
    while not probe.is_dir() and probe != probe.parent:
        probe = probe.parent
    try:
        return os.pathconf(probe, "PC_NAME_MAX")
    except (OSError, ValueError, AttributeError):
        return 255


def _foreign_entry(target: Path) -> str | None:
    """Why ``target`` (an existing folder) may not be replaced, or None if it may."""
    try:
        entries = sorted(os.scandir(target), key=lambda e: e.name)
    except OSError as error:
        return f"cannot be read ({_reason(error)})"
    if not entries:
        return None
    marker = _read_json(target / MARKER)
    files = marker.get("files") if isinstance(marker, dict) else None
    if not isinstance(files, list):
        return f"was not written by qhat (it has no {MARKER} file)"
    for entry in entries:
        if entry.name == MARKER:
            continue
        if entry.name not in files or not entry.is_file(follow_symlinks=False):
            kind = "the folder " if entry.is_dir(follow_symlinks=False) else ""
            return f"holds {kind}{entry.name}, which qhat did not write"
    return None


def _make_parents(folder: Path, key: str, option: str) -> None:
    """Create ``folder`` and its missing parents, remembering which were made."""
    missing = []
    probe = folder
    while not os.path.lexists(probe) and probe != probe.parent:
        missing.append(probe)
        probe = probe.parent
    if not probe.is_dir():
        raise InputError(f"{probe} is not a folder", source=option)
    for path in reversed(missing):
        try:
            path.mkdir()
        except FileExistsError:
            continue
        except OSError as error:
            raise InputError(f"cannot create the folder {path}: {_reason(error)}",
                             source=option) from None
        _CREATED.setdefault(key, []).append(path)


def check_destination(out: Path, force: bool, option: str = "--out") -> Path:
    """Check ``out`` can become a report folder, lock it, and return its real path.

    Refused (:class:`~infer.errors.InputError`): an empty name; the current folder or
    one above it; a name too long for the file system; a symbolic link to nothing; a
    file; an existing folder without ``force``; with ``force``, a folder holding
    anything qhat did not write (see :data:`MARKER`); a destination another qhat run is
    writing. Missing parent folders are created (and removed again if the run fails).
    Temporary folders and locks left in the parent by qhat runs that died are removed.
    A second call for the same destination in the same process only re-checks.
    """
    if not str(out).strip():
        raise InputError("an empty folder name; name the folder to write", source=option)
    out = Path(out)
    if out.name in ("", ".", ".."):
        raise InputError(f"{out} is the current folder or above it; name a new folder",
                         source=option)
    if os.path.islink(out) and not os.path.exists(out):
        raise InputError(f"{out} is a symbolic link to {os.readlink(out)}, which does not "
                         "exist", source=option)
    target = Path(os.path.realpath(out))
    here = Path.cwd().resolve()
    if target == here or target in here.parents:
        raise InputError(f"{out} is the current folder or above it; name a new folder",
                         source=option)
    limit = _name_max(target.parent)
    if len(os.fsencode(target.name)) > limit:
        raise InputError(f"the folder name {target.name[:40]}... is "
                         f"{len(os.fsencode(target.name))} bytes long; the file system "
                         f"allows {limit}", source=option)
    if target.exists() and not target.is_dir():
        raise InputError(f"{out} exists and is not a folder", source=option)
    if target.exists() and not force:
        raise InputError(f"{out} already exists; use --force to replace it", source=option)
    if target.exists():
        why = _foreign_entry(target)
        if why is not None:
            raise InputError(f"{out} {why}; refusing to replace it", source=option)
    key = str(target)
    if key not in _LOCKS:
        _make_parents(target.parent, key, option)
        if not os.access(target.parent, os.W_OK | os.X_OK):
            _release(target, failed=True)
            raise InputError(f"cannot write in the folder {target.parent}: permission "
                             "denied", source=option)
        try:
            _acquire(target, out, option)
        except InputError:
            _release(target, failed=True)
            raise
        _remove_stale(target.parent)
    return target


def check_file(path: str | os.PathLike, option: str = "--plot") -> Path:
    """Check that the single file ``path`` can be written (``--plot FILE.png``).

    Refused: a folder, or a folder in which this process may not create files (the
    file is written under a temporary name and renamed, so the folder must be writable).
    """
    path = Path(path)
    if path.is_dir():
        raise InputError(f"{path} is a folder; name a .png file", source=option)
    folder = Path(os.path.realpath(path)).parent
    if not folder.is_dir():
        raise InputError(f"{path}: folder {folder} does not exist", source=option)
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(f"cannot write in the folder {folder}: permission denied",
                         source=option)
    return path


def file_error(error: OSError, path: str | os.PathLike, option: str = "--plot") -> InputError:
    """The one-line error for an operating system error while writing ``path``."""
    return InputError(f"cannot write {path}: {_reason(error)}; nothing was written",
                      source=option)


def _mode(kind: int) -> int:
    umask = os.umask(0)
    os.umask(umask)
    return kind & ~umask


def _entries(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name != MARKER)


@contextlib.contextmanager
def atomic_folder(out: Path, force: bool = False, option: str = "--out") -> Iterator[Path]:
    """Yield a temporary folder that becomes ``out`` when the block completes.

    Parameters
    ----------
    out : pathlib.Path
        The final folder. A symbolic link to a folder is kept: its target is replaced.
    force : bool
        Replace an existing ``out`` that qhat wrote.
    option : str
        The option named in error messages.

    Raises
    ------
    infer.errors.InputError
        For a refused destination (:func:`check_destination`) and for an operating
        system error while writing (a full disk, a file size limit, a lost folder),
        naming the folder; nothing half-written is left.
    """
    out = Path(out)
    target = check_destination(out, force, option)
    parent = target.parent
    owner = {"owner": _owner(), "destination": str(target), "command": _command_line()}
    done = False
    try:
        temporary = Path(tempfile.mkdtemp(prefix=f".{target.name[:80]}.", suffix=".partial",
                                          dir=parent))
    except OSError as error:
        _release(target, failed=True)
        raise InputError(f"cannot write in the folder {parent}: {_reason(error)}",
                         source=option) from None
    try:
        _write_json(temporary / MARKER, owner)
        yield temporary
        _write_json(temporary / MARKER, {"written_by": "qhat", "command": _command_line(),
                                         "files": _entries(temporary)})
        os.chmod(temporary, _mode(0o777))
        if target.exists():
            if not force:
                raise InputError(f"{out} was created while this run was writing; the "
                                 "report was not written", source=option)
            why = _foreign_entry(target)
            if why is not None:
                raise InputError(f"{out} {why}; refusing to replace it", source=option)
            retired = Path(tempfile.mkdtemp(prefix=f".{target.name[:80]}.", suffix=".old",
                                            dir=parent))
            _write_json(retired / MARKER, owner)
            os.rename(target, retired / "old")
            try:
                os.rename(temporary, target)
            except BaseException:
                os.rename(retired / "old", target)  # put the old report back
                shutil.rmtree(retired, ignore_errors=True)
                raise
            shutil.rmtree(retired, ignore_errors=True)
        else:
            try:
                os.rename(temporary, target)
            except OSError as error:
                if error.errno in (errno.ENOTEMPTY, errno.EEXIST):
                    raise InputError(f"{out} was created while this run was writing; the "
                                     "report was not written", source=option) from None
                raise
        done = True
    except OSError as error:
        shutil.rmtree(temporary, ignore_errors=True)
        where = f" ({error.filename})" if error.filename else ""
        raise InputError(f"cannot write the report folder {out}: {_reason(error)}{where}; "
                         "nothing was written", source=option) from None
    except BaseException:
        shutil.rmtree(temporary, ignore_errors=True)
        raise
    finally:
        _release(target, failed=not done)


# -- private work folders (qhat batch's chunk store) -------------------------------------

def remove_stale_work_folders(prefix: str, parent: str | os.PathLike | None = None) -> None:
    """Remove the work folders ``prefix*`` in ``parent`` whose owner process died.

    ``parent`` defaults to the temporary folder; see :func:`work_folder`.
    """
    parent = Path(parent or tempfile.gettempdir())
    try:
        entries = list(os.scandir(parent))
    except OSError:
        return
    for entry in entries:
        if entry.name.startswith(prefix) and _mine(entry):
            note = _read_json(Path(entry.path) / MARKER)
            if isinstance(note, dict) and _owner_gone(note.get("owner")):
                for also in note.get("also", []):
                    _remove_noted(parent, also)
                shutil.rmtree(entry.path, ignore_errors=True)


def _remove_noted(parent: Path, path) -> None:
    """Remove a folder :func:`note_work_path` recorded, if it is one of ours in ``parent``."""
    if not isinstance(path, str) or Path(path).parent != parent:
        return
    with contextlib.suppress(OSError):
        for entry in os.scandir(parent):
            if entry.path == path and _mine(entry):
                shutil.rmtree(path, ignore_errors=True)


def note_work_path(folder: str | os.PathLike, path: str | os.PathLike) -> None:
    """Record in work folder ``folder`` another temporary folder of this run.

    Such a folder (one a library made beside it, such as multiprocessing's) is removed
    with the work folder if the run dies.
    """
    note_file = Path(folder) / MARKER
    note = _read_json(note_file)
    if isinstance(note, dict):
        note.setdefault("also", []).append(str(path))
        with contextlib.suppress(OSError):
            _write_json(note_file, note)


@contextlib.contextmanager
def work_folder(prefix: str) -> Iterator[Path]:
    """A private temporary folder that records its owner; removed on exit.

    Folders of the same ``prefix`` left by runs that were killed are removed first.
    """
    remove_stale_work_folders(prefix)
    folder = Path(tempfile.mkdtemp(prefix=prefix))
    try:
        _write_json(folder / MARKER, {"owner": _owner(), "command": _command_line()})
        yield folder
    finally:
        shutil.rmtree(folder, ignore_errors=True)


@contextlib.contextmanager
def terminate_as_interrupt() -> Iterator[None]:
    """Within the block, SIGTERM raises KeyboardInterrupt so clean-up code runs."""

    def handler(signum, frame):
        raise KeyboardInterrupt

    try:
        previous = signal.signal(signal.SIGTERM, handler)
    except ValueError:  # not the main thread
        yield
        return
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)
