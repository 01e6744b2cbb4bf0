"""Writing case files safely: atomic replace, the previous version kept, one writer at a time."""
from __future__ import annotations

import json
import os
import secrets
import socket
import stat
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable

from workbench.core.case.events import printable, utc_now
from workbench.core.case.format import SUFFIX, canonical_json
from workbench.core.model import WorkbenchError


class CaseBusy(WorkbenchError):
    """Another writer holds the case's lock (exit code 3: try again later)."""

    exit_code = 3


# ---- the one safe writer ----------------------------------------------------------------------

TMP_SUFFIX = ".wbtmp"
"""Temporary files of this tool end so (``.NAME.<random>.wbtmp``), which lets a writer clean them."""

_NOFOLLOW = getattr(os, "O_NOFOLLOW", 0)
_EXCL = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_CLOEXEC", 0)


def _umask() -> int:
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    old = os.umask(0o022)
    os.umask(old)
    return old


def exclusive_temp(folder: Path, name: str) -> tuple[int, Path]:
    """A new temporary file beside ``name`` with an unpredictable name, opened O_EXCL|O_NOFOLLOW.

    Common practice for atomic replace: the name cannot be guessed ahead, and a file or symbolic
    link planted under it makes the open fail rather than be followed.
    """
    for _ in range(100):
        tmp = folder / f".{name}.{secrets.token_hex(8)}{TMP_SUFFIX}"
        try:
            return os.open(tmp, _EXCL, 0o600), tmp
        except FileExistsError:
            continue
    raise FileExistsError(f"{folder}: no free temporary file name")


def _target_stat(path: Path, what: str) -> os.stat_result | None:
    """The existing target's status; refuses a symbolic link and a file made read-only."""
    try:
        st = os.lstat(path)
    except FileNotFoundError:
        return None
    if stat.S_ISLNK(st.st_mode):
        raise WorkbenchError(f"{path}: the {what} is a symbolic link (to {os.readlink(path)}); workbench does not write "
                             "through links: give the real path")
    if not stat.S_ISREG(st.st_mode):
        raise WorkbenchError(f"{path}: the {what} is not a regular file")
    if not st.st_mode & stat.S_IWUSR:
        raise WorkbenchError(f"{path}: the {what} is read-only (mode {stat.S_IMODE(st.st_mode):04o}); make it "
                             "writable first if it is meant to change")
    return st


def atomic_write(path: Path, data: bytes, what: str = "case file") -> None:
    """Write ``data`` to ``path`` so that a crash leaves either the old or the new file, never a mix.

    Common practice for atomic replace with an exclusive temporary file: the bytes go to a new
    file in the same folder (unpredictable name, ``O_EXCL|O_NOFOLLOW``, never a file someone
    planted), which is given the old file's mode and owner, fsynced, renamed over ``path``, and
    the folder is fsynced so the rename itself is durable.  A ``path`` that is a symbolic link
    or read-only is refused; a new file gets the usual mode (0666 less the umask).
    """
    path = Path(path)
    st = _target_stat(path, what)
    tmp = None
    try:
        fd, tmp = exclusive_temp(path.parent, path.name)
        try:
            if st is None:
                os.fchmod(fd, 0o666 & ~_umask())
            else:
                if (st.st_uid, st.st_gid) != (os.geteuid(), os.getegid()):
                    try:
                        os.fchown(fd, st.st_uid, st.st_gid)
                    except PermissionError:
                        raise WorkbenchError(f"{path}: the {what} belongs to another user (uid {st.st_uid}); "
                                             "replacing it would change its owner") from None
                os.fchmod(fd, stat.S_IMODE(st.st_mode))
            view = memoryview(data)
            while view:
                view = view[os.write(fd, view):]
            os.fsync(fd)
        finally:
            os.close(fd)
        os.replace(tmp, path)
        tmp = None
    except OSError as exc:
        raise WorkbenchError(f"{path}: cannot write the {what}: {exc.strerror or exc}") from None
    finally:
        if tmp is not None:
            try:
                os.unlink(tmp)
            except OSError:
                pass
    fsync_dir(path.parent)


def write_output(path: str | Path, data: bytes, inputs: Iterable[str | Path] = ()) -> None:
    """Write a report or export: never over one of ``inputs``, a case file, its ``.bak`` or its lock; atomically."""
    check_output(path, inputs)
    atomic_write(Path(path), data, "output file")


def check_output(path: str | Path, inputs: Iterable[str | Path] = ()) -> None:
    """Refuse (one line) an output path that names an input, a case file or one of its companions."""
    out = Path(path)
    name = out.name
    if SUFFIX in name or name.endswith(TMP_SUFFIX):
        raise WorkbenchError(f"{out}: refusing to write output over a case file or its companions "
                             "(choose another name)")
    for src in inputs:
        if _same_file(out, Path(src)):
            raise WorkbenchError(f"{out}: refusing to write output over an input ({src}); choose another name")


def _same_file(a: Path, b: Path) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return os.path.realpath(a) == os.path.realpath(b)


def fsync_dir(folder: Path) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:  # platforms without directory handles
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def keep_previous(path: Path, bak: Path, previous: bytes) -> None:
    """Make ``bak`` the version of ``path`` about to be replaced: a hard link to it (no copy), else a copy."""
    try:
        if stat.S_ISLNK(os.lstat(path).st_mode):
            raise WorkbenchError(f"{path}: the case file is a symbolic link; workbench does not write through links")
        for _ in range(100):
            tmp = bak.with_name(f".{bak.name}.{secrets.token_hex(8)}{TMP_SUFFIX}")
            try:
                os.link(path, tmp, follow_symlinks=False)
                break
            except FileExistsError:
                continue
        else:
            raise FileExistsError(f"{bak.parent}: no free temporary file name")
        os.replace(tmp, bak)
    except (NotImplementedError, OSError):  # no hard links here: write a copy
        atomic_write(bak, previous, "previous version (.bak)")


