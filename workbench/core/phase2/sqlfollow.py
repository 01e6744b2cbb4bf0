"""Following a database table or query that grows: rows after the last key judged.

A :class:`SqlFollower` plays the part of :class:`~workbench.core.phase2.follow.Follower` for a
case whose data come from a database.  The source names an increasing column (``--key``): the
rows are read ``ORDER BY`` it, and each poll asks only for the rows after the last key read,
with one parameterised query (``… WHERE key > :last ORDER BY key``; a query is wrapped as
``SELECT … FROM (query) AS workbench_rows …``).  The new rows go through the loader's rules and
are merged into the dataset as appended lines of a file are (:mod:`workbench.core.phase2.rows`).

What was read is fingerprinted as the loader does (:func:`workbench.core.data.sql.fingerprint`:
the canonical rows in the order read), incrementally, so that "the first N rows" of the source
play the part of a file's first bytes: on opening, every prefix the case relies on (the rows
read at creation, the rows each ``data-appended`` event judged) must still fingerprint the same.
A key that does not increase from one row to the next (a repeat, a step back, an empty key) is
refused with one line naming the row and the column.  At every poll the number of rows with a
key up to the last one read is counted again: rows that appeared behind the last key (a key that
went backwards) or rows deleted stop the follower, as a rewritten file does.
"""
from __future__ import annotations

import dataclasses
from typing import Any

import numpy as np

from workbench.core.data import reader as D
from workbench.core.data import sql
from workbench.core.data.records import RecordTable, clean_names
from workbench.core.model import Dataset, LayoutRequest, WorkbenchError
from workbench.core.phase2.follow import Update, PROBLEMS  # noqa: F401  (PROBLEMS: the same statuses)
from workbench.core.phase2.rows import _head, _RowReader

MAX_POLL_ROWS = 100_000
"""At most this many new rows are read in one poll (``Update.more`` says when more wait)."""


def _shown(value: Any) -> str:
    return "empty" if value is None else repr(sql.canonical(value))


