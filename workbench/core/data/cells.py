"""Converting the cells of one column of a :class:`~workbench.core.data.sniff.Table`.

Each conversion is computed once per column and kept in the table's cache: the column as
text (stripped, numbers without a needless ``.0``, workbook dates in ISO form), as float64
numbers (telling empty cells and the missing-value markers NA, N/A, NaN, null, None and
#N/A from cells that are not numbers), as timestamps, its kind (number, text or empty) and
whether some value repeats.  A column parsed by pandas as numbers costs nothing more; only
a column that did not parse is converted cell by cell (vectorised).
"""
from __future__ import annotations

import re
import warnings
from dataclasses import dataclass
from typing import Protocol

import numpy as np
import pandas as pd

from workbench.core.data import arrow

FAST = True
"""Use the pyarrow conversions of :mod:`workbench.core.data.arrow` where they apply (tests turn them
off to compare with the general conversions)."""


class Table(Protocol):
    """What the conversions read of a ``sniff.Table`` (this module sits below it): named cell columns."""

    frame: "pd.DataFrame"
    decimal: str
    text_columns: set
    _cache: dict

MISSING_MARKERS = ("na", "n/a", "nan", "null", "none", "#n/a")
_ISO_TIME = re.compile(r"^\d{4}-\d\d-\d\d([ T]\d\d:\d\d(:\d\d(\.\d+)?)?)?$")


@dataclass(frozen=True, eq=False)
class Numbers:
    """One column converted to float64."""

    values: np.ndarray
    """float64 per row, NaN for empty (and for bad) cells."""
    empty: np.ndarray
    """Boolean per row: the cell was empty or a missing-value marker."""
    bad: np.ndarray
    """Boolean per row: the cell held something that is not a finite number."""
    texts: np.ndarray | None = None
    """The cells as text (only kept when there were bad cells)."""


@dataclass(frozen=True, eq=False)
class Times:
    """One column parsed as timestamps."""

    values: np.ndarray
    """datetime64 per row (NaT where empty or unparsed)."""
    failed: np.ndarray
    """Boolean per row: a non-empty cell that is not a time."""
    empty: np.ndarray
    """Boolean per row: the cell was empty."""
    one_form: bool = False
    """Every filled cell has one fixed-width ISO form (the fast parse), so equal times mean equal texts."""


def _cached(fn):
    def wrapper(table: Table, column: str):
        key = (fn.__name__, column)
        if key not in table._cache:
            table._cache[key] = fn(table, column)
        return table._cache[key]
    wrapper.__doc__, wrapper.__name__ = fn.__doc__, fn.__name__
    return wrapper


@_cached
def as_text(table: Table, column: str) -> np.ndarray:
    """The column as a numpy array of str ("" for empty): stripped, numbers without a
    needless ``.0``, workbook dates in ISO form."""
    return _text_of(table.frame[column])


def text_at(table: Table, column: str, rows: np.ndarray) -> np.ndarray:
    """``as_text(table, column)[rows]``, converting only those rows for a text column (a long file's
    time key: the first row of each subgroup, instead of a str array of every row)."""
    key = ("as_text", column)
    s = table.frame[column]
    if key in table._cache or not (isinstance(s.dtype, pd.StringDtype) or s.dtype == object):
        return as_text(table, column)[rows]
    return _text_of(s.iloc[np.asarray(rows)].reset_index(drop=True))


def _text_of(s: pd.Series) -> np.ndarray:
    if pd.api.types.is_datetime64_any_dtype(s):
        return _format_times(s)
    if pd.api.types.is_bool_dtype(s):
        return s.to_numpy().astype(str)
    if pd.api.types.is_integer_dtype(s):
        return int_text(s.to_numpy())
    if pd.api.types.is_float_dtype(s):
        v = s.to_numpy(dtype=np.float64)
        fin = np.isfinite(v)
        if np.all(v[fin] == np.round(v[fin])) and np.all(np.abs(v[fin]) < 2**53):
            out = int_text(np.where(fin, v, 0).astype(np.int64))
        else:
            out = s.astype(str).to_numpy(dtype=str)
        return np.where(np.isnan(v), "", out)
    fast = arrow.text_and_edges(s) if FAST else None
    if fast is not None:
        out, blank_edge = fast
        return np.strings.strip(out) if blank_edge else out
    arr = s.to_numpy(dtype=object)
    out = _str_array(arr)
    nan = np.flatnonzero(out == "nan")  # a NaN cell, or the text "nan"
    if nan.size:
        out[nan] = ["nan" if isinstance(arr[i], str) else "" for i in nan.tolist()]
    return _strip(out)


