"""The context changes near an anchor: what changed there.

A change of a context column at position q means subgroup q is the first with a new value (its value, or
its set of values, differs from subgroup q − 1's).  The change positions of each column are found once
per dataset (one ``pandas.factorize`` and a comparison of neighbours) and kept with it, so the leads of
one signal cost a binary search per column, and a report of 40,000 signals asks only for the signals it
shows.

Anchors: a signal's anchor is its estimated change point where it has one (a sustained shift on a location
chart: ``core/charts/changepoint.py``), else the first point of its pattern (where its run began); a caller
may pass another.  A range FIRST..LAST has two, its first subgroup and the subgroup after its last.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from workbench.core.context.ranking import Ranking, Separation, context_of
from workbench.core.model import Analysis, Dataset, Signal

WINDOW = 3
"""A change within this many subgroups of the anchor (either side) is listed."""


@dataclass(frozen=True)
class Change:
    """One context column changing near an anchor."""

    column: str
    position: int
    """The first subgroup with the new value."""
    offset: int
    """position − anchor: −1 is one subgroup before the anchor."""
    before: str
    """The value (display form) of subgroup position − 1."""
    after: str
    """The value of subgroup position."""
    anchor: str
    """What the anchor is, in words ("the start of the signal's run", "the estimated change point", …)."""
    separation: Separation | None
    """The column's separation of the plotted statistic (None when the data have no ranking)."""

    @property
    def lead(self) -> bool:
        """The column's levels separate the plotted statistic at the ranking's false-discovery rate."""
        return self.separation is not None and self.separation.lead


def change_positions(ds: Dataset) -> dict[str, np.ndarray]:
    """Each context column's change positions (sorted), found once per dataset and kept with it."""
    cache = ds.__dict__.get("_context_changes")
    if cache is None:
        cache = {}
        for col, texts in ds.extras.items():
            codes, _ = pd.factorize(np.asarray(texts))
            cache[col] = np.flatnonzero(codes[1:] != codes[:-1]) + 1
        object.__setattr__(ds, "_context_changes", cache)
    return cache


RUN, CHANGE_POINT, RANGE_START, RANGE_END = ("the start of the signal's run", "the estimated change point",
                                             "the start of the range", "the first subgroup after the range")


def changes_at(a: Analysis, anchor: int, what: str = RUN, window: int = WINDOW,
               ranking: Ranking | None = None) -> list[Change]:
    """Every context change within ``window`` subgroups of ``anchor``: the changes of columns that are leads
    first, nearest first, then the other changes nearest first.

    A column that changes at more than half of the subgroups (a per-subgroup ID, a sampler chosen afresh each
    time) tells nothing about one place and is not listed."""
    ds = a.dataset
    if not ds.extras:
        return []
    ranking = ranking if ranking is not None else context_of(a)
    order = {s.column: i for i, s in enumerate(ranking.columns)} if ranking is not None else {}
    out = []
    for col, pos in change_positions(ds).items():
        if 2 * pos.size > ds.m - 1:
            continue
        lo, hi = np.searchsorted(pos, [anchor - window, anchor + window + 1])
        texts = ds.extras[col]
        for q in pos[lo:hi].tolist():
            out.append(Change(col, q, q - anchor, str(texts[q - 1]), str(texts[q]), what,
                              ranking.of(col) if ranking is not None else None))
    out.sort(key=lambda c: (not c.lead, abs(c.offset), order.get(c.column, len(order)), c.offset))
    return out


def signal_anchors(a: Analysis) -> tuple[np.ndarray, np.ndarray]:
    """Every signal's anchor, in the signal table's order, and True where it is the estimated change point
    (else the first point of the signal's pattern)."""
    from workbench.core.charts import changepoint as CP
    table = a.signals
    first = getattr(table, "first", None)
    if first is None:
        first = np.array([s.first for s in table], dtype=np.int64)
    cp = CP.signal_shapes(a).index
    at = cp >= 0
    return np.where(at, cp, first).astype(np.int64), at


def anchor_of(a: Analysis, key: str, first: int) -> tuple[int, bool]:
    """The anchor of the signal ``key`` whose pattern starts at ``first`` (see :func:`signal_anchors`)."""
    anchors, at = signal_anchors(a)
    table = a.signals
    starts = getattr(table, "first", None)
    lo, hi = (0, len(table)) if starts is None else (int(v) for v in np.searchsorted(starts, [first, first + 1]))
    for i in range(lo, hi):
        if table[i].key == key:
            return int(anchors[i]), bool(at[i])
    return int(first), False


def leads_at_many(a: Analysis, anchors: np.ndarray, at_change: np.ndarray | None = None,
                  window: int = WINDOW) -> list[list[Change]]:
    """``changes_at`` of many signals' anchors at once (``at_change``: True where the anchor is an estimated
    change point): one binary search per column over every anchor, Python work only where a change lies
    near (a report of 40,000 signals on data without context columns pays nothing)."""
    ds = a.dataset
    anchors = np.asarray(anchors, dtype=np.int64)
    if not ds.extras or not anchors.size:
        return [[] for _ in range(anchors.size)]
    out: list[list[Change]] = [[] for _ in range(anchors.size)]
    near = np.zeros(anchors.size, bool)
    for col, pos in change_positions(ds).items():
        if 2 * pos.size > ds.m - 1:
            continue
        lo, hi = np.searchsorted(pos, anchors - window), np.searchsorted(pos, anchors + window + 1)
        near |= hi > lo
    ranking = context_of(a)
    for i in np.flatnonzero(near).tolist():
        what = CHANGE_POINT if at_change is not None and at_change[i] else RUN
        out[i] = changes_at(a, int(anchors[i]), what, window, ranking)
    return out


def signal_anchor(s: Signal) -> int:
    """Where a signal's run began: the first point of its pattern."""
    return int(s.first)


def signal_leads(a: Analysis, s: Signal, anchor: int | None = None, window: int = WINDOW) -> list[Change]:
    """The context changes near a signal: around ``anchor`` when given (words: the estimated change point),
    else around its own anchor (:func:`signal_anchors`)."""
    if anchor is None:
        anchor, at = anchor_of(a, s.key, s.first)
        return changes_at(a, anchor, CHANGE_POINT if at else RUN, window)
    return changes_at(a, int(anchor), CHANGE_POINT, window)


def range_leads(a: Analysis, first: int, last: int, window: int = WINDOW) -> list[Change]:
    """The context changes near a range's start and near its end (the subgroup after ``last``)."""
    out = changes_at(a, first, RANGE_START, window)
    if last + 1 < a.dataset.m:
        seen = {(c.column, c.position) for c in out}
        out += [c for c in changes_at(a, last + 1, RANGE_END, window) if (c.column, c.position) not in seen]
        out.sort(key=lambda c: (not c.lead, abs(c.offset)))
    return out
