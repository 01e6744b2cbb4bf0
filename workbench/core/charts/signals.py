"""Signals as a compact, immutable table.

A long in-control series still has thousands of chance signals; building one Python object
per signal on every recompute would dominate an interactive exclusion.  The table keeps the
signals as numpy arrays and makes a :class:`~workbench.core.model.Signal` only when one is
read, so ``analyse()`` stays proportional to numpy work.
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from workbench.core.model import Signal


@dataclass(frozen=True, eq=False)
class Group:
    """Signals of one rule on one chart, as arrays (original positions)."""

    chart: str
    rule: str
    description: str
    first: np.ndarray
    last: np.ndarray
    points: np.ndarray
    """All pattern points, concatenated group after group."""
    point_ptr: np.ndarray
    """Group g's points are points[point_ptr[g]:point_ptr[g+1]]."""
    fired: np.ndarray
    fired_ptr: np.ndarray


def group_firings(chart: str, rule: str, description: str, fired_c: np.ndarray, index: np.ndarray,
                  members: np.ndarray | None, window: int) -> Group:
    """Group overlapping or adjacent firings (compressed positions ``fired_c``) into signals, vectorised.

    A firing at compressed position i covers the window [i - window + 1, i]; firings whose windows
    overlap or touch form one signal.  Its points are the members inside the covered windows
    (every point when ``members`` is None).
    """
    n = fired_c.size
    if n == 0:
        e = np.empty(0, np.int64)
        return Group(chart, rule, description, e, e, e, np.zeros(1, np.int64), e, np.zeros(1, np.int64))
    starts = np.maximum(fired_c - (window - 1), 0)
    new = np.ones(n, bool)
    new[1:] = starts[1:] > fired_c[:-1] + 1
    heads = np.flatnonzero(new)
    lo = starts[heads]
    hi = fired_c[np.r_[heads[1:] - 1, n - 1]]
    # expand each group's covered range [lo, hi] (O(points), not O(series)), then keep the members
    lengths = hi - lo + 1
    gid = np.repeat(np.arange(lo.size), lengths)
    starts_of = np.cumsum(lengths) - lengths
    pts_c = np.arange(int(lengths.sum())) - np.repeat(starts_of, lengths) + np.repeat(lo, lengths)
    if members is not None:
        keep = members[pts_c]
        pts_c, gid = pts_c[keep], gid[keep]
    point_ptr = np.searchsorted(gid, np.arange(lo.size + 1))
    points = index[pts_c]
    first = points[point_ptr[:-1]]
    last = points[point_ptr[1:] - 1]
    fired_ptr = np.r_[heads, n]
    return Group(chart, rule, description, first, last, points, point_ptr, index[fired_c], fired_ptr)


class SignalTable(Sequence):
    """All signals of an analysis, sorted by (first, last, chart, rule); behaves like a tuple of Signal."""

    def __init__(self, groups: list[Group], labels: np.ndarray):
        self._groups = groups
        self._labels = labels
        if groups:
            # order ties by (chart, rule) names, as sorting Signal tuples would
            rank = {i: r for r, i in enumerate(sorted(range(len(groups)), key=lambda i: (groups[i].chart, groups[i].rule)))}
            gid = np.concatenate([np.full(g.first.size, i) for i, g in enumerate(groups)])
            code = np.concatenate([np.full(g.first.size, rank[i]) for i, g in enumerate(groups)])
            local = np.concatenate([np.arange(g.first.size) for g in groups])
            first = np.concatenate([g.first for g in groups])
            last = np.concatenate([g.last for g in groups])
            order = np.lexsort((code, last, first))
            self._gid, self._local = gid[order], local[order]
            self.first, self.last = first[order], last[order]
        else:
            self._gid = self._local = self.first = self.last = np.empty(0, np.int64)
        self._cache: dict[int, Signal] = {}

    @property
    def groups(self) -> tuple[Group, ...]:
        """The per-(chart, rule) groups the table was built from."""
        return tuple(self._groups)

    def order(self) -> tuple[np.ndarray, np.ndarray]:
        """(group, index within the group) of each signal, in table order."""
        return self._gid, self._local

    def __len__(self) -> int:
        return int(self._gid.size)

    def __getitem__(self, i):
        if isinstance(i, slice):
            return tuple(self[j] for j in range(*i.indices(len(self))))
        n = len(self)
        if i < 0:
            i += n
        if not 0 <= i < n:
            raise IndexError(i)
        sig = self._cache.get(i)
        if sig is None:
            g = self._groups[int(self._gid[i])]
            k = int(self._local[i])
            pts = g.points[g.point_ptr[k]:g.point_ptr[k + 1]]
            fired = g.fired[g.fired_ptr[k]:g.fired_ptr[k + 1]]
            first = int(pts[0])
            sig = Signal(chart=g.chart, rule=g.rule, first=first, last=int(pts[-1]), points=tuple(pts.tolist()),
                         fired=tuple(fired.tolist()), key=f"{g.chart}/{g.rule}/{self._labels[first]}",
                         description=g.description)
            self._cache[i] = sig
        return sig

    def __iter__(self):
        if len(self._cache) < len(self):
            self._make_all()
        for i in range(len(self)):
            yield self._cache[i]

    def _make_all(self) -> None:
        """Make every Signal at once, group by group from Python lists (a numpy scalar per field is slow)."""
        labels = self._labels
        parts = [(g, g.points.tolist(), g.fired.tolist(), g.point_ptr.tolist(), g.fired_ptr.tolist(),
                  labels[g.first].tolist()) for g in self._groups]
        cache = self._cache
        for i, (gi, k) in enumerate(zip(self._gid.tolist(), self._local.tolist())):
            if i in cache:
                continue
            g, pts, fired, pp, fp, first_labels = parts[gi]
            a, b = pp[k], pp[k + 1]
            cache[i] = Signal(chart=g.chart, rule=g.rule, first=pts[a], last=pts[b - 1], points=tuple(pts[a:b]),
                              fired=tuple(fired[fp[k]:fp[k + 1]]), key=f"{g.chart}/{g.rule}/{first_labels[k]}",
                              description=g.description)

    def __eq__(self, other) -> bool:
        if isinstance(other, (tuple, list, SignalTable)):
            return len(self) == len(other) and all(a == b for a, b in zip(self, other))
        return NotImplemented

    def __repr__(self) -> str:
        return f"SignalTable({len(self)} signals)"

    def records(self) -> list[dict]:
        """Every signal as a plain dict (key, chart, rule, description, first, last, points, fired,
        subgroups), in table order, built group by group without making Signal objects: what the
        JSON report lists, at a few microseconds a signal."""
        labels = self._labels
        parts = []
        for g in self._groups:
            parts.append((g, g.points.tolist(), g.fired.tolist(), labels[g.points].tolist(), g.point_ptr.tolist(),
                          g.fired_ptr.tolist()))
        out = []
        for gi, k in zip(self._gid.tolist(), self._local.tolist()):
            g, pts, fired, labs, pp, fp = parts[gi]
            a, b = pp[k], pp[k + 1]
            out.append({"key": f"{g.chart}/{g.rule}/{labs[a]}", "chart": g.chart, "rule": g.rule,
                        "description": g.description, "first": pts[a], "last": pts[b - 1], "points": pts[a:b],
                        "fired": fired[fp[k]:fp[k + 1]], "subgroups": labs[a:b]})
        return out

    def between(self, lo: int, hi: int) -> list[int]:
        """Indices of the signals whose span meets positions lo..hi."""
        return np.flatnonzero((self.first <= hi) & (self.last >= lo)).tolist()
