"""Filters of the signals list and "go to": pure helpers (no Textual), cheap enough for a keypress.

A filter keeps the signals of one chart, rule, state and driving stream (any combination); the
driving stream of a signal is the breakdown's driver at the point where it fired, computed once
per analysis in a worker.  "Go to" turns what the user typed into a subgroup position: a label,
a 1-based position, or a date/time (the first subgroup at or after it), and searches the notes
and reasons of the case.
"""
from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Any

import numpy as np

from workbench.core.model import Dataset

STATE_CHOICES = ("open", "explained", "no-cause-found", "excluded")


@dataclass(frozen=True)
class SignalFilter:
    """What the signals list keeps (None: any)."""

    chart: str | None = None
    rule: str | None = None
    state: str | None = None
    stream: str | None = None
    """Driving stream (the breakdown's driver where the signal fired)."""

    @property
    def active(self) -> bool:
        return any(getattr(self, f.name) is not None for f in fields(self))

    def words(self) -> str:
        """``chart xbar · rule zone-a · open · driven by H4`` (empty when nothing is filtered)."""
        parts = []
        if self.chart:
            parts.append(f"chart {self.chart}")
        if self.rule:
            parts.append(f"rule {self.rule}")
        if self.state:
            parts.append(self.state.replace("-", " "))
        if self.stream:
            parts.append(f"driven by {self.stream}")
        return " · ".join(parts)


def filter_rows(rows, f: SignalFilter, drivers: dict[int, str | None] | None = None) -> np.ndarray:
    """Indices of the rows ``f`` keeps (all rows when it is not active); ``drivers``: anchor → stream."""
    if not f.active:
        return np.arange(len(rows), dtype=np.int64)
    keep = []
    for i, r in enumerate(rows):
        if f.chart is not None and r.chart != f.chart:
            continue
        if f.rule is not None and r.rule != f.rule:
            continue
        if f.state is not None and r.state != f.state:
            continue
        if f.stream is not None and (drivers is None or drivers.get(r.anchor) != f.stream):
            continue
        keep.append(i)
    return np.asarray(keep, dtype=np.int64)


def drivers_for(analysis: Any, anchors) -> dict[int, str | None]:
    """The breakdown's driving stream at each anchor position (slow for many signals: run it in a worker)."""
    from workbench.core.streams import breakdown
    out: dict[int, str | None] = {}
    for p in sorted({int(a) for a in anchors if a >= 0}):
        try:
            out[p] = breakdown(analysis, p).driver
        except Exception:  # no breakdown at this point (summary data, a missing reading): no driver
            out[p] = None
    return out


def goto_position(ds: Dataset, text: str) -> int | None:
    """The subgroup ``text`` names: a label, a 1-based position, or a date/time (the first subgroup at or
    after it); None when it names none."""
    text = text.strip()
    if not text:
        return None
    found = ds._label_index().get(text)
    if found is not None:
        return found
    if text.isdigit():
        n = int(text)
        return n - 1 if 1 <= n <= ds.m else None
    return _at_time(ds, text)


def _at_time(ds: Dataset, text: str) -> int | None:
    import pandas as pd
    try:
        when = pd.Timestamp(text)
    except (ValueError, TypeError):
        return None
    if ds.times is not None:
        times = pd.DatetimeIndex(pd.to_datetime(ds.times, errors="coerce"))
    else:
        times = pd.DatetimeIndex(pd.to_datetime(pd.Series(ds.labels.astype(str)), errors="coerce"))
    if when.tzinfo is not None and times.tz is None:
        when = when.tz_localize(None)
    ok = ~times.isna()
    if not ok.any():
        return None
    later = np.flatnonzero(ok & (times >= when))
    return int(later[0]) if later.size else None


@dataclass(frozen=True)
class Found:
    """A note or reason that matches a search."""

    position: int
    """Subgroup to go to (-1 when the text is on the case or a signal no longer found)."""
    words: str


def search_notes(state: Any, ds: Dataset, marks: Any, text: str) -> list[Found]:
    """Notes, exclusion reasons and mark notes that contain ``text`` (case-insensitive), in trail order."""
    needle = text.strip().lower()
    if not needle:
        return []
    index = ds._label_index()
    anchors = {r.key: r.anchor for r in marks.rows}
    out: list[tuple[int, Found]] = []

    def where(target: str) -> int:
        found = index.get(target.split("..")[0]) if target else None
        if found is None and ":" in target:
            found = index.get(target.rsplit(":", 1)[0])
        return found if found is not None else anchors.get(target, -1)

    for n in state.notes:
        if needle in n.text.lower():
            out.append((n.seq, Found(where(n.target), f"note on {n.kind} {n.target}: {n.text}".replace("  ", " "))))
    for key, info in state.exclusion_info.items():
        if needle in info.reason.lower():
            out.append((info.seq, Found(where(key), f"excluded {key}: {info.reason}")))
    for key, mark in state.signal_states.items():
        if mark.note and needle in mark.note.lower():
            out.append((mark.seq, Found(anchors.get(key, -1), f"{key} {mark.state}: {mark.note}")))
    out.sort(key=lambda t: t[0])
    return [f for _seq, f in out]
