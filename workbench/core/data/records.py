"""Tables that do not come from lines of text: columnar files and database results.

A :class:`RecordTable` is a :class:`~workbench.core.data.sniff.Table` whose rows are numbered
as records (the first data record is row 1), so the loader's errors read ``source:row:column``
with the record number.  :func:`frame_table` turns a pandas frame into one, with the same
clean-up as a CSV file: names stripped (an empty name becomes ``column N``, a repeated name is
an error) and rows whose cells are all empty dropped (their numbers still count).
"""
from __future__ import annotations

import dataclasses
from functools import cached_property
from typing import Callable, Iterable

import numpy as np
import pandas as pd

from workbench.core.data.sniff import Table
from workbench.core.model import WorkbenchError


class RecordTable(Table):
    """A table whose row numbers are record numbers (1 = the first data record)."""

    @cached_property
    def lines(self) -> np.ndarray:
        lines = np.arange(1, self.rows + 1, dtype=np.int64)
        return lines if self._kept is None else lines[self._kept]


def clean_names(source: str, raw: Iterable[object]) -> list[str]:
    """Column names stripped; an empty one becomes ``column N``; a repeated one is refused."""
    names = [str(n).strip() or f"column {i + 1}" for i, n in enumerate(raw)]
    seen: set[str] = set()
    for n in names:
        if n in seen:
            raise WorkbenchError(f"{source}: column name {n!r} appears twice")
        seen.add(n)
    return names


def frame_table(source: str, frame: pd.DataFrame, sha256: str, size_bytes: int, encoding: str,
                text_columns: Callable[[list[str]], Iterable[str]], notices: tuple[str, ...] = ()) -> RecordTable:
    """A :class:`RecordTable` of ``frame`` (all-empty rows dropped, numbering kept)."""
    names = clean_names(source, frame.columns)
    frame = frame.set_axis(names, axis=1)
    if frame.shape[1] == 0:
        raise WorkbenchError(f"{source} has no columns")
    rows = len(frame)
    if rows == 0:
        raise WorkbenchError(f"{source} has no data rows")
    empty = frame.isna().all(axis=1).to_numpy()
    kept = None
    if empty.all():
        raise WorkbenchError(f"{source} has no data rows (every cell is empty)")
    if empty.any():
        kept = np.flatnonzero(~empty)
        frame = frame.loc[~empty].reset_index(drop=True)
    text = frozenset(text_columns(names)) & frozenset(names)
    table = RecordTable(source, frame, rows, sha256, size_bytes, encoding, tuple(notices), text)
    return dataclasses.replace(table, _kept=kept) if kept is not None else table
