"""The trail of a case and its replay.

A case's state (setup, exclusions, notes, signal states, frozen limits, cause list) is never
stored: it is the replay of the trail of events.  Everything here is pure — events in,
:class:`CaseState` out — and every event is checked as it is applied, so a trail that
replays is a trail whose every step made sense.  File handling lives in ``casefile.py``;
reading payload pieces and describing events in words, in ``case_text.py``.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime
from typing import Any, Iterable, Mapping

from workbench.core.case.payload import (  # re-exported: these helpers used to live here
    _causes, _is_hash, _keys, _opt_str, _str, default_author, describe,
    describe_trail, exclusion_from_payload, exclusion_order, exclusion_payload, frozen_from_dict, printable,
    settings_changes, settings_from_dict, utc_now,
)
from workbench.core.model import Exclusion, FrozenLimits, Settings, WorkbenchError

__all__ = [
    "DEFAULT_CAUSES", "EVENT_KINDS", "FORMAT", "LIMIT_EVENTS", "MARKS", "NOTE_KINDS", "VERSION", "CaseState",
    "Event", "ExclusionInfo", "Note", "SignalState", "apply", "default_author", "describe", "describe_trail",
    "exclusion_from_payload", "exclusion_order", "exclusion_payload", "frozen_from_dict", "printable",
    "replay", "settings_changes", "settings_from_dict", "utc_now",
]

FORMAT = "workbench.case"
VERSION = 1
DEFAULT_CAUSES = ("people", "machine", "method", "material", "measurement", "environment")
EVENT_KINDS = ("created", "settings", "exclude", "restore", "note", "signal", "freeze", "unfreeze", "causes",
               "data-appended")
LIMIT_EVENTS = ("created", "settings", "exclude", "restore", "freeze", "unfreeze")
"""Events that change the limits and so record them (before and after)."""
MARKS = ("explained", "no-cause-found", "open")
"""Signal states a user sets; "excluded" follows from an exclusion that answers the signal."""
NOTE_KINDS = ("case", "subgroup", "signal")


@dataclass(frozen=True)
class Event:
    """One entry of the trail, exactly as stored."""

    seq: int
    """Position in the trail, from 1."""
    time: str
    """UTC time, ISO 8601 (``2024-05-01T12:00:00.000Z``)."""
    author: str
    """Who did it."""
    kind: str
    """One of EVENT_KINDS."""
    payload: dict
    """What was done (kind-specific, JSON values)."""
    prev: str | None
    """Hash of the previous event (None for the first)."""
    hash: str
    """SHA-256 of this event's canonical JSON without this field."""
    limits_before: dict | None = None
    """Limits snapshot before the action (limit-changing events), for the reader."""
    limits_after: dict | None = None
    """Limits snapshot after the action."""
    data_bytes: int | None = None
    """Size of the data file the limits were computed on."""

    def as_dict(self) -> dict[str, Any]:
        out = {"seq": self.seq, "time": self.time, "author": self.author, "kind": self.kind,
               "payload": self.payload, "prev": self.prev, "hash": self.hash}
        for name in ("limits_before", "limits_after", "data_bytes"):
            if getattr(self, name) is not None:
                out[name] = getattr(self, name)
        return out

    @classmethod
    def from_dict(cls, d: Any, position: int) -> "Event":
        """Check the shape of one stored event; ``position`` (from 1) names it in errors."""
        where = f"event {position}"
        if not isinstance(d, dict):
            raise WorkbenchError(f"{where}: not a JSON object")
        allowed = {"seq", "time", "author", "kind", "payload", "prev", "hash", "limits_before", "limits_after",
                   "data_bytes"}
        extra = sorted(set(d) - allowed)
        if extra:
            raise WorkbenchError(f"{where}: unknown field {extra[0]!r}")
        seq = d.get("seq")
        if type(seq) is not int or seq != position:
            raise WorkbenchError(f"{where}: sequence number {seq!r}, expected {position}")
        kind = _str(d.get("kind"), where, "kind")
        if kind not in EVENT_KINDS:
            raise WorkbenchError(f"{where}: unknown event kind {kind!r}")
        time = _str(d.get("time"), where, "time")
        try:
            datetime.fromisoformat(time)
        except ValueError:
            raise WorkbenchError(f"{where}: time {time!r} is not an ISO 8601 timestamp") from None
        for name in ("payload",):
            if not isinstance(d.get(name), dict):
                raise WorkbenchError(f"{where}: {name} must be an object")
        for name in ("limits_before", "limits_after"):
            if d.get(name) is not None and not isinstance(d[name], dict):
                raise WorkbenchError(f"{where}: {name} must be an object")
        data_bytes = d.get("data_bytes")
        if data_bytes is not None and (type(data_bytes) is not int or data_bytes < 0):
            raise WorkbenchError(f"{where}: data_bytes must be a whole number of bytes")
        prev = d.get("prev")
        if prev is not None and not _is_hash(prev):
            raise WorkbenchError(f"{where}: prev is not a SHA-256 hash")
        if not _is_hash(d.get("hash")):
            raise WorkbenchError(f"{where}: hash is not a SHA-256 hash")
        return cls(seq=seq, time=time, author=_str(d.get("author"), where, "author", empty=False), kind=kind,
                   payload=d["payload"], prev=prev, hash=d["hash"], limits_before=d.get("limits_before"),
                   limits_after=d.get("limits_after"), data_bytes=data_bytes)


