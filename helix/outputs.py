"""Writing a run's outputs into a folder: all new files or all old ones, never a mix.

A run's files are made in memory first; :func:`write_outputs` then puts them into the
folder as one transaction:

1. lock the folder (``.helix-lock``, an advisory ``flock``): a second run into the
   same folder stops at once instead of interleaving its files;
2. finish or undo an earlier run that was killed half-way (:func:`recover`), and
   remove helix's own stale temporary files;
3. pre-flight every target: not a folder, not a file helix did not write (the
   manifest ``.helix-outputs`` lists what helix wrote), the manifest itself readable;
4. write every file to a temporary name in the same folder (``.helix-RUN.NAME.tmp``)
   and keep a hard link to each file it replaces (``.helix-RUN.NAME.old``);
5. write the journal ``.helix-journal`` (atomically, by rename): from here on the new
   set is complete on disk and the run counts as done;
6. rename every temporary into place, remove outputs of the previous run that this
   run does not make, write the manifest last; remove the journal and the old links.

A failure in steps 1 to 4 leaves the folder as it was.  A failure in step 6 (a rename
refused) rolls back to the previous set from the old links.  A run killed at any
moment (SIGKILL, power cut of the process) leaves either no journal (the old set,
plus stale temporaries that the next run removes) or a complete journal, which the
next run into the folder rolls forward to the new set.  The transaction relies on
``rename`` being atomic within one folder (POSIX).
"""
from __future__ import annotations

import errno
import json
import os
import re
import secrets
import shutil
import stat
from pathlib import Path

from .errors import InputError, OutputError

__all__ = ["MANIFEST", "JOURNAL", "LOCK", "write_outputs", "recover", "folder_lock", "refuse_if_locked"]

MANIFEST = ".helix-outputs"
JOURNAL = ".helix-journal"
LOCK = ".helix-lock"
_OURS = re.compile(r"^\.helix-[0-9a-f]{12}\.(?P<name>.+)\.(?:tmp|old)$")
_PLAIN = re.compile(r"^[^/\\\x00]+$")