def _strip(out: np.ndarray) -> np.ndarray:
    """Strip blanks, skipping the work when no cell starts or ends with one."""
    if out.size == 0 or out.dtype.itemsize == 0:
        return out
    chars = out.view(np.uint32).reshape(len(out), -1)
    last = np.maximum(np.strings.str_len(out) - 1, 0)
    edges = np.concatenate((chars[:, 0], chars[np.arange(len(out)), last]))
    if ((edges == 32) | (edges == 9) | (edges == 160) | (edges == 13)).any():
        return np.strings.strip(out)
    return out


_POW10 = 10 ** np.arange(19, dtype=np.int64)


def int_text(a: np.ndarray) -> np.ndarray:
    """Integers as a numpy str array, equal to ``a.astype(str)`` but built digit by digit
    (several times faster for large arrays of non-negative integers)."""
    a = np.asarray(a, dtype=np.int64)
    if a.size < 1000 or a.min() < 0 or a.max() >= _POW10[18]:
        return np.array([str(x) for x in a.tolist()], dtype=str) if a.size else a.astype(str)
    width = len(str(int(a.max())))
    ndig = np.searchsorted(_POW10[1:width], a, side="right") + 1
    order = None
    if not bool((ndig[1:] >= ndig[:-1]).all()):
        order = np.argsort(ndig, kind="stable")
        a, ndig = a[order], ndig[order]
    out = np.zeros((width, len(a)), np.uint32)  # code points, one row per character position
    cuts = np.searchsorted(ndig, np.arange(1, width + 2))
    for g in range(1, width + 1):
        seg = a[cuts[g - 1]:cuts[g]]
        for c in range(g if seg.size else 0):
            out[c, cuts[g - 1]:cuts[g]] = (seg // _POW10[g - 1 - c]) % 10 + 48
    res = np.ascontiguousarray(out.T).view(f"<U{width}").ravel()
    if order is not None:
        back = np.empty_like(res)
        back[order] = res
        res = back
    return res


def _str_array(arr: np.ndarray) -> np.ndarray:
    """``arr.astype(str)`` for an object array, with the width guessed from the first
    cells (numpy's own width scan is the slow part) and checked afterwards."""
    if len(arr) < 1000:
        return arr.astype(str)
    width = max(len(str(x)) for x in arr[:1000].tolist()) + 1
    out = arr.astype(f"U{width}")
    if (np.strings.str_len(out) == width).any():  # possibly cut short
        return arr.astype(str)
    return out


def _format_times(s: pd.Series) -> np.ndarray:
    t = s.dropna()
    if len(t) and bool((t.dt.second == 0).all() and (t.dt.microsecond == 0).all()):
        fmt = "%Y-%m-%d" if bool((t.dt.hour == 0).all() and (t.dt.minute == 0).all()) else "%Y-%m-%d %H:%M"
    else:
        fmt = "%Y-%m-%d %H:%M:%S"
    return s.dt.strftime(fmt).where(s.notna(), "").to_numpy(dtype=str)


@_cached
def as_numbers(table: Table, column: str) -> Numbers:
    """Convert a column to float64, telling empty cells from cells that are not numbers."""
    s = table.frame[column]
    if pd.api.types.is_numeric_dtype(s) and not pd.api.types.is_bool_dtype(s):
        v = s.to_numpy(dtype=np.float64, na_value=np.nan)
        bad = np.isinf(v)
        if bad.any():
            return Numbers(np.where(bad, np.nan, v), np.isnan(v), bad, s.astype(str).to_numpy(dtype=str))
        return Numbers(v, np.isnan(v), bad)
    txt = as_text(table, column)
    cand = np.strings.replace(txt, ",", ".") if table.decimal == "," else txt
    num = pd.to_numeric(pd.Series(cand, dtype=object), errors="coerce").to_numpy(dtype=np.float64)
    empty = txt == ""
    failed = np.flatnonzero(~np.isfinite(num) & ~empty)
    empty[failed[np.isin(np.strings.lower(txt[failed]), MISSING_MARKERS)]] = True
    bad = ~empty & ~np.isfinite(num)
    return Numbers(np.where(empty | bad, np.nan, num), empty, bad, txt if bad.any() else None)


@_cached
def column_kind(table: Table, column: str) -> str:
    """``number`` when at least half the non-empty cells are numbers, ``text``, or ``empty``;
    columns classed as text (keys, stream names) are always ``text``."""
    s = table.frame[column]
    if column in table.text_columns or pd.api.types.is_datetime64_any_dtype(s) or pd.api.types.is_bool_dtype(s):
        return "text"
    nums = as_numbers(table, column)
    filled = int((~nums.empty).sum())
    good = int(np.isfinite(nums.values).sum())
    return "empty" if filled == 0 else ("number" if 2 * good >= filled else "text")


@_cached
def as_times(table: Table, column: str) -> Times | None:
    """Parse a column as timestamps (format inferred by pandas, else ISO 8601); None when
    the column holds plain numbers."""
    s = table.frame[column]
    if pd.api.types.is_numeric_dtype(s) or pd.api.types.is_bool_dtype(s):
        return None
    if not pd.api.types.is_datetime64_any_dtype(s):
        if s.dtype == object:  # mixed cells from a workbook
            s = pd.Series(as_text(table, column), dtype=object).replace("", np.nan)
        head = s.iloc[:200].dropna().iloc[:100].str.strip()
        if len(head) and bool(pd.to_numeric(head, errors="coerce").notna().all()):
            return None
        iso = len(head) and all(_ISO_TIME.match(x) for x in head.tolist())
        fast = arrow.iso_times(s, head.tolist()) if iso and FAST else None
        if fast is not None:
            nat = np.isnat(fast)
            return Times(fast, np.zeros(len(fast), bool), nat, one_form=True)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            t = pd.to_datetime(s, errors="coerce", format="ISO8601" if iso else None)
            if np.isnat(t.to_numpy()).any() and bool((t.isna() & s.notna()).any()):
                s = pd.Series(as_text(table, column), dtype=object).replace("", np.nan)  # strip blanks
                t = pd.to_datetime(s, errors="coerce")
                t2 = pd.to_datetime(s, errors="coerce", format="ISO8601")
                t = t2 if int(t2.isna().sum()) < int(t.isna().sum()) else t
        if not pd.api.types.is_datetime64_any_dtype(t):  # mixed UTC offsets
            t = pd.to_datetime(s, errors="coerce", utc=True)
    else:
        t = s
    if getattr(t.dt, "tz", None) is not None:
        t = t.dt.tz_convert("UTC").dt.tz_localize(None)
    values = t.to_numpy()
    nat = np.isnat(values)
    empty = s.isna().to_numpy() if nat.any() else nat
    return Times(values, nat & ~empty, empty)


def repeats(table: Table, column: str, times: Times | None = None) -> bool:
    """Whether some value of the column occurs twice (as text); ``times`` are the column
    parsed as timestamps, when it is a time column (strictly increasing times cannot repeat)."""
    key = ("repeats", column)
    if key not in table._cache:
        s = table.frame[column]
        v = times.values if times is not None and not (times.failed.any() or times.empty.any()) else None
        if v is None and pd.api.types.is_numeric_dtype(s) and not pd.api.types.is_bool_dtype(s):
            v = s.to_numpy()
        if v is not None and (len(v) < 2 or bool((v[1:] > v[:-1]).all())):
            table._cache[key] = False
        elif v is not None and bool((v[1:] >= v[:-1]).all()) and (
                times.one_form if times is not None and times.one_form else _adjacent_repeat(as_text(table, column), v)):
            # ordered values: a repeat shows next to its twin (found without hashing); with one text per
            # time (one fixed-width ISO form) equal neighbouring times are equal texts
            table._cache[key] = True
        else:
            table._cache[key] = not pd.Series(as_text(table, column)).is_unique
    return table._cache[key]


def _adjacent_repeat(text: np.ndarray, values: np.ndarray) -> bool:
    """Whether two neighbouring cells with equal values also have equal text."""
    same = np.flatnonzero(values[1:] == values[:-1])
    for part in (same[:64], same[64:]):  # the first few pairs nearly always settle it
        if part.size and bool((text[part] == text[part + 1]).any()):
            return True
    return False