@dataclass(frozen=True)
class ExclusionInfo:
    """Why a subgroup or reading is left out of the limits."""

    reason: str
    """The reason given (never empty)."""
    cause: str | None
    """Cause category, from the case's list."""
    signal: str | None
    """Key of the signal this exclusion answers."""
    author: str
    time: str
    seq: int
    """The exclude event."""


@dataclass(frozen=True)
class Note:
    """A note on the case, a subgroup or a signal."""

    target: str
    """Subgroup key or signal key; empty for the case itself."""
    text: str
    author: str
    time: str
    seq: int
    kind: str = "case"
    """What the note is on: case | subgroup | signal."""


@dataclass(frozen=True)
class SignalState:
    """The state a user gave a signal."""

    state: str
    """explained | no-cause-found | open."""
    note: str | None
    author: str
    time: str
    seq: int = 0


@dataclass(frozen=True)
class CaseState:
    """The replay of a trail: everything an investigation has decided so far."""

    settings: Settings
    """The current setup."""
    exclusions: tuple[Exclusion, ...]
    """Current exclusions, sorted by :func:`exclusion_order`."""
    exclusion_info: Mapping[str, ExclusionInfo]
    """Exclusion key -> why it is excluded."""
    notes: tuple[Note, ...]
    """All notes, in trail order."""
    signal_states: Mapping[str, SignalState]
    """Signal key -> the state a user set (signals not listed are open)."""
    frozen: FrozenLimits | None
    """Frozen Phase I limits, or None."""
    causes: tuple[str, ...]
    """The editable list of cause categories."""
    first_limits: dict | None
    """Limits as first computed (at creation)."""
    limits: dict | None
    """Limits as last recorded."""
    head_hash: str
    """Hash of the last event."""
    seq: int
    """Number of events."""
    created_by: str = ""
    created_time: str = ""
    seen: Mapping[str, Any] | None = None
    """Phase II: the last ``data-appended`` payload since the current freeze (subgroups, rows,
    size_bytes, sha256), or None when nothing new has been judged yet."""

    def signal_state(self, key: str) -> str:
        """open | explained | no-cause-found | excluded (an exclusion answers it)."""
        if any(info.signal == key for info in self.exclusion_info.values()):
            return "excluded"
        mark = self.signal_states.get(key)
        return mark.state if mark else "open"


