"""Reading a data file into a table of cells, before any layout is applied.

The file's bytes are read once: they are hashed (SHA-256), decoded to check the encoding
(UTF-8, UTF-8 with a byte-order mark, else cp1252 with a notice) and handed to a single
``pandas.read_csv`` pass with the C engine.  XLSX files (first sheet) go through
``pandas.read_excel``.

Delimiter: the first 64 KB are examined; of comma, semicolon, tab and pipe, the one that
occurs the same number of times (at least once) on every line wins, the most frequent if
several do; when none is consistent, the one most frequent on the header line.  With a
semicolon, tab or pipe delimiter, numbers written like ``12,5`` (and none like ``12.5``)
mean a decimal comma.

Rows are numbered as lines of the file with the header as line 1, so the first data row
is row 2 (blank lines are skipped but still counted).  A row with more or fewer fields
than the header is an error.  Rows whose cells are all empty are dropped.

Cells: empty cells and the markers NA, N/A, NaN, null, None and #N/A are missing.  A
column parsed by pandas as numbers costs nothing more; only a column that did not parse
is converted cell by cell (vectorised) to find the offending cells.
"""
from __future__ import annotations

import csv
import hashlib
import io
import os
import re
from dataclasses import dataclass, field
from typing import Callable, Iterable

import numpy as np
import pandas as pd

from workbench.core.model import WorkbenchError

DELIMITERS = (",", ";", "\t", "|")
MISSING_MARKERS = ("na", "n/a", "nan", "null", "none", "#n/a")
SNIFF_BYTES = 64 * 1024
_BOM = b"\xef\xbb\xbf"
_ZIP_MAGIC = b"PK\x03\x04"
_COMMA_NUMBER = re.compile(r"^\s*[-+]?\d+,\d+\s*$")
_DOT_NUMBER = re.compile(r"^\s*[-+]?\d*\.\d+\s*$")


@dataclass(frozen=True, eq=False)
class Table:
    """The cells of one data file (header applied, all-empty rows dropped)."""

    path: str
    """The file, as given."""
    frame: pd.DataFrame
    """One column per header field; names stripped and unique."""
    lines: np.ndarray
    """File line (CSV) or sheet row (XLSX) of each frame row; the header is line 1."""
    rows: int
    """Data rows in the file (header and blank lines excluded)."""
    sha256: str
    """SHA-256 of the file's bytes (hex)."""
    size_bytes: int
    """Size of the file in bytes."""
    encoding: str
    """The encoding the text was read with (``utf-8``, ``utf-8-sig``, ``cp1252``; ``xlsx``)."""
    notices: tuple[str, ...]
    """Plain-words notices about the reading (encoding fallback, decimal comma)."""
    text_columns: frozenset[str]
    """Columns read as text whatever they hold (keys and stream names)."""
    decimal: str = "."
    """Decimal mark of the numbers."""
    _kinds: dict[str, str] = field(default_factory=dict, repr=False)

    def where(self, i: int, column: str) -> str:
        """``file:row:column`` for frame row ``i``."""
        return f"{self.path}:{int(self.lines[i])}:{column}"


def read_table(path: str | os.PathLike, text_columns: Callable[[list[str]], Iterable[str]] = lambda names: ()) -> Table:
    """Read ``path`` into a :class:`Table`; ``text_columns(names)`` picks the columns kept as text."""
    shown = os.fspath(path)
    if not os.path.exists(shown):
        raise WorkbenchError(f"no such file: {shown}")
    if os.path.isdir(shown):
        raise WorkbenchError(f"{shown} is a directory, not a data file")
    try:
        with open(shown, "rb") as fh:
            raw = fh.read()
    except OSError as exc:
        raise WorkbenchError(f"cannot read {shown}: {exc.strerror or exc}") from None
    digest = hashlib.sha256(raw).hexdigest()
    if not raw.strip():
        raise WorkbenchError(f"{shown} is empty")
    if raw.startswith(_ZIP_MAGIC) or shown.lower().endswith((".xlsx", ".xlsm")):
        frame, lines, names = _read_xlsx(shown, raw)
        text = frozenset(text_columns(names)) & frozenset(names)
        return _finish(shown, frame, lines, digest, len(raw), "xlsx", (), text, ".")
    encoding, text, notices = _decode(shown, raw)
    delim = sniff_delimiter(text[:SNIFF_BYTES])
    decimal = _sniff_decimal(text[:SNIFF_BYTES], delim)
    if decimal == ",":
        notices = notices + ("numbers use a decimal comma",)
    names, header_line = _header(shown, text, delim)
    lines = _record_lines(shown, raw, text, delim, len(names), header_line)
    forced = frozenset(text_columns(names)) & frozenset(names)
    try:
        frame = pd.read_csv(
            io.BytesIO(raw), sep=delim, header=0, names=names, engine="c", encoding=encoding,
            dtype={c: str for c in forced}, keep_default_na=False, na_values=[""], decimal=decimal,
            skip_blank_lines=True, low_memory=False, quotechar='"', index_col=False,
        )
    except (ValueError, pd.errors.ParserError, UnicodeError) as exc:
        reason = str(exc).strip().splitlines()[-1] if str(exc).strip() else type(exc).__name__
        raise WorkbenchError(f"{shown}: cannot read as {_delim_name(delim)}-separated text: {reason}") from None
    if lines is None or len(lines) != len(frame):
        lines = np.arange(len(frame), dtype=np.int64) + header_line + 1
    return _finish(shown, frame, lines, digest, len(raw), encoding, notices, forced, decimal)


