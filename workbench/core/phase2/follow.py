"""Following a data file that grows by appended rows.

A :class:`Follower` holds the dataset read so far and the byte offset it has read to.
:meth:`Follower.poll` reads only the bytes appended since then, up to the last complete line
(a partly written last line waits for its end-of-line), parses those lines with the file's
own header, delimiter, decimal mark and encoding, checks them with the loader's rules
(errors name ``file:row:column``) and returns an :class:`Update` holding a new
:class:`~workbench.core.model.Dataset` with the rows appended.

* Wide, individuals and summary files: one row is one subgroup.
* Long files: the readings of a subgroup may arrive in pieces.  A subgroup counts once
  every stream has its reading or a row of a later subgroup has arrived; until then it is
  held back (``Update.open_subgroup``).  A reading for a subgroup already complete, a stream
  not in the file so far, or a time earlier than the row before is refused: following
  never re-sorts or re-arranges what was already read.
* A file that shrank, was rewritten (the bytes just before the offset differ), or was
  replaced by another file (rotation) is reported with a problem status, and the follower
  stops.  A file replaced by a copy that starts with everything read so far is followed on.
  The full prefix is hashed again only when the file was replaced, or on request
  (:meth:`Follower.verify_prefix`); the SHA-256 of what was read is kept up to date
  incrementally.

Parsing and merging the appended rows is in :mod:`workbench.core.phase2.rows`.
"""
from __future__ import annotations

import dataclasses
import hashlib
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from workbench.core.data import reader as D
from workbench.core.data import sniff
from workbench.core.model import Dataset, LayoutRequest, WorkbenchError
from workbench.core.phase2.rows import (  # re-exported: grow and _head used to live here
    _complete, _Format, _head, _Open, _RowReader, grow,
)

__all__ = ["MAX_POLL_BYTES", "PROBLEMS", "TAIL_BYTES", "Follower", "Update", "grow"]

TAIL_BYTES = 4096
"""Bytes before the offset compared at every poll to notice a rewrite cheaply."""
MAX_POLL_BYTES = 16 << 20
"""At most this many new bytes are parsed in one poll (``Update.more`` says when more wait)."""
PROBLEMS = ("shrunk", "rewritten", "rotated", "missing")


@dataclass(frozen=True, eq=False)
class Update:
    """What one poll of a followed file found."""

    status: str
    """unchanged | appended | shrunk | rewritten | rotated | missing."""
    dataset: Dataset
    """The dataset after the poll (the same object when nothing new was complete)."""
    start: int
    """Position of the first new subgroup (the number of subgroups before the poll)."""
    rows: int
    """Data rows read in this poll."""
    pending_bytes: int
    """Bytes of an unfinished last line left for a later poll."""
    open_subgroup: str | None
    """Long layout: the subgroup still being read (held back until complete), or None."""
    more: bool
    """More appended bytes wait than one poll reads: poll again at once."""
    message: str
    """One line in plain words."""

    @property
    def new(self) -> int:
        """Number of new complete subgroups."""
        return self.dataset.m - self.start

    @property
    def ok(self) -> bool:
        return self.status not in PROBLEMS


def _ident(st: os.stat_result) -> tuple[int, int]:
    return st.st_dev, st.st_ino