@dataclass
class _Builder:
    settings: Settings = field(default_factory=Settings)
    info: dict = field(default_factory=dict)
    targets: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)
    marks: dict = field(default_factory=dict)
    frozen: FrozenLimits | None = None
    causes: tuple = DEFAULT_CAUSES
    first_limits: dict | None = None
    limits: dict | None = None
    head: str = ""
    seq: int = 0
    created_by: str = ""
    created_time: str = ""
    seen: dict | None = None

    @classmethod
    def of(cls, s: CaseState) -> "_Builder":
        return cls(s.settings, dict(s.exclusion_info), {e.key: e for e in s.exclusions}, list(s.notes),
                   dict(s.signal_states), s.frozen, s.causes, s.first_limits, s.limits, s.head_hash, s.seq,
                   s.created_by, s.created_time, dict(s.seen) if s.seen else None)

    def state(self) -> CaseState:
        return CaseState(self.settings, tuple(sorted(self.targets.values(), key=exclusion_order)), dict(self.info),
                         tuple(self.notes), dict(self.marks), self.frozen, tuple(self.causes), self.first_limits,
                         self.limits, self.head, self.seq, self.created_by, self.created_time, self.seen)

    def apply(self, ev: Event) -> None:
        where, p = f"event {ev.seq}", ev.payload
        if (ev.kind == "created") != (ev.seq == 1):
            raise WorkbenchError(f"{where}: the trail must start with exactly one 'created' event")
        if ev.seq != self.seq + 1:
            raise WorkbenchError(f"{where}: expected event {self.seq + 1}")
        _keys(p, where, _PAYLOAD_KEYS[ev.kind])
        k = ev.kind
        if k == "created":
            self.settings = settings_from_dict(p.get("settings"), where)
            self.causes = _causes(p.get("causes"), where)
            _str(p.get("data_ref"), where, "data_ref")
            self.created_by, self.created_time = ev.author, ev.time
        elif k == "settings":
            new = settings_from_dict(p.get("settings"), where)
            if new == self.settings:
                raise WorkbenchError(f"{where}: the setup did not change")
            self.settings = new
        elif k == "causes":
            self.causes = _causes(p.get("causes"), where)
        elif k in ("exclude", "restore"):
            target = exclusion_from_payload(p, where)
            reason = _str(p.get("reason"), where, "reason", empty=False)
            if k == "restore":
                if target.key not in self.targets:
                    raise WorkbenchError(f"{where}: {target.key} is not excluded")
                del self.targets[target.key], self.info[target.key]
            else:
                if target.key in self.targets:
                    raise WorkbenchError(f"{where}: {target.key} is already excluded")
                cause, signal = _opt_str(p.get("cause"), where, "cause"), _opt_str(p.get("signal"), where, "signal")
                if cause is not None and cause not in self.causes:
                    raise WorkbenchError(f"{where}: cause {cause!r} is not in the cause list "
                                         f"({', '.join(self.causes)})")
                self.targets[target.key] = target
                self.info[target.key] = ExclusionInfo(reason, cause, signal, ev.author, ev.time, ev.seq)
        elif k == "note":
            kind = _str(p.get("on"), where, "on")
            if kind not in NOTE_KINDS:
                raise WorkbenchError(f"{where}: a note is on one of {', '.join(NOTE_KINDS)}, not {kind!r}")
            target = _str(p.get("target"), where, "target", empty=kind == "case")
            if kind == "case" and target:
                raise WorkbenchError(f"{where}: a note on the case has no target")
            self.notes.append(Note(target, _str(p.get("text"), where, "text", empty=False), ev.author, ev.time,
                                   ev.seq, kind))
        elif k == "signal":
            key, mark = _str(p.get("key"), where, "key", empty=False), _str(p.get("state"), where, "state")
            if mark not in MARKS:
                raise WorkbenchError(f"{where}: signal state {mark!r} is not one of {', '.join(MARKS)}")
            self.marks[key] = SignalState(mark, _opt_str(p.get("note"), where, "note"), ev.author, ev.time, ev.seq)
        elif k == "freeze":
            if self.frozen is not None:
                raise WorkbenchError(f"{where}: the limits are already frozen")
            self.frozen = frozen_from_dict(p.get("frozen"), where)
        elif k == "unfreeze":
            if self.frozen is None:
                raise WorkbenchError(f"{where}: the limits are not frozen")
            _str(p.get("reason"), where, "reason", empty=False)
            self.frozen = None
            self.seen = None
        elif k == "data-appended":
            if self.frozen is None:
                raise WorkbenchError(f"{where}: new data are judged only against frozen limits")
            new = {}
            for name in ("subgroups", "rows", "size_bytes"):
                v = p.get(name)
                if not isinstance(v, int) or isinstance(v, bool) or v < 0:
                    raise WorkbenchError(f"{where}: {name} must be a whole number")
                if self.seen is not None and v < self.seen[name]:
                    raise WorkbenchError(f"{where}: {name} went down from {self.seen[name]} to {v}")
                new[name] = v
            new["sha256"] = _str(p.get("sha256"), where, "sha256", empty=False)
            self.seen = new
        if ev.limits_after is not None:
            if k == "created":
                self.first_limits = ev.limits_after
            self.limits = ev.limits_after
        self.head, self.seq = ev.hash, ev.seq


_PAYLOAD_KEYS = {
    "created": ({"settings", "causes", "data_ref"}, set()),
    "settings": ({"settings"}, set()),
    "causes": ({"causes"}, set()),
    "exclude": ({"subgroup", "reason"}, {"stream", "cause", "signal"}),
    "restore": ({"subgroup", "reason"}, {"stream"}),
    "note": ({"on", "target", "text"}, set()),
    "signal": ({"key", "state"}, {"note"}),
    "freeze": ({"frozen"}, set()),
    "unfreeze": ({"reason"}, set()),
    "data-appended": ({"subgroups", "rows", "size_bytes", "sha256"}, {"signals"}),
}


def replay(events: Iterable[Event]) -> CaseState:
    """The state a trail leads to; raises WorkbenchError at the first event that does not apply."""
    b = _Builder()
    for ev in events:
        b.apply(ev)
    if b.seq == 0:
        raise WorkbenchError("the trail is empty (it must start with a 'created' event)")
    return b.state()


def apply(state: CaseState, event: Event) -> CaseState:
    """The state after one more event (same checks as :func:`replay`)."""
    b = _Builder.of(state)
    b.apply(event)
    return b.state()
