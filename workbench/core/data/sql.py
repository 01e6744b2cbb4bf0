"""Database tables and queries as a table of cells (through SQLAlchemy).

A :class:`SqlSource` names a database by URL (``sqlite:///plant.db`` needs no server;
``postgresql://user@host/db`` or any URL with an SQLAlchemy dialect) and a table (``--table``)
or a query (``--query 'SELECT …'``).  The rows read become a
:class:`~workbench.core.data.records.RecordTable` (record 1 is the first row returned) and go
through the same layout detection as a file.

Order: a table is read ``ORDER BY`` the ``--order`` columns, else its primary key, else in the
order the database returns (a notice says so); a query is read in its own order.

Passwords come from the URL, the ``WORKBENCH_DB_PASSWORD`` environment variable, or the driver's
own means (for PostgreSQL ``PGPASSWORD`` or the password file); they are never stored, printed or
put in an error message.  ``postgresql://`` without a driver uses psycopg (version 3).

The fingerprint of what was read (:func:`fingerprint`) is the SHA-256 of the canonical rows: the
column names, then one JSON array per row in the order read (null; true/false; integers in
digits; floats by ``repr``; decimals as written by the database; dates and times in ISO 8601;
bytes in hex; text as is), each line ending in a newline.  ``size_bytes`` is the length of that
text.  Re-reading and comparing it is what ``verify`` can do for a database.

The per-subgroup rows of an aggregated source (``--aggregate-in-database``; millions of rows) are
fingerprinted column by column instead (:func:`fingerprint_columns`, recorded in the case as
``"fingerprint": "columns"``; cases made before keep the row form above and are checked with it):
the column names as one JSON array and a newline, then for each column the JSON array
``[name, kind, rows]`` and a newline followed by its values — ``float64``: IEEE 754 binary64,
little-endian, an empty value as the quiet NaN ``0x7ff8000000000000``; ``int64``: two's complement
little-endian; ``time``: nanoseconds since 1970-01-01 UTC as ``int64`` (an empty time as the
smallest ``int64``); ``text``: each value as a JSON string (null when empty) followed by a newline.
"""
from __future__ import annotations

import datetime as _dt
import decimal
import hashlib
import json
import os
import re
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Callable, Iterable

import numpy as np
import pandas as pd

from workbench.core.data.records import RecordTable, frame_table
from workbench.core.model import WorkbenchError

PASSWORD_ENV = "WORKBENCH_DB_PASSWORD"
_URL = re.compile(r"^[A-Za-z][A-Za-z0-9+.\-]*://")


def is_url(text: object) -> bool:
    """True for a database URL (``scheme://…``) rather than a file path."""
    return isinstance(text, str) and bool(_URL.match(text)) and not text.lower().startswith("file://")


