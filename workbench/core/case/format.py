"""The case-file format: canonical JSON, the hash chain, the data reference and its fingerprint.

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
first event stores the hash of the data reference.  Everything here is pure except
:func:`check_data` and :func:`read_bytes`, which read files.
"""
from __future__ import annotations

import hashlib
import json
import math
import os
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from workbench.core.case.events import FORMAT, VERSION, CaseState, Event, replay
from workbench.core.model import LAYOUTS, Layout, LayoutRequest, WorkbenchError

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
    source: Any = None
    """A database table or query (``workbench.core.data.sql.SqlSource``; ``path`` is then its URL without the
    password, and ``sha256`` / ``size_bytes`` the fingerprint of the canonical rows read); None for a file."""

    def as_dict(self) -> dict[str, Any]:
        out = {"path": self.path, "sha256": self.sha256, "rows": self.rows, "size_bytes": self.size_bytes,
               "layout": self.layout.as_dict(), "request": self.request.as_dict()}
        if self.source is not None:
            out["source"] = self.source.as_dict()
        return out


_LAYOUT_STR = ("subgroup", "stream", "value", "time", "n", "mean", "range", "sd", "count", "size")
_REQUEST_STR = ("kind", "subgroup", "stream", "value", "time", "count", "size", "characteristic")


def data_ref_from_dict(d: Any, source: str) -> DataRef:
    where = f"{source}: data reference"
    if not isinstance(d, dict):
        raise WorkbenchError(f"{where} must be an object")
    if set(d) - {"source"} != {"path", "sha256", "rows", "size_bytes", "layout", "request"}:
        raise WorkbenchError(f"{where} needs exactly path, sha256, rows, size_bytes, layout, request "
                             "(and source for a database)")
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
    src = None
    if "source" in d:
        from workbench.core.data.sql import SqlSource
        src = SqlSource.from_dict(d["source"], where, str(Path(source).parent))
    return DataRef(d["path"], d["sha256"], d["rows"], d["size_bytes"], Layout.from_dict(lay),
                   LayoutRequest.from_dict(req), src)


def _check_fields(d: Any, where: str, strings: tuple[str, ...], other: set[str]) -> None:
    if not isinstance(d, dict) or set(d) - set(strings) - other:
        raise WorkbenchError(f"{where} must be an object with known fields only")
    if any(d.get(k) is not None and not isinstance(d[k], str) for k in strings):
        raise WorkbenchError(f"{where}: column names must be strings")
    streams = d.get("streams", [])
    if not isinstance(streams, list) or not all(isinstance(s, str) for s in streams):
        raise WorkbenchError(f"{where}: streams must be a list of names")


_HEX64 = re.compile(r"[0-9a-f]{64}")


from workbench.core.case.fingerprint import DataStatus, Judged, check_data, judged_prefixes  # noqa: E402,F401


# ---- parsing and rendering the document -----------------------------------------------------

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
    """The first event (from 1) where the hash chain breaks, with the reason; None when whole.

    A break that a later ``repair`` event recorded exactly (event number, stored hash, computed
    hash and link) is accepted: the repair keeps it visible in the trail for ever, and any further
    change to that event changes its computed hash and breaks the chain again.
    """
    accepted = repaired_breaks(doc["trail"])
    prev = None
    for i, ev in enumerate(doc["trail"], 1):
        found = event_break(doc, i, ev, prev)
        if found is not None:
            if not isinstance(ev, dict) or accepted.get(break_key(i, ev), 0) <= i:
                return i, found
        prev = ev.get("hash")
    return None


def event_break(doc: dict, i: int, ev: Any, prev: str | None) -> str | None:
    """What is wrong with event ``i`` (from 1) given the previous stored hash, or None."""
    if not isinstance(ev, dict):
        return "it is not a JSON object"
    try:
        computed = event_hash(ev)
    except WorkbenchError as exc:
        return str(exc)
    if ev.get("hash") != computed:
        return "its content does not match its hash (it was changed after it was written)"
    if ev.get("prev") != prev:
        return f"it does not follow event {i - 1} (the link to the previous event is broken)"
    if i == 1:
        payload = ev.get("payload")
        try:
            ref_hash = sha256(canonical_json(doc.get("data")))
        except WorkbenchError as exc:
            return str(exc)
        if not isinstance(payload, dict) or payload.get("data_ref") != ref_hash:
            return "the data reference no longer matches the one recorded in event 1 (it was edited)"
    return None


def break_key(i: int, ev: dict) -> tuple:
    """What a repair records of a broken event: its number, stored hash, computed hash and link."""
    try:
        computed = event_hash(ev)
    except WorkbenchError:
        computed = None
    return i, _key(ev.get("hash")), computed, _key(ev.get("prev"))


def _key(v: Any) -> Any:
    return v if v is None or isinstance(v, (str, int)) else repr(v)


def repaired_breaks(trail: list) -> dict[tuple, int]:
    """break_key -> number of the repair event that recorded it."""
    out: dict[tuple, int] = {}
    for i, ev in enumerate(trail, 1):
        if isinstance(ev, dict) and ev.get("kind") == "repair" and isinstance(ev.get("payload"), dict):
            for b in ev["payload"].get("breaks") or ():
                if isinstance(b, dict):
                    out.setdefault(tuple(_key(b.get(k)) for k in ("event", "hash", "computed", "prev")), i)
    return out


def parse(raw: bytes, source: str) -> Document:
    """Parse, check and replay a case file; raises WorkbenchError (one line) on anything malformed."""
    return build(read_json(raw, source), source)


def build(doc: dict, source: str) -> Document:
    """A Document from the top-level object :func:`read_json` returned."""
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


def read_bytes(path: Path) -> bytes:
    """A case file's bytes, or a one-line WorkbenchError naming it."""
    try:
        return path.read_bytes()
    except FileNotFoundError:
        raise WorkbenchError(f"{path}: no such case file") from None
    except OSError as exc:
        raise WorkbenchError(f"{path}: cannot read the case file: {exc.strerror or exc}") from None