def _umask() -> int:
    """The process umask, read when files are written (never at import).  Linux states it
    in /proc; elsewhere it can only be read by setting it, and is restored at once."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return mask

#: Test hook: called with a label before each step of the rename phase (a test makes
#: it pause so that a child process can be killed at that exact point).
_STEP = None


def _step(label: str) -> None:
    if _STEP is not None:
        _STEP(label)


def _tmp(directory: Path, run: str, name: str, kind: str) -> Path:
    return directory / f".helix-{run}.{name}.{kind}"


def _why(exc: OSError) -> str:
    if exc.errno == errno.ENOSPC:
        return "the disk is full"
    if exc.errno in (errno.EACCES, errno.EPERM):
        return "permission denied"
    if exc.errno == errno.EROFS:
        return "the file system is read-only"
    return exc.strerror or type(exc).__name__


class folder_lock:
    """Exclusive advisory lock on an output folder for the length of a ``with``."""

    def __init__(self, directory: Path):
        self.path = directory / LOCK
        self.fd: int | None = None

    def __enter__(self) -> "folder_lock":
        try:
            self.fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o666 & ~_umask())
        except OSError as exc:
            raise OutputError(self.path.parent, f"cannot be written ({_why(exc)})") from None
        try:
            import fcntl
        except ImportError:  # pragma: no cover - not POSIX: no lock, the rest still holds
            return self
        try:
            fcntl.flock(self.fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            os.close(self.fd)
            self.fd = None
            raise OutputError(self.path.parent, "is locked by another helix run writing to it; expected one run "
                              "at a time per folder (try again when it has finished)") from None
        return self

    def __exit__(self, *exc) -> None:
        if self.fd is not None:
            os.close(self.fd)  # closing releases the flock
            self.fd = None


def refuse_if_locked(directory: Path) -> None:
    """Raise OutputError at once when another helix run holds ``directory``'s lock, so a
    run does not compute its outputs only to find it cannot write them.  (The lock
    itself is taken by :func:`write_outputs`.)"""
    if (directory / LOCK).is_file():
        with folder_lock(directory):
            pass


def _write_atomic(path: Path, data: bytes) -> None:
    tmp = path.with_name(path.name + ".helix-journal-tmp")
    with open(tmp, "wb") as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, path)


def _journal(directory: Path, state: str, run: str, names: list[str], removed: list[str],
             had_old: list[str]) -> None:
    _write_atomic(directory / JOURNAL, json.dumps(
        {"state": state, "run": run, "files": names, "remove": removed, "had_old": had_old}).encode())


def _read_journal(directory: Path) -> dict | None:
    path = directory / JOURNAL
    if not path.exists():
        return None
    try:
        data = json.loads(path.read_bytes().decode("utf-8"))
        run = data["run"]
        names = [n for n in data["files"] + data["remove"] + data["had_old"] if not _PLAIN.match(n)]
        if not re.fullmatch(r"[0-9a-f]{12}", run) or names or data["state"] not in ("forward", "back"):
            raise ValueError
        return data
    except (OSError, ValueError, KeyError, TypeError, UnicodeDecodeError, AttributeError):
        raise OutputError(path, "is damaged; expected the journal of an interrupted helix run (remove it and "
                          "the folder's .helix-*.tmp and .helix-*.old files to start afresh)") from None


def _roll_back(directory: Path, j: dict) -> None:
    run = j["run"]
    _journal(directory, "back", run, j["files"], j["remove"], j["had_old"])
    _step("rollback")
    for name in j["files"] + j["remove"]:
        old = _tmp(directory, run, name, "old")
        if old.exists():
            os.replace(old, directory / name)
        elif name in j["files"] and name not in j["had_old"] and (directory / name).is_file():
            os.unlink(directory / name)
    _finish(directory)


def _roll_forward(directory: Path, j: dict) -> None:
    run = j["run"]
    for name in j["files"]:
        tmp = _tmp(directory, run, name, "tmp")
        if tmp.exists():
            _step(f"rename {name}")
            os.replace(tmp, directory / name)
    for name in j["remove"]:
        _step(f"remove {name}")
        if (directory / name).is_file():
            os.unlink(directory / name)
    _finish(directory)


def _finish(directory: Path) -> None:
    """Drop the journal, then every temporary and old link of helix's own."""
    _step("journal removed")
    try:
        os.unlink(directory / JOURNAL)
    except FileNotFoundError:
        pass
    _clean_stale(directory)


def _clean_stale(directory: Path) -> None:
    for entry in os.scandir(directory):
        if (_OURS.match(entry.name) or entry.name.endswith(".helix-journal-tmp")) and entry.is_file(
                follow_symlinks=False):
            try:
                os.unlink(entry.path)
            except FileNotFoundError:
                pass


def recover(directory: Path) -> None:
    """Finish (or undo, if it had started to roll back) a write interrupted in this
    folder, and remove helix's stale temporaries.  Call it holding the folder lock."""
    j = _read_journal(directory)
    if j is None:
        _clean_stale(directory)
        return
    if j["state"] == "back":
        _roll_back(directory, j)
        return
    try:
        _roll_forward(directory, j)
    except OSError:
        _roll_back(directory, j)


def _manifest(directory: Path) -> set[str]:
    path = directory / MANIFEST
    if not os.path.lexists(path):
        return set()
    shown = f"{path}"
    if not path.is_file() or path.is_symlink():
        raise InputError("command line", "-o", f"{shown} is not a file helix wrote; expected the list of helix's "
                         "outputs there, or no file of that name")
    try:
        text = path.read_bytes().decode("utf-8")
    except UnicodeDecodeError:
        raise InputError("command line", "-o", f"{shown} is not the list helix writes (undecodable bytes); "
                         "expected a new folder or one helix wrote before") from None
    except OSError as exc:
        raise OutputError(path, f"cannot be read ({_why(exc)})") from None
    return {n for n in text.split() if _PLAIN.match(n)}


