"""Payload and text helpers of the case trail.

Reading stored payload pieces (settings, frozen limits, exclusions, causes), each value
type-checked with an error that names the event; and the small helpers for people and
views: the current UTC time, the default author, text made printable, and each event of a
trail described in plain words.  The events and their replay are in :mod:`workbench.core.case.events`.
"""
from __future__ import annotations

import getpass
import os
import re
import socket
import unicodedata
from dataclasses import fields
from datetime import datetime, timezone
from typing import Any, Iterable, Mapping, Protocol

from workbench.core.text import printable
from workbench.core.model import (
    CHART_KINDS, SIGMA_METHODS, Exclusion, FrozenLimits, LayoutRequest, Settings, Spec, WorkbenchError,
)



class Event(Protocol):
    """What the words below read of a trail event (``events.Event``; this module sits below it)."""

    seq: int
    kind: str
    payload: dict

# ---- payload pieces -------------------------------------------------------------------------

def exclusion_order(ex: Exclusion) -> tuple[str, bool, str]:
    """Sort key: by label, a whole subgroup before its single readings (``None`` streams sort first)."""
    return ex.subgroup, ex.stream is not None, ex.stream or ""


def exclusion_payload(target: Exclusion) -> dict[str, Any]:
    return {"subgroup": target.subgroup, "stream": target.stream}


REQUEST_TEXT = ("kind", "subgroup", "stream", "value", "time", "count", "size", "characteristic")
"""Column-mapping fields that name a column (or the layout kind)."""


def request_from_payload(d: Any, where: str) -> LayoutRequest:
    """The column mapping of a ``settings`` event (the fields of a layout request; every one optional)."""
    if not isinstance(d, Mapping):
        raise WorkbenchError(f"{where}: request must be an object")
    extra = sorted(set(d) - set(REQUEST_TEXT) - {"streams", "skip_bad"})
    if extra:
        raise WorkbenchError(f"{where}: request: unknown field {extra[0]!r}")
    for name in REQUEST_TEXT:
        if name in d:
            _str(d[name], where, f"request {name}", empty=False)
    streams = d.get("streams", [])
    if not isinstance(streams, list) or not all(isinstance(x, str) and x for x in streams):
        raise WorkbenchError(f"{where}: request streams must be a list of column names")
    if "skip_bad" in d and not isinstance(d["skip_bad"], bool):
        raise WorkbenchError(f"{where}: request skip_bad must be true or false")
    return LayoutRequest.from_dict(dict(d))


def request_words(d: Mapping[str, Any]) -> str:
    """A column mapping in words: ``kind wide, subgroup time, streams H1,H2,H3``."""
    parts = [f"{k} {d[k]}" for k in REQUEST_TEXT if d.get(k)]
    if d.get("streams"):
        parts.append("streams " + ",".join(d["streams"]))
    return ", ".join(parts) or "detected from the file"


def exclusion_from_payload(p: Mapping[str, Any], where: str) -> Exclusion:
    return Exclusion(_str(p.get("subgroup"), where, "subgroup", empty=False),
                     _opt_str(p.get("stream"), where, "stream"))


def settings_from_dict(d: Any, where: str) -> Settings:
    """Settings from stored JSON, every field type-checked (unknown fields are refused)."""
    if not isinstance(d, dict):
        raise WorkbenchError(f"{where}: settings must be an object")
    kw = _typed_fields(Settings, {k: v for k, v in d.items() if k != "spec"}, where, "setting")
    spec = d.get("spec")
    if spec is not None:
        if not isinstance(spec, dict):
            raise WorkbenchError(f"{where}: spec must be an object or null")
        kw["spec"] = Spec(**_typed_fields(Spec, spec, where, "spec field"))
    out = Settings(**kw)
    if out.chart != "auto" and out.chart not in CHART_KINDS:
        raise WorkbenchError(f"{where}: unknown chart kind {out.chart!r}")
    if out.sigma not in SIGMA_METHODS:
        raise WorkbenchError(f"{where}: unknown sigma method {out.sigma!r}")
    return out


def frozen_from_dict(d: Any, where: str) -> FrozenLimits:
    if not isinstance(d, dict) or set(d) - {"chart", "center", "sigma", "subgroups", "limits"}:
        raise WorkbenchError(f"{where}: frozen limits must be an object with chart, center, sigma, subgroups, limits")
    ok = (isinstance(d.get("chart"), str) and _is_num(d.get("center")) and _is_num(d.get("sigma"))
          and type(d.get("subgroups")) is int and isinstance(d.get("limits", {}), dict))
    if not ok:
        raise WorkbenchError(f"{where}: frozen limits have a missing or mistyped field")
    return FrozenLimits.from_dict(d)


