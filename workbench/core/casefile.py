"""Case files on disk: canonical JSON, the hash chain, the data fingerprint and safe writes.

Layout of a ``*.case.json`` file (UTF-8)::

    {
     "format": "workbench.case",
     "version": 1,
     "data": {...the data reference...},
     "trail": [
      {...event 1, canonical JSON...},
      ...
     ]
    }

Each event carries the SHA-256 of its canonical JSON (sorted keys, no whitespace, UTF-8,
without its own ``hash`` field), which includes ``prev``, the previous event's hash.  The
first event stores the hash of the data reference.  :class:`Case` opens, appends (atomic
replace, previous version kept as ``*.bak``, a lock against a second writer) and :func:`verify`
checks a file end to end.
"""
from __future__ import annotations

import hashlib
import json
import math
import os
import re
import socket
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .case import (
    DEFAULT_CAUSES, FORMAT, VERSION, CaseState, Event, apply, default_author, exclusion_payload, limits_gaps,
    printable, replay, snapshot_difference, utc_now,
)
from .model import (
    LAYOUTS, Analysis, Dataset, Exclusion, FrozenLimits, Layout, LayoutRequest, Settings, WorkbenchError,
)

SUFFIX = ".case.json"


# ---- canonical JSON and hashes --------------------------------------------------------------

def jsonable(obj: Any) -> Any:
    """Plain JSON values: numpy scalars and arrays to Python, tuples to lists, NaN and ±inf to None."""
    if isinstance(obj, dict):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v) for v in obj]
    if hasattr(obj, "tolist") and not isinstance(obj, (str, bytes)):
        return jsonable(obj.tolist())
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    if obj is None or isinstance(obj, (str, bool, int, float)):
        return obj
    raise WorkbenchError(f"cannot store a {type(obj).__name__} in a case file")


def canonical_json(obj: Any) -> bytes:
    """Sorted keys, no whitespace, UTF-8 (non-ASCII kept as is), no NaN."""
    try:
        return json.dumps(obj, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                          allow_nan=False).encode("utf-8")
    except UnicodeEncodeError:
        raise WorkbenchError("text is not valid Unicode (it holds a lone surrogate)") from None
    except (TypeError, ValueError) as exc:
        raise WorkbenchError(f"cannot store value in a case file: {exc}") from None


def sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def event_hash(event: dict) -> str:
    """SHA-256 of an event's canonical JSON without its own ``hash`` field."""
    return sha256(canonical_json({k: v for k, v in event.items() if k != "hash"}))


def seal(body: dict, prev: str | None) -> Event:
    """A stored event from its body (seq, time, author, kind, payload, limits...)."""
    d = json.loads(canonical_json(jsonable({**body, "prev": prev})))
    d["hash"] = event_hash(d)
    return Event.from_dict(d, body["seq"])


# ---- the data reference ---------------------------------------------------------------------

@dataclass(frozen=True)
class DataRef:
    """What the case was built on."""

    path: str
    """The data file, relative to the case file's folder (``/`` separators)."""
    sha256: str
    """SHA-256 of the file's bytes at creation."""
    rows: int
    """Data rows at creation."""
    size_bytes: int
    """File size at creation (the prefix that must still hash to ``sha256``)."""
    layout: Layout
    """The column mapping that was used."""
    request: LayoutRequest
    """The layout options that produced it (given again when the data are reloaded)."""

    def as_dict(self) -> dict[str, Any]:
        return {"path": self.path, "sha256": self.sha256, "rows": self.rows, "size_bytes": self.size_bytes,
                "layout": self.layout.as_dict(), "request": self.request.as_dict()}


_LAYOUT_STR = ("subgroup", "stream", "value", "time", "n", "mean", "range", "sd", "count", "size")
_REQUEST_STR = ("kind", "subgroup", "stream", "value", "time", "count", "size")