def _finish(path, frame, lines, digest, size, encoding, notices, forced, decimal) -> Table:
    rows = len(frame)
    if rows == 0:
        raise WorkbenchError(f"{path} has a header but no data rows")
    empty = frame.isna().all(axis=1).to_numpy()
    unnamed = [c for c in frame.columns if c.startswith("column ") and bool(frame[c].isna().all())]
    if unnamed:
        frame = frame.drop(columns=unnamed)
    if empty.any():
        if empty.all():
            raise WorkbenchError(f"{path} has a header but no data rows (every cell is empty)")
        frame = frame.loc[~empty].reset_index(drop=True)
        lines = lines[~empty]
    return Table(path, frame, np.asarray(lines, dtype=np.int64), rows, digest, size, encoding,
                 tuple(notices), forced, decimal)


def _decode(path: str, raw: bytes) -> tuple[str, str, tuple[str, ...]]:
    nul = raw.find(b"\x00")
    if nul >= 0:
        raise WorkbenchError(f"{path}: NUL byte at offset {nul} (line {_line_at(raw, nul)}); "
                             "not a text file (UTF-16 is not supported)")
    if raw.startswith(_BOM):
        try:
            return "utf-8-sig", raw.decode("utf-8-sig"), ()
        except UnicodeDecodeError:
            pass
    try:
        return "utf-8", raw.decode("utf-8"), ()
    except UnicodeDecodeError:
        pass
    try:
        return "cp1252", raw.decode("cp1252"), ("file is not UTF-8; read as cp1252",)
    except UnicodeDecodeError as exc:
        off = exc.start
        raise WorkbenchError(f"{path}: byte 0x{raw[off]:02x} at offset {off} (line {_line_at(raw, off)}) "
                             "is neither UTF-8 nor cp1252") from None


def _line_at(raw: bytes, offset: int) -> int:
    return raw.count(b"\n", 0, offset) + 1


def _read_xlsx(path: str, raw: bytes) -> tuple[pd.DataFrame, np.ndarray, list[str]]:
    try:
        frame = pd.read_excel(io.BytesIO(raw), sheet_name=0, header=0, engine="openpyxl")
    except Exception as exc:  # openpyxl and zipfile raise many kinds of error on a damaged workbook
        raise WorkbenchError(f"{path}: cannot read as an XLSX workbook: {str(exc).splitlines()[0] if str(exc) else type(exc).__name__}") from None
    if frame.shape[1] == 0:
        raise WorkbenchError(f"{path} is empty")
    names = _clean_names(path, ["" if str(c).startswith("Unnamed: ") else str(c) for c in frame.columns], 1)
    frame.columns = names
    return frame, np.arange(len(frame), dtype=np.int64) + 2, names


def sniff_delimiter(sample: str) -> str:
    """Pick the delimiter of a text sample (see the module docstring for the rule)."""
    lines = sample.splitlines()
    if len(sample) >= SNIFF_BYTES and len(lines) > 1:
        lines = lines[:-1]  # the last line may be cut off
    lines = [_QUOTED.sub("", ln) for ln in lines if ln.strip()][:200]
    if not lines:
        return ","
    best, best_count = None, 0
    for d in DELIMITERS:
        counts = {ln.count(d) for ln in lines}
        if len(counts) == 1 and (c := counts.pop()) > best_count:
            best, best_count = d, c
    if best is not None:
        return best
    head = {d: lines[0].count(d) for d in DELIMITERS}
    top = max(DELIMITERS, key=lambda d: head[d])
    return top if head[top] > 0 else ","


_QUOTED = re.compile(r'"[^"]*"')


