"""Pure view helpers: point classes, signal look-ups, limit summaries (no Textual, no statistics).

Everything here is computed once per analysis (O(series), in a worker) or per keypress in
O(log n) / O(visible) so that moving the cursor never touches the whole series.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import numpy as np

from workbench.core.case.events import printable
from workbench.core.model import Analysis, Signal
from workbench.core.text import change_texts, fmt

NORMAL, OPEN, REVIEWED, EXCLUDED = 0, 1, 2, 3
"""Point classes drawn with their own glyphs: in control, open signal, explained or no cause found,
left out of the limits."""

STATE_WORDS = {"open": "open", "explained": "explained", "no-cause-found": "no cause found",
               "excluded": "excluded"}


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


@dataclass(frozen=True, eq=False)
class Marks:
    """Point classes, signal states and counts of one analysis under one case state."""

    codes: dict[str, np.ndarray]
    """Chart name -> uint8 class per subgroup (NORMAL, OPEN, REVIEWED, EXCLUDED)."""
    rows: tuple[SignalRow, ...]
    """Signals list: current signals by position, then those answered by an exclusion."""
    current: int
    """Number of rows that are current signals (the first ``current`` rows)."""
    firsts: np.ndarray
    """First position of each current row (sorted)."""
    lasts_max: np.ndarray
    """Running maximum of the last positions (to find the signals that cover a position)."""
    open_anchors: np.ndarray
    """Sorted anchor positions of open signals."""
    open_rows: np.ndarray
    """Row index of each entry of ``open_anchors``."""
    open_count: int
    explained_count: int
    no_cause_count: int
    excluded_count: int
    """Exclusions in force (subgroups and readings)."""

    def row_at(self, position: int) -> int | None:
        """The current signal row covering ``position`` (the latest-starting one), or None."""
        i = int(np.searchsorted(self.firsts, position, side="right")) - 1
        while i >= 0 and self.lasts_max[i] >= position:
            r = self.rows[i]
            if r.first <= position <= r.last:
                return i
            i -= 1
        return None

    def next_open(self, position: int, step: int) -> int | None:
        """Row of the next (step 1) or previous (step -1) open signal after / before ``position``."""
        a = self.open_anchors
        if a.size == 0:
            return None
        if step > 0:
            i = int(np.searchsorted(a, position, side="right"))
            return int(self.open_rows[i]) if i < a.size else None
        i = int(np.searchsorted(a, position, side="left")) - 1
        return int(self.open_rows[i]) if i >= 0 else None


def _span(labels: np.ndarray, s: Signal) -> str:
    if s.first == s.last:
        return safe(labels[s.first])
    return f"{safe(labels[s.first])} … {safe(labels[s.last])}"


_KEY = re.compile(r"^(?P<chart>[^/]+)/(?P<rule>[^/]+)/(?P<label>.*)$")


def marks_for(a: Analysis, state: Any) -> Marks:
    """Point classes and the signals list for an analysis under a case state (O(series))."""
    labels = a.dataset.labels
    codes: dict[str, np.ndarray] = {}
    for c in a.charts:
        codes[c.name] = np.zeros(a.dataset.m, np.uint8)
    rows: list[SignalRow] = []
    counts = {"open": 0, "explained": 0, "no-cause-found": 0, "excluded": 0}
    reviewed: list[Signal] = []
    opened: list[Signal] = []
    for s in a.signals:
        st = state.signal_state(s.key) if state is not None else "open"
        counts[st] = counts.get(st, 0) + 1
        anchor = s.fired[0] if s.fired else s.first
        rows.append(SignalRow(s.key, s.chart, s.rule, s.description, s.first, s.last, anchor, _span(labels, s),
                              safe(labels[s.first]), s.last - s.first + 1, st))
        (opened if st == "open" else reviewed).append(s)
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
        for info in state.exclusion_info.values():
            key = info.signal
            if not key or key in live:
                continue
            live.add(key)
            m = _KEY.match(key)
            chart, rule, label = (m["chart"], m["rule"], m["label"]) if m else ("?", key, "")
            try:
                where = a.dataset.index_of(label)
            except Exception:  # the label is not in these data (e.g. a changed file)
                where = -1
            rows.append(SignalRow(key, chart, rule, words.get(rule, rule), -1, -1, where, safe(label), safe(label), 0,
                                  "excluded"))
    firsts = np.array([r.first for r in rows[:current]], dtype=np.int64)
    lasts = np.array([r.last for r in rows[:current]], dtype=np.int64)
    open_idx = [i for i, r in enumerate(rows[:current]) if r.state == "open"]
    anchors = np.array([rows[i].anchor for i in open_idx], dtype=np.int64)
    order = np.argsort(anchors, kind="stable")
    return Marks(
        codes=codes, rows=tuple(rows), current=current, firsts=firsts,
        lasts_max=np.maximum.accumulate(lasts) if lasts.size else lasts,
        open_anchors=anchors[order], open_rows=np.array(open_idx, dtype=np.int64)[order],
        open_count=counts["open"], explained_count=counts["explained"],
        no_cause_count=counts["no-cause-found"],
        excluded_count=len(state.exclusions) if state is not None else int(a.excluded_subgroups.sum()))


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
