"""The data a case relies on: the prefix recorded at creation and every prefix judged in Phase II.

A case's data file may only grow.  The bytes present when the case was created, and the bytes
each ``data-appended`` event says it judged (size and SHA-256 of the file's first bytes), must
all still be the file's first bytes; :func:`check_data` checks every one in a single read.
"""
from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable

from workbench.core.model import WorkbenchError

DataRef = Any
"""``format.DataRef`` (not imported: format re-exports this module)."""
Event = Any


@dataclass(frozen=True)
class DataStatus:
    """How the data file compares with the recorded fingerprints."""

    status: str
    """same | appended | changed | missing."""
    path: Path
    """The data file, resolved against the case file's folder."""
    size_bytes: int | None
    """Its current size (None when missing)."""
    message: str
    """One line in plain words."""
    event: int | None = None
    """When changed: the event that recorded the bytes that no longer match (1: the creation)."""

    @property
    def usable(self) -> bool:
        return self.status in ("same", "appended")


@dataclass(frozen=True)
class Judged:
    """A prefix of the data file that the trail relies on: created with it, or judged in Phase II."""

    seq: int
    """The event that recorded it (1: the creation)."""
    size_bytes: int
    sha256: str
    rows: int | None = None


def judged_prefixes(ref: DataRef, events: Iterable[Event] = ()) -> list[Judged]:
    """The creation prefix and every ``data-appended`` fingerprint, by size (the file only grows)."""
    out = [Judged(1, ref.size_bytes, ref.sha256, ref.rows)]
    for ev in events:
        p = ev.payload
        if ev.kind == "data-appended" and type(p.get("size_bytes")) is int and isinstance(p.get("sha256"), str):
            out.append(Judged(ev.seq, p["size_bytes"], p["sha256"], p.get("rows")))
    return sorted(out, key=lambda j: (j.size_bytes, j.seq))


def check_data(ref: DataRef, case_path: Path, events: Iterable[Event] = ()) -> DataStatus:
    """Compare the data file with every prefix the trail relies on, in one read of the file.

    The bytes recorded at creation and those of every later ``data-appended`` event (rows
    judged in Phase II) must still be the file's first bytes: the file may only grow.
    """
    if getattr(ref, "source", None) is not None:  # a database: its rows read again
        return _check_database(ref, list(events))
    path = Path(os.path.normpath(Path(case_path).parent / ref.path))
    shown = str(path)
    marks = judged_prefixes(ref, events)
    bad: Judged | None = None
    try:
        run, size, tail_newlines, k = hashlib.sha256(), 0, 0, 0
        with open(path, "rb") as fh:
            while chunk := fh.read(1 << 20):
                pos = 0
                while k < len(marks) and marks[k].size_bytes <= size + len(chunk):
                    cut = marks[k].size_bytes - size
                    run.update(chunk[pos:cut])
                    pos = cut
                    if bad is None and run.hexdigest() != marks[k].sha256:
                        bad = marks[k]
                    k += 1
                run.update(chunk[pos:])
                tail_newlines += chunk[max(0, ref.size_bytes - size):].count(b"\n")
                size += len(chunk)
    except FileNotFoundError:
        return DataStatus("missing", path, None, f"the data file {shown} is missing (recorded as {ref.path})")
    except OSError as exc:
        return DataStatus("missing", path, None, f"the data file {shown} cannot be read: {exc.strerror}")
    while bad is None and k < len(marks) and marks[k].size_bytes == size:  # an empty file, or a mark at its end
        bad = None if run.hexdigest() == marks[k].sha256 else marks[k]
        k += 1
    if bad is None and k < len(marks):
        bad = marks[k]  # the file is shorter than a prefix the trail relies on
    if bad is not None and bad.seq == 1:
        return DataStatus("changed", path, size,
                          f"the data file {shown} has changed since the case was created (its first {ref.size_bytes} "
                          "bytes no longer match the recorded SHA-256)", 1)
    if bad is not None:
        rows = f" ({bad.rows} rows)" if bad.rows is not None else ""
        how = (f"is {size} bytes, shorter than the {bad.size_bytes} bytes{rows} judged at event {bad.seq}: "
               "rows judged in Phase II were deleted") if size < bad.size_bytes else \
              (f"no longer starts with the {bad.size_bytes} bytes{rows} judged at event {bad.seq} (their SHA-256 "
               "differs): rows judged in Phase II were deleted or rewritten")
        return DataStatus("changed", path, size, f"the data file {shown} {how}", bad.seq)
    if size == ref.size_bytes:
        return DataStatus("same", path, size, f"the data file {shown} is unchanged")
    grown = size - ref.size_bytes
    return DataStatus("appended", path, size,
                      f"the data file {shown} has grown by {grown} bytes (about {tail_newlines} "
                      f"row{'' if tail_newlines == 1 else 's'}) since the case was created; the new rows are "
                      "Phase II material")


