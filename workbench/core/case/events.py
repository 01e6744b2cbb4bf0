"""The trail of a case and its replay.

A case's state (setup, exclusions, notes, signal states, frozen limits, cause list) is never
stored: it is the replay of the trail of events.  Everything here is pure — events in,
:class:`CaseState` out — and every event is checked as it is applied, so a trail that
replays is a trail whose every step made sense.  File handling lives in ``casefile.py``;
reading payload pieces and describing events in words, in ``case_text.py``.
"""
from __future__ import annotations

import bisect
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any, Iterable, Mapping

from workbench.core.case.payload import (  # re-exported: these helpers used to live here
    _causes, _is_hash, _keys, _opt_str, _str, default_author, describe,
    describe_trail, exclusion_from_payload, exclusion_order, exclusion_payload, frozen_from_dict, printable,
    request_from_payload, settings_changes, settings_from_dict, utc_now,
)
from workbench.core.model import Exclusion, FrozenLimits, LayoutRequest, Settings, SortedExclusions, WorkbenchError

__all__ = [
    "DEFAULT_CAUSES", "EVENT_KINDS", "FORMAT", "LIMIT_EVENTS", "MARKS", "NOTE_KINDS", "VERSION", "CaseState",
    "Event", "ExclusionInfo", "Note", "RETRACTABLE", "SignalState", "apply", "range_from_payload", "default_author", "describe", "describe_trail",
    "exclusion_from_payload", "exclusion_order", "exclusion_payload", "frozen_from_dict", "printable",
    "replay", "settings_changes", "settings_from_dict", "utc_now",
]

FORMAT = "workbench.case"
VERSION = 1
DEFAULT_CAUSES = ("people", "machine", "method", "material", "measurement", "environment")
EVENT_KINDS = ("created", "settings", "exclude", "restore", "note", "signal", "freeze", "unfreeze", "causes",
               "data-appended", "retract", "repair", "sign-off")
