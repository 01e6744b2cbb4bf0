"""Loading process data: a CSV, TSV, XLSX, Parquet or Arrow file becomes a :class:`Dataset`.

Reading (encoding, delimiter, row numbers, cells) is in :mod:`workbench.core.data.sniff`.  This
module decides the layout and arranges the readings as subgroups x streams.

Layout detection (each rule is skipped when the request gives that part):

1. Names are compared ignoring case, spaces and punctuation.  A column is a *number*
   column when at least half of its non-empty cells are numbers (the others are then
   reported as bad cells), else *text* (or *empty* when it has no filled cell).
2. Summary: columns named n / size / count, mean / avg / average / xbar and range / r
   or sd / s / stdev / std  ->  ``summary``.
3. Key (subgroup) column: the first column named subgroup, group, batch, lot, sample, time,
   timestamp, date, datetime or id (optionally followed by no / nr / number / id).  Else
   the first column when it is text and not named like a stream; such a key is dropped
   (rows are numbered) when its values repeat and no stream column is found.
4. Time column: the key when it is named time / timestamp / date / datetime, else the first
   other column so named; used when its cells parse as dates, which then order the rows.
5. Stream column: the first column named stream, head, spindle, cavity, lane, nozzle,
   station, line, machine, channel or position; else the first text column whose values
   never repeat within a subgroup.  Columns named like a key or a stream always count as
   text (labels), and a key whose cells start with a zero (``007``) keeps that text.
6. Attribute data: ``--count`` (with ``--size``), or a number column named rejected /
   rejects / defects / defectives / nonconforming together with one named inspected /
   size / n / units; long when the key repeats, else one subgroup a row.
7. Otherwise, with the number columns other than the key and time: key repeats -> ``long``
   (stream column + one number column); two or more -> ``wide``; one -> ``individuals``.

When a rule cannot decide, the error names the options to give.
"""
from __future__ import annotations

import dataclasses
import os
import re

import numpy as np
import pandas as pd

from workbench.core.data import sniff
from workbench.core.model import LAYOUTS, Dataset, Layout, LayoutRequest, WorkbenchError
from workbench.core.data.sniff import Table

_KEY = re.compile(r"^(subgroup|group|sg|batch|lot|sample|time|timestamp|date|datetime|id|index|idx|seq|sequence"
                  r"|no|nr|number|obs|observation)(no|nr|number|id)?$")
FAR_SDS = 100.0
"""A stream whose mean is further than this many pooled within-stream SDs from the others is not taken
as a stream without asking (a key, a counter or another measure that slipped into the readings)."""
_TIME = re.compile(r"^(time|timestamp|date|datetime)$")
_STREAM = frozenset("stream head spindle cavity lane nozzle station line machine channel position".split())
_N = ("n", "size", "count", "samplesize", "subgroupsize")
_MEAN = ("mean", "avg", "average", "xbar")
_RANGE = ("range", "r")
_SD = ("sd", "s", "stdev", "std", "stddev")
_CHARACTERISTIC = frozenset("characteristic feature parameter measurand measure property variable".split())
_COUNT = ("rejected", "rejects", "defects", "defectives", "nonconforming")
_SIZE = ("inspected", "size", "n", "units")


def _norm(name: str) -> str:
    return re.sub(r"[^0-9a-z]", "", name.lower())


def load(path, request: LayoutRequest = LayoutRequest()) -> Dataset:
    """Load a data file as subgroups x streams.

    Parameters
    ----------
    path : str, os.PathLike or workbench.core.data.sql.SqlSource
        A database table or query, or a CSV / TSV (delimiter sniffed), XLSX file (first sheet), Parquet or Feather / Arrow IPC file.
    request : LayoutRequest
        Overrides for the layout detection (see the module docstring).

    Returns
    -------
    Dataset
        Subgroups in time order with the file's SHA-256, row count and size.

    Raises
    ------
    WorkbenchError
        One line naming the file (and row and column where that applies).
    """
    if request.kind is not None and request.kind not in LAYOUTS:
        raise WorkbenchError(f"unknown layout {request.kind!r} (choose {', '.join(LAYOUTS)})")
    if request.size and not request.count:
        raise WorkbenchError("--size needs --count (the column of counts)")
    from workbench.core.data.sql import SqlSource
    if isinstance(path, SqlSource) and request.kind in (None, "long"):
        from workbench.core.data import pushdown
        if path.aggregate or pushdown.count_rows(path) > pushdown.AUTO_ROWS:
            try:
                table, summary, src, notice = pushdown.aggregate_table(
                    path, lambda t: detect(t, request), lambda names: _text_columns(names, request))
            except WorkbenchError as exc:
                if path.aggregate or pushdown.NEEDS_LONG not in str(exc):
                    raise
            else:
                ds = _Builder(table, summary, LayoutRequest(kind="summary", subgroup=summary.subgroup)).build()
                return dataclasses.replace(ds, source=src, notices=ds.notices + (notice,))
    table = read_any(path, lambda names: _text_columns(names, request), _wanted(request))
    ds = from_table(table, request)
    return ds if isinstance(path, (str, os.PathLike)) else dataclasses.replace(ds, source=path)