@dataclass(frozen=True)
class SqlSource:
    """A table or query in a database; ``url`` never holds the password."""

    url: str
    """The URL without its password, as recorded in a case file."""
    table: str | None = None
    """A table (``schema.table`` allowed), or None when ``query`` is given."""
    query: str | None = None
    """A SELECT statement, or None when ``table`` is given."""
    order: tuple[str, ...] = ()
    """Columns a table is read in order of (``--order``)."""
    key: str | None = None
    """An increasing column: new rows are those after the last key judged (watch)."""
    aggregate: bool = False
    """Per-subgroup statistics computed in the database (``--aggregate-in-database``)."""
    fingerprint: str | None = None
    """How the rows of an aggregated source are fingerprinted: ``columns`` (:func:`fingerprint_columns`, the
    default for new cases) or ``rows`` (:func:`fingerprint`, cases made before it); None: not decided yet."""
    pushed: Any = field(default=None, repr=False, compare=False)
    """How an aggregated dataset was made (``pushdown.Pushed``); in memory only."""
    password: str | None = field(default=None, repr=False, compare=False)
    """From the URL as given; kept in memory only."""
    base: str | None = field(default=None, repr=False, compare=False)
    """Folder a relative SQLite database path is resolved against (the case file's folder)."""

    def __post_init__(self) -> None:
        if (self.table is None) == (self.query is None):
            raise WorkbenchError(f"{self.url}: give the rows to read: --table NAME or --query 'SELECT …' (one of them)")
        if self.query is not None and not self.query.strip():
            raise WorkbenchError(f"{self.url}: the query is empty")

    @property
    def shown(self) -> str:
        """How the source is named in messages and reports."""
        return f"{self.url} table {self.table}" if self.table else f"{self.url} query"

    @property
    def stem(self) -> str:
        """A file-name stem for the default case file."""
        base = self.table.split(".")[-1] if self.table else "query"
        return re.sub(r"[^0-9A-Za-z_-]+", "_", base) or "query"

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"kind": "sql", "url": self.url}
        if self.table is not None:
            out["table"] = self.table
        if self.query is not None:
            out["query"] = self.query
        if self.order:
            out["order"] = list(self.order)
        if self.key:
            out["key"] = self.key
        if self.aggregate:
            out["aggregate"] = True
        if self.fingerprint == "columns":
            out["fingerprint"] = "columns"
        return out

    @classmethod
    def from_dict(cls, d: Any, where: str, base: str | None = None) -> "SqlSource":
        if not isinstance(d, dict) or d.get("kind") != "sql" or not isinstance(d.get("url"), str) \
                or set(d) - {"kind", "url", "table", "query", "order", "key", "aggregate", "fingerprint"} \
                or not isinstance(d.get("aggregate", False), bool) or d.get("fingerprint", "columns") != "columns":
            raise WorkbenchError(f"{where}: the data source must be an object with kind 'sql', url, table or query")
        if any(d.get(k) is not None and not isinstance(d[k], str) for k in ("table", "query", "key")) or \
                not all(isinstance(c, str) for c in d.get("order", [])):
            raise WorkbenchError(f"{where}: the data source's table, query, order and key must be text")
        if make_url_safe(d["url"]).password is not None:
            raise WorkbenchError(f"{where}: the data source's URL holds a password; a case file never does")
        aggregate = bool(d.get("aggregate", False))
        return cls(d["url"], d.get("table"), d.get("query"), tuple(d.get("order", ())), d.get("key"), aggregate,
                   fingerprint=d.get("fingerprint", "rows" if aggregate else None), base=base)

    def relative_to(self, folder: Path) -> "SqlSource":
        """The same source with a SQLite database path written relative to ``folder`` (the case file's)."""
        url = make_url_safe(self.url)
        if not url.drivername.startswith("sqlite") or not url.database or url.database == ":memory:":
            return self
        target = Path(self._database_path(url.database)).resolve()
        try:
            rel = Path(os.path.relpath(target, Path(folder).resolve())).as_posix()
        except ValueError:
            rel = target.as_posix()
        return replace(self, url=url.set(database=rel).render_as_string(hide_password=False), base=str(folder))

    def _database_path(self, database: str) -> str:
        if self.base and not os.path.isabs(database):
            return os.path.normpath(os.path.join(self.base, database))
        return database


def make_url_safe(text: str):
    """``sqlalchemy.engine.make_url`` with a one-line error that never shows a password."""
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import ArgumentError
    try:
        return make_url(text)
    except (ArgumentError, ValueError):
        raise WorkbenchError(f"not a database URL: {_scheme(text)}…") from None


def _scheme(text: str) -> str:
    return text.split("://", 1)[0] + "://" if "://" in text else "?"


def source_from_url(text: str, table: str | None = None, query: str | None = None, order: Iterable[str] = (),
                    key: str | None = None, aggregate: bool = False) -> SqlSource:
    """A :class:`SqlSource` from a URL as given on the command line (the password split off)."""
    url = make_url_safe(text)
    password = url.password
    shown = url._replace(password=None).render_as_string(hide_password=False)  # set(password=None) keeps it
    return SqlSource(shown, table, query, tuple(order), key, aggregate, password=str(password) if password else None)


def engine_of(source: SqlSource):
    """An SQLAlchemy engine for the source (the password added in memory only)."""
    from sqlalchemy import create_engine
    url = make_url_safe(source.url)
    if url.drivername == "postgresql":
        url = url.set(drivername="postgresql+psycopg")
    if url.drivername.startswith("sqlite"):
        if url.database and url.database != ":memory:":
            path = source._database_path(url.database)
            if not os.path.isfile(path):
                raise WorkbenchError(f"{source.shown}: no such database file: {path}")
            url = url.set(database=path)
    password = source.password or os.environ.get(PASSWORD_ENV) or None
    if password is not None:
        url = url.set(password=password)
    try:
        return create_engine(url, poolclass=_null_pool())
    except Exception as exc:  # a dialect or driver that is not installed
        raise WorkbenchError(f"{source.shown}: cannot use this database: {scrub(exc, source)}") from None


def _null_pool():
    from sqlalchemy.pool import NullPool
    return NullPool