class Follower(_RowReader):
    """A data file followed from a byte offset (see the module docstring)."""

    def __init__(self, path: str, dataset: Dataset, request: LayoutRequest, fmt: _Format, offset: int,
                 hasher, ident: tuple[int, int], lines: int) -> None:
        self.path = path
        """The file followed, as given."""
        self.dataset = dataset
        """The complete subgroups read so far."""
        self.offset = offset
        """Bytes read (always at the end of a line)."""
        self._req = dataclasses.replace(request, time=dataset.layout.time)
        self._fmt, self._hasher, self._ident, self._lines = fmt, hasher, ident, lines
        self._tail = b""
        self._open: _Open | None = None
        self._index = {str(x): i for i, x in enumerate(dataset.labels.tolist())}
        self._last_time = dataset.times[-1] if dataset.times is not None and dataset.m else None
        self._problem: tuple[str, str] | None = None
        self._rows_read = 0

    # -- opening

    @classmethod
    def open(cls, path: str | os.PathLike, request: LayoutRequest = LayoutRequest(), hold_from: int | None = None,
             check: tuple[int, str] | None = None) -> "Follower":
        """Load ``path`` up to its last complete line and follow it from there.

        ``hold_from``: a long-layout last subgroup at this position or later that lacks a stream's
        reading is held back until complete.  ``check``: (size, sha256) of a prefix the file must
        still start with (what was read before); raises WorkbenchError when it does not.
        """
        shown = os.fspath(path)
        if shown.lower().endswith((".xlsx", ".xlsm")):
            raise WorkbenchError(f"{shown}: a workbook cannot be followed; rows are appended to CSV or TSV text files")
        try:
            with open(shown, "rb") as fh:
                ident = _ident(os.fstat(fh.fileno()))
                raw = fh.read()
        except FileNotFoundError:
            raise WorkbenchError(f"no such file: {shown}") from None
        except OSError as exc:
            raise WorkbenchError(f"cannot read {shown}: {exc.strerror or exc}") from None
        if check is not None:
            size, digest = check
            if len(raw) < size:
                raise WorkbenchError(f"{shown} has shrunk to {len(raw)} bytes; {size} bytes were read before")
            if hashlib.sha256(raw[:size]).hexdigest() != digest:
                raise WorkbenchError(f"{shown} was rewritten: its first {size} bytes differ from those read before")
        if raw.startswith(b"PK\x03\x04"):
            raise WorkbenchError(f"{shown}: a workbook cannot be followed; rows are appended to CSV or TSV text files")
        if raw.startswith((b"PAR1", b"ARROW1", b"FEA1", b"\xff\xff\xff\xff")):
            raise WorkbenchError(f"{shown}: a Parquet or Arrow file is rewritten, not appended to, so it cannot be "
                                 "followed; rows are appended to CSV or TSV text files")
        cut = _complete(raw)
        if cut == 0:
            raise WorkbenchError(f"{shown} has no complete line yet")
        prefix = raw[:cut]
        hasher = hashlib.sha256(prefix)
        ds = _load_prefix(shown, prefix, request, cut == len(raw), hasher.hexdigest())
        if ds.is_attribute or ds.values is None and not ds.is_summary:
            raise WorkbenchError(f"{shown}: following count data is not supported (their limits cannot be frozen)")
        text = prefix[:sniff.SNIFF_BYTES * 4].decode(ds.encoding, errors="replace")
        delim = sniff.sniff_delimiter(text[:sniff.SNIFF_BYTES])
        names, header = sniff._header(shown, text, delim)
        texts = frozenset(D._text_columns(names, request)) & frozenset(names)
        lay = ds.layout
        used = {lay.subgroup, lay.time, lay.stream, lay.value, lay.n, lay.mean, lay.range, lay.sd, *lay.streams}
        fmt = _Format(names, header, delim, sniff._sniff_decimal(text[:sniff.SNIFF_BYTES], delim),
                      "utf-8" if ds.encoding == "utf-8-sig" else ds.encoding,
                      frozenset(sniff._leading_zero_columns(text[:sniff.SNIFF_BYTES], delim, names, set(texts))),
                      texts, frozenset((used - {None}) | set(ds.extras)))
        f = cls(shown, ds, request, fmt, cut, hasher, ident, prefix.count(b"\n"))
        f._tail = prefix[-TAIL_BYTES:]
        if hold_from is not None and lay.kind == "long" and ds.m - 1 >= hold_from:
            f._hold_last(prefix)
        return f

    def _hold_last(self, prefix: bytes) -> None:
        """Take an incomplete last long subgroup out of the dataset and read its rows again, as open."""
        ds, fmt = self.dataset, self._fmt
        if np.count_nonzero(~np.isnan(ds.values[-1])) == ds.k or any("time order" in n for n in ds.notices):
            return
        label, col = str(ds.labels[-1]), fmt.names.index(ds.layout.subgroup)
        start = end = len(prefix) - 1
        while end > 0:  # back over the trailing rows of the last subgroup
            begin = prefix.rfind(b"\n", 0, end) + 1
            line = prefix[begin:end].rstrip(b"\r")
            if line.strip():
                fields = line.decode(fmt.encoding, errors="replace").split(fmt.delim)
                if b'"' in line or len(fields) <= col or fields[col].strip() != label:
                    break
                start = begin
            end = begin - 1
        if start >= len(prefix) - 1 or start == 0:
            return
        held = prefix[start:]
        self.dataset = _head(dataclasses.replace(ds, rows=0, missing=0, skipped_bad=0), ds.m - 1)
        del self._index[label]
        try:
            self._read(held, self._lines - held.count(b"\n"))
        except WorkbenchError:
            self._open = None
        if self.dataset.m != ds.m - 1 or self._open is None or self._open.label != label:
            self.dataset, self._open, self._index[label] = ds, None, ds.m - 1  # not that subgroup alone: keep all
            return
        self.dataset = dataclasses.replace(self.dataset, rows=ds.rows, missing=ds.missing, skipped_bad=ds.skipped_bad)

    # -- polling

    @property
    def sha256(self) -> str:
        """SHA-256 of the bytes read so far."""
        return self._hasher.hexdigest()

    @property
    def open_subgroup(self) -> str | None:
        """Long layout: the subgroup whose readings are still arriving."""
        return self._open.label if self._open else None

    def poll(self, max_bytes: int = MAX_POLL_BYTES) -> Update:
        """Read what was appended since the last poll (see the module docstring).

        Raises WorkbenchError (``file:row:column``) for an appended row the loader would refuse;
        nothing of that poll is taken then.
        """
        start = self.dataset.m
        if self._problem:
            return self._update(self._problem[0], start, 0, 0, False, self._problem[1])
        try:
            fh = open(self.path, "rb")
        except FileNotFoundError:
            return self._stop("missing", start, f"{self.path} is gone (moved or deleted); stopped following it")
        with fh:
            st = os.fstat(fh.fileno())
            if _ident(st) != self._ident:
                if st.st_size >= self.offset and self._prefix_hash(fh) == self.sha256:
                    self._ident = _ident(st)  # replaced by a longer copy of itself: follow on
                else:
                    return self._stop("rotated", start, f"{self.path} was replaced by another file (rotated): it no "
                                                        "longer starts with the rows read so far; stopped following it")
            if st.st_size < self.offset:
                return self._stop("shrunk", start, f"{self.path} has shrunk from {self.offset} to {st.st_size} bytes "
                                                   "(truncated); stopped following it")
            back = len(self._tail)
            fh.seek(self.offset - back)
            buf = fh.read(back + min(max_bytes, st.st_size - self.offset))
        if buf[:back] != self._tail:
            return self._stop("rewritten", start, f"{self.path} was rewritten: the bytes before offset {self.offset} "
                                                  "have changed; stopped following it")
        new = buf[back:]
        cut = _complete(new)
        if cut == 0:
            msg = f"{len(new)} bytes of an unfinished line wait for their end-of-line" if new else "no new rows"
            return self._update("unchanged", start, 0, len(new), False, msg)
        chunk = new[:cut]
        self._read(chunk, self._lines)  # takes the rows only once all are checked
        self._hasher.update(chunk)
        self.offset += cut
        self._lines += chunk.count(b"\n")
        self._tail = (self._tail + chunk)[-TAIL_BYTES:]
        self.dataset = dataclasses.replace(self.dataset, size_bytes=self.offset, sha256=self.sha256)
        n, rows = self.dataset.m - start, self._rows_read
        msg = f"{rows} new row{'' if rows == 1 else 's'}, {n} new subgroup{'' if n == 1 else 's'}"
        if self._open:
            msg += f"; subgroup {self._open.label!r} is still being read"
        more = st.st_size - self.offset > 0 and len(buf) - back >= max_bytes
        return self._update("appended", start, rows, len(new) - cut, more, msg)

    def verify_prefix(self) -> bool:
        """Hash the file's first ``offset`` bytes again and compare: the full check."""
        try:
            with open(self.path, "rb") as fh:
                return self._prefix_hash(fh) == self.sha256
        except OSError:
            return False

    def _prefix_hash(self, fh) -> str:
        h, left = hashlib.sha256(), self.offset
        fh.seek(0)
        while left > 0 and (block := fh.read(min(left, 1 << 20))):
            h.update(block)
            left -= len(block)
        return h.hexdigest() if left == 0 else ""

    def _stop(self, status: str, start: int, message: str) -> Update:
        self._problem = (status, message)
        return self._update(status, start, 0, 0, False, message)

    def _update(self, status: str, start: int, rows: int, pending: int, more: bool, message: str) -> Update:
        return Update(status, self.dataset, start, rows, pending, self.open_subgroup, more, message)


def _load_prefix(shown: str, prefix: bytes, request: LayoutRequest, whole: bool, digest: str) -> Dataset:
    """Load exactly ``prefix`` (the file's complete lines) with the loader."""
    if whole:
        ds = D.load(shown, request)
        if ds.size_bytes == len(prefix) and ds.sha256 == digest:
            return ds
    with tempfile.TemporaryDirectory(prefix="workbench-follow-") as tmp:
        copy = Path(tmp) / Path(shown).name
        copy.write_bytes(prefix)
        try:
            ds = D.load(str(copy), request)
        except WorkbenchError as exc:
            raise WorkbenchError(str(exc).replace(str(copy), shown)) from None
    return dataclasses.replace(ds, path=shown, notices=tuple(n.replace(str(copy), shown) for n in ds.notices))