def from_table(table: Table, request: LayoutRequest = LayoutRequest()) -> Dataset:
    """The dataset of a table already read (the characteristic picked, the layout detected)."""
    cols = list(table.frame.columns)
    r = request
    for name in (r.subgroup, r.stream, r.value, r.time, r.count, r.size, *r.streams):
        if name is not None and name not in cols:
            raise WorkbenchError(f"{table.path}: no column {name!r} (columns: {', '.join(cols)})")
    found = _characteristics(table, request)
    if found is not None:
        from workbench.core.data.characteristics import ManyCharacteristics, pick
        if request.characteristic is None:
            raise ManyCharacteristics(table.path, found.names)
        table = pick(table, found, request.characteristic)
    elif request.characteristic is not None:
        raise WorkbenchError(f"{table.path}: --characteristic {request.characteristic!r}: these data hold one "
                             "characteristic (no characteristic column, and no several measured columns)")
    layout = detect(table, request)
    ds = _Builder(table, layout, request).build()
    if found is not None:
        ds = dataclasses.replace(ds, characteristic=request.characteristic,
                                 notices=ds.notices + (f"characteristic {request.characteristic} "
                                                       f"({found.names.index(request.characteristic) + 1} of "
                                                       f"{len(found.names)})",))
    return ds


def read_any(path, text_columns=lambda names: (), wanted=lambda names: None) -> Table:
    """A data file as a table of cells: Parquet / Feather / Arrow IPC (``wanted`` columns only), else CSV/TSV/XLSX."""
    from workbench.core.data import columnar, sql
    if isinstance(path, sql.SqlSource):
        return sql.read_table(path, text_columns, wanted)
    if columnar.kind_of(path) is not None:
        return columnar.read_table(path, text_columns, wanted)
    return sniff.read_table(path, text_columns)


def _wanted(req: LayoutRequest):
    """The columns a columnar file must deliver for this request, or None for all of them.

    Only when the readings are named (``--value``, ``--streams``, ``--count``) and the subgroup
    and stream columns are given or named like one is a subset enough for the same detection.

    Not from the schema alone (names and Arrow types): rule 1 (a text-typed column may hold numbers),
    rules 3, 5 and 7 (a text key, a stream whose values never repeat within a subgroup, a key that
    repeats) and the several-characteristics test look at the values; and the columns the layout does
    not use are kept as context (``Dataset.extras``), so a subset read without named readings would
    change the dataset, not only the time taken."""
    def pick(names: list[str]) -> list[str] | None:
        if not (req.value or req.streams or req.count):
            return None
        named = [n for n in names if _KEY.match(_norm(n)) or _norm(n) in _STREAM]
        if not (req.subgroup or any(_KEY.match(_norm(n)) for n in names)):
            return None
        if not (req.stream or req.streams or req.kind in ("wide", "individuals")
                or any(_norm(n) in _STREAM for n in names)):
            return None
        given = [c for c in (req.subgroup, req.stream, req.value, req.time, req.count, req.size, *req.streams) if c]
        return given + named
    return pick


def characteristics_of(path, request: LayoutRequest = LayoutRequest()) -> tuple[str, ...]:
    """The characteristics the data hold (empty for data of one characteristic)."""
    table = read_any(path, lambda names: _text_columns(names, request))
    found = _characteristics(table, request)
    return () if found is None else found.names


