"""Writing case files safely: atomic replace, the previous version kept, one writer at a time."""
from __future__ import annotations

import json
import os
import socket
from dataclasses import dataclass
from pathlib import Path

from workbench.core.case.events import printable, utc_now
from workbench.core.case.format import canonical_json
from workbench.core.model import WorkbenchError


def atomic_write(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` so that a crash leaves either the old or the new file, never a mix.

    A temporary file in the same folder is written and fsynced, renamed over ``path``, and
    the folder is fsynced so the rename itself is durable.
    """
    path = Path(path)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o644)
        try:
            view = memoryview(data)
            while view:
                view = view[os.write(fd, view):]
            os.fsync(fd)
        finally:
            os.close(fd)
        os.replace(tmp, path)
    except OSError as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise WorkbenchError(f"{path}: cannot write the case file: {exc.strerror or exc}") from None
    fsync_dir(path.parent)


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


def backup_path(path: Path) -> Path:
    """``x.case.json`` -> ``x.case.json.bak`` (the previous version)."""
    return Path(path).with_name(Path(path).name + ".bak")


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
                fd = os.open(path, os.O_RDWR | os.O_CREAT | (0 if fcntl else os.O_EXCL), 0o644)
            except FileExistsError:
                fd = os.open(path, os.O_RDONLY)
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
            os.ftruncate(fd, 0)
            os.lseek(fd, 0, os.SEEK_SET)
            os.write(fd, me)
            os.fsync(fd)
            return cls(path, fd), None, notice
        raise WorkbenchError(f"{path}: cannot take the lock (the lock file keeps changing)")

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
