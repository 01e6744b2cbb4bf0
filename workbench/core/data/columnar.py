"""Parquet and Feather / Arrow IPC files as a table of cells (through pyarrow).

The same layouts, detection and overrides apply as for CSV: the file becomes a
:class:`~workbench.core.data.records.RecordTable` (rows numbered as records, the first data record
is row 1) and :func:`workbench.core.data.reader.load` takes it from there.

Reading is column-wise: the caller may name the columns it needs (``wanted(names)``), and only
those are read from the file — for a large file with the mapping given (``--subgroup``,
``--value``, ``--streams`` …, or ``--characteristic``) that is a fraction of the bytes.  Arrow
types map onto cells as follows: integers and floats are numbers (a null is an empty cell),
decimals become float64, dictionary-encoded columns are decoded, dates and timestamps are times
(a time zone is converted to UTC), strings are text; other types (binary, nested) are shown as
text.  The fingerprint is the SHA-256 of the file's bytes, as for any data file.

Which format: the file's first bytes (``PAR1``; ``ARROW1``; ``FEA1``; an IPC stream's
continuation marker), else its extension (.parquet .pq .feather .arrow .arrows .ipc).
"""
from __future__ import annotations

import hashlib
import os
from typing import Callable, Iterable

from workbench.core.data.records import RecordTable, frame_table
from workbench.core.model import WorkbenchError

_PARQUET_EXT = (".parquet", ".pq", ".parq")
_ARROW_EXT = (".feather", ".arrow", ".arrows", ".ipc")


def kind_of(path: str | os.PathLike) -> str | None:
    """``parquet``, ``arrow`` (Feather / IPC file), ``arrow-stream``, or None for any other file."""
    shown = os.fspath(path)
    try:
        with open(shown, "rb") as fh:
            head = fh.read(8)
    except OSError:
        return None
    if head.startswith(b"PAR1"):
        return "parquet"
    if head.startswith((b"ARROW1", b"FEA1")):
        return "arrow"
    if head.startswith(b"\xff\xff\xff\xff"):
        return "arrow-stream"
    low = shown.lower()
    if low.endswith(_PARQUET_EXT):
        return "parquet"
    if low.endswith(_ARROW_EXT):
        return "arrow"
    return None


def read_table(path: str | os.PathLike, text_columns: Callable[[list[str]], Iterable[str]] = lambda names: (),
               wanted: Callable[[list[str]], list[str] | None] = lambda names: None) -> RecordTable:
    """Read a Parquet or Feather / Arrow IPC file; ``wanted(names)`` picks the columns to read (None: all)."""
    import pyarrow as pa

    shown = os.fspath(path)
    kind = kind_of(shown)
    if kind is None:
        raise WorkbenchError(f"{shown}: not a Parquet or Arrow file")
    try:
        names = _names(shown, kind)
        cols = wanted(list(names))
        cols = None if cols is None else [c for c in names if c in set(cols)]
        table = _read(shown, kind, cols)
    except (pa.ArrowException, OSError, ValueError) as exc:
        what = "Parquet" if kind == "parquet" else "Arrow IPC (Feather)"
        reason = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise WorkbenchError(f"{shown}: cannot read as {what}: {reason}") from None
    frame = _to_frame(table)
    size = os.path.getsize(shown)
    with open(shown, "rb") as fh:
        digest = hashlib.file_digest(fh, "sha256").hexdigest()
    notices = ()
    if cols is not None and len(cols) < len(names):
        notices = (f"read {len(cols)} of the file's {len(names)} columns (the ones the mapping needs)",)
    return frame_table(shown, frame, digest, size, kind, text_columns, notices)


def _names(path: str, kind: str) -> list[str]:
    import pyarrow.ipc as ipc
    import pyarrow.parquet as pq
    if kind == "parquet":
        return list(pq.ParquetFile(path).schema_arrow.names)
    if kind == "arrow-stream":
        with open(path, "rb") as fh:
            return list(ipc.open_stream(fh).schema.names)
    try:
        with open(path, "rb") as fh:
            return list(ipc.open_file(fh).schema.names)
    except Exception:  # Feather version 1 has no IPC footer
        import pyarrow.feather as feather
        return list(feather.read_table(path).column_names)


def _read(path: str, kind: str, cols: list[str] | None):
    import pyarrow.feather as feather
    import pyarrow.ipc as ipc
    import pyarrow.parquet as pq
    if kind == "parquet":
        return pq.read_table(path, columns=cols, use_threads=True)
    if kind == "arrow-stream":
        with open(path, "rb") as fh:
            t = ipc.open_stream(fh).read_all()
        return t if cols is None else t.select(cols)
    return feather.read_table(path, columns=cols, use_threads=True, memory_map=True)


def _to_frame(table):
    """Arrow columns as pandas columns the cell conversions understand."""
    import pyarrow as pa
    import pyarrow.compute as pc
    arrays = []
    for col in table.columns:
        t = col.type
        if pa.types.is_dictionary(t):
            col, t = col.cast(t.value_type), t.value_type
        if pa.types.is_decimal(t):
            col = col.cast(pa.float64())
        elif pa.types.is_timestamp(t) and t.tz is not None:
            col = pc.cast(col, pa.timestamp(t.unit, "UTC")).cast(pa.timestamp(t.unit))
        elif pa.types.is_date(t):
            col = col.cast(pa.timestamp("s"))
        elif not (pa.types.is_integer(t) or pa.types.is_floating(t) or pa.types.is_boolean(t)
                  or pa.types.is_timestamp(t) or pa.types.is_string(t) or pa.types.is_large_string(t)
                  or pa.types.is_null(t)):
            col = pa.chunked_array([pa.array([None if v is None else str(v) for v in col.to_pylist()],
                                             pa.string())])
        arrays.append(col)
    return pa.table(arrays, names=table.column_names).to_pandas(split_blocks=True, self_destruct=True)