def _characteristics(table: Table, req: LayoutRequest):
    """How the table holds several characteristics (see ``characteristics``), or None."""
    from workbench.core.data import characteristics as CH
    if req.count or req.streams or req.kind in ("wide", "summary"):
        return None
    cols = list(table.frame.columns)
    norm = {c: _norm(c) for c in cols}
    col = CH.named_column(table, {req.subgroup, req.stream, req.time, req.value})
    if col is not None:
        names = CH.names_in(table, col)
        return CH.Found(col, names) if names else None
    if req.value:
        return None
    key = req.subgroup or _find_key(table, cols, norm)[0]
    time = _find_time(req, key, cols, norm)
    repeats = key is not None and sniff.repeats(table, key, sniff.as_times(table, key) if key == time else None)
    stream = req.stream or (_find_stream(table, cols, norm, key, {key, time}) if repeats else None)
    if not (req.kind == "individuals" or (key is not None and (req.kind == "long" or (repeats and stream is not None)))):
        return None
    numbers = [c for c in cols if c not in {key, time, stream} and sniff.column_kind(table, c) == "number"]
    if any(norm[c] in _COUNT for c in numbers) and any(norm[c] in _SIZE for c in numbers):
        return None  # counts with their sample sizes (attribute data), not two characteristics
    return CH.Found(None, tuple(numbers)) if len(numbers) >= 2 else None


def _text_columns(names: list[str], req: LayoutRequest) -> set[str]:
    out = {n for n in names if _KEY.match(_norm(n)) or _norm(n) in _STREAM}
    out |= {n for n in (req.subgroup, req.stream, req.time) if n}
    out |= {n for n in names if _norm(n) in _CHARACTERISTIC}
    return out - {n for n in (req.value, req.count, req.size, *req.streams) if n}


def detect(table: Table, req: LayoutRequest) -> Layout:
    """Decide the layout of a table (rules in the module docstring)."""
    cols = list(table.frame.columns)
    norm = {c: _norm(c) for c in cols}
    auto = not any((req.kind, req.subgroup, req.stream, req.value, req.time, req.streams, req.count, req.size))
    first = lambda words: next((c for c in cols if norm[c] in words), None)  # noqa: E731
    summary = {"n": first(_N), "mean": first(_MEAN), "range": first(_RANGE), "sd": first(_SD)}
    plain = not (req.count or req.stream or req.value or req.streams)
    if req.kind == "summary" or (req.kind is None and plain and summary["n"] and summary["mean"]
                                 and (summary["range"] or summary["sd"])):
        if not (summary["n"] and summary["mean"] and (summary["range"] or summary["sd"])):
            raise WorkbenchError(f"{table.path}: the summary layout needs columns named n (or size, count), "
                                 "mean (or avg, xbar) and range (or r) or sd (or s, stdev)")
        key, _ = (req.subgroup, True) if req.subgroup else _find_key(table, cols, norm)
        return Layout("summary", subgroup=key, time=_find_time(req, key, cols, norm), detected=auto, **summary)
    key, by_name = (req.subgroup, True) if req.subgroup else _find_key(table, cols, norm)
    if key is None and req.time:
        key, by_name = req.time, True
    time = _find_time(req, key, cols, norm)
    repeats = key is not None and sniff.repeats(table, key, sniff.as_times(table, key) if key == time else None)
    count, size = req.count, req.size
    if count is None and req.kind in (None, "long", "individuals") and plain:
        c, s = first(_COUNT), first(_SIZE)
        if c and s and c != s and all(sniff.column_kind(table, x) == "number" for x in (c, s)):
            count, size = c, s
    used = {key, time, count, size}
    stream = req.stream
    if stream is None and key is not None and (repeats or req.kind == "long"):
        stream = _find_stream(table, cols, norm, key, used)
    if repeats and not by_name and stream is None:
        key, repeats = None, False  # a first text column that repeats is not a key
    if count:
        if req.kind in ("wide", "summary"):
            raise WorkbenchError(f"{table.path}: attribute data (--count) are long or individuals, not {req.kind}")
        long = req.kind == "long" or req.stream is not None or (req.kind is None and repeats)
        if long and (key is None or stream is None):
            raise WorkbenchError(f"{table.path}: long attribute data need a subgroup and a stream column: "
                                 "give --subgroup and --stream, or --layout individuals")
        return Layout("long" if long else "individuals", subgroup=key, stream=stream if long else None,
                      time=time, count=count, size=size, detected=auto)
    numbers = [c for c in cols if c not in used and c != stream and sniff.column_kind(table, c) == "number"]
    if req.kind in (None, "wide") and not req.streams and not req.value and not req.stream:
        counters = [c for c in numbers if _counts_up(table, c)]
        if counters and len(numbers) - len(counters) >= 1:  # 1, 2, 3 … is a key, never a stream
            numbers = [c for c in numbers if c not in counters]
            if key is None:
                key, by_name = counters[0], False
    kind = req.kind or ("wide" if req.streams else "long" if (req.stream or repeats) else
                        "individuals" if req.value else "wide" if len(numbers) >= 2 else "individuals")
    if kind == "long":
        if key is None:
            raise WorkbenchError(f"{table.path}: long data need a subgroup column: give --subgroup")
        if stream is None:
            lab = _first_repeat(table, key)
            raise WorkbenchError(f"{table.path}: subgroup column {key!r} repeats ({lab}) but no stream column was "
                                 "found: give --stream for long data, or --subgroup for another key")
        return Layout("long", subgroup=key, stream=stream, value=req.value or _one(table, numbers),
                      time=time, detected=auto)
    if kind == "wide":
        streams = tuple(req.streams) or tuple(numbers)
        if not streams:
            raise WorkbenchError(f"{table.path}: no column of numbers found (columns: {', '.join(cols)})")
        if not req.streams:
            _far_streams(table, streams)
        return Layout("wide", subgroup=key, time=time, streams=streams, detected=auto)
    return Layout("individuals", subgroup=key, value=req.value or _one(table, numbers), time=time, detected=auto)