class SqlFollower(_RowReader):
    """A database source followed by its increasing key (see the module docstring)."""

    def __init__(self, source: sql.SqlSource, dataset: Dataset, request: LayoutRequest, names: list[str],
                 key_index: int | None, found: Any, fp: sql.Fingerprint, last: Any) -> None:
        self.source = source
        self.path = source.shown
        """How the source is named in messages."""
        self.dataset = dataset
        self._req = dataclasses.replace(request, time=dataset.layout.time)
        self._names, self._key_index, self._found, self._fp = names, key_index, found, fp
        self.last_key = last
        """The key of the last row read (None before any row)."""
        self._open = None
        self._index = {str(x): i for i, x in enumerate(dataset.labels.tolist())}
        self._last_time = dataset.times[-1] if dataset.times is not None and dataset.m else None
        self._problem: tuple[str, str] | None = None
        self._rows_read = 0

    # -- what the watch records

    @property
    def offset(self) -> int:
        """Length of the canonical text of the rows read (the fingerprint's ``size_bytes``)."""
        return self._fp.size

    @property
    def sha256(self) -> str:
        return self._fp.sha256

    @property
    def rows(self) -> int:
        """Rows read so far."""
        return self._fp.rows

    @property
    def open_subgroup(self) -> str | None:
        return self._open.label if self._open else None

    def seen_extra(self) -> dict[str, Any]:
        """The key and the last key read, for the ``data-appended`` event."""
        return {"key": self.source.key, "last_key": sql.canonical(self.last_key)}

    # -- opening

    @classmethod
    def open(cls, source: sql.SqlSource, request: LayoutRequest, hold_from: int | None = None,
             marks: list[tuple[int, str, int]] = ()) -> "SqlFollower":
        """Read the source in key order and follow it from its last row.

        ``marks``: (rows, sha256, event) of every prefix the case relies on; each must still
        fingerprint the same (else WorkbenchError naming the event).
        """
        if not source.key:
            raise WorkbenchError(f"{source.shown}: give --key COLUMN, a column that increases with every new row, "
                                 "to watch a database")
        if source.aggregate:
            raise WorkbenchError(f"{source.shown}: rows aggregated in the database cannot be watched (Phase II needs "
                                 "the readings); open the source without --aggregate-in-database to watch it")
        engine = sql.engine_of(source)
        try:
            all_names = sql.column_names(source, engine)
            if source.key not in all_names:
                raise WorkbenchError(f"{source.shown}: --key {source.key!r}: no such column (columns: "
                                     f"{', '.join(all_names)})")
            names, rows, _notice = sql.read_rows(source, D._wanted(request), engine)
        finally:
            engine.dispose()
        key_index = names.index(source.key) if source.key in names else None
        if key_index is None:  # the key is not among the columns read: read it beside them
            engine = sql.engine_of(source)
            try:
                _n, keyed = sql.run(source, _keyed_sql(engine, source, names, None), engine=engine)
            finally:
                engine.dispose()
            keys = [r[-1] for r in keyed]
            rows = [r[:-1] for r in keyed]
        else:
            keys = [r[key_index] for r in rows]
        _check_keys(source, keys, None, 0)
        fp = sql.Fingerprint(names)
        for n_rows, digest, seq in sorted(marks):
            if n_rows > len(rows):
                raise WorkbenchError(f"{source.shown} now holds {len(rows)} rows, fewer than the {n_rows} rows "
                                     f"judged at event {seq}: rows were deleted")
            fp.update(rows[fp.rows:n_rows])
            if fp.sha256 != digest:
                raise WorkbenchError(f"{source.shown}: its first {n_rows} rows in order of {source.key!r} differ from "
                                     f"those read at event {seq} (the fingerprint differs): rows were changed, deleted "
                                     "or inserted behind the last key")
        fp.update(rows[fp.rows:])
        frame = sql.to_frame(names, rows)
        table = _record_table(source, frame, fp, request, 0)
        found = D._characteristics(table, request) if request.characteristic else None
        ds = dataclasses.replace(D.from_table(table, request), source=source)
        if ds.is_attribute or ds.values is None and not ds.is_summary:
            raise WorkbenchError(f"{source.shown}: following count data is not supported (their limits cannot be "
                                 "frozen)")
        f = cls(source, ds, request, names, key_index, found, fp, keys[-1] if keys else None)
        f._rows_read = len(rows)
        if hold_from is not None and ds.layout.kind == "long" and ds.m - 1 >= hold_from:
            f._hold_last(rows)
        return f

    def _hold_last(self, rows: list[tuple]) -> None:
        """Take an incomplete last long subgroup out of the dataset and read its rows again, as open."""
        ds = self.dataset
        if np.count_nonzero(~np.isnan(ds.values[-1])) == ds.k or self._found is not None:
            return
        label, col = str(ds.labels[-1]), self._names.index(ds.layout.subgroup)
        start = len(rows)
        while start > 0 and rows[start - 1][col] is not None and str(sql.canonical(rows[start - 1][col])) == label:
            start -= 1
        if start in (0, len(rows)):
            return
        self.dataset = _head(dataclasses.replace(ds, rows=0, missing=0, skipped_bad=0), ds.m - 1)
        del self._index[label]
        try:
            self._read(rows[start:], start)
        except WorkbenchError:
            self._open = None
        if self.dataset.m != ds.m - 1 or self._open is None or self._open.label != label:
            self.dataset, self._open, self._index[label] = ds, None, ds.m - 1
            return
        self.dataset = dataclasses.replace(self.dataset, rows=ds.rows, missing=ds.missing, skipped_bad=ds.skipped_bad)

    # -- polling

    def poll(self, max_rows: int = MAX_POLL_ROWS) -> Update:
        """Read the rows after the last key (at most ``max_rows``) and merge their subgroups.

        Raises WorkbenchError (``source:row:column``) for a new row the loader would refuse or a
        key that does not increase; nothing of that poll is taken then."""
        start = self.dataset.m
        if self._problem:
            return self._update(self._problem[0], start, 0, False, self._problem[1])
        src = self.source
        engine = sql.engine_of(src)
        try:
            if self.last_key is not None:
                inner, _ = sql.select_sql(engine, dataclasses.replace(src, key=None, order=()))
                k = sql.quote(engine, src.key)
                behind = int(sql.run(src, f"SELECT COUNT(*) FROM ({inner}) AS workbench_rows WHERE {k} <= :last",
                                     {"last": self.last_key}, engine=engine)[1][0][0])
                if behind != self.rows:
                    how = "deleted" if behind < self.rows else "inserted with a key that goes backwards"
                    return self._stop("rewritten", start, f"{src.shown}: {behind} rows have a {src.key} up to "
                                      f"{_shown(self.last_key)} now, {self.rows} were read: rows were {how}; "
                                      "stopped following it")
            _n, got = sql.run(src, _keyed_sql(engine, src, self._names, self.last_key, max_rows),
                              {"last": self.last_key, "most": max_rows} if self.last_key is not None
                              else {"most": max_rows}, engine=engine)
        finally:
            engine.dispose()
        if not got:
            return self._update("unchanged", start, 0, False, "no new rows")
        keys = [r[-1] for r in got]
        rows = [r[:-1] for r in got]
        _check_keys(src, keys, self.last_key, self.rows)
        self._read(rows, self.rows)  # takes the rows only once all are checked
        self._fp.update(rows)
        self.last_key = keys[-1]
        self.dataset = dataclasses.replace(self.dataset, size_bytes=self.offset, sha256=self.sha256)
        n, r = self.dataset.m - start, len(rows)
        msg = f"{r} new row{'' if r == 1 else 's'}, {n} new subgroup{'' if n == 1 else 's'}"
        if self._open:
            msg += f"; subgroup {self._open.label!r} is still being read"
        return self._update("appended", start, r, len(got) >= max_rows, msg)

    def _table(self, rows: list[tuple], base: int):
        """The rows numbered as records ``base + 1`` on, with the loader's clean-up and characteristic."""
        frame = sql.to_frame(self._names, rows)
        table = _record_table(self.source, frame, self._fp, self._req, base, allow_empty=True)
        if table is None:
            return None, len(rows)
        if self._found is not None:
            from workbench.core.data.characteristics import pick
            table = pick(table, self._found, self._req.characteristic)
            if table.frame.shape[0] == 0:
                return None, len(rows)
        return table, len(rows)

    def _stop(self, status: str, start: int, message: str) -> Update:
        self._problem = (status, message)
        return self._update(status, start, 0, False, message)

    def _update(self, status: str, start: int, rows: int, more: bool, message: str) -> Update:
        return Update(status, self.dataset, start, rows, 0, self.open_subgroup, more, message)


