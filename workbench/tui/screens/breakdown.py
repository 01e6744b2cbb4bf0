"""The breakdown of one subgroup: each stream against the subgroup and against its own history."""
from __future__ import annotations

import numpy as np
from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.message import Message
from textual.containers import Horizontal, VerticalScroll
from textual.screen import Screen
from textual.widgets import DataTable, Static
from textual_plotext import PlotextPlot

from workbench.core.model import Breakdown
from workbench.core.text import fmt, reading

from workbench.tui.messages import Computed
from workbench.tui.session import Snapshot
from workbench.tui.view import STATE_WORDS, safe
from workbench.tui.widgets.comparison import comparison_text
from workbench.tui.widgets.neighbourhood import NEIGHBOURS, neighbourhood_text
from workbench.tui.widgets.keybar import KeyBar

WRITES = {"exclude", "exclude_reading", "restore", "note", "mark"}
COLUMNS = ("stream", "reading", "− mean", "stream mean", "stream SD", "z (own)", "role", "share of R", "excluded")


class StreamPlot(PlotextPlot):
    """The readings of every stream around the subgroup (a picture built in a worker)."""

    def __init__(self, **kw) -> None:
        super().__init__(**kw)
        self.picture: Text | None = None

    def render(self) -> Text:
        return self.picture if self.picture is not None else Text("drawing…", style="dim")

    def on_resize(self) -> None:
        self.post_message(StreamPlot.Resized())

    class Resized(Message):
        """The plot changed size."""