def _one(table: Table, numbers: list[str]) -> str:
    if len(numbers) == 1:
        return numbers[0]
    if not numbers:
        raise WorkbenchError(f"{table.path}: no column of numbers found (columns: {', '.join(table.frame.columns)})")
    raise WorkbenchError(f"{table.path}: several number columns ({', '.join(numbers)}): give --value for the "
                         "readings, or --layout wide")


def _find_key(table: Table, cols: list[str], norm: dict[str, str]) -> tuple[str | None, bool]:
    for c in cols:
        if _KEY.match(norm[c]):
            return c, True
    c = cols[0]
    if len(cols) > 1 and norm[c] not in _STREAM and sniff.column_kind(table, c) == "text":
        return c, False
    return None, False


def _counts_up(table: Table, col: str) -> bool:
    """A column of whole numbers that strictly increase row by row (1, 2, 3 …): a key, not a reading."""
    v = sniff.as_numbers(table, col).values
    if v.size < 3 or not np.isfinite(v).all():
        return False
    return bool(np.all(v == np.round(v)) and np.all(np.diff(v) > 0))


def _far_streams(table: Table, streams: tuple[str, ...]) -> None:
    """Stop detection when a stream's level is far from the others (more than FAR_SDS pooled SDs from
    the median of the stream means; the pooled SD is the median of the streams' SDs, so the odd stream
    cannot hide itself): say which and ask for the stream columns."""
    if len(streams) < 2:
        return
    means, sds = [], []
    for c in streams:
        v = sniff.as_numbers(table, c).values
        v = v[np.isfinite(v)]
        means.append(float(v.mean()) if v.size else np.nan)
        sds.append(float(v.std(ddof=1)) if v.size > 1 else np.nan)
    means_a, sds_a = np.array(means), np.array(sds)
    ok = np.isfinite(means_a) & np.isfinite(sds_a)
    if ok.sum() < 2:
        return
    pooled = float(np.median(sds_a[ok]))
    centre = float(np.median(means_a[ok]))
    if pooled <= 0:
        return
    far = [(c, m) for c, m, good in zip(streams, means_a, ok) if good and abs(m - centre) > FAR_SDS * pooled]
    if far:
        c, m = max(far, key=lambda x: abs(x[1] - centre))
        raise WorkbenchError(
            f"{table.path}: column {c!r} (mean {m:.6g}) lies {abs(m - centre) / pooled:,.0f} pooled SDs from the other "
            f"columns (mean {centre:.6g}): is it a key or another measure rather than a stream? give --streams with the "
            f"stream columns (and --subgroup for a key)")


