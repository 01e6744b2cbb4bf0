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
from typing import Any, Callable

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
    keys: Any
    """The subgroup keys as the database returned them, one per subgroup in order (a tuple, or an array when
    fetched column-wise; bound as Python values)."""
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


def raw_layout(source: sql.SqlSource, detect: Callable, text_columns: Callable, engine,
               key_type: list | None = None) -> Layout:
    """The layout detected on the first rows (``detect(table)``: the loader's own rules).

    ``key_type``: a list that receives the Python type of the subgroup column's first value."""
    inner, _ = sql.select_sql(engine, source)
    names, rows = sql.run(source, f"SELECT * FROM ({inner}) AS workbench_rows LIMIT {SAMPLE_ROWS}", engine=engine)
    table = frame_table(source.shown, sql.to_frame(names, rows), "0" * 64, 0, "sql", text_columns)
    lay = detect(table)
    if lay.kind != "long" or lay.count or lay.value is None:
        raise WorkbenchError(f"{source.shown}: {NEEDS_LONG}; these rows read as {lay.kind}")
    if key_type is not None and lay.subgroup in names:
        i = names.index(lay.subgroup)
        key_type.append(next((type(r[i]) for r in rows if r[i] is not None), type(None)))
    return lay


def _copied(source: sql.SqlSource, statement: str, names: list[str], key_type: type, engine):
    """PostgreSQL through psycopg: the statement's rows as a frame, column-wise (``COPY … TO STDOUT``
    as CSV, parsed by pandas, whose float parser is exact); None where this does not apply (another
    driver, a key that is not whole numbers or text, an empty key) — the rows are then fetched one by one.

    PostgreSQL writes a float8 in its shortest exact form and a numeric in its digits, so the parsed
    doubles are those the driver returns row by row (``float(text)``, correctly rounded)."""
    import io

    import pandas as pd
    if engine.dialect.name != "postgresql" or engine.dialect.driver != "psycopg" or key_type not in (int, str):
        return None
    from sqlalchemy.exc import SQLAlchemyError
    buf = io.BytesIO()
    try:
        with engine.connect() as conn:
            raw = conn.connection.driver_connection
            with raw.cursor() as cur, cur.copy(f"COPY ({statement}) TO STDOUT (FORMAT csv)") as copy:
                for block in copy:
                    buf.write(block)
    except SQLAlchemyError as exc:
        raise WorkbenchError(f"{source.shown}: {sql.scrub(exc, source)}") from None
    except Exception as exc:  # the driver's own error (psycopg.Error)
        raise WorkbenchError(f"{source.shown}: {sql.scrub(exc, source)}") from None
    buf.seek(0)
    dtypes = {names[0]: "int64" if key_type is int else str, "n": "int64", "mean": "float64", "range": "float64",
              "sd": "float64", "first_time": str}
    try:
        frame = pd.read_csv(buf, header=None, names=names, dtype=dtypes, keep_default_na=False, na_values=[""],
                            engine="c")
    except (ValueError, pd.errors.ParserError):  # e.g. rows whose key is empty
        return None
    if key_type is str and frame[names[0]].isna().any():
        return None
    return frame


NEEDS_LONG = "aggregating in the database needs long data (one reading a row, with a subgroup column)"


def aggregate_table(source: sql.SqlSource, detect: Callable, text_columns: Callable):
    """One GROUP BY: (table of per-subgroup n, mean, range, SD; its summary layout; the source; a notice).

    ``detect(table)`` and ``text_columns(names)`` are the loader's rules, used on the first rows."""
    engine = sql.engine_of(source)
    columns = source.fingerprint != "rows"  # the columnar fingerprint, unless a case made before it says rows
    key_type: list = []
    try:
        lay = raw_layout(source, detect, text_columns, engine, key_type)
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
        frame = None
        if columns and first == "NULL" and has_sd:
            frame = _copied(source, statement, [lay.subgroup, "n", "mean", "range", "sd", "first_time"],
                            key_type[0], engine)
        if frame is None:
            names, rows = sql.run(source, statement, engine=engine)
            if rows:
                frame = sql.to_frame([lay.subgroup, "n", "mean", "range", "sd", "first_time"], rows)
                keys = tuple(r[0] for r in rows)
        else:
            keys = frame[lay.subgroup].to_numpy()
    finally:
        engine.dispose()
    if frame is None or len(frame) == 0:
        raise WorkbenchError(f"{source.shown}: no readings in column {lay.value!r}")
    time = lay.subgroup if lay.time == lay.subgroup else ("first_time" if first != "NULL" else None)
    keep = [lay.subgroup, "n", "mean", "range"] + (["sd"] if has_sd else []) + (["first_time"] if time == "first_time"
                                                                               else [])
    digest, size = sql.fingerprint_columns(frame[keep]) if columns else sql.fingerprint(names, rows)
    table = frame_table(source.shown, frame[keep], digest, size, "sql", lambda n: {lay.subgroup})
    summary = Layout("summary", subgroup=lay.subgroup, time=time, n="n", mean="mean", range="range",
                     sd="sd" if has_sd else None, detected=lay.detected)
    notice = (f"aggregated in the database: {len(frame):,} subgroups of {lay.value!r} by {lay.subgroup!r} from one "
              "GROUP BY (n, mean, range" + (", SD" if has_sd else "") + "); the readings stay in the database")
    pushed = Pushed(lay, keys, statement)
    return table, summary, dataclasses.replace(source, aggregate=True, pushed=pushed,
                                               fingerprint="columns" if columns else "rows"), notice


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
                              {"key": _plain(pushed.keys[position])}, engine=engine)
    finally:
        engine.dispose()
    streams = tuple("reading" if r[0] is None else str(r[0]) for r in rows)
    return streams, np.array([float(r[1]) for r in rows], dtype=np.float64)


def _plain(value):
    """A numpy scalar as the Python value a driver binds."""
    return value.item() if isinstance(value, np.generic) else value
