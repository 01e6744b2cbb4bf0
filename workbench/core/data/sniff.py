"""Reading a data file into a table of cells, before any layout is applied.

The file's bytes are read once, hashed (SHA-256, on a second thread for large files) and
checked for their encoding (UTF-8, UTF-8 with a byte-order mark, else cp1252 with a
notice).  A single ``pandas.read_csv`` pass with the C engine then parses the cells: a UTF-8
file by path, so that pandas may split a large file across threads, a cp1252 file from the
bytes already read.  XLSX files (first sheet) go through ``pandas.read_excel``.

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
is converted cell by cell (vectorised) to find the offending cells; those conversions are
in :mod:`workbench.core.data.cells` (and still importable from here).
"""
from __future__ import annotations

import csv
import dataclasses
import hashlib
import io
import itertools
import os
import re
import threading
import warnings
from dataclasses import dataclass, field
from functools import cached_property
from typing import Callable, Iterable

import numpy as np
import pandas as pd

from workbench.core.data.cells import (  # re-exported: the cell conversions used to live here
    MISSING_MARKERS, Numbers, Times, as_numbers, as_text, as_times, column_kind, int_text, repeats, text_at,
)
from workbench.core.model import WorkbenchError

__all__ = [
    "DELIMITERS", "MISSING_MARKERS", "SNIFF_BYTES", "Numbers", "Table", "Times", "as_numbers", "as_text",
    "as_times", "column_kind", "int_text", "read_table", "repeats", "sniff_delimiter",
]

DELIMITERS = (",", ";", "\t", "|")
SNIFF_BYTES = 64 * 1024
_BOM = b"\xef\xbb\xbf"
_ZIP_MAGIC = b"PK\x03\x04"
_COMMA_NUMBER = re.compile(r"^\s*[-+]?\d+,\d+\s*$")
_DOT_NUMBER = re.compile(r"^\s*[-+]?\d*\.\d+\s*$")
_LEADING_ZERO = re.compile(r"^\s*[-+]?0\d")


@dataclass(frozen=True, eq=False)
class Table:
    """The cells of one data file (header applied, all-empty rows dropped)."""

    path: str
    """The file, as given."""
    frame: pd.DataFrame
    """One column per header field; names stripped and unique."""
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
    """Columns classed as text whatever they hold (keys and stream names)."""
    decimal: str = "."
    """Decimal mark of the numbers."""
    _source: tuple = ()
    """(raw, encoding, delimiter, fields, header line) to number the lines on demand; () for XLSX."""
    _kept: np.ndarray | None = None
    """Frame row -> parsed row, when all-empty rows were dropped."""
    _cache: dict = field(default_factory=dict, repr=False)

    @cached_property
    def lines(self) -> np.ndarray:
        """File line (CSV) or sheet row (XLSX) of each frame row; the header is line 1."""
        n = self.rows
        if self._source:
            raw, encoding, delim, nfields, header = self._source
            lines = _record_lines(self.path, raw, encoding, delim, nfields, header)
            if len(lines) != n:
                lines = np.arange(n, dtype=np.int64) + header + 1
        else:
            lines = np.arange(n, dtype=np.int64) + 2
        return lines if self._kept is None else lines[self._kept]

    def where(self, i: int, column: str) -> str:
        """``file:row:column`` for frame row ``i``."""
        return f"{self.path}:{int(self.lines[i])}:{column}"