def scrub(exc: BaseException, source: SqlSource) -> str:
    """The first line of a driver's message, with any password blanked out."""
    orig = getattr(exc, "orig", None) or exc
    text = (str(orig).strip().splitlines() or [type(orig).__name__])[0]
    text = re.sub(r"\(Background on this error at: [^)]*\)", "", text).strip()
    for secret in (source.password, os.environ.get(PASSWORD_ENV)):
        if secret:
            text = text.replace(secret, "***")
    return text or type(orig).__name__


def quote(engine, name: str) -> str:
    """A table or column name quoted for the dialect (``schema.table`` quoted part by part)."""
    prep = engine.dialect.identifier_preparer
    return ".".join(prep.quote(part) for part in name.split("."))


def select_sql(engine, source: SqlSource, columns: list[str] | None = None) -> tuple[str, str | None]:
    """The SELECT that reads the source, and a notice about its order (or None)."""
    cols = "*" if columns is None else ", ".join(quote(engine, c) for c in columns)
    if source.query is not None:
        inner = source.query.strip().rstrip(";")
        by = f" ORDER BY {quote(engine, source.key)}" if source.key else ""
        if columns is None and not by:
            return inner, None
        return f"SELECT {cols} FROM ({inner}) AS workbench_rows{by}", None
    order = [source.key] if source.key else list(source.order) or _primary_key(engine, source.table)
    sql = f"SELECT {cols} FROM {quote(engine, source.table)}"
    if order:
        return sql + " ORDER BY " + ", ".join(quote(engine, c) for c in order), None
    return sql, (f"table {source.table} has no primary key and no --order was given: rows are taken in the order "
                 "the database returned them")


def _primary_key(engine, table: str) -> list[str]:
    from sqlalchemy import inspect
    schema, _, name = table.rpartition(".")
    try:
        return list(inspect(engine).get_pk_constraint(name, schema=schema or None).get("constrained_columns") or [])
    except Exception:
        return []


def run(source: SqlSource, sql: str, params: dict | None = None, engine=None) -> tuple[list[str], list[tuple]]:
    """Column names and rows of one statement; errors in one line, without the password."""
    from sqlalchemy import text
    from sqlalchemy.exc import SQLAlchemyError
    own = engine is None
    engine = engine or engine_of(source)
    try:
        with engine.connect() as conn:
            result = conn.execute(text(sql), params or {})
            names = [str(k) for k in result.keys()]
            rows = [tuple(r) for r in result.fetchall()]
    except SQLAlchemyError as exc:
        raise WorkbenchError(f"{source.shown}: {scrub(exc, source)}") from None
    finally:
        if own:
            engine.dispose()
    return names, rows


def canonical(value: Any) -> Any:
    """A value as it enters the fingerprint."""
    if value is None or isinstance(value, (bool, int, str)):
        return value
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, decimal.Decimal):
        return str(value)
    if isinstance(value, (_dt.datetime, _dt.date, _dt.time)):
        return value.isoformat()
    if isinstance(value, (bytes, bytearray, memoryview)):
        return bytes(value).hex()
    return str(value)


class Fingerprint:
    """The fingerprint of canonical rows, fed a batch at a time (a prefix's digest can be taken on the way)."""

    def __init__(self, names: list[str]) -> None:
        self._h, self.size, self.rows = hashlib.sha256(), 0, 0
        self._enc = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"))
        self._add([self._enc.encode(list(names))])

    def _add(self, lines: list[str]) -> None:
        if lines:
            b = ("\n".join(lines) + "\n").encode("utf-8")
            self._h.update(b)
            self.size += len(b)

    def update(self, rows: list[tuple]) -> "Fingerprint":
        enc = self._enc.encode
        self._add([enc([canonical(v) for v in r]) for r in rows])
        self.rows += len(rows)
        return self

    @property
    def sha256(self) -> str:
        return self._h.hexdigest()


def fingerprint(names: list[str], rows: list[tuple]) -> tuple[str, int]:
    """SHA-256 (hex) and length in bytes of the canonical rows (see the module docstring)."""
    f = Fingerprint(names).update(rows)
    return f.sha256, f.size