def data_ref_from_dict(d: Any, source: str) -> DataRef:
    where = f"{source}: data reference"
    if not isinstance(d, dict):
        raise WorkbenchError(f"{where} must be an object")
    if set(d) != {"path", "sha256", "rows", "size_bytes", "layout", "request"}:
        raise WorkbenchError(f"{where} needs exactly path, sha256, rows, size_bytes, layout, request")
    if not isinstance(d["path"], str) or not d["path"] or not _HEX64.fullmatch(str(d["sha256"])):
        raise WorkbenchError(f"{where} has a bad path or sha256")
    if any(type(d[k]) is not int or d[k] < 0 for k in ("rows", "size_bytes")):
        raise WorkbenchError(f"{where}: rows and size_bytes must be whole numbers")
    lay, req = d["layout"], d["request"]
    _check_fields(lay, where + " layout", _LAYOUT_STR, {"kind", "streams", "detected"})
    _check_fields(req, where + " request", _REQUEST_STR, {"streams", "skip_bad"})
    if lay.get("kind") not in LAYOUTS or not isinstance(lay.get("detected", True), bool):
        raise WorkbenchError(f"{where}: unknown layout kind {lay.get('kind')!r}")
    if not isinstance(req.get("skip_bad", False), bool):
        raise WorkbenchError(f"{where}: skip_bad must be true or false")
    return DataRef(d["path"], d["sha256"], d["rows"], d["size_bytes"], Layout.from_dict(lay),
                   LayoutRequest.from_dict(req))


def _check_fields(d: Any, where: str, strings: tuple[str, ...], other: set[str]) -> None:
    if not isinstance(d, dict) or set(d) - set(strings) - other:
        raise WorkbenchError(f"{where} must be an object with known fields only")
    if any(d.get(k) is not None and not isinstance(d[k], str) for k in strings):
        raise WorkbenchError(f"{where}: column names must be strings")
    streams = d.get("streams", [])
    if not isinstance(streams, list) or not all(isinstance(s, str) for s in streams):
        raise WorkbenchError(f"{where}: streams must be a list of names")


_HEX64 = re.compile(r"[0-9a-f]{64}")


@dataclass(frozen=True)
class DataStatus:
    """How the data file compares with the recorded fingerprint."""

    status: str
    """same | appended | changed | missing."""
    path: Path
    """The data file, resolved against the case file's folder."""
    size_bytes: int | None
    """Its current size (None when missing)."""
    message: str
    """One line in plain words."""

    @property
    def usable(self) -> bool:
        return self.status in ("same", "appended")


def check_data(ref: DataRef, case_path: Path) -> DataStatus:
    """Compare the data file with the fingerprint: same, grown by appended rows, changed or missing."""
    path = (Path(case_path).parent / ref.path) if not Path(ref.path).is_absolute() else Path(ref.path)
    shown = str(path)
    try:
        head, whole, size, tail_newlines = hashlib.sha256(), hashlib.sha256(), 0, 0
        with open(path, "rb") as fh:
            while chunk := fh.read(1 << 20):
                keep = max(0, min(len(chunk), ref.size_bytes - size))
                head.update(chunk[:keep])
                whole.update(chunk)
                tail_newlines += chunk[keep:].count(b"\n")
                size += len(chunk)
    except FileNotFoundError:
        return DataStatus("missing", path, None, f"the data file {shown} is missing (recorded as {ref.path})")
    except OSError as exc:
        return DataStatus("missing", path, None, f"the data file {shown} cannot be read: {exc.strerror}")
    if size == ref.size_bytes and whole.hexdigest() == ref.sha256:
        return DataStatus("same", path, size, f"the data file {shown} is unchanged")
    if size > ref.size_bytes and head.hexdigest() == ref.sha256:
        return DataStatus("appended", path, size,
                          f"the data file {shown} has grown by {size - ref.size_bytes} bytes (about {tail_newlines} "
                          "rows) since the case was created; the new rows are Phase II material")
    return DataStatus("changed", path, size,
                      f"the data file {shown} has changed since the case was created (its first {ref.size_bytes} "
                      "bytes no longer match the recorded SHA-256)")


# ---- reading and writing the document -------------------------------------------------------