LIMIT_EVENTS = ("created", "settings", "exclude", "restore", "freeze", "unfreeze")
"""Events that change the limits and so record them (before and after)."""
MARKS = ("explained", "no-cause-found", "open")
"""Signal states a user sets; "excluded" follows from an exclusion that answers the signal."""
SIGN_NAMESPACE = "workbench-case"
"""The ``ssh-keygen -Y sign`` namespace of a sign-off (a signature made for another purpose never fits)."""
NOTE_KINDS = ("case", "subgroup", "signal", "range")
RETRACTABLE = ("exclude", "restore", "note", "signal")
"""Events a user may take back with a ``retract`` event (the original stays in the trail)."""


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
    signals: tuple[str, ...] = ()
    """Further signals answered (a range exclusion answers every signal in its range)."""
    answers: tuple[tuple[str, tuple[str, ...]], ...] | None = None
    """(signal key, the labels of its firing points this exclusion answers), as recorded; None in older
    case files, whose ``signal`` / ``signals`` answer by key (see :mod:`workbench.core.case.answers`)."""


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
    fired: tuple[str, ...] | None = None
    """Labels of the firing points the mark was given for; None in older case files (the mark then
    answers the current signal with its key)."""


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
    retracted: Mapping[int, int] = field(default_factory=dict)
    """Number of a retracted event -> number of the ``retract`` event that took it back."""
    trail: tuple = field(default=(), repr=False, compare=False)
    """The events replayed so far (a retraction replays them without the retracted one)."""
    mark_log: tuple = field(default=(), repr=False, compare=False)
    """Every mark in force, in trail order: (signal key, SignalState) — answers are per firing point, so
    a later mark of another key can answer some of the same points."""
    request: LayoutRequest | None = None
    """The column mapping set in the setup (a ``settings`` event with ``request``), or None: the data
    reference's own (``data.request``)."""

    def signal_state(self, key: str) -> str:
        """open | explained | no-cause-found | excluded (an exclusion answers it)."""
        if any(info.signal == key or key in info.signals for info in self.exclusion_info.values()):
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
    retracted: dict = field(default_factory=dict)
    trail: list = field(default_factory=list)
    order: tuple[list, list] | None = None
    """(exclusion_order keys, Exclusions) kept sorted as exclusions come and go (None: sort at the next state)."""
    mark_log: list = field(default_factory=list)
    request: LayoutRequest | None = None

    @classmethod
    def of(cls, s: CaseState) -> "_Builder":
        """A builder that goes on from ``s`` (copies only: O(n) at C speed, no pass in Python)."""
        targets, order = s.__dict__.get("_targets"), s.__dict__.get("_order")
        return cls(s.settings, dict(s.exclusion_info),
                   dict(targets) if targets is not None else {e.key: e for e in s.exclusions}, list(s.notes),
                   dict(s.signal_states), s.frozen, s.causes, s.first_limits, s.limits, s.head_hash, s.seq,
                   s.created_by, s.created_time, dict(s.seen) if s.seen else None, dict(s.retracted), list(s.trail),
                   (list(order[0]), list(order[1])) if order is not None else None, list(s.mark_log), s.request)

    def state(self) -> CaseState:
        if self.order is None or len(self.order[0]) != len(self.targets):
            pairs = sorted(((exclusion_order(t), t) for t in self.targets.values()), key=lambda x: x[0])
            self.order = ([k for k, _t in pairs], [t for _k, t in pairs])
        st = CaseState(self.settings, SortedExclusions(self.order[1]), dict(self.info),
                       tuple(self.notes), dict(self.marks), self.frozen, tuple(self.causes), self.first_limits,
                       self.limits, self.head, self.seq, self.created_by, self.created_time, self.seen,
                       dict(self.retracted), tuple(self.trail), tuple(self.mark_log), self.request)
        # what of() needs to go on from this state without a Python-level pass over the exclusions
        object.__setattr__(st, "_targets", dict(self.targets))
        object.__setattr__(st, "_order", (list(self.order[0]), list(self.order[1])))
        return st

    def _add(self, target: Exclusion) -> None:
        self.targets[target.key] = target
        if self.order is not None:
            key = exclusion_order(target)
            i = bisect.bisect_left(self.order[0], key)
            self.order[0].insert(i, key)
            self.order[1].insert(i, target)

    def _remove(self, key: str) -> None:
        target = self.targets.pop(key)
        if self.order is not None:
            i = bisect.bisect_left(self.order[0], exclusion_order(target))
            del self.order[0][i], self.order[1][i]

    def apply(self, ev: Event, replaying: bool = False) -> None:
        where, p = f"event {ev.seq}", ev.payload
        if not replaying:
            if (ev.kind == "created") != (ev.seq == 1):
                raise WorkbenchError(f"{where}: the trail must start with exactly one 'created' event")
            if ev.seq != self.seq + 1:
                raise WorkbenchError(f"{where}: expected event {self.seq + 1}")
            self.trail.append(ev)
        _keys(p, where, _PAYLOAD_KEYS[ev.kind])
        k = ev.kind
        if k == "created":
            self.settings = settings_from_dict(p.get("settings"), where)
            self.causes = _causes(p.get("causes"), where)
            _str(p.get("data_ref"), where, "data_ref")
            self.created_by, self.created_time = ev.author, ev.time
        elif k == "settings":
            new = settings_from_dict(p.get("settings"), where)
            request = request_from_payload(p["request"], where) if "request" in p else self.request
            if new == self.settings and request == self.request:
                raise WorkbenchError(f"{where}: the setup did not change")
            if request != self.request and self.frozen is not None:
                raise WorkbenchError(f"{where}: the column mapping cannot change while the limits are frozen")
            self.settings, self.request = new, request
        elif k == "causes":
            self.causes = _causes(p.get("causes"), where)
        elif k in ("exclude", "restore"):
            first = exclusion_from_payload(p, where)
            reason = _str(p.get("reason"), where, "reason", empty=False)
            span = range_from_payload(p, where)
            targets = [first] if span is None else [Exclusion(label) for label in span["subgroups"]]
            if span is not None and first.stream is not None:
                raise WorkbenchError(f"{where}: a range is of whole subgroups, not readings")
            if k == "restore":
                for target in targets:
                    if target.key not in self.targets:
                        raise WorkbenchError(f"{where}: {target.key} is not excluded")
                    self._remove(target.key)
                    del self.info[target.key]
            else:
                cause, signal = _opt_str(p.get("cause"), where, "cause"), _opt_str(p.get("signal"), where, "signal")
                if cause is not None and cause not in self.causes:
                    raise WorkbenchError(f"{where}: cause {cause!r} is not in the cause list "
                                         f"({', '.join(self.causes)})")
                answered = tuple(span["signals"]) if span is not None else ()
                answers = _answers(p, where)
                for target in targets:
                    if target.key in self.targets:
                        raise WorkbenchError(f"{where}: {target.key} is already excluded")
                    self._add(target)
                    self.info[target.key] = ExclusionInfo(reason, cause, signal, ev.author, ev.time, ev.seq, answered,
                                                          answers)
        elif k == "note":
            kind = _str(p.get("on"), where, "on")
            if kind not in NOTE_KINDS:
                raise WorkbenchError(f"{where}: a note is on one of {', '.join(NOTE_KINDS)}, not {kind!r}")
            target = _str(p.get("target"), where, "target", empty=kind == "case")
            if kind == "case" and target:
                raise WorkbenchError(f"{where}: a note on the case has no target")
            if (kind == "range") != ("range" in p):
                raise WorkbenchError(f"{where}: a note on a range has its range, and only such a note")
            if kind == "range":
                range_from_payload(p, where)
            self.notes.append(Note(target, _str(p.get("text"), where, "text", empty=False), ev.author, ev.time,
                                   ev.seq, kind))
        elif k == "signal":
            key, mark = _str(p.get("key"), where, "key", empty=False), _str(p.get("state"), where, "state")
            if mark not in MARKS:
                raise WorkbenchError(f"{where}: signal state {mark!r} is not one of {', '.join(MARKS)}")
            keys = [key]
            if "keys" in p:  # several signals marked at once (all in a range, or all selected)
                keys = p["keys"]
                if not isinstance(keys, list) or not keys or keys[0] != key or len(set(keys)) != len(keys) \
                        or not all(isinstance(x, str) and x for x in keys):
                    raise WorkbenchError(f"{where}: keys must be distinct signal keys starting with key")
            if "range" in p:
                range_from_payload(p, where)
            note = _opt_str(p.get("note"), where, "note")
            fired = dict(_answers(p, where, "fired") or ())
            if fired and set(fired) != set(keys):
                raise WorkbenchError(f"{where}: fired must give the firing points of each marked signal")
            for one in keys:
                self.marks[one] = SignalState(mark, note, ev.author, ev.time, ev.seq, fired.get(one))
                self.mark_log.append((one, self.marks[one]))
        elif k == "repair":
            _str(p.get("reason"), where, "reason", empty=False)
            found = p.get("found")
            if not isinstance(found, list) or not found or not all(isinstance(x, str) and x for x in found):
                raise WorkbenchError(f"{where}: a repair states what was found (a list of lines)")
        elif k == "sign-off":
            if p.get("head") != ev.prev:
                raise WorkbenchError(f"{where}: the sign-off names head {str(p.get('head'))[:16]}…, not the event "
                                     "before it")
            if p.get("namespace") != SIGN_NAMESPACE:
                raise WorkbenchError(f"{where}: a sign-off is made in the namespace {SIGN_NAMESPACE!r}")
            _str(p.get("signature"), where, "signature", empty=False)
        elif k == "retract":
            self._retract(ev, where)
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
            if "key" in p:
                _str(p.get("key"), where, "key", empty=False)
            if isinstance(p.get("last_key"), (dict, list)):
                raise WorkbenchError(f"{where}: last_key must be a single value")
            self.seen = new
        if ev.limits_after is not None:
            if k == "created":
                self.first_limits = ev.limits_after
            self.limits = ev.limits_after
        if not replaying:
            self.head, self.seq = ev.hash, ev.seq

    def _retract(self, ev: Event, where: str) -> None:
        """Take back an earlier note, mark, exclusion or restore: the state becomes the replay of the
        trail without it (every later event must still apply)."""
        seq = p_seq = ev.payload.get("event")
        if type(seq) is not int or not 1 <= seq < ev.seq:
            raise WorkbenchError(f"{where}: event must be the number of an earlier event, not {p_seq!r}")
        _str(ev.payload.get("reason"), where, "reason", empty=False)
        target = self.trail[seq - 1]
        if target.kind not in RETRACTABLE:
            raise WorkbenchError(f"{where}: a {target.kind} event cannot be retracted (only "
                                 f"{', '.join(RETRACTABLE)})")
        if seq in self.retracted:
            raise WorkbenchError(f"{where}: event {seq} was already retracted by event {self.retracted[seq]}")
        if ev.payload.get("hash") != target.hash:
            raise WorkbenchError(f"{where}: the hash does not name event {seq} of this trail")
        gone = set(self.retracted) | {seq}
        fresh = _Builder()
        for old in self.trail[:-1]:
            if old.seq in gone or old.kind == "retract":
                continue
            try:
                fresh.apply(old, replaying=True)
            except WorkbenchError as exc:
                raise WorkbenchError(f"{where}: without event {seq}, event {old.seq} no longer applies "
                                     f"({str(exc).removeprefix(f'event {old.seq}: ')}); retract that one first") \
                    from None
        self.settings, self.info, self.targets, self.notes = fresh.settings, fresh.info, fresh.targets, fresh.notes
        self.order = None
        self.marks, self.frozen, self.causes, self.seen = fresh.marks, fresh.frozen, fresh.causes, fresh.seen
        self.mark_log = fresh.mark_log
        self.retracted[seq] = ev.seq