def _typed_fields(cls: type, d: dict, where: str, what: str) -> dict[str, Any]:
    """Check stored values against the dataclass's annotations (``str | None``, ``float``, ``bool``)."""
    known = {f.name: {t.strip() for t in str(f.type).split("|")} for f in fields(cls)}
    out: dict[str, Any] = {}
    for key, value in d.items():
        kinds = known.get(key)
        if kinds is None or key == "spec":
            raise WorkbenchError(f"{where}: unknown {what} {key!r}")
        good = ((value is None and "None" in kinds) or (isinstance(value, bool) and "bool" in kinds)
                or (isinstance(value, str) and "str" in kinds) or (_is_num(value) and "float" in kinds)
                or (type(value) is int and "int" in kinds))
        if not good:
            raise WorkbenchError(f"{where}: {what} {key!r} has the wrong type ({type(value).__name__})")
        out[key] = float(value) if _is_num(value) and "float" in kinds else value
    return out


def _causes(v: Any, where: str) -> tuple[str, ...]:
    if not isinstance(v, list) or not all(isinstance(c, str) and c.strip() for c in v) or len(set(v)) != len(v):
        raise WorkbenchError(f"{where}: causes must be a list of distinct, non-empty names")
    return tuple(v)


def _keys(p: dict, where: str, spec: tuple[set, set]) -> None:
    need, optional = spec
    missing = sorted(need - set(p))
    if missing:
        raise WorkbenchError(f"{where}: payload lacks {missing[0]!r}")
    extra = sorted(set(p) - need - optional)
    if extra:
        raise WorkbenchError(f"{where}: unknown payload field {extra[0]!r}")


def _str(v: Any, where: str, name: str, empty: bool = True) -> str:
    if not isinstance(v, str) or (not empty and not v.strip()):
        raise WorkbenchError(f"{where}: {name} must be {'a' if empty else 'a non-empty'} string")
    return v


def _opt_str(v: Any, where: str, name: str) -> str | None:
    return None if v is None else _str(v, where, name)