@dataclass(frozen=True)
class Document:
    """A parsed case file."""

    data: DataRef
    data_dict: dict
    """The data reference exactly as stored (written back unchanged)."""
    events: tuple[Event, ...]
    state: CaseState
    chain_break: tuple[int, str] | None
    """(event number, what is wrong) at the first break of the hash chain, or None."""


def _reject_constant(name: str) -> None:
    raise WorkbenchError(f"{name} is not allowed in a case file")


def read_json(raw: bytes, source: str) -> dict:
    """The top-level object, with the format name and version checked; positions given as line:column."""
    if not raw.strip():
        raise WorkbenchError(f"{source}: the case file is empty")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        col = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
        raise WorkbenchError(f"{source}:{line}:{col}: the case file is not valid UTF-8") from None
    try:
        doc = json.loads(text, parse_constant=_reject_constant)
    except json.JSONDecodeError as exc:
        hint = " (the file ends early: it may be truncated)" if exc.pos >= len(text.rstrip()) else ""
        raise WorkbenchError(f"{source}:{exc.lineno}:{exc.colno}: the case file is not valid JSON: {exc.msg}{hint}") \
            from None
    except RecursionError:
        raise WorkbenchError(f"{source}: the case file is nested too deeply to be a case file") from None
    except ValueError as exc:  # e.g. an integer with too many digits
        raise WorkbenchError(f"{source}: the case file is not valid JSON: {exc}") from None
    if not isinstance(doc, dict) or doc.get("format") != FORMAT:
        raise WorkbenchError(f"{source}: not a workbench case file (no \"format\": \"{FORMAT}\")")
    version = doc.get("version")
    if type(version) is not int or version < 1:
        raise WorkbenchError(f"{source}: the case file has no valid format version")
    if version > VERSION:
        raise WorkbenchError(f"{source}: written by a newer workbench (case format version {version}); this one "
                             f"reads version {VERSION} — upgrade workbench to open it")
    extra = sorted(set(doc) - {"format", "version", "data", "trail"})
    if extra:
        raise WorkbenchError(f"{source}: unknown top-level field {extra[0]!r}")
    if not isinstance(doc.get("trail"), list) or not doc["trail"]:
        raise WorkbenchError(f"{source}: the case file has no trail of events")
    return doc


def chain_break(doc: dict) -> tuple[int, str] | None:
    """The first event (from 1) where the hash chain breaks, with the reason; None when whole."""
    prev = None
    for i, ev in enumerate(doc["trail"], 1):
        if not isinstance(ev, dict):
            return i, "it is not a JSON object"
        try:
            computed = event_hash(ev)
        except WorkbenchError as exc:
            return i, str(exc)
        if ev.get("hash") != computed:
            return i, "its content does not match its hash (it was changed after it was written)"
        if ev.get("prev") != prev:
            return i, f"it does not follow event {i - 1} (the link to the previous event is broken)"
        if i == 1:
            payload = ev.get("payload")
            try:
                ref_hash = sha256(canonical_json(doc.get("data")))
            except WorkbenchError as exc:
                return 1, str(exc)
            if not isinstance(payload, dict) or payload.get("data_ref") != ref_hash:
                return 1, "the data reference no longer matches the one recorded in event 1 (it was edited)"
        prev = computed
    return None


def parse(raw: bytes, source: str) -> Document:
    """Parse, check and replay a case file; raises WorkbenchError (one line) on anything malformed."""
    doc = read_json(raw, source)
    broken = chain_break(doc)
    data = data_ref_from_dict(doc.get("data"), source)
    try:
        events = tuple(Event.from_dict(ev, i) for i, ev in enumerate(doc["trail"], 1))
        state = replay(events)
    except WorkbenchError as exc:
        raise WorkbenchError(f"{source}: {exc}") from None
    except (TypeError, ValueError, KeyError, AttributeError) as exc:  # safety net: malformed values
        raise WorkbenchError(f"{source}: malformed case file ({type(exc).__name__}: {exc})") from None
    return Document(data, doc["data"], events, state, broken)


