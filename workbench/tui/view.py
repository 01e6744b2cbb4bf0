"""Pure view helpers: point classes, signal look-ups, limit summaries (no Textual, no statistics).

Everything here is computed once per analysis (O(series), in a worker) or per keypress in
O(log n) / O(visible) so that moving the cursor never touches the whole series.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import numpy as np

from workbench.core.case.answers import STATE_WORDS  # the same words in every view
from workbench.core.case.events import printable
from workbench.core.model import Analysis, Signal
from workbench.core.text import change_texts, fmt

NORMAL, OPEN, REVIEWED, EXCLUDED = 0, 1, 2, 3
"""Point classes drawn with their own glyphs: in control, open signal, explained or no cause found,
left out of the limits."""




def safe(text: Any) -> str:
    """Data text for display: control characters and escape sequences shown literally."""
    return printable(str(text))


@dataclass(frozen=True)
class SignalRow:
    """One line of the signals list."""

    key: str
    chart: str
    rule: str
    words: str
    """The rule in words."""
    first: int
    """First position (-1 when the signal no longer exists: it was answered by an exclusion)."""
    last: int
    anchor: int
    """Where the cursor goes for this signal (the point where the rule fired; for a signal answered
    by an exclusion, its first subgroup; -1 when unknown)."""
    span: str
    """Subgroup label(s) in words."""
    label: str
    """Label of the first subgroup (display text)."""
    length: int
    """Subgroups from first to last (0 for a signal that no longer exists)."""
    state: str
    """open | explained | no-cause-found | excluded."""
    status: str = ""
    """The state in words (``explained 1 of 4 firing points — 3 new`` for a run that grew); empty: ``state``."""
    short: str = ""
    """The state for the list's column (``open · 3 new``); empty: ``state`` in words."""
    began: str = ""
    """Where a sustained shift most likely began, short (``began 2026-03-03 08:00``); empty: no change point."""
    shape: str = ""
    """The shape id (``shift``, ``single``, …; :mod:`workbench.core.charts.shapes`); empty when unknown."""
    role: str = "location"
    """The role of the signal's chart (location or spread): the cause families differ."""


@dataclass(frozen=True, eq=False)
class Marks:
    """Point classes, signal states and counts of one analysis under one case state."""

    codes: dict[str, np.ndarray]
    """Chart name -> uint8 class per subgroup (NORMAL, OPEN, REVIEWED, EXCLUDED)."""
    rows: tuple[SignalRow, ...]
    """Signals list: current signals by first firing point, then chart, then rule — the order of n / N
    and of the list — then those answered by an exclusion."""
    current: int
    """Number of rows that are current signals (the first ``current`` rows)."""
    anchors: np.ndarray
    """Anchor (first firing point) of each current row, in list order (sorted)."""
    open_mask: np.ndarray
    """Per current row: the signal is open."""
    by_first: np.ndarray
    """Current row indices ordered by first position (to find the rows covering a position)."""
    firsts: np.ndarray
    """First position of each entry of ``by_first`` (sorted)."""
    lasts_max: np.ndarray
    """Running maximum of the last positions along ``by_first``."""
    open_count: int
    explained_count: int
    no_cause_count: int
    excluded_count: int
    """Exclusions in force (subgroups and readings)."""
    changes: dict[str, np.ndarray] | None = None
    """Chart name -> sorted positions where a current signal's sustained shift most likely began."""

    def row_at(self, position: int) -> int | None:
        """The current row for ``position``: the first row (in list order) whose rule first fired there,
        else the latest-starting row covering it, else None."""
        i = int(np.searchsorted(self.anchors, position, side="left"))
        if i < self.current and self.anchors[i] == position:
            return i
        j = int(np.searchsorted(self.firsts, position, side="right")) - 1
        while j >= 0 and self.lasts_max[j] >= position:
            r = self.rows[int(self.by_first[j])]
            if r.first <= position <= r.last:
                return int(self.by_first[j])
            j -= 1
        return None

    def next_open(self, position: int, step: int, selected: int | None = None) -> int | None:
        """The next (step 1) or previous (step -1) open row in the list's order.

        From the selected row, when the cursor stands on its anchor, the open rows after (before) it, so
        that signals firing first at the same subgroup are all visited; else the first open row anchored
        after ``position`` (the last anchored before it).  Never skips a row."""
        n = self.current
        if selected is not None and 0 <= selected < n and self.anchors[selected] == position:
            start = selected + step
        elif step > 0:
            start = int(np.searchsorted(self.anchors, position, side="right"))
        else:
            start = int(np.searchsorted(self.anchors, position, side="left")) - 1
        if step > 0:
            hits = np.flatnonzero(self.open_mask[start:]) if start < n else np.empty(0, np.int64)
            return int(start + hits[0]) if hits.size else None
        if start < 0:
            return None
        hits = np.flatnonzero(self.open_mask[:start + 1])
        return int(hits[-1]) if hits.size else None


def _span(labels: np.ndarray, s: Signal) -> str:
    if s.first == s.last:
        return safe(labels[s.first])
    return f"{safe(labels[s.first])} … {safe(labels[s.last])}"


_KEY = re.compile(r"^(?P<chart>[^/]+)/(?P<rule>[^/]+)/(?P<label>.*)$")