def _preflight(directory: Path, files: dict[str, bytes], ours: set[str]) -> None:
    for name in sorted(files):
        target = directory / name
        if not os.path.lexists(target):
            continue
        if target.is_dir() and not target.is_symlink():
            raise InputError("command line", "-o", f"{target} is a folder; expected no folder where helix writes "
                             "that output")
        if name not in ours:
            raise InputError("command line", "-o", f"{target} exists and was not written by helix; "
                             "expected a new folder or one helix wrote before")
        if not stat.S_ISREG(os.lstat(target).st_mode):
            raise InputError("command line", "-o", f"{target} is not a regular file; expected a file helix wrote")
    if not os.access(directory, os.W_OK | os.X_OK):
        raise OutputError(directory, "cannot be written (permission denied)")


def _link_old(src: Path, dst: Path) -> None:
    try:
        os.link(src, dst)
    except OSError:  # a file system without hard links
        shutil.copy2(src, dst)


def write_outputs(directory: Path, files: dict[str, bytes]) -> list[Path]:
    """Write ``files`` (name -> bytes) into ``directory`` as one transaction (see the
    module docstring); the folder then holds exactly these outputs of helix's, plus
    any files of the user's own.  Returns the paths written."""
    directory = Path(directory)
    if directory.exists() and not directory.is_dir():
        raise InputError("command line", "-o", f"{directory} is a file; expected a folder")
    for name in files:
        if not _PLAIN.match(name) or name.startswith(".helix-"):  # pragma: no cover - helix's own names
            raise ValueError(f"not an output name: {name!r}")
    if directory.is_dir() and not (directory / JOURNAL).exists():
        # Refuse a folder that is not helix's before leaving even a lock file in it;
        # the pre-flight is repeated under the lock.
        _preflight(directory, files, _manifest(directory))
    try:
        directory.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(directory, f"cannot be created ({_why(exc)})") from None
    with folder_lock(directory):
        try:
            recover(directory)
        except OSError as exc:
            raise OutputError(directory, f"an interrupted earlier run cannot be finished ({_why(exc)})") from None
        ours = _manifest(directory)
        _preflight(directory, files, ours)
        run = secrets.token_hex(6)
        names = sorted(files) + [MANIFEST]
        removed = sorted(n for n in ours - set(files) - {MANIFEST}
                         if (directory / n).is_file() and not (directory / n).is_symlink())
        data = dict(files)
        data[MANIFEST] = ("\n".join(sorted(files)) + "\n").encode()
        had_old = [n for n in names + removed if os.path.lexists(directory / n)]
        try:
            for name in names:
                tmp = _tmp(directory, run, name, "tmp")
                with open(tmp, "wb") as fh:
                    fh.write(data[name])
                os.chmod(tmp, 0o666 & ~_umask())
            for name in had_old:
                _link_old(directory / name, _tmp(directory, run, name, "old"))
            _journal(directory, "forward", run, names, removed, had_old)
            _step("journal")
        except OSError as exc:
            _clean_stale(directory)
            raise OutputError(directory, f"cannot be written ({_why(exc)}); the previous outputs are "
                              "unchanged") from None
        except BaseException:
            _clean_stale(directory)
            raise
        j = {"run": run, "files": names, "remove": removed, "had_old": had_old}
        try:
            _roll_forward(directory, j)
        except OSError as exc:
            try:
                _roll_back(directory, j)
            except OSError:
                raise OutputError(directory, f"a rename failed ({_why(exc)}) and so did the roll-back; the "
                                  "next helix run into this folder finishes it") from None
            raise OutputError(directory, f"a rename failed ({_why(exc)}); the previous outputs were "
                              "restored") from None
    return [directory / n for n in sorted(files)]
