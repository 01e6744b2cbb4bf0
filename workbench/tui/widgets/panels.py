"""The subgroup panel and the status bar of the bench (text built in O(streams), never O(series))."""
from __future__ import annotations

import numpy as np
from rich.text import Text
from textual.widget import Widget

from workbench.core.analysis import sigma_label
from workbench.core.report import fmt

from ..plotting import COLOUR, GLYPH, rgb, short
from ..session import Snapshot
from ..view import NORMAL, STATE_WORDS, safe

MAX_GLYPH, MIN_GLYPH = "▴", "▾"


def _limit_at(arr: np.ndarray, p: int) -> str:
    v = float(arr[p])
    return short(v) if np.isfinite(v) else "—"


def subgroup_text(snap: Snapshot, p: int) -> Text:
    """The selected subgroup: chart values with their limits, readings by stream, why excluded, notes."""
    a, ds, st = snap.analysis, snap.dataset, snap.state
    label = safe(ds.labels[p])
    t = Text(no_wrap=False)
    t.append(label, style="bold")
    t.append(f"  ({p + 1:,} of {ds.m:,})\n", style="dim")
    if ds.times is not None and ds.layout.time and ds.layout.time != ds.layout.subgroup:
        t.append(f"time {safe(str(ds.times[p])[:19].replace('T', ' '))}\n", style="dim")
    for c in a.charts:
        code = int(snap.marks.codes[c.name][p])
        t.append(f"{c.name:<5}")
        t.append(f"{fmt(c.values[p]):>10}", style="bold")
        t.append(f" {GLYPH[code]}" if code != NORMAL else "  ", style=f"bold {rgb(COLOUR[code])}")
        t.append(f"  {_limit_at(c.lcl, p)} … {_limit_at(c.ucl, p)}\n", style="dim")
    row = snap.marks.row_at(p)
    if row is not None:
        r = snap.marks.rows[row]
        t.append(f"signal  {r.chart} {r.rule} — {r.words} ({STATE_WORDS.get(r.state, r.state)})\n")
    info = st.exclusion_info.get(str(ds.labels[p]))
    if info is not None:
        t.append("excluded: ", style="bold")
        t.append(safe(info.reason))
        t.append(f" · {safe(info.cause) if info.cause else 'no cause category'} · {safe(info.author)}\n",
                 style="dim")
    if ds.values is not None:
        _readings(t, snap, p)
    for note in st.notes:
        if note.target == str(ds.labels[p]) or note.target.startswith(str(ds.labels[p]) + ":"):
            t.append("note: ", style="bold")
            t.append(safe(note.text))
            t.append(f" · {safe(note.author)}\n", style="dim")
    return t


def _readings(t: Text, snap: Snapshot, p: int) -> None:
    ds, a, st = snap.dataset, snap.analysis, snap.state
    row = ds.values[p]
    cells = a.excluded_cells[p] if a.excluded_cells is not None else np.zeros(ds.k, bool)
    live = np.isfinite(row) & ~(cells & ~a.excluded_subgroups[p])
    hi = lo = None
    if live.sum() >= 2:
        vals = np.where(live, row, np.nan)
        hi, lo = int(np.nanargmax(vals)), int(np.nanargmin(vals))
    mean = float(np.mean(row[live])) if live.any() else float("nan")
    width = max([len(safe(s)) for s in ds.streams] + [6])
    t.append(f"{'stream':<{width}} {'reading':>10} {'− mean':>9}\n", style="dim underline")
    for j, name in enumerate(ds.streams):
        mark = "  "
        if j == hi:
            mark = MAX_GLYPH + " "
        elif j == lo:
            mark = MIN_GLYPH + " "
        t.append(f"{safe(name):<{width}} ")
        t.append(f"{fmt(row[j]):>10}", style="bold" if j in (hi, lo) else "")
        dev = row[j] - mean if live[j] else float("nan")
        t.append(f" {('+' if dev > 0 else '') + fmt(dev, 3) if np.isfinite(dev) else '':>9} ")
        t.append(mark, style="bold")
        if j == hi:
            t.append("max", style="dim")
        elif j == lo:
            t.append("min", style="dim")
        if cells[j] and not a.excluded_subgroups[p]:
            info = st.exclusion_info.get(f"{ds.labels[p]}:{name}")
            t.append(" excluded" + (f": {safe(info.reason)}" if info else ""), style="italic")
        t.append("\n")
    if hi is not None:
        t.append(f"range {fmt(row[hi] - row[lo])}: set by {safe(ds.streams[hi])} ({MAX_GLYPH}) and "
                 f"{safe(ds.streams[lo])} ({MIN_GLYPH})\n", style="dim")


class TextPanel(Widget):
    """Shows one rich Text; a new text repaints the panel without a new layout."""

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.text = Text()

    def set_text(self, text: Text) -> None:
        self.text = text
        self.refresh()

    def render(self) -> Text:
        return self.text


class SubgroupPanel(TextPanel, can_focus=False):
    """The selected subgroup's readings by stream."""

    def show(self, snap: Snapshot, p: int) -> None:
        self.set_text(subgroup_text(snap, p))


def status_text(snap: Snapshot, p: int, saving: bool, busy: str = "") -> Text:
    """Chart kind, sigma and method, limits, counts, case file name and saved state."""
    a, mk = snap.analysis, snap.marks
    t = Text(no_wrap=False, overflow="fold")
    t.append(f" {a.chart} ", style="bold reverse")
    t.append(f" σ {short(a.sigma_within)} ({sigma_label(a)})")
    for c in a.charts:
        lim = [c.lcl[p], c.center[p], c.ucl[p]]
        t.append(f" │ {c.name} " + " / ".join(short(float(v)) if np.isfinite(v) else "—" for v in lim),
                 style="")
    t.append(" │ ")
    t.append(f"open {mk.open_count}", style=f"bold {rgb(COLOUR[1])}" if mk.open_count else "")
    t.append(f" · explained {mk.explained_count} · no cause {mk.no_cause_count} · excluded {mk.excluded_count}")
    if a.phase2_start is not None or snap.state.frozen is not None:
        t.append(" │ ")
        t.append("frozen", style="bold reverse")
        if a.phase2_start is not None:
            t.append(f" Phase II from {safe(a.dataset.labels[a.phase2_start])}")
    t.append(f" │ subgroup {p + 1:,}/{a.dataset.m:,}")
    t.append(f" │ {safe(snap.case_name)} ")
    if snap.readonly:
        t.append("read-only", style="bold reverse")
    elif saving:
        t.append("saving…", style="italic")
    else:
        t.append("saved", style="dim")
    if busy:
        t.append(f" │ {busy}", style="italic")
    return t