def _check_database(ref: DataRef, events: list[Event]) -> DataStatus:
    """Read the table or query again and compare the fingerprint of its canonical rows.

    Rows read one by one (not aggregated in the database) are compared as a file's bytes are: the
    rows of the creation and those each ``data-appended`` event judged must still be the first rows
    in the order read (by the watch's key when there is one); rows after them are new."""
    from workbench.core.data.reader import _wanted, load
    src = ref.source
    if not src.aggregate:
        return _check_rows(ref, events, _wanted)
    try:
        ds = load(src, ref.request)
    except WorkbenchError as exc:
        return DataStatus("missing", Path(src.url), None, f"the data cannot be read: {exc}")
    if ds.sha256 == ref.sha256 and ds.rows == ref.rows:
        return DataStatus("same", Path(src.url), ds.size_bytes,
                          f"the rows of {src.shown} are unchanged ({ds.rows} rows, same fingerprint)")
    return DataStatus("changed", Path(src.url), ds.size_bytes, event=1, message=
                      f"the rows of {src.shown} have changed since the case was created ({ds.rows} rows now, "
                      f"{ref.rows} then; the fingerprint of the canonical rows differs)")


def _check_rows(ref: DataRef, events: list[Event], wanted) -> DataStatus:
    import dataclasses
    from workbench.core.data import sql
    src = ref.source
    key = src.key or next((ev.payload["key"] for ev in reversed(events) if ev.kind == "data-appended"
                           and isinstance(ev.payload.get("key"), str)), None)
    src = dataclasses.replace(src, key=key)
    try:
        names, rows, _notice = sql.read_rows(src, wanted(ref.request))
    except WorkbenchError as exc:
        return DataStatus("missing", Path(src.url), None, f"the data cannot be read: {exc}")
    fp = sql.Fingerprint(names)
    for mark in judged_prefixes(ref, events):
        if mark.rows is None:
            continue
        if mark.rows > len(rows):
            where = "the case was created" if mark.seq == 1 else f"event {mark.seq} judged them"
            return DataStatus("changed", Path(src.url), None, event=mark.seq, message=
                              f"the rows of {src.shown} have changed: {len(rows)} rows now, {mark.rows} when {where}")
        fp.update(rows[fp.rows:mark.rows])
        if fp.sha256 != mark.sha256:
            what = "since the case was created" if mark.seq == 1 else f"since event {mark.seq} judged them"
            order = f" in order of {key!r}" if key else ""
            return DataStatus("changed", Path(src.url), None, event=mark.seq, message=
                              f"the rows of {src.shown} have changed {what} (the fingerprint of the first {mark.rows} "
                              f"rows{order} differs)")
    fp.update(rows[fp.rows:])
    if fp.rows == ref.rows:
        return DataStatus("same", Path(src.url), fp.size,
                          f"the rows of {src.shown} are unchanged ({fp.rows} rows, same fingerprint)")
    grown = fp.rows - ref.rows
    judged = max((m.rows for m in judged_prefixes(ref, events) if m.rows is not None), default=ref.rows)
    rest = fp.rows - judged
    tail = (f"{judged - ref.rows} of them judged in Phase II and unchanged" if judged > ref.rows else "") + \
        ("; " if judged > ref.rows and rest else "") + \
        (f"{rest} new, Phase II material" if rest else "")
    return DataStatus("appended", Path(src.url), fp.size,
                      f"{src.shown} has {grown} row{'' if grown == 1 else 's'} more than when the case was created "
                      f"(the first {ref.rows} unchanged): {tail}")
