"""A case open in a session: :class:`Case` opens, appends and closes case files.

Every action appends one event to the trail and rewrites the file by atomic replace
(keeping the previous version as ``*.bak``) before it returns; a lock beside the file keeps
a second writer out.  The pieces live in ``case_format`` (canonical JSON, hash chain, data
fingerprint), ``case_disk`` (atomic write, lock) and ``case_verify`` (``workbench verify``);
their public names are re-exported here.
"""
from __future__ import annotations

import dataclasses

import json
import os
import re
from pathlib import Path
from typing import Any

from workbench.core.case.events import (
    DEFAULT_CAUSES, SIGN_NAMESPACE, CaseState, Event, apply, default_author, exclusion_payload, replay, settings_from_dict, utc_now,
)
from workbench.core.case.anchors import bak_finding, file_findings
from workbench.core.case.disk import (
    CaseLock, LockHolder, atomic_write, backup_path, clean_temps, keep_previous, lock_path,
)
from workbench.core.case.format import (
    SUFFIX, DataRef, DataStatus, Document, break_key, build, event_break, canonical_json, chain_break, check_data, data_ref_from_dict,
    event_hash, jsonable, parse, read_bytes, read_json, render, seal, sha256,
)
from workbench.core.case.integrity import Verification, verify
from workbench.core.model import Analysis, Dataset, Exclusion, FrozenLimits, LayoutRequest, Settings, WorkbenchError

__all__ = [
    "Case", "CaseLock", "DataRef", "DataStatus", "Document", "LockHolder", "SUFFIX", "Verification", "atomic_write",
    "backup_path", "build", "canonical_json", "chain_break", "check_data", "data_ref_from_dict", "default_case_path",
    "event_hash", "jsonable", "lock_path", "parse", "read_json", "render", "seal", "sha256", "verify",
]


def default_case_path(data_path: str | Path, characteristic: str | None = None) -> Path:
    """``casefiles/<data-stem>.case.json`` (``<data-stem>-<characteristic>.case.json``) relative to the current folder."""
    extra = "" if not characteristic else "-" + (re.sub(r"[^0-9A-Za-z_-]+", "_", characteristic) or "characteristic")
    return Path("casefiles") / (Path(data_path).stem + extra + SUFFIX)


