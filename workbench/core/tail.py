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
"""
from __future__ import annotations

import dataclasses
import hashlib
import io
import os
import re
import tempfile
import threading
import warnings
import weakref
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from . import data as D
from . import sniff
from .model import Dataset, LayoutRequest, WorkbenchError

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


@dataclass
class _Open:
    """A long-layout subgroup whose readings are still arriving."""

    label: str
    row: np.ndarray
    seen: np.ndarray
    time: object
    extras: dict


@dataclass(frozen=True)
class _Format:
    names: list
    header_line: int
    delim: str
    decimal: str
    encoding: str
    keep: frozenset
    text_columns: frozenset
    columns: frozenset


def _complete(buf: bytes) -> int:
    """Length of the complete lines at the start of ``buf`` (never cutting inside a quoted field)."""
    if b'"' not in buf:
        return buf.rfind(b"\n") + 1
    a = np.frombuffer(buf, np.uint8)
    nl = np.flatnonzero(a == 10)
    quotes = np.cumsum(a == 34)
    ok = nl[quotes[nl] % 2 == 0]
    return int(ok[-1]) + 1 if ok.size else 0


class _Growth:
    """Arrays with room to grow, so that appending a few rows costs no copy of the old ones.

    ``append(view, new)`` writes ``new`` just after ``view`` when ``view`` is the newest start of
    a buffer kept here (views handed out before are never written to: they end earlier); any
    other array is copied once into a new buffer with spare room.
    """

    def __init__(self) -> None:
        self._used: dict[int, tuple[weakref.ref, int]] = {}
        self._lock = threading.Lock()

    def append(self, view: np.ndarray, new) -> np.ndarray:
        new = np.asarray(new)
        n, k = len(view), len(new)
        if k == 0:
            return view
        base = view.base
        with self._lock:
            entry = self._used.get(id(base)) if base is not None else None
            fits = new.dtype.itemsize <= view.dtype.itemsize if view.dtype.kind == "U" else \
                np.can_cast(new.dtype, view.dtype, "same_kind")
            if (entry is not None and entry[0]() is base and entry[1] == n and n + k <= len(base) and fits
                    and view.__array_interface__["data"][0] == base.__array_interface__["data"][0]):
                base[n:n + k] = new
                self._used[id(base)] = (entry[0], n + k)
                return base[:n + k]
            dtype = np.result_type(view.dtype, new.dtype) if view.dtype.kind != "U" or new.dtype.kind != "U" else \
                np.dtype(f"<U{max(view.dtype.itemsize, new.dtype.itemsize) // 4}")
            buf = np.empty((n + k + max(1024, (n + k) // 4),) + view.shape[1:], dtype)
            buf[:n], buf[n:n + k] = view, new
            key = id(buf)
            self._used[key] = (weakref.ref(buf, lambda _r, key=key: self._used.pop(key, None)), n + k)
            return buf[:n + k]


grow = _Growth().append
"""``grow(view, new)``: ``view`` with rows appended (see :class:`_Growth`)."""


def _ident(st: os.stat_result) -> tuple[int, int]:
    return st.st_dev, st.st_ino


class Follower:
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

    # -- appended lines, read with the loader's rules

    def _read(self, chunk: bytes, base_line: int) -> None:
        """Parse complete lines (the first is file line ``base_line + 1``) and take their subgroups."""
        table, rows = self._table(chunk, base_line)
        self._rows_read = rows
        if table is None:
            self.dataset = dataclasses.replace(self.dataset, rows=self.dataset.rows + rows)
            return
        self._check_times(table)
        ch = D._Builder(table, self.dataset.layout, self._req).build()
        if self.dataset.layout.kind == "long":
            self._take_long(ch, table, rows)
        else:
            self._take_rows(ch, table, rows)
        if table.frame.shape[0] and self.dataset.layout.time:
            t = sniff.as_times(table, self.dataset.layout.time)
            self._last_time = t.values[-1].astype(self.dataset.times.dtype)

    def _table(self, chunk: bytes, base_line: int) -> tuple[sniff.Table | None, int]:
        fmt, path = self._fmt, self.path
        nul = chunk.find(b"\x00")
        if nul >= 0:
            line = base_line + chunk.count(b"\n", 0, nul) + 1
            raise WorkbenchError(f"{path}:{line}: NUL byte in an appended row; not a text file")
        try:
            chunk.decode(fmt.encoding)
        except UnicodeDecodeError as exc:
            line = base_line + chunk.count(b"\n", 0, exc.start) + 1
            raise WorkbenchError(f"{path}:{line}: the appended row is not {fmt.encoding} text like the rest "
                                 "of the file") from None
        try:
            lines = sniff._record_lines(path, chunk, fmt.encoding, fmt.delim, len(fmt.names), 0) + base_line
        except WorkbenchError as exc:  # renumber the chunk's line as the file's
            m = re.match(re.escape(path) + r":(\d+)(.*)$", str(exc))
            raise (WorkbenchError(f"{path}:{int(m.group(1)) + base_line}{m.group(2)}") if m else exc) from None
        if len(lines) == 0:
            return None, 0
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            frame = pd.read_csv(io.BytesIO(chunk), sep=fmt.delim, header=None, names=fmt.names, engine="c",
                                encoding=fmt.encoding, dtype={c: str for c in fmt.keep}, keep_default_na=False,
                                na_values=[""], decimal=fmt.decimal, skip_blank_lines=True, quotechar='"',
                                index_col=False)
        rows = len(frame)
        if rows != len(lines):
            lines = np.arange(rows, dtype=np.int64) + base_line + 1
        empty = frame.isna().all(axis=1).to_numpy()
        if empty.all():
            return None, rows
        if empty.any():
            frame, lines = frame.loc[~empty].reset_index(drop=True), lines[~empty]
        frame = frame[[c for c in frame.columns if c in fmt.columns]]
        table = sniff.Table(path, frame, len(frame), "", len(chunk), fmt.encoding, (), fmt.text_columns, fmt.decimal)
        table.__dict__["lines"] = lines
        return table, rows

    def _check_times(self, table: sniff.Table) -> None:
        col = self.dataset.layout.time
        if col is None:
            return
        t = sniff.as_times(table, col)
        if t is None or t.failed.any() or t.empty.any():
            return  # the loader's rules name the cell
        v = t.values.astype(self.dataset.times.dtype)
        prev = np.concatenate((v[:1] if self._last_time is None else [self._last_time], v[:-1]))
        back = np.flatnonzero(v < prev)
        if back.size:
            i = int(back[0])
            raise WorkbenchError(f"{table.where(i, col)}: time {str(sniff.as_text(table, col)[i])!r} is earlier than "
                                 "the row before it; rows appended out of time order cannot be followed")

    def _take_rows(self, ch: Dataset, table: sniff.Table, rows: int) -> None:
        ds, key = self.dataset, self.dataset.layout.subgroup
        if key is None:
            labels = (np.arange(ch.m) + ds.m + 1).astype(str)
        else:
            labels = ch.labels
            for i, lab in enumerate(labels.tolist()):
                if lab in self._index:
                    raise WorkbenchError(f"{table.where(i, key)}: duplicate subgroup {lab!r} (already read earlier "
                                         "in the file)")
        for i, lab in enumerate(labels.tolist()):
            self._index[lab] = ds.m + i
        self.dataset = _append(ds, ch, labels, ch.values, ch.times, ch.extras, rows)

    def _take_long(self, ch: Dataset, table: sniff.Table, rows: int) -> None:
        ds, lay, o = self.dataset, self.dataset.layout, self._open
        keys, names = sniff.as_text(table, lay.subgroup), sniff.as_text(table, lay.stream)
        column = {s: j for j, s in enumerate(ds.streams)}
        unknown = ~np.isin(names, np.asarray(ds.streams, dtype=str))
        if unknown.any():
            i = int(np.argmax(unknown))
            raise WorkbenchError(f"{table.where(i, lay.stream)}: stream {str(names[i])!r} is not among the file's "
                                 f"streams ({', '.join(ds.streams)}); a stream new in appended rows cannot be followed")
        codes, uniq = pd.factorize(keys)
        began = np.maximum.accumulate(codes)
        back = np.flatnonzero(codes < began)
        if back.size:
            i = int(back[0])
            raise WorkbenchError(f"{table.where(i, lay.subgroup)}: a reading for subgroup {str(keys[i])!r} arrives "
                                 f"after subgroup {str(uniq[began[i]])!r} began; append a subgroup's readings together")
        cont = o is not None and str(uniq[0]) == o.label
        for j, lab in enumerate(str(u) for u in uniq):
            if lab in self._index or (o is not None and lab == o.label and j > 0):
                i = int(np.argmax(codes == j))
                raise WorkbenchError(f"{table.where(i, lay.subgroup)}: subgroup {lab!r} is already complete; a "
                                     "reading appended for it later cannot be followed")
        grid = np.full((ch.m, ds.k), np.nan)
        grid[:, [column[s] for s in ch.streams]] = ch.values
        sidx = np.array([column[s] for s in names.tolist()])
        present = np.zeros((ch.m, ds.k), bool)
        present[codes, sidx] = True
        pieces = []
        if o is not None:
            if cont:
                dup = o.seen & present[0]
                if dup.any():
                    i = int(np.argmax((codes == 0) & (sidx == int(np.argmax(dup)))))
                    raise WorkbenchError(f"{table.where(i, lay.value)}: second reading of stream "
                                         f"{ds.streams[int(np.argmax(dup))]!r} in subgroup {o.label!r}")
                o = _Open(o.label, np.where(present[0], grid[0], o.row), o.seen | present[0], o.time, o.extras)
            pieces.append(o)
        for j in range(1 if cont else 0, ch.m):
            pieces.append(_Open(str(uniq[j]), grid[j], present[j], None if ch.times is None else ch.times[j],
                                {k: v[j] for k, v in ch.extras.items()}))
        done = pieces if pieces[-1].seen.all() else pieces[:-1]
        self._open = None if pieces[-1].seen.all() else pieces[-1]
        for i, p in enumerate(done):
            self._index[p.label] = ds.m + i
        values = np.array([p.row for p in done]).reshape(len(done), ds.k)
        times = None if ds.times is None else [p.time for p in done]
        extras = {k: [p.extras[k] for p in done] for k in ds.extras}
        self.dataset = _append(ds, ch, [p.label for p in done], values, times, extras, rows)


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


def _head(ds: Dataset, stop: int) -> Dataset:
    """The first ``stop`` subgroups of a dataset (new arrays)."""
    cut = lambda a: None if a is None else a[:stop].copy()  # noqa: E731
    return dataclasses.replace(
        ds, labels=cut(ds.labels), values=cut(ds.values), summary_n=cut(ds.summary_n),
        summary_mean=cut(ds.summary_mean), summary_range=cut(ds.summary_range), summary_sd=cut(ds.summary_sd),
        times=cut(ds.times), extras={k: cut(v) for k, v in ds.extras.items()})


def _append(ds: Dataset, ch: Dataset, labels, values, times, extras, rows: int) -> Dataset:
    """``ds`` with the subgroups of ``ch`` appended (counts of rows and cells added)."""
    cat = lambda a, b: None if a is None else grow(a, np.asarray(b, dtype=a.dtype))  # noqa: E731
    notices = ds.notices + tuple(n for n in ch.notices if n.startswith("skipped") and n not in ds.notices)
    return dataclasses.replace(
        ds, labels=grow(ds.labels, np.asarray(labels, dtype=str)), values=cat(ds.values, values),
        summary_n=cat(ds.summary_n, ch.summary_n), summary_mean=cat(ds.summary_mean, ch.summary_mean),
        summary_range=cat(ds.summary_range, ch.summary_range), summary_sd=cat(ds.summary_sd, ch.summary_sd),
        times=cat(ds.times, times), extras={k: grow(v, np.asarray(extras[k], dtype=str)) for k, v in ds.extras.items()},
        rows=ds.rows + rows, missing=ds.missing + ch.missing, skipped_bad=ds.skipped_bad + ch.skipped_bad,
        notices=notices)