def fingerprint_columns(frame: pd.DataFrame) -> tuple[str, int]:
    """SHA-256 (hex) and length in bytes of a frame's columnar canonical form (see the module docstring)."""
    h, size = hashlib.sha256(), 0
    enc = json.JSONEncoder(ensure_ascii=False, separators=(",", ":")).encode

    def add(b: bytes) -> None:
        nonlocal size
        h.update(b)
        size += len(b)

    add((enc([str(c) for c in frame.columns]) + "\n").encode("utf-8"))
    for name in frame.columns:
        kind, data = _column_bytes(frame[name])
        add((enc([str(name), kind, len(frame)]) + "\n").encode("utf-8"))
        add(data)
    return h.hexdigest(), size


def _column_bytes(col: pd.Series) -> tuple[str, bytes]:
    dt = col.dtype
    if dt.kind == "f":
        a = col.to_numpy(dtype=np.float64)
        return "float64", np.where(np.isnan(a), np.nan, a).astype("<f8").tobytes()
    if dt.kind in "iu":
        return "int64", col.to_numpy().astype("<i8").tobytes()
    if dt.kind == "M" or isinstance(dt, pd.DatetimeTZDtype):
        t = pd.to_datetime(col)
        if getattr(t.dt, "tz", None) is not None:
            t = t.dt.tz_convert("UTC").dt.tz_localize(None)
        return "time", t.to_numpy(dtype="datetime64[ns]").view(np.int64).astype("<i8").tobytes()
    values = col.astype(object).where(col.notna(), None).tolist()
    enc = json.JSONEncoder(ensure_ascii=False).encode
    text = "".join("null\n" if v is None else enc(v if isinstance(v, str) else str(canonical(v))) + "\n"
                   for v in values)
    return "text", text.encode("utf-8")


def read_rows(source: SqlSource, wanted: Callable[[list[str]], list[str] | None] = lambda names: None,
              engine=None) -> tuple[list[str], list[tuple], str | None]:
    """Column names, rows and an order notice of the source (only the ``wanted`` columns when it names some)."""
    own = engine is None
    engine = engine or engine_of(source)
    try:
        names = column_names(source, engine)
        cols = wanted(list(names))
        cols = None if cols is None or set(cols) >= set(names) else [c for c in names if c in set(cols)]
        sql, notice = select_sql(engine, source, cols)
        names, rows = run(source, sql, engine=engine)
    finally:
        if own:
            engine.dispose()
    return names, rows, notice


def read_table(source: SqlSource, text_columns: Callable[[list[str]], Iterable[str]] = lambda names: (),
               wanted: Callable[[list[str]], list[str] | None] = lambda names: None) -> RecordTable:
    """Read the source's rows (only the ``wanted`` columns when it names some)."""
    names, rows, notice = read_rows(source, wanted)
    digest, size = fingerprint(names, rows)
    frame = to_frame(names, rows)
    notices = (notice,) if notice else ()
    return frame_table(source.shown, frame, digest, size, "sql", text_columns, notices)


def column_names(source: SqlSource, engine=None) -> list[str]:
    """The source's column names (a query is asked for no rows)."""
    if source.query is not None:
        sql = f"SELECT * FROM ({source.query.strip().rstrip(';')}) AS workbench_rows WHERE 1 = 0"
    else:
        sql = f"SELECT * FROM {quote(engine or engine_of(source), source.table)} WHERE 1 = 0"
    return run(source, sql, engine=engine)[0]


def to_frame(names: list[str], rows: list[tuple]) -> pd.DataFrame:
    """Rows as a frame: decimals as floats, dates and times as datetime64, the rest as pandas makes them."""
    cols = list(zip(*rows)) if rows else [() for _ in names]
    data = {}
    for i, (name, col) in enumerate(zip(names, cols)):
        first = next((v for v in col if v is not None), None)
        if isinstance(first, decimal.Decimal):
            arr = np.array([np.nan if v is None else float(v) for v in col], dtype=np.float64)
        elif isinstance(first, bool):
            arr = pd.array(col, dtype="boolean")
        elif isinstance(first, (int, float)) and all(v is None or isinstance(v, (int, float)) for v in col):
            arr = np.array([np.nan if v is None else v for v in col], dtype=np.float64) \
                if any(v is None or isinstance(v, float) for v in col) else np.array(col, dtype=np.int64)
        elif isinstance(first, (_dt.datetime, _dt.date)):
            arr = pd.to_datetime(pd.Series(col, dtype=object), utc=any(getattr(v, "tzinfo", None) for v in col))
            arr = arr.to_numpy() if getattr(arr.dt, "tz", None) is None else arr
        else:
            arr = pd.Series(col, dtype=object)
        data[i] = arr
    frame = pd.DataFrame(data)
    frame.columns = names
    return frame