def _relative(data_path: str | Path, folder: Path) -> str:
    target = Path(data_path).resolve()
    try:
        return Path(os.path.relpath(target, folder.resolve())).as_posix()
    except ValueError:  # another drive
        return target.as_posix()


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
        """(event number, reason) where the hash chain breaks, or None."""
        self.author = author
        """Author used for actions that name none."""
        self.readonly_reason = readonly_reason
        """Why actions are refused, or None."""
        self.data_status = data_status
        """How the data file compares with the recorded fingerprint (DataStatus)."""
        self.notices = notices
        """Plain-words notices from opening (data grown, stale lock taken over, holder of the lock)."""
        self._data_dict, self._raw, self._lock = doc.data_dict, raw, lock
        self._canonical = raw == render(doc.data_dict, doc.events) if lock else False
        """True when the bytes are exactly as workbench writes them (so a new event is appended to them)."""
        self._stats = _stats(self.path) if lock else None
        self.holder: LockHolder | None = None
        """Who held the lock when this case had to open read-only (None: nobody, or not asked)."""
        self._cache: tuple[Any, str, Any] | None = None

    @property
    def readonly(self) -> bool:
        return self.readonly_reason is not None

    # -- opening and creating

    @classmethod
    def open(cls, path: str | Path, readonly: bool = False, author: str | None = None, wait: float = 0.0,
             repair: str | None = None) -> "Case":
        """Open a case; the state is the replay of its trail.  Never writes the case file, except to
        record a ``repair`` event when ``repair`` (the reason) is given and the file does not verify.

        ``wait``: seconds to wait for another writer's lock before opening read-only (``holder``
        then names who holds it).  A file that does not verify (broken chain, edited text, a
        ``.bak`` holding a longer chain) opens read-only unless ``repair`` is given.
        """
        path, author = Path(path), default_author(author)
        notices: list[str] = []
        lock = reason = holder = None
        if readonly:
            reason = "opened read-only"
        else:
            if not path.is_file():
                read_bytes(path)  # the one-line error for a missing file
            if path.is_symlink():
                raise WorkbenchError(f"{path}: the case file is a symbolic link (to {os.readlink(path)}); workbench "
                                     "does not write through links: open the real file")
            try:
                lock, holder, notice = CaseLock.acquire_waiting(path, author, wait)
            except WorkbenchError as exc:  # e.g. a folder we may read but not write
                lock, holder, notice = None, None, None
                reason = f"cannot take the lock ({exc}); this view is read-only"
                notices.append(reason)
            if notice:
                notices.append(notice)
            if lock is None and reason is None:
                who = holder.words() if holder else "another session (its lock file names no holder yet)"
                reason = f"{path} is open for writing by {who}; this view is read-only"
                notices.append(reason)
        findings: list[str] = []
        try:
            raw = read_bytes(path)
            try:
                doc = parse(raw, str(path))
            except WorkbenchError as exc:
                bak = backup_path(path)
                hint = f"; the previous version is in {bak}" if bak.is_file() else ""
                raise WorkbenchError(f"{exc}{hint}") from None
            status = check_data(doc.data, path, doc.events)
            if lock:
                findings = file_findings(path, raw, doc)
        except BaseException:
            if lock:
                lock.release()
            raise
        if doc.chain_break and not lock:
            n, why = doc.chain_break
            notices.append(f"{path}: the trail is broken at event {n}: {why}; opened read-only")
            reason = reason or f"the trail is broken at event {n} (run workbench verify)"
        if findings and not repair:
            bak = backup_path(path)
            reason = reason or (f"{path} does not verify: {findings[0]}"
                                + (f"; the previous version is in {bak}" if bak.is_file() else "")
                                + "; give --repair REASON to record what was found and carry on")
            notices.append(reason)
        if status.status == "appended":
            notices.append(status.message)
        elif not status.usable:
            notices.append(status.message + ("" if reason else "; opened read-only"))
            reason = reason or status.message
        if lock and reason:
            lock.release()
            lock = None
        if lock:  # temporary files of a writer that was killed mid-write (writers hold the lock)
            clean_temps(path)
        case = cls(path, doc, raw, author, lock, reason, status, notices)
        case.holder = holder
        if lock and findings and repair:
            case._repair(repair, findings, doc)
        elif repair and lock:
            notices.append(f"{path} verifies: nothing to repair")
        return case

    def _repair(self, reason: str, found: list[str], doc: Document) -> None:
        """Record what was found in a ``repair`` event (breaks accepted exactly as they are) and
        re-render the file; a ``.bak`` holding a longer chain is kept aside, never overwritten."""
        breaks, prev = [], None
        trail = [ev.as_dict() for ev in doc.events]
        for i, ev in enumerate(trail, 1):
            if event_break({"data": doc.data_dict, "trail": trail}, i, ev, prev) is not None:
                n, stored, computed, link = break_key(i, ev)
                breaks.append({"event": n, "hash": stored, "computed": computed, "prev": link})
            prev = ev.get("hash")
        payload: dict = {"reason": _text(reason), "found": found, "breaks": breaks}
        finding = bak_finding(self.path, doc.events)
        if finding:
            bak = backup_path(self.path)
            kept = bak.with_name(f"{bak.name}.{sha256(bak.read_bytes())[:12]}")
            os.replace(bak, kept)
            payload["bak"] = kept.name
            self.notices.append(f"the previous version that did not match was kept as {kept}")
        self._canonical = False
        self._append("repair", payload)
        self.chain_break = None

    @classmethod
    def create(cls, data_path: str | Path, request: LayoutRequest, settings: Settings, author: str | None = None,
               case_path: str | Path | None = None) -> "Case":
        """Load the data, compute the first limits and write a new case (never over an existing one)."""
        from workbench.core.analysis import analyse, limits_snapshot
        from workbench.core.data.reader import load
        dataset = load(str(data_path), request)
        return cls.create_for(dataset, request, settings, author, case_path,
                              limits=limits_snapshot(analyse(dataset, settings)))

    @classmethod
    def create_for(cls, dataset: Dataset, request: LayoutRequest, settings: Settings, author: str | None = None,
                   case_path: str | Path | None = None, limits: dict | None = None) -> "Case":
        """A new case for an already loaded dataset (``limits``: its first limits snapshot)."""
        author = default_author(author)
        src = dataset.source
        path = Path(case_path) if case_path else default_case_path(src.stem if src is not None else dataset.path,
                                                                   dataset.characteristic)
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
            if src is not None:  # a database: its URL (SQLite path relative to the case file), never a password
                src = src.relative_to(path.parent)
            data_dict = DataRef(src.url if src is not None else _relative(dataset.path, path.parent), dataset.sha256,
                                int(dataset.rows), int(dataset.size_bytes), dataset.layout, request, src).as_dict()
            payload = {"settings": settings.as_dict(), "causes": list(DEFAULT_CAUSES),
                       "data_ref": sha256(canonical_json(data_dict))}
            ev = seal(_body(1, "created", payload, author, None, limits, int(dataset.size_bytes)), None)
            doc = Document(data_ref_from_dict(data_dict, str(path)), data_dict, (ev,), replay((ev,)), None)
            raw = render(data_dict, doc.events)
            atomic_write(path, raw)
        except BaseException:
            lock.release()
            raise
        status = check_data(doc.data, path) if src is None else \
            DataStatus("same", Path(src.url), int(dataset.size_bytes), f"the rows of {src.shown} were just read")
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
        try:
            ev = seal(body, self.state.head_hash)
        except WorkbenchError as exc:  # e.g. a NaN that cannot be stored: name the file
            raise WorkbenchError(f"{self.path}: {exc}") from None
        try:
            return ev, apply(self.state, ev)
        except WorkbenchError as exc:  # an action that does not apply: say why, without the event number
            raise WorkbenchError(f"cannot {_VERBS[kind]}: {str(exc).removeprefix(f'event {ev.seq}: ')}") from None

    def append_event(self, kind: str, payload: dict, author: str | None = None) -> Event:
        """Append an event that does not change the limits (e.g. ``data-appended``), written at once."""
        return self._append(kind, payload, author)

    def _append(self, kind: str, payload: dict, author: str | None = None, before: dict | None = None,
                after: dict | None = None, data_bytes: int | None = None) -> Event:
        ev, state = self._event(kind, payload, author, before, after,
                                self.data.size_bytes if data_bytes is None else data_bytes)
        if self._canonical:  # the new event's bytes only: the rest is the file as written
            raw = b"".join((self._raw[:-len(_TAIL)], b",\n  ", canonical_json(ev.as_dict()), _TAIL))
        else:
            raw = render(self._data_dict, self.events + (ev,))
        self._check_unchanged()
        keep_previous(self.path, backup_path(self.path), self._raw)
        atomic_write(self.path, raw)
        self._raw, self.events, self.state, self._canonical = raw, self.events + (ev,), state, True
        self._stats = _stats(self.path)
        return ev

    def _check_unchanged(self) -> None:
        """Refuse to write when the file or its .bak changed under the lock (a non-cooperating process)."""
        now = _stats(self.path)
        if self._stats is None:
            self._stats = now
        if now[0] != self._stats[0]:
            if read_bytes(self.path) != self._raw:
                raise WorkbenchError(f"{self.path} was changed by something else since it was opened; reopen it")
        if now[1] != self._stats[1]:
            finding = bak_finding(self.path, self.events)
            if finding:
                raise WorkbenchError(f"{self.path}: refusing to write: {finding[1]} (reopen with --repair REASON)")

    def sign(self, key: str | Path | None = None, author: str | None = None) -> Event:
        """Sign off the current head with an SSH key (``ssh-keygen -Y sign``); records a ``sign-off`` event."""
        from workbench.core.case.signoff import default_key, sign
        self._check_writable()
        head = self.state.head_hash
        signature, fingerprint = sign(head, Path(key) if key else default_key())
        payload = {"head": head, "namespace": SIGN_NAMESPACE, "signature": signature}
        if fingerprint:
            payload["key"] = fingerprint
        return self._append("sign-off", payload, author)

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

    def mark_signal(self, key: str, state: str, note: str | None = None, author: str | None = None,
                    fired: list[str] | None = None) -> Event:
        """Mark a signal explained, no-cause-found or open; ``fired``: the labels of the firing points the
        mark is given for (see :mod:`workbench.core.case.answers`)."""
        payload = {"key": key, "state": state, "note": _text(note) if note else None}
        if fired is not None:
            payload["fired"] = {key: list(fired)}
        return self._append("signal", payload, author)

    def record_mark(self, dataset: Dataset, key: str, state: str, note: str | None = None,
                    author: str | None = None) -> Event:
        """Mark a signal against its current firing points (what a later grown run is compared with)."""
        from workbench.core.case.answers import fired_for
        fired = fired_for(self.analyse(dataset), self.state, [key])
        return self.mark_signal(key, state, note, author, fired[key] if fired else None)

    def _check_changed(self, settings: Settings) -> None:
        if settings_from_dict(json.loads(canonical_json(jsonable(settings.as_dict()))), "setup") == self.state.settings:
            raise WorkbenchError("the setup is unchanged: no option changes anything")

    def change_settings(self, settings: Settings, limits_before: dict | None = None,
                        limits_after: dict | None = None, author: str | None = None,
                        data_bytes: int | None = None) -> Event:
        self._check_changed(settings)
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

    @property
    def request(self) -> LayoutRequest:
        """The column mapping in force: the last one set in the setup, else the data reference's."""
        return self.state.request if self.state.request is not None else self.data.request

    def load_dataset(self, request: LayoutRequest | None = None) -> Dataset:
        """Load the referenced data with the mapping in force, or ``request`` (path relative to the case file)."""
        from workbench.core.data.reader import load
        self.data_status = check_data(self.data, self.path, self.events)
        if self.data_status.status == "missing":
            raise WorkbenchError(self.data_status.message)
        if not self.data_status.usable and not self.readonly:  # changed since the case was opened
            self.readonly_reason = self.data_status.message
        if self.data.source is not None:  # read in order of the key a watch recorded, as it judged them
            from workbench.core.phase2.judge import recorded_key
            return load(dataclasses.replace(self.data.source, key=recorded_key(self)), request or self.request)
        return load(str(self.data_status.path), request or self.request)

    def analyse(self, dataset: Dataset, state: CaseState | None = None) -> Analysis:
        """``analyse()`` with the replayed setup, exclusions and frozen limits (the current state by default)."""
        from workbench.core.analysis import analyse
        state = state or self.state
        if self._cache and self._cache[0] is dataset and self._cache[1] == state.head_hash and state is self.state:
            return self._cache[2]
        result = analyse(dataset, state.settings, state.exclusions, state.frozen)
        if state is self.state:
            self._cache = (dataset, state.head_hash, result)
        return result

    def _record(self, dataset: Dataset, kind: str, payload: dict, author: str | None,
                before: Analysis | None = None) -> Analysis:
        from workbench.core.analysis import analyse, limits_snapshot
        _ev, state = self._event(kind, payload, author)  # checks the action before any analysis runs
        before = before or self.analyse(dataset)
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
        from workbench.core.case.answers import exclusion_answers
        payload = _exclude_payload(target, reason, cause, signal)
        payload["answers"] = exclusion_answers(before, self.state, target, signal)
        return self._record(dataset, "exclude", payload, author, before)

    def record_restore(self, dataset: Dataset, target: Exclusion, reason: str, author: str | None = None) -> Analysis:
        return self._record(dataset, "restore", {**exclusion_payload(target), "reason": _text(reason)}, author)

    def record_settings(self, dataset: Dataset, settings: Settings, author: str | None = None) -> Analysis:
        self._check_changed(settings)
        return self._record(dataset, "settings", {"settings": settings.as_dict()}, author)

    def record_mapping(self, dataset: Dataset, new: Dataset, request: LayoutRequest, settings: Settings | None = None,
                       author: str | None = None) -> Analysis:
        """Change the column mapping (a ``settings`` event with ``request``): ``dataset`` is the data under the
        mapping in force, ``new`` under ``request``; the limits before and after are recorded. Refused while
        the limits are frozen, or while an exclusion names a subgroup or stream the new mapping does not have."""
        from workbench.core.analysis import analyse, limits_snapshot
        self._check_writable()
        request = LayoutRequest.from_dict({**request.as_dict(), **({"characteristic": self.request.characteristic}
                                                                    if self.request.characteristic else {})})
        if request == self.request:
            raise WorkbenchError("the column mapping did not change")
        self.check_mapping(new)
        settings = settings or self.state.settings
        payload = {"settings": settings.as_dict(), "request": request.as_dict()}
        _ev, state = self._event("settings", payload, author)
        before = self.analyse(dataset)
        after = analyse(new, state.settings, state.exclusions, state.frozen)
        self._append("settings", payload, author, limits_snapshot(before), limits_snapshot(after), int(new.size_bytes))
        self._cache = (new, self.state.head_hash, after)
        return after

    def check_mapping(self, new: Dataset) -> None:
        """Refuse a new column mapping (``new``: the data under it) while the limits are frozen, or while an
        exclusion names a subgroup or stream it does not have (one line, saying what to do)."""
        if self.state.frozen is not None:
            raise WorkbenchError("the limits are frozen: unfreeze them before changing the column mapping")
        for ex in self.state.exclusions:
            try:
                new.index_of(ex.subgroup)
                if ex.stream is not None:
                    new.stream_index(ex.stream)
            except WorkbenchError:
                raise WorkbenchError(f"the exclusion of {ex.key} names a subgroup or stream this mapping does not "
                                     "have: restore it first") from None

    def open_signal_keys(self, dataset: Dataset) -> list[str]:
        """Keys of the signals still open (answers kept against firing points)."""
        from workbench.core.analysis import open_signals
        from workbench.core.case.answers import statuses
        a = self.analyse(dataset)
        return [s.key for s in open_signals(a, statuses(a, self.state))]

    def record_freeze(self, dataset: Dataset, author: str | None = None, force: bool = False,
                      reason: str | None = None) -> Analysis:
        """Freeze the limits.  With open signals it is refused unless ``force`` with a ``reason``; the reason
        and the open signals' keys are recorded in the freeze event."""
        from workbench.core.analysis import freeze
        self._check_writable()
        before = self.analyse(dataset)
        payload: dict = {"frozen": freeze(before).as_dict()}
        still = self.open_signal_keys(dataset)
        if still:
            if not force or not (reason or "").strip():
                shown = ", ".join(still[:5]) + (f" and {len(still) - 5:,} more" if len(still) > 5 else "")
                raise WorkbenchError(f"{len(still):,} signal(s) are still open ({shown}): limits with open signals "
                                     "are not shown to be stable; answer them first, or give --force --reason TEXT")
            payload["reason"] = _text(reason)
            payload["open_signals"] = still
        elif reason:
            payload["reason"] = _text(reason)
        return self._record(dataset, "freeze", payload, author, before)

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


_VERBS = {"exclude": "exclude", "restore": "restore", "note": "add the note", "signal": "mark the signal",
          "settings": "change the setup", "freeze": "freeze the limits", "unfreeze": "unfreeze the limits",
          "causes": "change the cause list", "created": "create the case", "data-appended": "record the new data",
          "retract": "retract", "repair": "record the repair", "sign-off": "sign off"}


_TAIL = b"\n ]\n}\n"
"""How a case file written by workbench ends (see ``format.render``)."""


def _stats(path: Path) -> tuple:
    """(case file, .bak) identity and size and modification time: what a change under the lock alters."""
    out = []
    for p in (path, backup_path(path)):
        try:
            st = os.stat(p)
            out.append((st.st_ino, st.st_size, st.st_mtime_ns))
        except OSError:
            out.append(None)
    return tuple(out)


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