def render(data: dict, events: tuple[Event, ...]) -> bytes:
    """The bytes of a case file: one event a line, each in canonical JSON."""
    lines = [b'{', b' "format": ' + canonical_json(FORMAT) + b',', b' "version": ' + canonical_json(VERSION) + b',',
             b' "data": ' + canonical_json(data) + b',', b' "trail": [']
    body = [b'  ' + canonical_json(ev.as_dict()) for ev in events]
    lines.append(b',\n'.join(body))
    lines += [b' ]', b'}', b'']
    return b'\n'.join(lines)


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

    def release(self) -> None:
        if self._fd is None:
            return
        try:
            os.unlink(self.path)
        except FileNotFoundError:
            pass
        os.close(self._fd)
        self._fd = None


# ---- a case open in a session ---------------------------------------------------------------

def default_case_path(data_path: str | Path) -> Path:
    """``casefiles/<data-stem>.case.json`` relative to the current folder."""
    return Path("casefiles") / (Path(data_path).stem + SUFFIX)


def _relative(data_path: str | Path, folder: Path) -> str:
    target = Path(data_path).resolve()
    try:
        return Path(os.path.relpath(target, folder.resolve())).as_posix()
    except ValueError:  # another drive
        return target.as_posix()


def _read(path: Path) -> bytes:
    try:
        return path.read_bytes()
    except FileNotFoundError:
        raise WorkbenchError(f"{path}: no such case file") from None
    except OSError as exc:
        raise WorkbenchError(f"{path}: cannot read the case file: {exc.strerror or exc}") from None