def clean_temps(path: Path) -> list[str]:
    """Remove temporary files a killed writer of this case left (``.NAME.*.wbtmp``, older ``.NAME.PID.tmp``)."""
    gone = []
    for name in os.listdir(path.parent):
        for stem in (path.name, path.name + ".bak"):
            if name.startswith(f".{stem}.") and (name.endswith(TMP_SUFFIX) or name[len(stem) + 2:-4].isdigit()
                                                   and name.endswith(".tmp")):
                try:
                    os.unlink(path.parent / name)  # a link is removed, never followed
                    gone.append(name)
                except OSError:
                    pass
    return gone


from workbench.core.case.anchors import backup_path  # noqa: E402,F401  (kept here for its callers)


def lock_path(path: Path) -> Path:
    """``x.case.json`` -> ``x.case.json.lock`` (who has it open for writing)."""
    return Path(path).with_name(Path(path).name + ".lock")


# ---- the lock against a second writer -------------------------------------------------------

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX: the lock file alone marks the holder
    fcntl = None


@dataclass(frozen=True)
class LockHolder:
    """Who holds a case open for writing (read from the lock file)."""

    author: str
    host: str
    pid: int
    time: str

    def words(self) -> str:
        return f"{printable(self.author)} (host {printable(self.host)}, pid {self.pid}, since {printable(self.time)})"


def _read_holder(fd: int) -> LockHolder | None:
    os.lseek(fd, 0, os.SEEK_SET)
    raw = b""
    while chunk := os.read(fd, 4096):
        raw += chunk
    try:
        d = json.loads(raw.decode("utf-8"))
        return LockHolder(str(d["author"]), str(d["host"]), int(d["pid"]), str(d["time"]))
    except (ValueError, KeyError, TypeError, AttributeError):
        return None


class CaseLock:
    """An exclusive lock beside a case file (``x.case.json.lock``) naming its holder.

    On POSIX the exclusion is an ``flock`` on the lock file, which the system drops when the
    holding process ends however it ends; the file's content (author, host, pid, time) names
    the holder to anyone refused.  A lock file left by a process on this host that no longer
    holds the ``flock`` (it was killed) is stale and is taken over with a notice.
    """

    def __init__(self, path: Path, fd: int):
        self.path, self._fd = path, fd

    @classmethod
    def acquire(cls, case_path: Path, author: str) -> tuple["CaseLock | None", LockHolder | None, str | None]:
        """(lock, None, notice) when taken; (None, holder, None) when someone else holds it."""
        path = lock_path(case_path)
        me = canonical_json({"author": author, "host": socket.gethostname(), "pid": os.getpid(), "time": utc_now()})
        for _attempt in range(5):
            try:
                fd = os.open(path, os.O_RDWR | os.O_CREAT | _NOFOLLOW | (0 if fcntl else os.O_EXCL), 0o644)
            except FileExistsError:
                fd = os.open(path, os.O_RDONLY | _NOFOLLOW)
                holder = _read_holder(fd)
                os.close(fd)
                return None, holder, None
            except OSError as exc:
                raise WorkbenchError(f"{path}: cannot create the lock file: {exc.strerror or exc}") from None
            if fcntl is not None:
                try:
                    fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                except OSError:
                    holder = _read_holder(fd)
                    os.close(fd)
                    return None, holder, None
                try:
                    current = os.stat(path).st_ino == os.fstat(fd).st_ino
                except FileNotFoundError:
                    current = False
                if not current:  # the holder removed the file while we waited: take the new one
                    os.close(fd)
                    continue
            old, notice = _read_holder(fd), None
            if old is not None:
                if old.host != socket.gethostname():
                    os.close(fd)
                    return None, old, None  # cannot tell whether a process on another host is alive
                notice = (f"took over a stale lock left by {old.words()}: that session ended without closing "
                          "the case")
            try:
                os.ftruncate(fd, 0)
                os.lseek(fd, 0, os.SEEK_SET)
                if os.write(fd, me) != len(me):  # no fsync: the holder's name matters only while it lives
                    raise OSError(28, "No space left on device")
            except OSError as exc:  # e.g. the disk is full: leave no empty lock file behind
                cls(path, fd).release()
                raise WorkbenchError(f"{path}: cannot write the lock file: {exc.strerror or exc}") from None
            return cls(path, fd), None, notice
        raise WorkbenchError(f"{path}: cannot take the lock (the lock file keeps changing)")

    @classmethod
    def acquire_waiting(cls, case_path: Path, author: str, wait: float = 0.0
                        ) -> tuple["CaseLock | None", LockHolder | None, str | None]:
        """:meth:`acquire`, trying again for up to ``wait`` seconds while another writer holds the lock."""
        deadline, pause = time.monotonic() + max(0.0, wait), 0.002
        while True:
            lock, holder, notice = cls.acquire(case_path, author)
            if lock is not None or time.monotonic() >= deadline:
                return lock, holder, notice
            time.sleep(min(pause, max(0.0, deadline - time.monotonic())))
            pause = min(pause * 2, 0.025)

    def __del__(self) -> None:  # a session that forgot to close still lets go of the lock
        try:
            self.release()
        except Exception:
            pass

    def release(self) -> None:
        if self._fd is None:
            return
        try:
            os.unlink(self.path)
        except FileNotFoundError:
            pass
        os.close(self._fd)
        self._fd = None