def _sniff_decimal(sample: str, delim: str) -> str:
    if delim == ",":
        return "."
    cells = [c for ln in sample.splitlines()[1:200] for c in ln.split(delim)]
    comma = sum(1 for c in cells if _COMMA_NUMBER.match(c))
    dot = sum(1 for c in cells if _DOT_NUMBER.match(c))
    return "," if comma > 0 and dot == 0 else "."


def _delim_name(delim: str) -> str:
    return {",": "comma", ";": "semicolon", "\t": "tab", "|": "pipe"}[delim]


def _header(path: str, text: str, delim: str) -> tuple[list[str], int]:
    """Header names and the line the header is on."""
    reader = csv.reader(io.StringIO(text[:SNIFF_BYTES * 4], newline=""), delimiter=delim)
    try:
        for rec in reader:
            if rec and any(f.strip() for f in rec):
                return _clean_names(path, rec, reader.line_num), reader.line_num
    except csv.Error as exc:
        raise WorkbenchError(f"{path}:{reader.line_num}: cannot read the header: {exc}") from None
    raise WorkbenchError(f"{path} is empty")


def _clean_names(path: str, raw_names: list[str], line: int) -> list[str]:
    names = [n.strip() or f"column {i + 1}" for i, n in enumerate(raw_names)]
    seen: set[str] = set()
    for n in names:
        if n in seen:
            raise WorkbenchError(f"{path}:{line}: column name {n!r} appears twice in the header")
        seen.add(n)
    return names


def _record_lines(path: str, raw: bytes, text: str, delim: str, nfields: int, header_line: int) -> np.ndarray | None:
    """File line of every data record; raises on a ragged row.  Vectorised on the bytes
    when no field is quoted and lines end in LF or CRLF; else via the csv module."""
    if b'"' in raw or raw.count(b"\r") != raw.count(b"\r\n"):
        return _record_lines_csv(path, text, delim, nfields, header_line)
    buf = np.frombuffer(raw, dtype=np.uint8)
    nl = np.flatnonzero(buf == 10)
    starts = np.concatenate(([0], nl + 1))
    ends = np.concatenate((nl, [len(buf)]))
    if starts[-1] >= len(buf):
        starts, ends = starts[:-1], ends[:-1]
    dpos = np.flatnonzero(buf == ord(delim))
    counts = np.searchsorted(dpos, ends) - np.searchsorted(dpos, starts)
    blank = np.zeros(len(starts), dtype=bool)
    zero = np.flatnonzero(counts == 0)
    if zero.size:
        if zero.size <= 2000:
            blank[zero] = [not raw[s:e].strip() for s, e in zip(starts[zero].tolist(), ends[zero].tolist())]
        else:
            ws = (buf == 32) | (buf == 9) | (buf == 13) | (buf == 10)
            nonws = np.add.reduceat((~ws).astype(np.int64), starts) if len(buf) else np.zeros(0)
            nonws[ends == starts] = 0
            blank[zero] = nonws[zero] == 0
    line_no = np.arange(1, len(starts) + 1)
    data = ~blank & (line_no > header_line)
    ragged = np.flatnonzero(data & (counts + 1 != nfields))
    if ragged.size:
        r = int(ragged[0])
        raise WorkbenchError(f"{path}:{r + 1}: row has {int(counts[r]) + 1} fields, the header has {nfields}")
    return line_no[data]


def _record_lines_csv(path: str, text: str, delim: str, nfields: int, header_line: int) -> np.ndarray | None:
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delim)
    out: list[int] = []
    start = 1
    try:
        for rec in reader:
            blank = not rec or (len(rec) == 1 and not rec[0].strip())
            if not blank and start > header_line:
                if len(rec) != nfields:
                    raise WorkbenchError(f"{path}:{start}: row has {len(rec)} fields, the header has {nfields}")
                out.append(start)
            start = reader.line_num + 1
    except csv.Error as exc:
        raise WorkbenchError(f"{path}:{reader.line_num}: cannot read the row: {exc}") from None
    return np.asarray(out, dtype=np.int64)


# --- cells -----------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class Numbers:
    """One column converted to float64."""

    values: np.ndarray
    """float64 per row, NaN for empty (and for skipped bad) cells."""
    empty: np.ndarray
    """Boolean per row: the cell was empty or a missing-value marker."""
    bad: np.ndarray
    """Boolean per row: the cell held something that is not a finite number."""
    texts: np.ndarray | None = None
    """The cells as text (only computed when there were bad cells)."""