def _answers(p: Mapping[str, Any], where: str, name: str = "answers") -> tuple[tuple[str, tuple[str, ...]], ...] | None:
    """``{signal key: [firing-point labels]}`` of a payload, checked (None when there is none)."""
    v = p.get(name)
    if v is None:
        return None
    if not isinstance(v, dict) or not all(isinstance(k, str) and k and isinstance(x, list)
                                          and all(isinstance(lab, str) for lab in x) for k, x in v.items()):
        raise WorkbenchError(f"{where}: {name} must map signal keys to lists of subgroup labels")
    return tuple((k, tuple(x)) for k, x in v.items())


def range_from_payload(p: Mapping[str, Any], where: str) -> dict | None:
    """The ``range`` of a payload, checked (None when there is none).

    ``{"first": label, "last": label, "count": n, "subgroups": [labels, in data order]}``; a range
    exclusion also names the signals it answers (``"signals"``).  ``count`` is the number of
    subgroups the event changes; ``first``/``last`` are the ends the user gave.
    """
    r = p.get("range")
    if r is None:
        return None
    if not isinstance(r, dict) or set(r) - {"first", "last", "count", "subgroups", "signals"}:
        raise WorkbenchError(f"{where}: range must be an object with first, last, count, subgroups")
    _str(r.get("first"), where, "range first", empty=False)
    _str(r.get("last"), where, "range last", empty=False)
    subs, count = r.get("subgroups"), r.get("count")
    if not isinstance(subs, list) or not all(isinstance(x, str) and x for x in subs) or len(set(subs)) != len(subs):
        raise WorkbenchError(f"{where}: range subgroups must be a list of distinct labels")
    if type(count) is not int or count != len(subs) or count < 1:
        raise WorkbenchError(f"{where}: range count must be the number of its subgroups")
    sig = r.get("signals", [])
    if not isinstance(sig, list) or not all(isinstance(x, str) for x in sig):
        raise WorkbenchError(f"{where}: range signals must be a list of signal keys")
    return {"first": r["first"], "last": r["last"], "count": count, "subgroups": subs, "signals": sig}


_PAYLOAD_KEYS = {
    "created": ({"settings", "causes", "data_ref"}, set()),
    "settings": ({"settings"}, {"request"}),
    "causes": ({"causes"}, set()),
    "exclude": ({"subgroup", "reason"}, {"stream", "cause", "signal", "range", "answers"}),
    "restore": ({"subgroup", "reason"}, {"stream", "range"}),
    "note": ({"on", "target", "text"}, {"range"}),
    "signal": ({"key", "state"}, {"note", "keys", "range", "fired"}),
    "freeze": ({"frozen"}, {"reason", "open_signals"}),
    "unfreeze": ({"reason"}, set()),
    "data-appended": ({"subgroups", "rows", "size_bytes", "sha256"}, {"signals", "key", "last_key"}),
    "retract": ({"event", "hash", "reason"}, set()),
    "repair": ({"reason", "found"}, {"breaks", "bak"}),
    "sign-off": ({"head", "namespace", "signature"}, {"key"}),
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
