"""Subgroup statistics computed where the data live: one ``GROUP BY`` in the database.

With ``--aggregate-in-database`` (and on its own when a table or query holds more than
:data:`AUTO_ROWS` rows) a long table (one reading a row) is not read row by row.  The layout is
detected on the first :data:`SAMPLE_ROWS` rows, then one query returns, per subgroup, the count of
readings n, their mean, their range (max − min), their sample standard deviation where the
dialect has ``STDDEV_SAMP`` (SQLite has not: the range only), and the earliest time.  The result is
loaded in the summary layout, so the X̄-R or X̄-S chart, its rules and the overall capability
(normal model, from the pooled sums of squares) are computed as from raw readings.

The breakdown of one subgroup fetches that subgroup's readings with one parameterised query
(:func:`readings_of`).  What needs every raw reading is not available on aggregated data and the
report says so: moving ranges of individuals (I-MR), excluding a single reading, the normality test
and the non-normal capability models, the stream comparison, and Phase II following.
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Callable

import numpy as np

from workbench.core.data import sql
from workbench.core.data.records import frame_table
from workbench.core.model import Dataset, Layout, WorkbenchError

AUTO_ROWS = 1_000_000
"""A long table or query with more rows than this is aggregated in the database without being asked."""
SAMPLE_ROWS = 5_000
"""Rows read to detect the layout before aggregating."""


@dataclass(frozen=True)
class Pushed:
    """How an aggregated dataset was made (kept on the dataset's source, never in the case file)."""

    raw: Layout
    """The long layout detected on the sample (subgroup, stream, value, time)."""
    keys: tuple
    """The subgroup keys as the database returned them, one per subgroup in order (bound as they are)."""
    sql: str
    """The GROUP BY statement that was run."""


def count_rows(source: sql.SqlSource) -> int:
    """How many rows the table or query holds (one COUNT(*) in the database)."""
    engine = sql.engine_of(source)
    try:
        inner, _ = sql.select_sql(engine, source)
        return int(sql.run(source, f"SELECT COUNT(*) FROM ({inner}) AS workbench_rows", engine=engine)[1][0][0])
    finally:
        engine.dispose()


def raw_layout(source: sql.SqlSource, detect: Callable, text_columns: Callable, engine) -> Layout:
    """The layout detected on the first rows (``detect(table)``: the loader's own rules)."""
    inner, _ = sql.select_sql(engine, source)
    names, rows = sql.run(source, f"SELECT * FROM ({inner}) AS workbench_rows LIMIT {SAMPLE_ROWS}", engine=engine)
    table = frame_table(source.shown, sql.to_frame(names, rows), "0" * 64, 0, "sql", text_columns)
    lay = detect(table)
    if lay.kind != "long" or lay.count or lay.value is None:
        raise WorkbenchError(f"{source.shown}: {NEEDS_LONG}; these rows read as {lay.kind}")
    return lay


NEEDS_LONG = "aggregating in the database needs long data (one reading a row, with a subgroup column)"


def aggregate_table(source: sql.SqlSource, detect: Callable, text_columns: Callable):
    """One GROUP BY: (table of per-subgroup n, mean, range, SD; its summary layout; the source; a notice).

    ``detect(table)`` and ``text_columns(names)`` are the loader's rules, used on the first rows."""
    engine = sql.engine_of(source)
    try:
        lay = raw_layout(source, detect, text_columns, engine)
        q = lambda c: sql.quote(engine, c)  # noqa: E731
        key, v = q(lay.subgroup), q(lay.value)
        has_sd = engine.dialect.name != "sqlite"
        sd = f"STDDEV_SAMP({v})" if has_sd else "NULL"
        first = f"MIN({q(lay.time)})" if lay.time and lay.time != lay.subgroup else "NULL"
        inner, _ = sql.select_sql(engine, source)
        statement = (f"SELECT {key} AS workbench_key, COUNT({v}) AS n, AVG({v}) AS mean, MAX({v}) - MIN({v}) AS range, "
                     f"{sd} AS sd, {first} AS first_time FROM ({inner}) AS workbench_rows "
                     f"WHERE {v} IS NOT NULL GROUP BY {key} ORDER BY {'first_time, ' if first != 'NULL' else ''}"
                     "workbench_key")
        names, rows = sql.run(source, statement, engine=engine)
    finally:
        engine.dispose()
    if not rows:
        raise WorkbenchError(f"{source.shown}: no readings in column {lay.value!r}")
    digest, size = sql.fingerprint(names, rows)
    frame = sql.to_frame([lay.subgroup, "n", "mean", "range", "sd", "first_time"], rows)
    time = lay.subgroup if lay.time == lay.subgroup else ("first_time" if first != "NULL" else None)
    keep = [lay.subgroup, "n", "mean", "range"] + (["sd"] if has_sd else []) + (["first_time"] if time == "first_time"
                                                                               else [])
    table = frame_table(source.shown, frame[keep], digest, size, "sql", lambda n: {lay.subgroup})
    summary = Layout("summary", subgroup=lay.subgroup, time=time, n="n", mean="mean", range="range",
                     sd="sd" if has_sd else None, detected=lay.detected)
    notice = (f"aggregated in the database: {len(rows):,} subgroups of {lay.value!r} by {lay.subgroup!r} from one "
              "GROUP BY (n, mean, range" + (", SD" if has_sd else "") + "); the readings stay in the database")
    pushed = Pushed(lay, tuple(r[0] for r in rows), statement)
    return table, summary, dataclasses.replace(source, aggregate=True, pushed=pushed), notice


def readings_of(ds: Dataset, position: int) -> tuple[tuple[str, ...], np.ndarray]:
    """The readings of one subgroup of an aggregated dataset: (stream names, values), one parameterised query."""
    src = ds.source
    pushed = getattr(src, "pushed", None)
    if pushed is None:
        raise WorkbenchError("these data were not aggregated in a database")
    lay = pushed.raw
    engine = sql.engine_of(src)
    try:
        q = lambda c: sql.quote(engine, c)  # noqa: E731
        inner, _ = sql.select_sql(engine, src)
        stream = q(lay.stream) if lay.stream else "NULL"
        names, rows = sql.run(src, f"SELECT {stream}, {q(lay.value)} FROM ({inner}) AS workbench_rows "
                                   f"WHERE {q(lay.subgroup)} = :key AND {q(lay.value)} IS NOT NULL",
                              {"key": pushed.keys[position]}, engine=engine)
    finally:
        engine.dispose()
    streams = tuple("reading" if r[0] is None else str(r[0]) for r in rows)
    return streams, np.array([float(r[1]) for r in rows], dtype=np.float64)