class Case:
    """A case file open in a session: its replayed state, and the actions that extend its trail.

    Every action appends one event and writes the whole file by atomic replace (keeping the
    previous version as ``*.bak``) before it returns, so an acknowledged action survives a
    crash.  A case opened read-only (asked for, locked by another writer, broken trail, data
    changed or missing) refuses actions with the reason.
    """

    def __init__(self, path: Path, doc: Document, raw: bytes, author: str,
                 lock: CaseLock | None, readonly_reason: str | None, data_status: DataStatus, notices: list[str]):
        self.path = Path(path)
        """The case file."""
        self.data = doc.data
        """The data reference (DataRef)."""
        self.events = doc.events
        """The trail, as stored."""
        self.state = doc.state
        """The replay of the trail (CaseState)."""
        self.chain_break = doc.chain_break
        self.author = author
        """Author used for actions that name none."""
        self.readonly_reason = readonly_reason
        """Why actions are refused, or None."""
        self.data_status = data_status
        self.notices = notices
        """Plain-words notices from opening (data grown, stale lock taken over, holder of the lock)."""
        self._data_dict, self._raw, self._lock = doc.data_dict, raw, lock
        self._cache: tuple[Any, str, Any] | None = None

    @property
    def readonly(self) -> bool:
        return self.readonly_reason is not None

    # -- opening and creating

    @classmethod
    def open(cls, path: str | Path, readonly: bool = False, author: str | None = None) -> "Case":
        """Open a case; the state is the replay of its trail.  Never writes the case file."""
        path, author = Path(path), default_author(author)
        notices: list[str] = []
        lock = reason = None
        if readonly:
            reason = "opened read-only"
        else:
            if not path.is_file():
                _read(path)  # the one-line error for a missing file
            lock, holder, notice = CaseLock.acquire(path, author)
            if notice:
                notices.append(notice)
            if lock is None:
                who = holder.words() if holder else "another session (its lock file names no holder yet)"
                reason = f"{path} is open for writing by {who}; this view is read-only"
                notices.append(reason)
        try:
            raw = _read(path)
            doc = parse(raw, str(path))
            status = check_data(doc.data, path)
        except BaseException:
            if lock:
                lock.release()
            raise
        if doc.chain_break:
            n, why = doc.chain_break
            notices.append(f"{path}: the trail is broken at event {n}: {why}; opened read-only")
            reason = reason or f"the trail is broken at event {n} (run workbench verify)"
        if status.status == "appended":
            notices.append(status.message)
        elif not status.usable:
            notices.append(status.message + ("" if reason else "; opened read-only"))
            reason = reason or status.message
        if lock and reason:
            lock.release()
            lock = None
        return cls(path, doc, raw, author, lock, reason, status, notices)

    @classmethod
    def create(cls, data_path: str | Path, request: LayoutRequest, settings: Settings, author: str | None = None,
               case_path: str | Path | None = None) -> "Case":
        """Load the data, compute the first limits and write a new case (never over an existing one)."""
        from .analysis import analyse, limits_snapshot
        from .data import load
        dataset = load(str(data_path), request)
        return cls.create_for(dataset, request, settings, author, case_path,
                              limits=limits_snapshot(analyse(dataset, settings)))

    @classmethod
    def create_for(cls, dataset: Dataset, request: LayoutRequest, settings: Settings, author: str | None = None,
                   case_path: str | Path | None = None, limits: dict | None = None) -> "Case":
        """A new case for an already loaded dataset (``limits``: its first limits snapshot)."""
        author = default_author(author)
        path = Path(case_path) if case_path else default_case_path(dataset.path)
        if not path.name.endswith(SUFFIX):
            raise WorkbenchError(f"{path}: a case file's name ends in {SUFFIX}")
        if path.exists():
            raise WorkbenchError(f"{path} already exists: open it, or give another name with -o")
        try:
            path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise WorkbenchError(f"{path.parent}: cannot create the folder: {exc.strerror or exc}") from None
        lock, holder, _notice = CaseLock.acquire(path, author)
        if lock is None:
            raise WorkbenchError(f"{path} is being created by {holder.words() if holder else 'another session'}")
        try:
            if path.exists():
                raise WorkbenchError(f"{path} already exists: open it, or give another name with -o")
            data_dict = DataRef(_relative(dataset.path, path.parent), dataset.sha256, int(dataset.rows),
                                int(dataset.size_bytes), dataset.layout, request).as_dict()
            payload = {"settings": settings.as_dict(), "causes": list(DEFAULT_CAUSES),
                       "data_ref": sha256(canonical_json(data_dict))}
            ev = seal(_body(1, "created", payload, author, None, limits, int(dataset.size_bytes)), None)
            doc = Document(data_ref_from_dict(data_dict, str(path)), data_dict, (ev,), replay((ev,)), None)
            raw = render(data_dict, doc.events)
            atomic_write(path, raw)
        except BaseException:
            lock.release()
            raise
        status = DataStatus("same", Path(dataset.path), int(dataset.size_bytes), "the data file is unchanged")
        return cls(path, doc, raw, author, lock, None, status, [])

    def close(self) -> None:
        """Release the lock (the file is already written)."""
        if self._lock:
            self._lock.release()
            self._lock = None

    def __enter__(self) -> "Case":
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()

    # -- appending

    def _check_writable(self) -> None:
        if self.readonly_reason:
            raise WorkbenchError(f"{self.path}: read-only: {self.readonly_reason}")

    def _event(self, kind: str, payload: dict, author: str | None, before: dict | None = None,
               after: dict | None = None, data_bytes: int | None = None) -> tuple[Event, CaseState]:
        self._check_writable()
        body = _body(self.state.seq + 1, kind, payload, default_author(author or self.author), before, after,
                     data_bytes if (before is not None or after is not None) else None)
        ev = seal(body, self.state.head_hash)
        return ev, apply(self.state, ev)

    def _append(self, kind: str, payload: dict, author: str | None = None, before: dict | None = None,
                after: dict | None = None, data_bytes: int | None = None) -> Event:
        ev, state = self._event(kind, payload, author, before, after,
                                self.data.size_bytes if data_bytes is None else data_bytes)
        raw = render(self._data_dict, self.events + (ev,))
        on_disk = _read(self.path)
        if on_disk != self._raw:
            raise WorkbenchError(f"{self.path} was changed by something else since it was opened; reopen it")
        atomic_write(backup_path(self.path), self._raw)
        atomic_write(self.path, raw)
        self._raw, self.events, self.state = raw, self.events + (ev,), state
        return ev

    def exclude(self, target: Exclusion, reason: str, cause: str | None = None, signal: str | None = None,
                limits_before: dict | None = None, limits_after: dict | None = None, author: str | None = None,
                data_bytes: int | None = None) -> Event:
        """Leave a subgroup or one reading out of the limits (reason required)."""
        return self._append("exclude", _exclude_payload(target, reason, cause, signal), author, limits_before,
                            limits_after, data_bytes)

    def restore(self, target: Exclusion, reason: str, limits_before: dict | None = None,
                limits_after: dict | None = None, author: str | None = None, data_bytes: int | None = None) -> Event:
        """Put an excluded subgroup or reading back (reason required)."""
        return self._append("restore", {**exclusion_payload(target), "reason": _text(reason)}, author,
                            limits_before, limits_after, data_bytes)

    def note(self, text: str, target: str | None = None, on: str | None = None, author: str | None = None) -> Event:
        """A note on the case (no target), a subgroup or a signal (``on`` = subgroup | signal)."""
        on = on or ("case" if not target else "subgroup")
        return self._append("note", {"on": on, "target": target or "", "text": _text(text)}, author)

    def mark_signal(self, key: str, state: str, note: str | None = None, author: str | None = None) -> Event:
        """Mark a signal explained, no-cause-found or open."""
        return self._append("signal", {"key": key, "state": state, "note": _text(note) if note else None}, author)

    def change_settings(self, settings: Settings, limits_before: dict | None = None,
                        limits_after: dict | None = None, author: str | None = None,
                        data_bytes: int | None = None) -> Event:
        return self._append("settings", {"settings": settings.as_dict()}, author, limits_before, limits_after,
                            data_bytes)

    def freeze(self, frozen: FrozenLimits, limits_before: dict | None = None, limits_after: dict | None = None,
               author: str | None = None, data_bytes: int | None = None) -> Event:
        return self._append("freeze", {"frozen": frozen.as_dict()}, author, limits_before, limits_after, data_bytes)

    def unfreeze(self, reason: str, limits_before: dict | None = None, limits_after: dict | None = None,
                 author: str | None = None, data_bytes: int | None = None) -> Event:
        return self._append("unfreeze", {"reason": _text(reason)}, author, limits_before, limits_after, data_bytes)

    def set_causes(self, causes: list[str] | tuple[str, ...], author: str | None = None) -> Event:
        """Replace the editable list of cause categories."""
        return self._append("causes", {"causes": [c.strip() for c in causes]}, author)

    def add_cause(self, name: str, author: str | None = None) -> Event:
        if name.strip() in self.state.causes:
            raise WorkbenchError(f"cause {name.strip()!r} is already in the list")
        return self.set_causes(self.state.causes + (name,), author)

    def remove_cause(self, name: str, author: str | None = None) -> Event:
        if name not in self.state.causes:
            raise WorkbenchError(f"cause {name!r} is not in the list ({', '.join(self.state.causes)})")
        return self.set_causes(tuple(c for c in self.state.causes if c != name), author)

    # -- with the data: what the TUI and the CLI call

    def load_dataset(self) -> Dataset:
        """Load the referenced data with the recorded layout request (path relative to the case file)."""
        from .data import load
        self.data_status = check_data(self.data, self.path)
        if self.data_status.status == "missing":
            raise WorkbenchError(self.data_status.message)
        return load(str(self.data_status.path), self.data.request)

    def analyse(self, dataset: Dataset, state: CaseState | None = None) -> Analysis:
        """``analyse()`` with the replayed setup, exclusions and frozen limits (the current state by default)."""
        from .analysis import analyse
        state = state or self.state
        if self._cache and self._cache[0] is dataset and self._cache[1] == state.head_hash and state is self.state:
            return self._cache[2]
        result = analyse(dataset, state.settings, state.exclusions, state.frozen)
        if state is self.state:
            self._cache = (dataset, state.head_hash, result)
        return result

    def _record(self, dataset: Dataset, kind: str, payload: dict, author: str | None,
                before: Analysis | None = None) -> Analysis:
        from .analysis import analyse, limits_snapshot
        before = before or self.analyse(dataset)
        _ev, state = self._event(kind, payload, author)  # checks the action before the analysis runs
        after = analyse(dataset, state.settings, state.exclusions, state.frozen)
        self._append(kind, payload, author, limits_snapshot(before), limits_snapshot(after), int(dataset.size_bytes))
        self._cache = (dataset, self.state.head_hash, after)
        return after

    def record_exclusion(self, dataset: Dataset, target: Exclusion, reason: str, cause: str | None = None,
                         signal: str | None = None, author: str | None = None) -> Analysis:
        """Exclude with the limits before and after recorded; returns the analysis after."""
        self._check_writable()
        dataset.index_of(target.subgroup)
        if target.stream is not None:
            dataset.stream_index(target.stream)
        before = self.analyse(dataset)
        if signal and signal not in {s.key for s in before.signals}:
            raise WorkbenchError(f"no current signal {signal!r} (signal keys look like xbar/beyond-limits/LABEL)")
        return self._record(dataset, "exclude", _exclude_payload(target, reason, cause, signal), author, before)

    def record_restore(self, dataset: Dataset, target: Exclusion, reason: str, author: str | None = None) -> Analysis:
        return self._record(dataset, "restore", {**exclusion_payload(target), "reason": _text(reason)}, author)

    def record_settings(self, dataset: Dataset, settings: Settings, author: str | None = None) -> Analysis:
        return self._record(dataset, "settings", {"settings": settings.as_dict()}, author)

    def record_freeze(self, dataset: Dataset, author: str | None = None) -> Analysis:
        from .analysis import freeze
        self._check_writable()
        before = self.analyse(dataset)
        return self._record(dataset, "freeze", {"frozen": freeze(before).as_dict()}, author, before)

    def record_unfreeze(self, dataset: Dataset, reason: str, author: str | None = None) -> Analysis:
        return self._record(dataset, "unfreeze", {"reason": _text(reason)}, author)

    def note_target(self, dataset: Dataset, target: str) -> str:
        """What a note target names: ``subgroup`` (a label, or LABEL:STREAM) or ``signal`` (a signal key)."""
        ex = Exclusion.parse(target, dataset.streams)
        try:
            dataset.index_of(ex.subgroup)
            return "subgroup"
        except WorkbenchError:
            pass
        if target in self.state.signal_states or target in {s.key for s in self.analyse(dataset).signals}:
            return "signal"
        raise WorkbenchError(f"{target!r} is neither a subgroup label nor a signal key of this case")


