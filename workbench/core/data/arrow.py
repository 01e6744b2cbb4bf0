"""Fast conversions of columns that pandas holds as pyarrow strings (its default text storage when
pyarrow is installed): text as a numpy ``str`` array and ISO times, without making one Python
object per cell.  Each returns None when it does not apply, and the caller converts the column the
general way; the results are equal to the general conversions (tests compare both).
"""
from __future__ import annotations

import re

import numpy as np
import pandas as pd

_FORMATS = (  # (pattern of the first filled cells, length, separator between date and time)
    (re.compile(r"^\d{4}-\d\d-\d\d$"), 10, None),
    (re.compile(r"^\d{4}-\d\d-\d\d \d\d:\d\d$"), 16, " "),
    (re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d$"), 16, "T"),
    (re.compile(r"^\d{4}-\d\d-\d\d \d\d:\d\d:\d\d$"), 19, " "),
    (re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d$"), 19, "T"),
)


def arrow_strings(s: pd.Series):
    """The pyarrow array behind a text column, or None (not pyarrow-backed, or pyarrow missing)."""
    dtype = s.dtype
    if not (isinstance(dtype, pd.StringDtype) and dtype.storage == "pyarrow"):
        return None
    try:
        import pyarrow as pa
    except ImportError:  # pragma: no cover - pandas cannot store text in pyarrow without it
        return None
    arr = s.array.__arrow_array__()
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks() if arr.num_chunks != 1 else arr.chunk(0)
    if arr.type not in (pa.string(), pa.large_string()):
        return None
    return arr


def _offsets(arr) -> tuple[np.ndarray, np.ndarray]:
    """(offsets of each cell into the bytes, the bytes) of a pyarrow string array."""
    import pyarrow as pa
    n = len(arr)
    odt = np.int32 if arr.type == pa.string() else np.int64
    bufs = arr.buffers()
    off = np.frombuffer(bufs[1], dtype=odt, count=n + 1, offset=arr.offset * np.dtype(odt).itemsize)
    data = np.frombuffer(bufs[2], dtype=np.uint8) if bufs[2] is not None else np.zeros(0, np.uint8)
    return off.astype(np.int64), data


def text(s: pd.Series) -> np.ndarray | None:
    """The column as a numpy str array ("" for a missing cell) when it holds only ASCII text."""
    got = text_and_edges(s)
    return None if got is None else got[0]


_BLANKS = np.zeros(128, bool)
_BLANKS[[9, 13, 32]] = True  # the ASCII blanks cells._strip looks for at a cell's edges


def text_and_edges(s: pd.Series) -> tuple[np.ndarray, bool] | None:
    """``text(s)`` and whether some cell starts or ends with a blank (read off the bytes, so a caller
    that strips can skip looking at the str array)."""
    arr = arrow_strings(s)
    if arr is None:
        return None
    n = len(arr)
    off, data = _offsets(arr)
    start, stop = int(off[0]), int(off[-1])
    data = data[start:stop]
    if data.size and int(data.max()) >= 128:
        return None
    lens = np.diff(off)
    filled = np.flatnonzero(lens > 0)
    heads, tails = off[:-1][filled] - start, off[1:][filled] - start - 1
    blank_edge = bool(_BLANKS[data[heads]].any() or _BLANKS[data[tails]].any())
    width = int(lens.max()) if n else 0
    if width == 0:
        return np.full(n, "", dtype="<U1"), False
    if int(lens.min()) == width:
        chars = data.reshape(n, width).astype(np.uint32)
    else:
        chars = np.zeros((n, width), np.uint32)
        rows = np.repeat(np.arange(n), lens)
        cols = np.arange(data.size) - np.repeat(off[:-1] - start, lens)
        chars[rows, cols] = data
    out = chars.view(f"<U{width}").reshape(n)
    if arr.null_count:
        out = np.where(np.asarray(arr.is_valid()), out, "")
    return out, blank_edge


def iso_times(s: pd.Series, head: list[str]) -> np.ndarray | None:
    """datetime64[us] of a column whose every filled cell has one strict ISO form (that of ``head``,
    the first filled cells) and is a real date and time of day, else None.

    The digits are read at their fixed places, checked (month 1-12, day within its month, hour
    0-23, minutes and seconds 0-59) and combined with numpy's calendar arithmetic.
    """
    arr = arrow_strings(s)
    if arr is None or not head:
        return None
    form = next(((width, sep) for rx, width, sep in _FORMATS if all(rx.match(x) for x in head)), None)
    if form is None:
        return None
    width, sep = form
    off, data = _offsets(arr)
    n = len(arr)
    valid = np.asarray(arr.is_valid()) if arr.null_count else None
    if valid is not None and not valid.any():
        return None
    start = int(off[0])
    if valid is None and int(off[-1]) - start == n * width and bool((np.diff(off) == width).all()):
        chars = data[start:start + n * width].reshape(n, width)  # a view: every cell has the width
    else:
        lens = np.diff(off)
        ok = valid if valid is not None else np.ones(n, bool)
        if not bool((lens[ok] == width).all()):
            return None
        at = np.where(ok, off[:-1], off[:-1][ok][0])
        chars = data[at[:, None] + np.arange(width)]
    marks = {4: "-", 7: "-", 10: sep, 13: ":", 16: ":"}
    for place in range(width):
        mark = marks.get(place)
        column = chars[:, place]
        if mark is not None:
            if not bool((column == ord(mark)).all()):
                return None
        elif not bool(((column - np.uint8(48)) <= 9).all()):  # uint8: below "0" wraps round
            return None

    def number(a: int, b: int) -> np.ndarray:
        out = chars[:, a].astype(np.int32)
        for c in range(a + 1, b):
            out *= 10
            out += chars[:, c]
        out -= 48 * int("1" * (b - a))  # the digits' "0"s
        return out

    year, month, day = number(0, 4), number(5, 7), number(8, 10)
    hour = number(11, 13) if width > 10 else 0
    minute = number(14, 16) if width > 10 else 0
    second = number(17, 19) if width > 16 else 0
    if ((month < 1) | (month > 12) | (day < 1)).any():
        return None
    first = ((year - 1970) * 12 + month - 1).astype("datetime64[M]")
    days_in = ((first + 1).astype("datetime64[D]") - first.astype("datetime64[D]")).astype(np.int64)
    if (day > days_in).any() or np.any(hour > 23) or np.any(minute > 59) or np.any(second > 59):
        return None
    offset = (day - 1).astype(np.int64) * 86_400 + (hour * 60 + minute) * 60 + second  # seconds into the month
    offset *= 1_000_000
    out = first.astype("datetime64[D]").astype("datetime64[us]") + offset
    if valid is not None:
        out[~valid] = np.datetime64("NaT")
    return out