def as_text(table: Table, column: str) -> np.ndarray:
    """The column as a numpy array of str ("" for empty), stripped; numbers without a
    needless ``.0``; dates and times from a workbook in ISO form."""
    s = table.frame[column]
    if pd.api.types.is_datetime64_any_dtype(s):
        return _format_times(s)
    if pd.api.types.is_bool_dtype(s) or pd.api.types.is_integer_dtype(s):
        return s.astype(str).to_numpy(dtype=str)
    if pd.api.types.is_float_dtype(s):
        v = s.to_numpy(dtype=np.float64)
        fin = np.isfinite(v)
        if np.all(v[fin] == np.round(v[fin])) and np.all(np.abs(v[fin]) < 2**53):
            out = np.where(fin, v, 0).astype(np.int64).astype(str)
        else:
            out = s.astype(str).to_numpy(dtype=str)
        return np.where(np.isnan(v), "", out)
    return s.where(s.notna(), "").astype(str).str.strip().to_numpy(dtype=str)


def _format_times(s: pd.Series) -> np.ndarray:
    t = s.dropna()
    if len(t) and bool((t.dt.second == 0).all() and (t.dt.microsecond == 0).all()):
        fmt = "%Y-%m-%d" if bool((t.dt.hour == 0).all() and (t.dt.minute == 0).all()) else "%Y-%m-%d %H:%M"
    else:
        fmt = "%Y-%m-%d %H:%M:%S"
    return s.dt.strftime(fmt).where(s.notna(), "").to_numpy(dtype=str)


def as_numbers(table: Table, column: str) -> Numbers:
    """Convert a column to float64; which cells are empty and which are not numbers."""
    s = table.frame[column]
    if pd.api.types.is_numeric_dtype(s) and not pd.api.types.is_bool_dtype(s):
        v = s.to_numpy(dtype=np.float64, na_value=np.nan)
        bad = np.isinf(v)
        if bad.any():
            v = np.where(bad, np.nan, v)
            return Numbers(v, np.isnan(v) & ~bad, bad, s.astype(str).to_numpy(dtype=str))
        return Numbers(v, np.isnan(v), bad)
    txt = as_text(table, column)
    ser = pd.Series(txt, dtype=object)
    empty = (txt == "") | ser.str.lower().isin(MISSING_MARKERS).to_numpy()
    cand = ser.str.replace(",", ".", regex=False) if table.decimal == "," else ser
    num = pd.to_numeric(cand.where(~empty, "nan"), errors="coerce").to_numpy(dtype=np.float64)
    bad = ~empty & ~np.isfinite(num)
    v = np.where(empty | bad, np.nan, num)
    return Numbers(v, empty, bad, txt if bad.any() else None)


def column_kind(table: Table, column: str) -> str:
    """``number`` when most non-empty cells are numbers, ``text``, or ``empty``;
    columns read as text (keys, stream names) are always ``text``."""
    kind = table._kinds.get(column)
    if kind is None:
        if column in table.text_columns or pd.api.types.is_datetime64_any_dtype(table.frame[column]):
            kind = "text"
        else:
            nums = as_numbers(table, column)
            filled = int((~nums.empty).sum())
            good = int(np.isfinite(nums.values).sum())
            kind = "empty" if filled == 0 else ("number" if 2 * good > filled else "text")
        table._kinds[column] = kind
    return kind


@dataclass(frozen=True, eq=False)
class Times:
    """One column parsed as timestamps."""

    values: np.ndarray
    """datetime64 per row (NaT where empty or unparsed)."""
    failed: np.ndarray
    """Boolean per row: a non-empty cell that is not a time."""
    empty: np.ndarray
    """Boolean per row: the cell was empty."""


def as_times(table: Table, column: str) -> Times | None:
    """Parse a column as timestamps (format inferred by pandas, then ISO 8601); None when
    the column holds plain numbers."""
    import warnings

    s = table.frame[column]
    if pd.api.types.is_datetime64_any_dtype(s):
        t = s
    elif pd.api.types.is_numeric_dtype(s) or pd.api.types.is_bool_dtype(s):
        return None
    else:
        txt = pd.Series(as_text(table, column), dtype=object)
        filled = txt != ""
        if filled.any() and bool(pd.to_numeric(txt[filled], errors="coerce").notna().all()):
            return None
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            t = pd.to_datetime(txt.where(filled), errors="coerce")
            if bool((t.isna() & filled).any()):
                t2 = pd.to_datetime(txt.where(filled), errors="coerce", format="ISO8601")
                if int(t2.isna().sum()) < int(t.isna().sum()):
                    t = t2
    if not pd.api.types.is_datetime64_any_dtype(t):
        t = pd.to_datetime(t, errors="coerce", utc=True)
    if getattr(t.dt, "tz", None) is not None:
        t = t.dt.tz_convert("UTC").dt.tz_localize(None)
    na = t.isna().to_numpy()
    empty = (as_text(table, column) == "")
    return Times(t.to_numpy(), na & ~empty, empty)