def _keyed_sql(engine, source: sql.SqlSource, names: list[str], last: Any, limit: int | None = None) -> str:
    """SELECT of ``names`` and the key (last), after ``:last`` when ``last`` is given, in key order."""
    inner, _ = sql.select_sql(engine, dataclasses.replace(source, key=None, order=()))
    k = sql.quote(engine, source.key)
    cols = ", ".join(sql.quote(engine, c) for c in names)
    where = f" WHERE {k} > :last" if last is not None else ""
    most = " LIMIT :most" if limit is not None else ""
    return f"SELECT {cols}, {k} FROM ({inner}) AS workbench_rows{where} ORDER BY {k}{most}"


def _check_keys(source: sql.SqlSource, keys: list, last: Any, base: int) -> None:
    """Every key present and greater than the one before (``last``: the key before the first)."""
    prev = last
    for i, k in enumerate(keys):
        if k is None:
            raise WorkbenchError(f"{source.shown}:{base + i + 1}:{source.key}: the key is empty; --key needs a "
                                 "column that increases with every row")
        try:
            bad = prev is not None and not k > prev
        except TypeError:
            bad = True
        if bad:
            raise WorkbenchError(f"{source.shown}:{base + i + 1}:{source.key}: key {_shown(k)} is not greater than "
                                 f"the key before it ({_shown(prev)}); --key needs a column that increases with "
                                 "every row")
        prev = k


def _record_table(source: sql.SqlSource, frame, fp: sql.Fingerprint, request: LayoutRequest, base: int,
                  allow_empty: bool = False) -> RecordTable | None:
    """The frame as a table of records ``base + 1`` on (all-empty rows dropped, numbering kept)."""
    names = clean_names(source.shown, frame.columns)
    frame = frame.set_axis(names, axis=1)
    rows = len(frame)
    empty = frame.isna().all(axis=1).to_numpy()
    if rows == 0 or empty.all():
        if allow_empty:
            return None
        raise WorkbenchError(f"{source.shown} has no data rows")
    lines = np.arange(base + 1, base + rows + 1, dtype=np.int64)
    if empty.any():
        frame, lines = frame.loc[~empty].reset_index(drop=True), lines[~empty]
    text = frozenset(D._text_columns(names, request)) & frozenset(names)
    table = RecordTable(source.shown, frame, rows, fp.sha256, fp.size, "sql", (), text)
    table.__dict__["lines"] = lines
    return table


def load_rows_prefix(source: sql.SqlSource, request: LayoutRequest, size_bytes: int | None = None) -> Dataset:
    """The dataset of the source's first rows whose canonical text is ``size_bytes`` long (all rows: None).

    Rows are read in the order of ``source.key`` when it names one.  Raises WorkbenchError when no
    number of first rows has that size (rows changed since)."""
    names, rows, _notice = sql.read_rows(source, D._wanted(request))
    fp = sql.Fingerprint(names)
    if size_bytes is not None:
        while fp.size < size_bytes and fp.rows < len(rows):
            fp.update(rows[fp.rows:fp.rows + 1])
        if fp.size != size_bytes:
            raise WorkbenchError(f"{source.shown}: no first rows make the {size_bytes} bytes recorded (their canonical "
                                 "text); the rows have changed")
        rows = rows[:fp.rows]
    else:
        fp.update(rows)
    table = _record_table(source, sql.to_frame(names, rows), fp, request, 0)
    return dataclasses.replace(D.from_table(table, request), source=source)