def _body(seq: int, kind: str, payload: dict, author: str, before: dict | None, after: dict | None,
          data_bytes: int | None) -> dict:
    body = {"seq": seq, "time": utc_now(), "author": author, "kind": kind, "payload": payload}
    for name, value in (("limits_before", before), ("limits_after", after), ("data_bytes", data_bytes)):
        if value is not None:
            body[name] = value
    return body


def _text(text: str) -> str:
    if not isinstance(text, str) or not text.strip():
        raise WorkbenchError("a reason or note needs some text")
    return text.strip()


def _exclude_payload(target: Exclusion, reason: str, cause: str | None, signal: str | None) -> dict:
    return {**exclusion_payload(target), "reason": _text(reason), "cause": cause, "signal": signal or None}


# ---- verify ---------------------------------------------------------------------------------

@dataclass(frozen=True)
class Verification:
    """The result of checking a case file end to end."""

    path: str
    intact: bool
    """True only when the chain is whole, the trail replays, the data are unchanged (or only appended to)
    and the recorded limits agree with a recomputation."""
    events: int
    """Number of events in the trail."""
    head_hash: str | None
    """Hash of the last event (what a reviewer signs)."""
    chain_break: tuple[int, str] | None
    """(event number, reason) at the first break of the chain."""
    data: DataStatus | None
    """The data fingerprint check (None when the file could not be replayed)."""
    problems: tuple[str, ...]
    """Everything that makes the case not intact, first problem first."""
    remarks: tuple[str, ...] = ()
    """Things worth knowing that do not break integrity (appended data, limits not recomputed)."""

    def lines(self) -> list[str]:
        if self.intact:
            head = f"{self.path}: intact — {self.events} events, head hash {self.head_hash}"
        else:
            head = f"{self.path}: NOT intact — {self.problems[0]}"
        return [head] + [f"  also: {p}" for p in self.problems[1:]] + [f"  note: {r}" for r in self.remarks]