class BreakdownScreen(Screen):
    """Per-stream view of the subgroup at ``position``."""

    BINDINGS = [
        Binding("escape", "back", "Back", id="breakdown-back"),
        Binding("x", "exclude", "Exclude subgroup", id="breakdown-exclude"),
        Binding("X", "exclude_reading", "Exclude reading", id="breakdown-exclude-reading"),
        Binding("r", "restore", "Restore", id="breakdown-restore"),
        Binding("n", "signal(1)", "Next signal", id="breakdown-next-signal"),
        Binding("N", "signal(-1)", "Prev signal", id="breakdown-prev-signal", show=False),
        Binding("a", "note", "Note", id="breakdown-note"),
        Binding("e", "mark('explained')", "Explained", id="breakdown-explain"),
        Binding("c", "mark('no-cause-found')", "No cause", id="breakdown-no-cause"),
        Binding("o", "mark('open')", "Reopen", id="breakdown-reopen", show=False),
        Binding("C", "context", "What changed there", id="breakdown-context", show=False),
        Binding("right,l", "move(1)", "Next subgroup", id="breakdown-next", show=False),
        Binding("left,h", "move(-1)", "Previous subgroup", id="breakdown-prev", show=False),
    ]

    def __init__(self, position: int) -> None:
        super().__init__(id="breakdown")
        self.position = position
        self.snap: Snapshot | None = None
        self.result: Breakdown | None = None
        self.token = 0
        self._fresh = True

    def compose(self) -> ComposeResult:
        yield Static(id="bd-head", markup=False)
        yield DataTable(id="bd-table", cursor_type="row", zebra_stripes=True)
        yield Static(id="bd-verdict", markup=False)
        with Horizontal(id="bd-lower"):
            yield StreamPlot(id="bd-plot")
            with VerticalScroll(id="bd-compare"):
                yield Static("comparing the streams…", id="bd-compare-text", markup=False)
        yield KeyBar()

    def on_mount(self) -> None:
        table = self.query_one(DataTable)
        for c in COLUMNS:
            table.add_column(c, key=c)
        self.query_one("#bd-compare").border_title = "streams compared"
        self.query_one("#bd-plot").border_title = f"readings ±{NEIGHBOURS} subgroups"
        if self.app.snapshot is not None:
            self.show_snapshot(self.app.snapshot)
        table.focus()

    def show_snapshot(self, snap: Snapshot) -> None:
        first = self.snap is None
        self.snap = snap
        self.position = max(0, min(self.position, snap.dataset.m - 1))
        self.compute(fresh=first)
        self.compare(snap)

    # -- background work ------------------------------------------------------------------------

    def compute(self, fresh: bool = True) -> None:
        """Recompute the breakdown; ``fresh`` (a new subgroup) puts the table cursor on its driver."""
        if self.snap is None:
            return
        self._fresh = fresh
        self.token += 1
        self.query_one("#bd-head", Static).update(self._head())
        self._breakdown(self.token, self.snap, self.position)

    @work(thread=True, exclusive=True, group="breakdown", description="breakdown")
    def _breakdown(self, token: int, snap: Snapshot, p: int) -> None:
        from workbench.core.streams import breakdown
        try:
            readings = None
            if getattr(snap.dataset.source, "pushed", None) is not None:  # aggregated: one query for this subgroup
                from workbench.core.data.pushdown import readings_of
                readings = readings_of(snap.dataset, p)
            result = breakdown(snap.analysis, p, readings)
        except Exception as exc:  # shown, never raised into the UI
            self.post_message(Computed("breakdown", token, None, str(exc)))
            return
        self.post_message(Computed("breakdown", token, result))

    @work(thread=True, exclusive=True, group="compare", description="compare")
    def compare(self, snap: Snapshot) -> None:
        self.post_message(Computed("comparison", 0, comparison_text(snap.analysis)))

    def plot(self) -> None:
        if self.snap is None:
            return
        w = self.query_one(StreamPlot)
        row = self.query_one(DataTable).cursor_row
        self._plot(self.token, self.snap, self.position, row, w.size.width, w.size.height)

    @work(thread=True, exclusive=True, group="stream-plot", description="stream-plot")
    def _plot(self, token: int, snap: Snapshot, p: int, row: int, width: int, height: int) -> None:
        try:
            picture = neighbourhood_text(snap.dataset, p, row, width, height)
        except Exception as exc:  # shown in place of the chart
            picture = Text(f"cannot draw the readings: {type(exc).__name__}: {exc}")
        self.post_message(Computed("plot", token, (picture, (width, height))))

    @on(Computed)
    def computed(self, msg: Computed) -> None:
        if msg.what == "comparison":
            self.query_one("#bd-compare-text", Static).update(msg.result)
            return
        if msg.token != self.token:
            return
        if msg.what == "plot":
            plot = self.query_one(StreamPlot)
            picture, size = msg.result
            if size != (plot.size.width, plot.size.height):
                self.plot()  # resized while it was drawn
                return
            plot.picture = picture
            plot.refresh()
        elif msg.what == "breakdown":
            self.result = msg.result
            self._fill(msg.result, msg.error)
            self.plot()

    # -- filling the views ----------------------------------------------------------------------

    def _head(self) -> Text:
        snap, p = self.snap, self.position
        t = Text()
        t.append(f"Breakdown — subgroup {safe(snap.dataset.labels[p])}", style="bold")
        t.append(f"  ({p + 1:,} of {snap.dataset.m:,})  ", style="dim")
        for c in snap.analysis.charts:
            t.append(f"{c.name} {fmt(c.values[p])}  ")
        row = snap.marks.row_at(p)
        if row is not None:
            r = snap.marks.rows[row]
            t.append(f"\nsignal: {r.chart} {r.rule} — {r.words} ({STATE_WORDS.get(r.state, r.state)})")
        from workbench.tui.context_view import breakdown_lines
        r = snap.marks.rows[row] if row is not None else None
        t.append_text(breakdown_lines(snap.analysis, p, r.key if r else None, r.first if r else None))
        if snap.analysis.excluded_subgroups[p]:
            info = snap.state.exclusion_info.get(str(snap.dataset.labels[p]))
            t.append("\nexcluded from the limits" + (f": {safe(info.reason)}" if info else ""), style="italic")
        return t

    def _fill(self, bd: Breakdown | None, error: str | None) -> None:
        table = self.query_one(DataTable)
        keep = table.cursor_row
        table.clear()
        verdict = self.query_one("#bd-verdict", Static)
        if bd is None:
            verdict.update(Text(f"no breakdown: {error}", style="bold"))
            return
        for r in bd.rows:
            z = fmt(r.z)
            share = f"{100 * r.range_share:.0f}%" if r.role else ""
            name = Text(safe(r.stream), style="bold" if r.stream == bd.driver else "")
            dev = fmt(r.deviation)
            table.add_row(name, reading(r.reading), ("+" + dev) if np.isfinite(r.deviation) and r.deviation > 0 else dev, fmt(r.stream_mean), fmt(r.stream_sd),
                          Text(z, style="bold" if np.isfinite(r.z) and abs(r.z) >= 2 else ""), r.role, share,
                          "yes" if r.excluded else "", key=r.stream)
        if bd.rows:
            if self._fresh and bd.driver is not None:
                keep = next(i for i, r in enumerate(bd.rows) if r.stream == bd.driver)
            table.move_cursor(row=min(max(keep, 0), len(bd.rows) - 1))
        self._fresh = False
        t = Text()
        t.append("Verdict: ", style="bold")
        t.append(safe(bd.verdict))
        if bd.driver:
            t.append(f"   (driver: {safe(bd.driver)})", style="dim")
        verdict.update(t)

    @on(DataTable.RowHighlighted)
    def row_moved(self) -> None:
        self.plot()
        self.refresh_bindings()

    def on_resize(self) -> None:
        self.call_after_refresh(self.plot)

    def on_stream_plot_resized(self) -> None:
        self.plot()

    # -- actions ------------------------------------------------------------------------------

    def _stream(self) -> str | None:
        bd = self.result
        row = self.query_one(DataTable).cursor_row
        if bd is None or not bd.rows or not 0 <= row < len(bd.rows):
            return None
        return bd.rows[row].stream

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        snap = self.snap
        if snap is None:
            return None if action != "back" else True
        if action in WRITES and (snap.readonly or self.app.busy):
            return None
        a, p = snap.analysis, self.position
        if action == "exclude":
            return None if a.excluded_subgroups[p] else True
        if action == "exclude_reading":
            s = self._stream()
            if s is None or a.excluded_subgroups[p] or snap.dataset.k < 2:
                return None
            return None if a.excluded_cells[p, snap.dataset.stream_index(s)] else True
        if action == "restore":
            cells = a.excluded_cells
            return True if a.excluded_subgroups[p] or (cells is not None and cells[p].any()) else None
        return True

    def action_back(self) -> None:
        bench = self.app.bench()
        if bench is not None:
            bench.move_to(self.position)
        self.app.pop_screen()

    def action_move(self, step: int) -> None:
        if self.snap is not None:
            self.position = max(0, min(self.position + step, self.snap.dataset.m - 1))
            self.compute()

    def action_signal(self, step: int) -> None:
        if self.snap is None:
            return
        row = self.snap.marks.next_open(self.position, step)
        if row is None:
            self.notify("No open signal that way.", timeout=3)
            return
        self.position = self.snap.marks.rows[row].anchor
        self.compute()

    def action_exclude(self) -> None:
        self.app.exclude_flow(self.position)

    def action_exclude_reading(self) -> None:
        self.app.exclude_flow(self.position, stream=self._stream())

    def action_note(self) -> None:
        self.app.note_flow(str(self.snap.dataset.labels[self.position]))

    def action_mark(self, state: str) -> None:
        """Answer the signal of this subgroup where you stand."""
        snap, p = self.snap, self.position
        row = snap.marks.row_at(p)
        self.app.mark_flow(snap.marks.rows[row].key if row is not None else None, state)

    def action_context(self) -> None:
        """What changed there: the signal at this subgroup, else the subgroup."""
        from workbench.tui.screens.context import ContextScreen, Where
        snap, p = self.snap, self.position
        row = snap.marks.row_at(p)
        r = snap.marks.rows[row] if row is not None else None
        where = Where(r.first, r.last, f"{r.chart} {r.rule}", r.key) if r is not None and r.first >= 0 else Where(p, p)
        self.app.push_screen(ContextScreen(where))

    def action_restore(self) -> None:
        self.app.restore_flow(self.position, stream=self._stream())