def read_table(path: str | os.PathLike, text_columns: Callable[[list[str]], Iterable[str]] = lambda names: ()) -> Table:
    """Read ``path`` into a :class:`Table`; ``text_columns(names)`` picks the columns classed as text."""
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
    digest = _Digest(raw)
    if not raw[:4096].strip() and not raw.strip():
        raise WorkbenchError(f"{shown} is empty")
    if raw.startswith(_ZIP_MAGIC) or shown.lower().endswith((".xlsx", ".xlsm")):
        frame, names = _read_xlsx(shown, raw)
        text = frozenset(text_columns(names)) & frozenset(names)
        return _finish(Table(shown, frame, len(frame), digest.result(), len(raw), "xlsx", (), text))
    encoding, text, notices = _decode(shown, raw)  # text: the first 256 KB or more
    delim = sniff_delimiter(text[:SNIFF_BYTES])
    decimal = _sniff_decimal(text[:SNIFF_BYTES], delim)
    if decimal == ",":
        notices = notices + ("numbers use a decimal comma",)
    names, header = _header(shown, _header_text(raw, text, encoding), delim)
    keep = _leading_zero_columns(text[:SNIFF_BYTES], delim, names, set(text_columns(names)))
    cut = _partial_last_line(raw, delim, len(names))
    if cut is not None:  # a logger is still writing the last line: leave it until it is complete
        raw = raw[:cut]
        digest = _Digest(raw)
        notices = notices + ("the last line has no end of line and too few fields (still being written?): "
                             "left out until it is complete",)
    source = (raw, encoding, delim, len(names), header)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", pd.errors.ParserWarning)
            warnings.simplefilter("ignore", pd.errors.DtypeWarning)
            # A UTF-8 file is handed over by path so that pandas may parse a large one in
            # parallel chunks; other encodings go through the bytes already read.
            source_arg = shown if encoding != "cp1252" and cut is None else io.BytesIO(raw)
            frame = pd.read_csv(
                source_arg, sep=delim, header=0, names=names, engine="c", encoding=encoding,
                dtype={c: str for c in keep}, keep_default_na=False, na_values=[""], decimal=decimal,
                skip_blank_lines=True, quotechar='"', index_col=False,
            )
    except (ValueError, pd.errors.ParserError, UnicodeError) as exc:
        if not isinstance(exc, UnicodeError):
            _record_lines(shown, *source)  # a row with too many fields: name it
        reason = str(exc).strip().splitlines()[-1] if str(exc).strip() else type(exc).__name__
        raise WorkbenchError(f"{shown}: cannot read as {_delim_name(delim)}-separated text: {reason}") from None
    table = Table(shown, frame, len(frame), digest.result(), len(raw), encoding, notices,
                  frozenset(text_columns(names)) & frozenset(names), decimal, source)
    # Cheap checks that every row has as many fields as the header; when one fails the lines
    # are numbered now, which names the first ragged row.
    delims = raw.count(delim.encode())
    if len(frame) and (b'"' in raw or (b"\r" in raw and raw.count(b"\r") != raw.count(b"\r\n"))
                       or delims != (len(frame) + 1) * (len(names) - 1) or _has_na(frame.iloc[:, -1])):
        table.lines  # noqa: B018
    return _finish(table)


def _partial_last_line(raw: bytes, delim: str, nfields: int) -> int | None:
    """Offset to cut at when the file ends in an unterminated line with too few fields, else None."""
    if not raw or raw.endswith((b"\n", b"\r")):
        return None
    start = raw.rfind(b"\n") + 1
    if start == 0:
        return None  # the header itself
    last = raw[start:]
    if b'"' in last or last.count(delim.encode()) >= nfields - 1:
        return None
    return start


class _Digest(threading.Thread):
    """SHA-256 of the bytes, computed beside the parsing for large files (hashlib releases the GIL)."""

    def __init__(self, raw: bytes) -> None:
        super().__init__(name="workbench-sha256", daemon=True)
        self.raw, self.hex = raw, ""
        if len(raw) > 1 << 20:
            self.start()
        else:
            self.run()

    def run(self) -> None:
        self.hex = hashlib.sha256(self.raw).hexdigest()

    def result(self) -> str:
        if self.is_alive() or self.ident is not None:
            self.join()
        return self.hex