def verify(path: str | Path, recompute: bool = True) -> Verification:
    """Check a case file: hash chain, replay, data fingerprint and (``recompute``) the recorded limits.

    Raises WorkbenchError only when the file cannot be read as a case file at all (missing,
    not JSON, a newer format version).  Never writes anything.
    """
    path = Path(path)
    raw = _read(path)
    top = read_json(raw, str(path))
    broken = chain_break(top)
    problems = [f"the chain breaks at event {broken[0]}: {broken[1]}"] if broken else []
    try:
        doc = parse(raw, str(path))
    except WorkbenchError as exc:
        return Verification(str(path), False, len(top["trail"]), None, broken, None, tuple(problems + [str(exc)]))
    status = check_data(doc.data, path)
    remarks: list[str] = []
    if not status.usable:
        problems.append(status.message)
    elif status.status == "appended":
        remarks.append(status.message)
    if recompute and status.usable and not broken:
        problems += _recompute_limits(doc, status)
    else:
        problems += limits_gaps(doc.events)
        if recompute:
            remarks.append("the recorded limits were not recomputed (the chain or the data do not allow it)")
    return Verification(str(path), not problems, len(doc.events), doc.state.head_hash, broken, status,
                        tuple(problems), tuple(remarks))


def _recompute_limits(doc: Document, status: DataStatus) -> list[str]:
    from .analysis import analyse, limits_snapshot
    from .data import load
    datasets: dict[int, Dataset] = {}
    snaps: dict[tuple, dict] = {}

    def dataset_for(nbytes: int) -> Dataset:
        if nbytes not in datasets:
            if nbytes == status.size_bytes:
                datasets[nbytes] = load(str(status.path), doc.data.request)
            elif nbytes > (status.size_bytes or 0):
                raise WorkbenchError(f"it was computed on {nbytes} bytes of data; the file now has {status.size_bytes}")
            else:
                with tempfile.TemporaryDirectory() as tmp, open(status.path, "rb") as src:
                    prefix = Path(tmp) / status.path.name
                    prefix.write_bytes(src.read(nbytes))
                    datasets[nbytes] = load(str(prefix), doc.data.request)
        return datasets[nbytes]

    def snapshot(nbytes: int, st: CaseState) -> dict:
        key = (nbytes, canonical_json(jsonable([st.settings.as_dict(), [e.key for e in st.exclusions],
                                                st.frozen.as_dict() if st.frozen else None])))
        if key not in snaps:
            snaps[key] = jsonable(limits_snapshot(analyse(dataset_for(nbytes), st.settings, st.exclusions, st.frozen)))
        return snaps[key]

    problems: list[str] = []
    state: CaseState | None = None
    for ev in doc.events:
        before, state = state, (replay((ev,)) if state is None else apply(state, ev))
        nbytes = doc.data.size_bytes if ev.data_bytes is None else ev.data_bytes
        for when, recorded, st in (("before", ev.limits_before, before), ("after", ev.limits_after, state)):
            if recorded is None or st is None:
                continue
            try:
                diff = snapshot_difference(recorded, snapshot(nbytes, st))
            except WorkbenchError as exc:
                problems.append(f"event {ev.seq}: its limits could not be recomputed: {exc}")
                return problems
            if diff:
                problems.append(f"event {ev.seq}: the limits recorded {when} the action differ from a recomputation "
                                f"({diff})")
    return problems