def _find_time(req: LayoutRequest, key: str | None, cols: list[str], norm: dict[str, str]) -> str | None:
    if req.time:
        return req.time
    if key is not None and _TIME.match(norm[key]):
        return key
    return next((c for c in cols if c != key and _TIME.match(norm[c])), None)


def _find_stream(table: Table, cols: list[str], norm: dict[str, str], key: str, used: set) -> str | None:
    free = [c for c in cols if c not in used]
    named = next((c for c in free if norm[c] in _STREAM), None)
    if named is not None:
        return named
    keys = sniff.as_text(table, key)
    for c in free:
        if sniff.column_kind(table, c) != "text":
            continue
        vals = sniff.as_text(table, c)
        if len(set(vals[:1000].tolist())) > 1 and not pd.DataFrame({"k": keys, "s": vals}).duplicated().any():
            return c
    return None


def _first_repeat(table: Table, col: str) -> str:
    vals = sniff.as_text(table, col)
    i = int(np.argmax(pd.Series(vals).duplicated().to_numpy()))
    j = int(np.flatnonzero(vals == vals[i])[0])
    return f"{str(vals[i])!r} at rows {int(table.lines[j])} and {int(table.lines[i])}"


def describe_layout(ds: Dataset) -> str:
    """One line describing the layout, e.g. ``wide: subgroup=time, streams=H1..H6 (detected)``."""
    lay = ds.layout
    parts = [f"subgroup={lay.subgroup}" if lay.subgroup else "subgroup=row number"]
    if lay.time and lay.time != lay.subgroup:
        parts.append(f"time={lay.time}")
    for name in ("stream", "value", "n", "mean", "range", "sd", "count", "size"):
        if getattr(lay, name):
            parts.append(f"{name}={getattr(lay, name)}")
    if lay.streams:
        s = lay.streams
        parts.append("streams=" + (f"{s[0]}..{s[-1]}" if len(s) > 3 else ",".join(s)))
    kind = f"{lay.kind} (attribute)" if lay.count else lay.kind
    return f"{kind}: {', '.join(parts)} ({'detected' if lay.detected else 'as given'})"


def _fmt(x: float) -> str:
    return str(int(x)) if float(x).is_integer() else repr(float(x))