def _finish(t: Table) -> Table:
    frame = t.frame
    if len(frame) == 0:
        raise WorkbenchError(f"{t.path} has a header but no data rows")
    unnamed = [c for c in frame.columns if c.startswith("column ") and bool(frame[c].isna().all())]
    if unnamed and len(unnamed) < frame.shape[1]:
        frame = frame.drop(columns=unnamed)
    floats = [c for c in frame.columns if pd.api.types.is_float_dtype(frame[c])]
    if floats and not np.isnan(frame[floats[0]].to_numpy()).any() or not _has_na(frame[frame.columns[0]]):
        empty = None
    else:
        empty = frame.isna().all(axis=1).to_numpy()
        if empty.all():
            raise WorkbenchError(f"{t.path} has a header but no data rows (every cell is empty)")
        if not empty.any():
            empty = None
    if empty is not None:
        frame = frame.loc[~empty].reset_index(drop=True)
    if frame is t.frame:
        return t
    kept = None if empty is None else np.flatnonzero(~empty)
    new = dataclasses.replace(t, frame=frame, _kept=kept, _cache={})
    if "lines" in t.__dict__:
        new.__dict__["lines"] = t.lines if kept is None else t.lines[kept]
    return new


def _has_na(s: pd.Series) -> bool:
    if pd.api.types.is_float_dtype(s):
        return bool(np.isnan(s.to_numpy()).any())
    if pd.api.types.is_integer_dtype(s) or pd.api.types.is_bool_dtype(s):
        return False
    return bool(s.isna().any())


def _leading_zero_columns(sample: str, delim: str, names: list[str], candidates: set[str]) -> set[str]:
    """Candidate key columns with a cell like ``007`` in the sample: read them as text."""
    if not candidates:
        return set()
    pos = [i for i, n in enumerate(names) if n in candidates]
    out: set[str] = set()
    try:
        for rec in itertools.islice(csv.reader(io.StringIO(sample, newline=""), delimiter=delim), 1, 200):
            for i in pos:
                if i < len(rec) and _LEADING_ZERO.match(rec[i]):
                    out.add(names[i])
    except csv.Error:
        pass
    return out


def _decode(path: str, raw: bytes) -> tuple[str, str, tuple[str, ...]]:
    nul = raw.find(b"\x00")
    if nul >= 0:
        raise WorkbenchError(f"{path}: NUL byte at offset {nul} (line {_line_at(raw, nul)}); "
                             "not a text file (UTF-16 is not supported)")
    if raw.isascii():
        return "utf-8", raw[:SNIFF_BYTES * 4].decode("ascii"), ()
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


XLSX_MAX_UNPACKED = 1 << 30
"""A workbook whose parts unpack to more than this (1 GiB) is refused before it is read."""
XLSX_MAX_RATIO = 200
"""... or whose parts unpack to more than this many times their packed size (zip-bomb guard)."""
_CELL = re.compile(rb'<c r="([A-Z]+)(\d+)"[^>]*?(?:/>|>(.*?)</c>)', re.S)


def _check_workbook(path: str, raw: bytes) -> None:
    """Refuse a workbook that would unpack past the caps, or whose first sheet holds formula cells
    without a saved value (pandas would read them as empty, silently)."""
    import zipfile
    try:
        with zipfile.ZipFile(io.BytesIO(raw)) as z:
            infos = z.infolist()
            unpacked = sum(i.file_size for i in infos)
            packed = sum(i.compress_size for i in infos)
            if unpacked > XLSX_MAX_UNPACKED or unpacked > XLSX_MAX_RATIO * max(packed, 1 << 16):
                raise WorkbenchError(f"{path}: the workbook unpacks to {unpacked / 2**20:.0f} MiB from "
                                     f"{packed / 2**20:.1f} MiB (limits: {XLSX_MAX_UNPACKED >> 20} MiB, "
                                     f"{XLSX_MAX_RATIO}x); refused before reading — export the sheet as CSV")
            sheet = _first_sheet(z)
            if sheet is None:
                return
            xml = z.read(sheet)
    except (zipfile.BadZipFile, KeyError, OSError, ValueError):
        return  # pandas gives the reason
    count, first = 0, None
    for m in _CELL.finditer(xml):
        body = m.group(3) or b""
        if b"<f" in body and not re.search(rb"<v>[^<]", body):
            count += 1
            first = first or (m.group(1).decode(), int(m.group(2)))
    if count:
        raise WorkbenchError(f"{path}:{first[1]}:{first[0]}: {count} formula cell{'s' if count > 1 else ''} "
                             "without a saved value (first shown); open and save the workbook in a spreadsheet "
                             "program so the values are stored, or export the sheet as CSV")