def _is_num(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and v == v and abs(v) != float("inf")


def _is_hash(v: Any) -> bool:
    return isinstance(v, str) and re.fullmatch(r"[0-9a-f]{64}", v) is not None


# ---- small helpers for people and views -----------------------------------------------------

def utc_now() -> str:
    """The current UTC time as ISO 8601 with milliseconds and a ``Z``."""
    return datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.%f")[:-3] + "Z"


def default_author(explicit: str | None = None) -> str:
    """``--author``, else ``WORKBENCH_AUTHOR``, else user@host."""
    for candidate in (explicit, os.environ.get("WORKBENCH_AUTHOR")):
        if candidate and candidate.strip():
            return candidate.strip()
    try:
        user = getpass.getuser()
    except Exception:  # no login name available (containers without a passwd entry)
        user = "unknown"
    return f"{user}@{socket.gethostname()}"


def describe(ev: Event) -> str:
    """One line in plain words for the trail view and reports (text made printable)."""
    p, q = ev.payload, lambda s: printable(s) if isinstance(s, str) else str(s)
    if ev.kind in ("exclude", "restore") and p.get("range"):
        r = p["range"]
        extra = "".join(f"; {name} {q(p[name])}" for name in ("cause",) if p.get(name)) + _answered(p, q)
        return (f"{'excluded' if ev.kind == 'exclude' else 'restored'} subgroups {q(r['first'])}..{q(r['last'])} "
                f"({r['count']} subgroup{'s' if r['count'] != 1 else ''}): {q(p['reason'])}{extra}")
    if ev.kind in ("exclude", "restore"):
        what = ("reading " if p.get("stream") is not None else "subgroup ") + q(
            p["subgroup"] if p.get("stream") is None else f"{p['subgroup']}:{p['stream']}")
        names = ("cause",) if isinstance(p.get("answers"), dict) else ("cause", "signal")
        extra = "".join(f"; {name} {q(p[name])}" for name in names if p.get(name)) + _answered(p, q)
        return f"{'excluded' if ev.kind == 'exclude' else 'restored'} {what}: {q(p['reason'])}{extra}"
    if ev.kind == "note" and p.get("range"):
        r = p["range"]
        return f"note on subgroups {q(r['first'])}..{q(r['last'])} ({r['count']} subgroups): {q(p['text'])}"
    if ev.kind == "note":
        on = "the case" if p["on"] == "case" else f"{p['on']} {q(p['target'])}"
        return f"note on {on}: {q(p['text'])}"
    if ev.kind == "signal" and p.get("keys"):
        n = len(p["keys"])
        where = f" in subgroups {q(p['range']['first'])}..{q(p['range']['last'])}" if p.get("range") else ""
        return (f"{n} signal{'s' if n != 1 else ''}{where} marked {p['state']}"
                + (f": {q(p['note'])}" if p.get("note") else ""))
    if ev.kind == "signal":
        return f"signal {q(p['key'])} marked {p['state']}" + (f": {q(p['note'])}" if p.get("note") else "")
    if ev.kind == "repair":
        return f"repair: {q(p['reason'])} — found: " + "; ".join(q(x) for x in p["found"])
    if ev.kind == "sign-off":
        return f"signed off head {q(p['head'])[:16]}…" + (f" with key {q(p['key'])}" if p.get("key") else "")
    if ev.kind == "retract":
        return f"retracted event {p['event']}: {q(p['reason'])}"
    if ev.kind == "settings":
        req = p.get("request")
        return "setup changed" + (f" (column mapping: {q(request_words(req))})" if isinstance(req, Mapping) else "")
    if ev.kind == "causes":
        return "cause list set to " + ", ".join(q(c) for c in p["causes"])
    if ev.kind == "freeze":
        still = p.get("open_signals") or []
        extra = (f" with {len(still)} open signal{'s' if len(still) != 1 else ''}" if still else "") + (
            f": {q(p['reason'])}" if p.get("reason") else "")
        return f"limits frozen ({p['frozen'].get('subgroups')} subgroups in Phase I){extra}"
    if ev.kind == "unfreeze":
        return f"limits unfrozen: {q(p['reason'])}"
    if ev.kind == "data-appended":
        sig = p.get("signals") or []
        upto = f" up to {q(p['key'])} = {q(str(p.get('last_key')))}" if isinstance(p.get("key"), str) else ""
        return (f"new data judged: {p['subgroups']} subgroups, {p['rows']} rows, {p['size_bytes']} bytes{upto}"
                + (f"; new signals {', '.join(q(k) for k in sig)}" if sig else "; no new signal"))
    return "case created"


def _answered(p: dict, q) -> str:
    """``; answers xbar/zone-b/08:00 (1 of its firing points), r/…`` — every signal an exclusion answers."""
    answers = p.get("answers")
    if not isinstance(answers, dict) or not answers:
        return ""
    parts, open_ = [], []
    for key, labs in answers.items():
        n = len(labs) if isinstance(labs, list) else 0
        if n:
            parts.append(f"{q(key)} ({n} firing point{'s' if n != 1 else ''})")
        else:  # named (chosen) but none of its firing points answered: it stays open
            open_.append(q(key))
    return (("; answers " + ", ".join(parts)) if parts else "") + \
        (f"; {', '.join(open_)} stay{'s' if len(open_) == 1 else ''} open" if open_ else "")


def describe_trail(events: Iterable[Event]) -> list[str]:
    """:func:`describe` for each event, with the fields a setup change changed."""
    events = list(events)
    retracted = {ev.payload.get("event"): ev.seq for ev in events if ev.kind == "retract"}
    out, current = [], None
    for ev in events:
        line = describe(ev)
        if ev.seq in retracted:
            line = f"[retracted by event {retracted[ev.seq]}] {line}"
        if ev.kind in ("created", "settings"):
            new = Settings.from_dict(ev.payload["settings"])
            if current is not None:
                changes = [printable(c) for c in settings_changes(current, new)]
                if changes or not isinstance(ev.payload.get("request"), Mapping):
                    line += ": " + ("; ".join(changes) or "no field changed")
            current = new
        out.append(line)
    return out


def settings_changes(old: Settings, new: Settings) -> list[str]:
    """``name: old → new`` for each setup field that differs (spec fields as ``spec.lsl``)."""
    a, b = _flat(old.as_dict()), _flat(new.as_dict())
    return [f"{k}: {setting_words(k, a.get(k))} → {setting_words(k, b.get(k))}" for k in sorted(set(a) | set(b))
            if a.get(k) != b.get(k)]


def setting_words(name: str, value: Any) -> str:
    """A setup value for people: never ``None`` (an unset value says what applies instead)."""
    if value is None:
        if name == "rules":
            return "the chart's default"
        if name == "spec":
            return "no specification"
        return "not set"
    if isinstance(value, bool):
        return "yes" if value else "no"
    return str(value)


def _flat(d: dict, prefix: str = "") -> dict[str, Any]:
    out: dict[str, Any] = {}
    for k, v in d.items():
        if isinstance(v, dict):
            out.update(_flat(v, f"{prefix}{k}."))
        else:
            out[prefix + k] = v
    return out