class _Builder:
    """Arranges the cells of a table as a Dataset for one layout (errors name file:row:column)."""

    def __init__(self, table: Table, layout: Layout, req: LayoutRequest) -> None:
        self.t, self.lay, self.req = table, layout, req
        self.notices = list(table.notices)
        self.missing = self.bad = 0
        self.first_bad: str | None = None
        self.perm: np.ndarray | None = None
        self.times: np.ndarray | None = None
        self.times_one_form = False

    def fail(self, i: int, col: str, what: str) -> WorkbenchError:
        return WorkbenchError(f"{self.t.where(i, col)}: {what}")

    def nums(self, col: str) -> np.ndarray:
        n = sniff.as_numbers(self.t, col)
        if n.bad.any():
            i = int(np.argmax(n.bad))
            msg = f"{self.t.where(i, col)}: not a number: {sniff.cell_as_typed(self.t, i, col, str(n.texts[i]))!r}"
            if not self.req.skip_bad:
                raise WorkbenchError(msg)
            self.bad += int(n.bad.sum())
            self.first_bad = self.first_bad or msg
        self.missing += int(n.empty.sum())
        return n.values

    def texts(self, col: str, what: str) -> np.ndarray:
        txt = sniff.as_text(self.t, col)
        if (txt == "").any():
            raise self.fail(int(np.argmax(txt == "")), col, f"empty {what}")
        return txt

    def first(self, mask: np.ndarray, col: str, what) -> None:
        if mask.any():
            i = int(np.argmax(mask))
            raise self.fail(i, col, what(i))

    def timeline(self) -> None:
        col = self.lay.time
        if col is None:
            return
        t = sniff.as_times(self.t, col)
        if t is None or t.failed.any():
            if self.req.time is not None:
                if t is None:
                    raise WorkbenchError(f"{self.t.path}: column {col!r} holds numbers, not times")
                i = int(np.argmax(t.failed))
                raise self.fail(i, col, f"not a time: {str(sniff.as_text(self.t, col)[i])!r}")
            if t is not None:
                i = int(np.argmax(t.failed))
                self.notices.append(f"column {col!r} does not hold times throughout ({self.t.where(i, col)}: "
                                    f"{str(sniff.as_text(self.t, col)[i])!r}); rows kept in file order")
            self.lay = dataclasses.replace(self.lay, time=None)
            return
        self.first(t.empty, col, lambda i: "empty time")
        v = t.values
        if len(v) > 1 and not bool((v[1:] >= v[:-1]).all()):
            self.perm = np.argsort(v, kind="stable")
            self.notices.append(f"rows were not in time order; sorted by {col}")
        self.times = v
        self.times_one_form = t.one_form

    def order(self, a: np.ndarray) -> np.ndarray:
        return a if self.perm is None else a[self.perm]

    def extras(self, sg: np.ndarray | None = None, first: np.ndarray | None = None) -> dict:
        """The context columns per subgroup: ``extras`` and ``extra_sets`` of the Dataset.

        One row a subgroup: each row's text.  Long data (``sg``: each ordered row's subgroup code,
        ``first``: each subgroup's first row): the first row's text, and where a column varies inside a
        subgroup its distinct values in first-seen order (:func:`workbench.core.data.context.sets`)."""
        from workbench.core.data.context import sets
        lay = self.lay
        used = {lay.subgroup, lay.time, lay.stream, lay.value, lay.n, lay.mean, lay.range, lay.sd,
                lay.count, lay.size, *lay.streams}
        out, varying = {}, {}
        for c in self.t.frame.columns:
            if c in used:
                continue
            txt = self.order(sniff.as_text(self.t, c))
            if sg is None:
                out[c] = txt
                continue
            out[c], found = sets(txt, sg, first)
            if found:
                varying[c] = found
        return {"extras": out, "extra_sets": varying}

    def row_labels(self) -> np.ndarray:
        key = self.lay.subgroup
        if key is None:
            return np.arange(1, len(self.t.frame) + 1).astype(str)
        labels = self.texts(key, "subgroup key")
        if sniff.repeats(self.t, key, sniff.as_times(self.t, key) if key == self.lay.time else None):
            dup = pd.Series(labels).duplicated().to_numpy()
            i = int(np.argmax(dup))
            j = int(np.flatnonzero(labels == labels[i])[0])
            raise self.fail(i, key, f"duplicate subgroup {str(labels[i])!r} (also at row {int(self.t.lines[j])})")
        return labels

    def build(self) -> Dataset:
        self.timeline()
        lay = self.lay
        if lay.kind == "summary":
            parts = self.summary()
        elif lay.kind == "long":
            parts = self.grouped()
        else:
            parts = self.rowwise()
        if self.bad:
            self.notices.append(f"skipped {self.bad} non-numeric cell(s); the first: {self.first_bad}")
        t = self.t
        return Dataset(path=t.path, sha256=t.sha256, rows=t.rows, size_bytes=t.size_bytes, layout=self.lay,
                       missing=self.missing, skipped_bad=self.bad, notices=tuple(self.notices),
                       encoding=t.encoding, count_over_size=getattr(self, "count_over_size", None), **parts)

    def rowwise(self) -> dict:
        lay = self.lay
        labels = self.row_labels()
        times = None if self.times is None else self.order(self.times)
        base = dict(labels=self.order(labels), times=times, **self.extras())
        if lay.count:
            counts, sizes = self.attribute()
            return dict(base, streams=(lay.count,), values=None, counts=self.order(counts)[:, None],
                        sizes=None if sizes is None else self.order(sizes)[:, None])
        streams = lay.streams if lay.kind == "wide" else (lay.value,)
        values = np.column_stack([self.nums(c) for c in streams])
        return dict(base, streams=tuple(streams), values=self.order(values))

    def summary(self) -> dict:
        lay = self.lay
        labels = self.row_labels()
        n = self.nums(lay.n)
        self.first(np.isnan(n), lay.n, lambda i: "empty subgroup size")
        self.first(n <= 0, lay.n, lambda i: f"subgroup size must be positive, got {_fmt(n[i])}")
        self.first(n != np.round(n), lay.n, lambda i: f"subgroup size must be a whole number, got {_fmt(n[i])}")
        stats = {}
        for name in ("mean", "range", "sd"):
            col = getattr(lay, name)
            v = None if col is None else self.nums(col)
            if v is not None and name != "mean":
                self.first(v < 0, col, lambda i, v=v, name=name: f"{name} cannot be negative, got {_fmt(v[i])}")
            stats["summary_" + name] = None if v is None else self.order(v)
        times = None if self.times is None else self.order(self.times)
        return dict(labels=self.order(labels), streams=(lay.mean,), values=None, times=times,
                    summary_n=self.order(n).astype(np.int64), **self.extras(), **stats)

    def attribute(self) -> tuple[np.ndarray, np.ndarray | None]:
        lay = self.lay
        c = self.nums(lay.count)
        have = ~np.isnan(c)
        self.first(have & (c < 0), lay.count, lambda i: f"negative count {_fmt(c[i])}")
        self.first(have & (c != np.round(c)), lay.count, lambda i: f"count is not a whole number: {_fmt(c[i])}")
        if lay.size is None:
            return c, None
        s = self.nums(lay.size)
        self.first(have & np.isnan(s), lay.size, lambda i: "empty sample size")
        self.first(have & (s <= 0), lay.size, lambda i: f"sample size must be positive, got {_fmt(s[i])}")
        over = have & (c > s)
        if over.any():  # defects may outnumber units (u charts); defectives may not — the chart decides
            i = int(np.argmax(over))
            self.count_over_size = str(self.fail(i, lay.count, f"count {_fmt(c[i])} is larger than the "
                                                  f"sample size {_fmt(s[i])}"))
        return c, s

    def factorize_keys(self, col: str) -> tuple[np.ndarray, np.ndarray]:
        """``pandas.factorize`` of the subgroup keys in time order (codes in order of first appearance).

        When the key is the time column its parsed times are factorized instead (integers hash far
        faster than text), and kept only when every key's text equals its group's first text — which
        holds without comparing, and without making the text of every row, when every cell had one
        fixed-width ISO form (one text per time).
        """
        lay = self.lay
        if self.times is not None and col == lay.time and len(self.times):
            codes, _ = pd.factorize(self.order(self.times).view(np.int64))
            seen = np.maximum.accumulate(codes)
            first = np.flatnonzero(np.r_[True, codes[1:] > seen[:-1]])
            if self.times_one_form:
                rows = first if self.perm is None else self.perm[first]
                return codes, sniff.text_at(self.t, col, rows)
            keys = self.order(self.texts(col, "subgroup key"))
            labels = keys[first]
            if np.array_equal(labels[codes], keys):
                return codes, labels
        return pd.factorize(self.order(self.texts(col, "subgroup key")))

    def grouped(self) -> dict:
        lay = self.lay
        names = self.order(self.texts(lay.stream, "stream name"))
        if lay.count:
            c, s = self.attribute()
            cols = {"counts": c, "sizes": s}
        else:
            cols = {"values": self.nums(lay.value)}
        rows = np.arange(len(names)) if self.perm is None else self.perm
        sg, labels = self.factorize_keys(lay.subgroup)
        st, streams = pd.factorize(names)
        m, k = len(labels), len(streams)
        flat = sg.astype(np.int64) * k + st
        dup = pd.Series(flat).duplicated().to_numpy()
        if dup.any():
            i = int(np.argmax(dup))
            j = int(np.flatnonzero(flat == flat[i])[0])
            raise self.fail(int(rows[i]), lay.value or lay.count,
                            f"second reading of stream {str(names[i])!r} in subgroup {str(labels[sg[i]])!r} "
                            f"(first at row {int(self.t.lines[rows[j]])})")
        parts: dict = {}
        for name, v in cols.items():
            if v is None:
                parts[name] = None
                continue
            grid = np.full(m * k, np.nan)
            grid[flat] = self.order(v)
            parts[name] = grid.reshape(m, k)
        first = np.unique(sg, return_index=True)[1]
        times = None if self.times is None else self.order(self.times)[first]
        if lay.count:
            parts["values"] = None
        return dict(parts, labels=np.asarray(labels, dtype=str), streams=tuple(str(x) for x in streams),
                    times=times, **self.extras(sg, first))