def marks_for(a: Analysis, state: Any) -> Marks:
    """Point classes and the signals list for an analysis under a case state (O(series)).

    A signal's state comes from the answers given to its firing points
    (:mod:`workbench.core.case.answers`), so a run that grew is open until its new points are answered."""
    from workbench.core.case.answers import STATE_WORDS as WORDS, split_key, statuses
    labels = a.dataset.labels
    codes: dict[str, np.ndarray] = {}
    for c in a.charts:
        codes[c.name] = np.zeros(a.dataset.m, np.uint8)
    now = statuses(a, state) if state is not None else {}
    rows: list[SignalRow] = []
    counts = {"open": 0, "explained": 0, "no-cause-found": 0, "excluded": 0}
    reviewed: list[Signal] = []
    opened: list[Signal] = []
    from workbench.core.charts.changepoint import signal_shapes
    shapes = signal_shapes(a)
    shape_ids, spread, change = shapes.shape.tolist(), shapes.role.tolist(), shapes.index.tolist()
    from workbench.core.charts.shapes import SHAPES
    ids = list(SHAPES)
    began: dict[str, set[int]] = {}
    for i, s in enumerate(a.signals):
        status = now.get(s.key)
        st = status.state if status is not None else "open"
        counts[st] = counts.get(st, 0) + 1
        anchor = s.fired[0] if s.fired else s.first
        where = change[i]
        if where >= 0:
            began.setdefault(s.chart, set()).add(where)
        rows.append(SignalRow(s.key, s.chart, s.rule, s.description, s.first, s.last, anchor, _span(labels, s),
                              safe(labels[s.first]), s.last - s.first + 1, st,
                              status.words() if status is not None else "",
                              status.short_words() if status is not None else "",
                              f"began {safe(labels[where])}" if where >= 0 else "", ids[shape_ids[i]],
                              "spread" if spread[i] else "location"))
        (opened if st == "open" else reviewed).append(s)
    rows.sort(key=lambda r: (r.anchor, r.chart, r.rule))
    for s in reviewed:
        if s.chart in codes:
            codes[s.chart][list(s.points)] = REVIEWED
    for s in opened:
        if s.chart in codes:
            codes[s.chart][list(s.points)] = OPEN
    for c in a.charts:
        codes[c.name][np.asarray(c.excluded, bool)] = EXCLUDED
    current = len(rows)
    live = {r.key for r in rows}
    if state is not None:
        from workbench.core.charts.rules import resolve
        words = {rid: resolve("nelson").rule(rid).words for rid in resolve("nelson").ids}
        for ex_key, info in state.exclusion_info.items():
            keys = [k for k, _ in info.answers] if info.answers is not None else [info.signal, *info.signals]
            for key in keys:
                if not key or key in live:
                    continue
                live.add(key)
                chart, rule, label = split_key(key)
                try:
                    where = a.dataset.index_of(label)
                except Exception:  # the label is not in these data (e.g. a changed file)
                    where = a.dataset._label_index().get(ex_key.split(":")[0]) or -1
                rows.append(SignalRow(key, chart or "?", rule, words.get(rule, rule), -1, -1, where, safe(label),
                                      safe(label), 0, "excluded", WORDS["excluded"], WORDS["excluded"]))
    anchors = np.array([r.anchor for r in rows[:current]], dtype=np.int64)
    firsts = np.array([r.first for r in rows[:current]], dtype=np.int64)
    lasts = np.array([r.last for r in rows[:current]], dtype=np.int64)
    by_first = np.argsort(firsts, kind="stable")
    return Marks(
        codes=codes, rows=tuple(rows), current=current, anchors=anchors,
        open_mask=np.array([r.state == "open" for r in rows[:current]], dtype=bool),
        by_first=by_first, firsts=firsts[by_first],
        lasts_max=np.maximum.accumulate(lasts[by_first]) if lasts.size else lasts,
        open_count=counts["open"], explained_count=counts["explained"],
        no_cause_count=counts["no-cause-found"],
        excluded_count=len(state.exclusions) if state is not None else int(a.excluded_subgroups.sum()),
        changes={k: np.array(sorted(v), dtype=np.int64) for k, v in began.items()})


# ---- limits in words ------------------------------------------------------------------------

_NAMES = (("center", "centre"), ("lcl", "LCL"), ("ucl", "UCL"))


def limits_line(name: str, lim: dict) -> str:
    return f"{name}: " + ", ".join(f"{word} {fmt(lim.get(k))}" for k, word in _NAMES if lim.get(k) is not None)


def limits_change(before: dict, after: dict) -> list[str]:
    """``xbar: UCL 501.2 → 501.0, centre …`` for every limit of every chart (limits snapshots);
    a chart whose limits did not move is one short line."""
    out, moved = [], False
    b, a = before.get("charts", {}), after.get("charts", {})
    for name in list(a) + [n for n in b if n not in a]:
        lb, la = b.get(name, {}), a.get(name, {})
        parts, same = [], True
        for k, word in (("ucl", "UCL"), ("center", "centre"), ("lcl", "LCL")):
            vb, va = lb.get(k), la.get(k)
            if vb is None and va is None:
                continue
            unchanged = vb == va
            same = same and unchanged
            tb, ta = change_texts(vb, va)
            parts.append(f"{word} {tb} → {ta}" + (" (same)" if unchanged else ""))
        moved = moved or not same
        out.append(f"{name}: " + ("limits unchanged" if same else ", ".join(parts)))
    if before.get("sigma") != after.get("sigma"):
        tb, ta = change_texts(before.get("sigma"), after.get("sigma"))
        out.append(f"sigma: {tb} → {ta}")
        moved = True
    return out if moved else ["the limits did not change"]
