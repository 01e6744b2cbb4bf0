"""Reading appended rows of a followed file and merging them into the dataset read so far.

The parsing (:meth:`_RowReader._table`) reads complete lines with the file's own header,
delimiter, decimal mark and encoding and numbers them as lines of the file; the checks and
the merge use the loader's rules, so that errors name ``file:row:column``.  Rows of a wide,
individuals or summary file are subgroups of their own; rows of a long file are merged into
subgroups, the last of which may stay open until every stream has its reading (see
:mod:`workbench.core.phase2.follow`).  Arrays grow in place where they can (:func:`grow`).
"""
from __future__ import annotations

import dataclasses
import io
import re
import threading
import warnings
import weakref
from dataclasses import dataclass

import numpy as np
import pandas as pd

from workbench.core.data import reader as D
from workbench.core.data import sniff
from workbench.core.model import Dataset, WorkbenchError

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


class _RowReader:
    """The reading and merging half of :class:`~workbench.core.phase2.follow.Follower`.

    Uses the follower's ``path``, ``dataset``, ``_fmt``, ``_req``, ``_index``, ``_open``,
    ``_last_time`` and ``_rows_read``.
    """

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


def _head(ds: Dataset, stop: int) -> Dataset:
    """The first ``stop`` subgroups of a dataset (new arrays)."""
    cut = lambda a: None if a is None else a[:stop].copy()  # noqa: E731
    return dataclasses.replace(
        ds, labels=cut(ds.labels), values=cut(ds.values), summary_n=cut(ds.summary_n),
        summary_mean=cut(ds.summary_mean), summary_range=cut(ds.summary_range), summary_sd=cut(ds.summary_sd),
        times=cut(ds.times), extras={k: cut(v) for k, v in ds.extras.items()},
        extra_sets={k: {p: v for p, v in d.items() if p < stop} for k, d in ds.extra_sets.items()})


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
