"""Several characteristics in one file or table, and the specification file that goes with them.

A file holds several *characteristics* (fill volume, cap torque, label position …) in one of two ways:

* a **characteristic column**: a text column named characteristic, feature, parameter, measurand, measure,
  property or variable (ignoring case, spaces and punctuation) names the characteristic of each row; or
* **several measured columns that are not streams**: one reading a row is expected (the subgroup key
  repeats with a stream column, or ``--layout individuals``) and more than one column holds numbers; each
  such column is a characteristic.  (Several number columns with a key that does not repeat are streams
  of the wide layout, as before.)

``--characteristic NAME`` picks one: the rows of that characteristic (the column is then left out), or that
column alone.  The rest of the loading is unchanged.

The specification file (``--specs FILE.csv``) has a header with ``name``, ``LSL``, ``target``, ``USL`` and
``unit`` (any order, case ignored; target and unit may be empty, and one of LSL / USL may be empty for a
one-sided specification).
"""
from __future__ import annotations

import csv
import dataclasses
import math
import re
from dataclasses import dataclass

import numpy as np

from workbench.core.data import cells
from workbench.core.data.sniff import Table
from workbench.core.model import WorkbenchError

_COLUMN_NAMES = frozenset("characteristic feature parameter measurand measure property variable".split())


class ManyCharacteristics(WorkbenchError):
    """The data hold several characteristics and none was chosen."""

    def __init__(self, where: str, names: tuple[str, ...]):
        shown = ", ".join(names[:8]) + (" …" if len(names) > 8 else "")
        super().__init__(f"{where} holds {len(names)} characteristics ({shown}): give --characteristic NAME, "
                         "or see them all with report --all-characteristics")
        self.names = names


@dataclass(frozen=True)
class Found:
    """How a table holds its characteristics."""

    column: str | None
    """The characteristic column, or None when each measured column is a characteristic."""
    names: tuple[str, ...]
    """The characteristics, in order of first appearance (or of the columns)."""


def _norm(name: str) -> str:
    return re.sub(r"[^0-9a-z]", "", name.lower())


def named_column(table: Table, given: set) -> str | None:
    """The characteristic column (by its name, holding text), or None."""
    return next((c for c in table.frame.columns if _norm(c) in _COLUMN_NAMES and c not in given
                 and cells.column_kind(table, c) == "text"), None)


def names_in(table: Table, column: str) -> tuple[str, ...]:
    """The characteristics named in a column, in order of first appearance."""
    return tuple(dict.fromkeys(t for t in cells.as_text(table, column).tolist() if t))


def pick(table: Table, found: Found, name: str) -> Table:
    """The table of one characteristic: its rows without the characteristic column, or its column alone."""
    if name not in found.names:
        shown = ", ".join(found.names[:12])
        raise WorkbenchError(f"{table.path}: no characteristic {name!r} (characteristics: {shown})")
    frame = table.frame
    if found.column is None:
        drop = [c for c in found.names if c != name]
        return dataclasses.replace(table, frame=frame.drop(columns=drop), _cache={})
    keep = cells.as_text(table, found.column) == name
    rows = np.flatnonzero(keep)
    kept = rows if table._kept is None else table._kept[rows]
    new = dataclasses.replace(table, frame=frame.loc[keep].drop(columns=[found.column]).reset_index(drop=True),
                              _kept=kept, _cache={})
    return new


@dataclass(frozen=True)
class SpecRow:
    """One characteristic's specification from a specification file."""

    name: str
    lsl: float | None
    target: float | None
    usl: float | None
    unit: str


def read_specs(path: str) -> dict[str, SpecRow]:
    """Read a specification file (errors name file:row:column)."""
    try:
        with open(path, encoding="utf-8-sig", newline="") as fh:
            rows = list(csv.reader(fh))
    except FileNotFoundError:
        raise WorkbenchError(f"no such file: {path}") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise WorkbenchError(f"{path}: cannot read the specification file: {exc}") from None
    if not rows:
        raise WorkbenchError(f"{path} is empty")
    head = [_norm(h) for h in rows[0]]
    need = ("name", "lsl", "target", "usl", "unit")
    missing = [n for n in need if n not in head]
    if missing:
        raise WorkbenchError(f"{path}:1: the specification file needs the columns name, LSL, target, USL, unit "
                             f"(missing: {', '.join(missing)})")
    at = {n: head.index(n) for n in need}
    out: dict[str, SpecRow] = {}
    for i, r in enumerate(rows[1:], start=2):
        if not any(x.strip() for x in r):
            continue
        if len(r) != len(head):
            raise WorkbenchError(f"{path}:{i}: row has {len(r)} fields, the header has {len(head)}")
        cell = {n: r[at[n]].strip() for n in need}
        if not cell["name"]:
            raise WorkbenchError(f"{path}:{i}:name: empty characteristic name")
        if cell["name"] in out:
            raise WorkbenchError(f"{path}:{i}:name: {cell['name']!r} appears twice")
        nums = {}
        for n, label in (("lsl", "LSL"), ("target", "target"), ("usl", "USL")):
            if not cell[n]:
                nums[n] = None
                continue
            try:
                v = float(cell[n])
            except ValueError:
                v = math.nan
            if not math.isfinite(v):
                raise WorkbenchError(f"{path}:{i}:{label}: not a number: {cell[n]!r}")
            nums[n] = v
        if nums["lsl"] is None and nums["usl"] is None:
            raise WorkbenchError(f"{path}:{i}:LSL: give LSL or USL (or both) for {cell['name']!r}")
        if nums["lsl"] is not None and nums["usl"] is not None and nums["lsl"] >= nums["usl"]:
            raise WorkbenchError(f"{path}:{i}:USL: USL {cell['usl']} is not above LSL {cell['lsl']}")
        out[cell["name"]] = SpecRow(cell["name"], nums["lsl"], nums["target"], nums["usl"], cell["unit"])
    return out