def _first_sheet(z) -> str | None:
    """The part name of the workbook's first sheet (what ``sheet_name=0`` reads)."""
    try:
        book = z.read("xl/workbook.xml")
        rels = z.read("xl/_rels/workbook.xml.rels")
    except KeyError:
        return None
    m = re.search(rb'<sheet\b[^>]*?r:id="([^"]+)"', book)
    if not m:
        return None
    for rel in re.finditer(rb"<Relationship\b[^>]*>", rels):
        tag = rel.group(0)
        if re.search(rb'Id="' + re.escape(m.group(1)) + rb'"', tag):
            target = re.search(rb'Target="([^"]+)"', tag).group(1).decode()
            return target.lstrip("/") if target.startswith("/") else "xl/" + target
    return None


def _read_xlsx(path: str, raw: bytes) -> tuple[pd.DataFrame, list[str]]:
    _check_workbook(path, raw)
    try:
        frame = pd.read_excel(io.BytesIO(raw), sheet_name=0, header=0, engine="openpyxl")
    except Exception as exc:  # openpyxl and zipfile raise many kinds of error on a damaged workbook
        reason = str(exc).splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise WorkbenchError(f"{path}: cannot read as an XLSX workbook: {reason}") from None
    if frame.shape[1] == 0:
        raise WorkbenchError(f"{path} is empty")
    names = _clean_names(path, ["" if str(c).startswith("Unnamed: ") else str(c) for c in frame.columns], 1)
    frame.columns = names
    return frame, names


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


def cell_as_typed(table: Table, i: int, column: str, fallback: str) -> str:
    """Frame row ``i``'s cell in ``column`` as written in the file (a number too large for a float
    is shown as ``1e309``, not ``inf``); ``fallback`` when it cannot be found (a workbook)."""
    if not table._source:
        return fallback
    raw, encoding, delim, _nfields, header = table._source
    try:
        line = int(table.lines[i])
        nl = np.flatnonzero(np.frombuffer(raw, np.uint8) == 10)
        def text_of(n: int) -> str:
            a = 0 if n == 1 else int(nl[n - 2]) + 1
            b = int(nl[n - 1]) if n - 1 < len(nl) else len(raw)
            return raw[a:b].decode(encoding, errors="replace").rstrip("\r")
        names = [n.strip() or f"column {j + 1}" for j, n in enumerate(next(csv.reader([text_of(header)], delimiter=delim)))]
        cells = next(csv.reader([text_of(line)], delimiter=delim))
        return cells[names.index(column)].strip()
    except (ValueError, IndexError, StopIteration, csv.Error):
        return fallback


def _header_text(raw: bytes, text: str, encoding: str) -> str:
    """The text to read the header from: the sample, or up to the end of the header line when that
    line is longer than the sample (a long header is read whole, never cut into a false repeat)."""
    start = len(raw) - len(raw.lstrip(b"\r\n\t \xef\xbb\xbf"))
    end = raw.find(b"\n", start)
    end = len(raw) if end < 0 else end + 1
    if end <= SNIFF_BYTES * 4:
        return text[:SNIFF_BYTES * 4]
    return raw[:end].decode(encoding, errors="replace")


def _header(path: str, text: str, delim: str) -> tuple[list[str], int]:
    """Header names and the line the header is on."""
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delim)
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


def _record_lines(path: str, raw: bytes, encoding: str, delim: str, nfields: int, header_line: int) -> np.ndarray:
    """File line of every data record; raises on a ragged row.  Vectorised on the bytes
    when no field is quoted and lines end in LF or CRLF; else via the csv module."""
    if b'"' in raw or raw.count(b"\r") != raw.count(b"\r\n"):
        return _record_lines_csv(path, raw.decode(encoding), delim, nfields, header_line)
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


def _record_lines_csv(path: str, text: str, delim: str, nfields: int, header_line: int) -> np.ndarray:
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
