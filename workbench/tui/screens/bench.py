"""The bench: location chart over spread chart, the signals list, the subgroup panel, the status bar.

Moving the cursor costs O(streams + log signals): the charts only restyle their cursor column,
and a new picture is built in a worker only when the window of subgroups changes.
"""
from __future__ import annotations

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import Screen
from textual.widgets import Static

from workbench.tui.filters import SignalFilter
from workbench.tui.plotting import legend_text
from workbench.tui.session import Snapshot
from workbench.tui.view import safe
from workbench.tui.widgets.control_chart import ControlChart
from workbench.tui.widgets.keybar import KeyBar
from workbench.tui.widgets.lines import LinesPanel
from workbench.tui.widgets.panels import SubgroupPanel, status_lines
from workbench.tui.widgets.signal_list import SignalList
from workbench.tui.window import Window, follow, window_at
from workbench.tui.screens.bench_charts import MIN_WINDOW, BenchCharts
from workbench.tui.screens.bench_tools import BenchTools

WRITES = {"exclude", "restore", "note", "explain", "no_cause", "reopen", "freeze", "setup", "retract", "mark_all"}


class BenchScreen(BenchTools, BenchCharts, Screen):
    """The main screen of a case."""

    BINDINGS = [
        Binding("right,l", "move(1)", "Next subgroup", id="cursor-right", show=False),
        Binding("left,h", "move(-1)", "Previous subgroup", id="cursor-left", show=False),
        Binding("home", "first", "First subgroup", id="cursor-first", show=False),
        Binding("end", "last", "Last subgroup", id="cursor-last", show=False),
        Binding("n", "next_signal", "Next signal", id="next-signal"),
        Binding("N", "prev_signal", "Prev signal", id="prev-signal", show=False),
        Binding("down,j", "step_signal(1)", "Next signal in list", id="list-down", show=False),
        Binding("up,k", "step_signal(-1)", "Previous signal in list", id="list-up", show=False),
        Binding("plus,equals_sign", "zoom(0.5)", "Zoom in", id="zoom-in", show=False),
        Binding("minus", "zoom(2)", "Zoom out", id="zoom-out", show=False),
        Binding("0", "whole", "Whole series", id="zoom-whole", show=False),
        Binding("greater_than_sign,pagedown", "pan(1)", "Pan right", id="pan-right", show=False),
        Binding("less_than_sign,pageup", "pan(-1)", "Pan left", id="pan-left", show=False),
        Binding("enter,b", "breakdown", "Breakdown", id="breakdown"),
        Binding("x", "exclude", "Exclude", id="exclude"),
        Binding("r", "restore", "Restore", id="restore"),
        Binding("e", "explain", "Explained", id="explain"),
        Binding("c", "no_cause", "No cause", id="no-cause"),
        Binding("o", "reopen", "Reopen signal", id="reopen", show=False),
        Binding("a", "note", "Note", id="note"),
        Binding("L", "freeze", "Freeze/unfreeze limits", id="freeze", show=False),
        Binding("w", "watch", "Follow the data file (on/off)", id="watch", show=False),
        Binding("s", "setup", "Setup", id="setup"),
        Binding("f", "fit", "Fit", id="fit"),
        Binding("t", "trail", "Trail", id="trail"),
        Binding("v", "panels", "Hide/show panels", id="panels", show=False),
        Binding("g", "goto", "Go to a subgroup, position, time, or search notes", id="goto"),
        Binding("F", "filter", "Filter the signals", id="filter", show=False),
        Binding("S", "summary", "Signals against chance (summary)", id="summary", show=False),
        Binding("m", "streams", "Each stream on its own", id="streams", show=False),
        Binding("C", "context", "What changed there (context columns: the signal, range or subgroup)",
                id="what-changed", show=False),
        Binding("space", "range_mark", "Start / drop a range at the cursor", id="range-mark", show=False),
        Binding("shift+right", "range_step(1)", "Extend the range right", id="range-right", show=False),
        Binding("shift+left", "range_step(-1)", "Extend the range left", id="range-left", show=False),
        Binding("u", "retract", "Retract my last action", id="retract", show=False),
        Binding("M", "mark_all", "Mark every signal at the cursor or in the range", id="mark-all", show=False),
        Binding("escape", "back", "Back (drops the range, then the filter)", id="back", show=False),
    ]

    def __init__(self) -> None:
        super().__init__(id="bench")
        self.snap: Snapshot | None = None
        self.cursor = 0
        self.window: Window | None = None
        self.token = 0
        self.auto_window = True
        """One subgroup per plot column, refitted on resize, until the user zooms or pans."""
        self._enabled: tuple = ()
        self.filter = SignalFilter()
        """What the signals list keeps."""
        self.drivers: dict[int, str | None] | None = None
        """Driving stream at each signal's anchor (computed in a worker when a stream filter needs it)."""
        self.range_start: int | None = None
        """The other end of the selected range (the cursor is one end), or None."""

    def compose(self) -> ComposeResult:
        yield Static("", id="mapping-note", markup=False)
        with Horizontal(id="bench-body"):
            with Vertical(id="charts"):
                yield ControlChart(id="location")
                yield ControlChart(id="spread")
                yield Static(legend_text(), id="legend")
            with Vertical(id="side"):
                yield SignalList(id="signals")
                yield SubgroupPanel(id="subgroup")
        yield LinesPanel(id="status")
        yield KeyBar()

    def on_mount(self) -> None:
        self.mapping_seen = False
        """The line naming the column mapping was dismissed (escape)."""
        self.query_one("#signals").border_title = "signals"
        self.query_one("#subgroup").border_title = "subgroup"
        if self.app.snapshot is not None:
            self.show_snapshot(self.app.snapshot)

    # -- state from the app -------------------------------------------------------------------

    def show_snapshot(self, snap: Snapshot) -> None:
        self.snap = snap
        note = self.query_one("#mapping-note", Static)
        from workbench.core.report import describe_mapping
        words = describe_mapping(snap.analysis)
        if words != getattr(self, "_mapping_words", words):
            self.mapping_seen = False  # a new mapping (set in the setup) is news: the line shows again
        self._mapping_words = words
        if not getattr(self, "mapping_seen", False):
            note.update(f" columns {safe(words)} — s: setup · esc: hide this line")
        note.display = not getattr(self, "mapping_seen", False)
        m = snap.dataset.m
        if not getattr(self, "_view_applied", False):  # where the bench was looking when the case was last closed
            self._view_applied = True
            self._apply_view(getattr(self.app, "saved_view", None), snap)
        self.cursor = max(0, min(self.cursor, m - 1))
        if self.window is not None and self.window.stop > m:
            self.window = None
        spread = self.query_one("#spread", ControlChart)
        spread.display = snap.analysis.spread is not None
        self.drivers = None
        self._show_rows()
        self._update_cursor_views()
        self.request_charts()

    def _apply_view(self, view, snap: Snapshot) -> None:
        """Put back a saved view (cursor, zoom window, selected signal); labels no longer in the data are
        passed over and the default view is used for them."""
        if view is None:
            return
        ds = snap.dataset
        try:
            self.cursor = ds.index_of(view.cursor)
        except Exception:
            return
        self._newest_said = True  # the saved view, not the newest part of the series
        if view.window is not None:
            try:
                first, last = ds.index_of(view.window[0]), ds.index_of(view.window[1])
            except Exception:
                first = last = None
            if first is not None and first <= self.cursor <= last:
                self.window, self.auto_window = Window(first, last + 1), False
        if view.signal is not None:
            rows = snap.marks.rows[:snap.marks.current]
            self._row = next((i for i, r in enumerate(rows) if r.key == view.signal), None)

    def current_view(self):
        """The view to save when the workbench quits (None before anything is shown)."""
        from workbench.tui.viewstate import SavedView
        snap = self.snap
        if snap is None or snap.dataset.m == 0:
            return None
        labels = snap.dataset.labels
        win = None if self.window is None or self.auto_window else (str(labels[self.window.start]),
                                                                    str(labels[self.window.stop - 1]))
        row = getattr(self, "_row", None)
        key = snap.marks.rows[row].key if row is not None and 0 <= row < snap.marks.current else None
        return SavedView(str(labels[self.cursor]), win, key)

    def on_resize(self) -> None:
        self.app.call_after_refresh(self.app.check_size)
        self.set_class(self.size.width < 100, "narrow")
        self.set_class(self.size.height < 30, "short")
        self.set_class(self.size.width >= 150, "wide")
        self.call_after_refresh(self._after_resize)

    def _after_resize(self) -> None:
        legend = self.query_one("#legend", Static)
        legend.update(legend_text(legend.size.width or None))
        self.request_charts()
        self._update_cursor_views()

    # -- the cursor ---------------------------------------------------------------------------

    def move_to(self, position: int, jump: bool = False, row: int | None = None) -> None:
        """Put the cursor on ``position``; ``jump`` (to a signal) also scrolls the signals list to it;
        ``row`` selects that row of the list (several signals may first fire at one subgroup)."""
        snap = self.snap
        if snap is None:
            return
        m = snap.dataset.m
        self.cursor = max(0, min(int(position), m - 1))
        self._row = row
        win = follow(self.window, self.cursor, m) if self.window else None
        if win != self.window or self.range_start is not None:
            self.window = win
            self.request_charts()
        self._update_cursor_views(jump)

    def _update_cursor_views(self, jump: bool = True) -> None:
        """Every view of the cursor: the charts' column, the signals list, the subgroup panel."""
        if self.snap is None:
            return
        for w in self.query(ControlChart):
            w.set_cursor(self.cursor)
        self._update_side(jump)

    def _update_side(self, jump: bool) -> None:
        snap, p = self.snap, self.cursor
        if snap is None:
            return
        row = getattr(self, "_row", None)
        if row is None or not (0 <= row < snap.marks.current) or snap.marks.rows[row].anchor != p:
            row = snap.marks.row_at(p)
        self._row = row
        self.query_one(SignalList).select(row, scroll=jump)
        self.query_one(SubgroupPanel).show(snap, p)
        self.update_status()
        enabled = tuple(self.check_action(a, ()) for a in sorted(WRITES | {"next_signal", "prev_signal"}))
        if enabled != self._enabled:
            self._enabled = enabled
            self.refresh_bindings()

    def update_status(self, busy: str = "") -> None:
        if self.snap is not None:
            status = self.query_one("#status", LinesPanel)
            status.set_lines(status_lines(self.snap, self.cursor, self.app.busy, busy, status.size.width or 120,
                                          1 if self.has_class("wide") else 2, self.app.follow_label()))

    @on(ControlChart.Clicked)
    def chart_clicked(self, msg: ControlChart.Clicked) -> None:
        self.move_to(msg.position)

    @on(SignalList.Picked)
    def signal_picked(self, msg: SignalList.Picked) -> None:
        row = self.snap.marks.rows[msg.index] if self.snap else None
        if row is not None and row.anchor >= 0:
            self.move_to(row.anchor, jump=True, row=msg.index if msg.index < self.snap.marks.current else None)

    # -- actions ----------------------------------------------------------------------------

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        snap = self.snap
        if snap is None:
            return None if action not in ("back", "panels") else True
        if action in WRITES and (snap.readonly or self.app.busy):
            return None
        p, mk, a = self.cursor, snap.marks, snap.analysis
        if self.range_start is not None and action in ("exclude", "restore", "note", "explain", "no_cause", "reopen"):
            return True
        if action == "streams":
            return True if snap.dataset.values is not None and snap.dataset.k > 1 else None
        if action == "retract":
            return True if any(e.kind in ("exclude", "restore", "note", "signal") for e in snap.events) else None
        if action == "exclude":
            return None if a.excluded_subgroups[p] else True
        if action == "restore":
            cells = a.excluded_cells
            return True if a.excluded_subgroups[p] or (cells is not None and cells[p].any()) else None
        if action in ("explain", "no_cause", "reopen"):
            row = self._signal_row()
            if row is None:
                return None
            state = mk.rows[row].state
            wanted = {"explain": "explained", "no_cause": "no-cause-found", "reopen": "open"}[action]
            return None if state == wanted or state == "excluded" else True
        if action == "freeze":
            return True if a.chart in ("xbar-r", "xbar-s", "imr", "ewma", "cusum") else None
        if action == "watch":
            return True if self.app.following or snap.state.frozen is not None else None
        if action == "next_signal":
            return True if mk.next_open(p, 1, self._selected()) is not None else None
        if action == "prev_signal":
            return True if mk.next_open(p, -1, self._selected()) is not None else None
        return True

    def action_move(self, step: int) -> None:
        self.move_to(self.cursor + step)

    def action_first(self) -> None:
        self.move_to(0)

    def action_last(self) -> None:
        if self.snap:
            self.move_to(self.snap.dataset.m - 1)

    def _go_row(self, row: int | None, none_words: str) -> None:
        if row is None:
            self.notify(none_words, timeout=3)
            return
        self.move_to(self.snap.marks.rows[row].anchor, jump=True, row=row)

    def _selected(self) -> int | None:
        """The row selected in the signals list (n / N go on from it)."""
        return self.query_one(SignalList).selected

    def action_next_signal(self) -> None:
        if self.snap:
            self._go_row(self.snap.marks.next_open(self.cursor, 1, self._selected()),
                         "No open signal after this one.")

    def action_prev_signal(self) -> None:
        if self.snap:
            self._go_row(self.snap.marks.next_open(self.cursor, -1, self._selected()),
                         "No open signal before this one.")

    def action_step_signal(self, step: int) -> None:
        """The next (step 1) or previous (step -1) row of the signals list (of the rows a filter keeps).

        From the selected row when the cursor stands on its firing point (several signals may fire first at
        one subgroup), or when it is a row answered by an exclusion (listed last); else from the cursor: the
        first row firing after it, the last one firing before it.  The row selected for a subgroup between
        firing points is one that covers it and may fire later, so stepping on from that row would skip the
        rows firing in between."""
        import numpy as np
        snap = self.snap
        if snap is None or snap.marks.current == 0:
            return
        lst, mk, p = self.query_one(SignalList), snap.marks, self.cursor
        # the shown rows that are current signals, in list (= firing) order, and their shown positions
        if lst.indices is None:
            count, where, anchors = mk.current, None, mk.anchors
        else:
            count = len(lst.rows)
            where = np.flatnonzero(lst.indices < mk.current)
            anchors = mk.anchors[lst.indices[where]]
        sel = lst.selected
        if sel is not None and (lst.original(sel) >= mk.current or mk.rows[lst.original(sel)].anchor == p):
            pos = sel + step
        else:
            i = int(np.searchsorted(anchors, p, side="right" if step > 0 else "left"))
            i = i if step > 0 else i - 1
            pos = -1 if not 0 <= i < anchors.size else (i if where is None else int(where[i]))
        if not 0 <= pos < count:
            return
        index = lst.original(pos)
        row = mk.rows[index]
        if row.anchor >= 0:
            self.move_to(row.anchor, jump=True, row=index if index < mk.current else None)
        lst.select(index)

    def action_zoom(self, factor: float) -> None:
        if self.snap is None or self.window is None:
            return
        m = self.snap.dataset.m
        size = max(MIN_WINDOW, min(m, int(round(self.window.size * factor))))
        self.window = window_at(self.cursor - size // 2, size, m)
        self.auto_window = False
        self.request_charts()

    def action_whole(self) -> None:
        if self.snap is not None:
            self.window = Window(0, self.snap.dataset.m)
            self.auto_window = False
            self.request_charts()

    def action_pan(self, direction: int) -> None:
        if self.snap is None or self.window is None:
            return
        m, win = self.snap.dataset.m, self.window
        self.window = window_at(win.start + direction * max(1, win.size // 2), win.size, m)
        self.cursor = max(self.window.start, min(self.cursor, self.window.stop - 1))
        self.request_charts()
        self._update_cursor_views()

    def action_breakdown(self) -> None:
        from workbench.tui.screens.breakdown import BreakdownScreen
        self.app.push_screen(BreakdownScreen(self.cursor))

    def _on_range(self, what: str) -> bool:
        span = self.selected_range()
        if span is None:
            return False
        self.app.range_flow(what, *span)
        return True

    def action_exclude(self) -> None:
        if not self._on_range("exclude"):
            self.app.exclude_flow(self.cursor)

    def action_restore(self) -> None:
        if not self._on_range("restore"):
            self.app.restore_flow(self.cursor)

    def action_retract(self) -> None:
        self.app.retract_flow()

    def _signal_row(self) -> int | None:
        """The signal the cursor is on: the selected row when it covers the cursor, else the row there."""
        snap = self.snap
        if snap is None:
            return None
        row = getattr(self, "_row", None)
        if row is not None and 0 <= row < snap.marks.current:
            r = snap.marks.rows[row]
            if r.first <= self.cursor <= r.last:
                return row
        return snap.marks.row_at(self.cursor)

    def _signal_key(self) -> str | None:
        row = self._signal_row()
        return self.snap.marks.rows[row].key if row is not None else None

    def _mark(self, state: str) -> None:
        if self._on_range(state):
            return
        snap = self.snap
        row = snap.marks.row_at(self.cursor) if snap else None
        if row is None:
            self.app.mark_flow(None, state)
            return
        self.app.mark_flow(snap.marks.rows[row].key, state)

    def action_explain(self) -> None:
        self._mark("explained")

    def action_no_cause(self) -> None:
        self._mark("no-cause-found")

    def action_reopen(self) -> None:
        self._mark("open")

    def action_note(self) -> None:
        if not self._on_range("note"):
            self.app.note_flow(str(self.snap.dataset.labels[self.cursor]))

    def action_freeze(self) -> None:
        self.app.freeze_flow()

    def action_watch(self) -> None:
        self.app.toggle_watch()

    def action_setup(self) -> None:
        self.app.setup_flow()

    def action_fit(self) -> None:
        from workbench.tui.screens.fit import FitScreen
        self.app.push_screen(FitScreen())

    def action_trail(self) -> None:
        from workbench.tui.screens.trail import TrailScreen
        self.app.push_screen(TrailScreen())

    def action_panels(self) -> None:
        self.toggle_class("no-side")
        self.call_after_refresh(self.request_charts)

    def action_back(self) -> None:
        if self.range_start is not None:
            self.range_start = None
            self._range_changed()
            return
        if self.filter.active:
            self.set_filter()
            return
        note = self.query_one("#mapping-note", Static)
        if note.display:  # escape first dismisses the line naming the columns
            self.mapping_seen = True
            note.display = False
            return
        self.notify("This is the bench, the first screen: press q to quit.", timeout=3)
