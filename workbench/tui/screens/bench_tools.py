"""The bench's tools for many signals: filters of the signals list, go to, a range of subgroups,
marking several signals at once, and the doors to the summary and the stream view.

Mixed into :class:`~workbench.tui.screens.bench.BenchScreen` (``self.snap``, ``self.cursor``,
``self.filter``, ``self.drivers`` and ``self.range_start`` live on the screen).  Filtering costs
one pass over the signals list (no statistics); the driving streams a stream filter needs are
found once per analysis in a worker.
"""
from __future__ import annotations

from textual import work

from workbench.tui.dialogs.choice import ChoiceDialog
from workbench.tui.filters import SignalFilter, drivers_for, filter_rows, goto_position, search_notes
from workbench.tui.messages import Computed
from workbench.tui.session import Snapshot
from workbench.tui.view import safe
from workbench.tui.widgets.control_chart import ControlChart
from workbench.tui.widgets.signal_list import SignalList


class BenchTools:
    """Filters, go to, ranges and marking many signals (mixed into the bench screen)."""

    # -- filters of the signals list ------------------------------------------------------------

    def _show_rows(self) -> None:
        snap, f = self.snap, self.filter
        if snap is None:
            return
        mk, lst = snap.marks, self.query_one(SignalList)
        if f.stream is not None and self.drivers is None:
            self._find_drivers(snap)
        if f.active:
            shown = filter_rows(mk.rows, f, self.drivers)
            lst.set_rows(mk.rows, shown)
            waiting = " (finding drivers…)" if f.stream is not None and self.drivers is None else ""
            title = f"signals — {len(shown):,} of {len(mk.rows):,} · {f.words()}{waiting} · esc clears"
        else:
            lst.set_rows(mk.rows)
            title = f"signals — {mk.open_count} open of {mk.current}"
        self.query_one("#signals").border_title = title

    def set_filter(self, **fields) -> None:
        """Filter the signals list (``chart``, ``rule``, ``state``, ``stream``; None: any)."""
        self.filter = SignalFilter(**fields)
        self._show_rows()
        self._update_side(True)

    @work(thread=True, exclusive=True, group="drivers", description="drivers")
    def _find_drivers(self, snap: Snapshot) -> None:
        drivers = drivers_for(snap.analysis, [r.anchor for r in snap.marks.rows])
        self.post_message(Computed("drivers", id(snap), drivers))

    def on_computed(self, msg: Computed) -> None:
        """The driving streams found by ``_find_drivers`` (a mixin's handler goes by its name)."""
        if msg.what == "drivers" and self.snap is not None and msg.token == id(self.snap):
            self.drivers = msg.result
            self._show_rows()
            self._update_side(True)

    def action_filter(self) -> None:
        from workbench.tui.dialogs.filter import FilterDialog
        snap = self.snap
        charts = tuple(dict.fromkeys(r.chart for r in snap.marks.rows))
        rules = tuple(dict.fromkeys(r.rule for r in snap.marks.rows))
        streams = snap.dataset.streams if snap.dataset.k > 1 else ()
        self.app.push_screen(FilterDialog(self.filter, charts, rules, streams),
                             lambda f: self.set_filter(**vars(f)) if f is not None else None)

    def action_summary(self) -> None:
        from workbench.tui.screens.summary import SummaryScreen
        self.app.push_screen(SummaryScreen())

    def action_context(self) -> None:
        """What changed there: the range when one is selected, else the signal selected at the cursor, else
        the subgroup at the cursor."""
        from workbench.tui.screens.context import ContextScreen, Where
        snap = self.snap
        if snap is None:
            return
        span = self.selected_range()
        row = self._signal_row() if span is None else None
        if span is not None:
            where = Where(*span)
        elif row is not None and snap.marks.rows[row].first >= 0:
            r = snap.marks.rows[row]
            where = Where(r.first, r.last, f"{r.chart} {r.rule}", r.key)
        else:
            where = Where(self.cursor, self.cursor)
        self.app.push_screen(ContextScreen(where))

    def action_streams(self) -> None:
        from workbench.tui.screens.streams import StreamScreen
        self.app.push_screen(StreamScreen())

    # -- go to --------------------------------------------------------------------------------

    def action_goto(self) -> None:
        from workbench.tui.dialogs.reason import ReasonDialog
        self.app.push_screen(ReasonDialog(
            "Go to", "A subgroup label, a position (1 = first), a date/time (the first subgroup at or after it), "
            "or words to search the notes and reasons:", "Go", needed="Type where to go"), self.go_to)

    def go_to(self, text: str | None) -> None:
        """Move to what ``text`` names, or search the notes and reasons for it."""
        if not text or self.snap is None:
            return
        snap = self.snap
        p = goto_position(snap.dataset, text)
        if p is not None:
            self.move_to(p, jump=True)
            return
        found = [f for f in search_notes(snap.state, snap.dataset, snap.marks, text) if f.position >= 0]
        if not found:
            self.notify(f"Nothing is called {safe(text)!r}, and no note or reason mentions it.", timeout=3)
        elif len(found) == 1:
            self.move_to(found[0].position, jump=True)
        else:
            choices = [(str(i), safe(f.words)[:100]) for i, f in enumerate(found[:20])]
            self.app.push_screen(ChoiceDialog("Go to which?", f"{len(found)} notes and reasons mention "
                                              f"{safe(text)!r}.", choices),
                                 lambda c: self.move_to(found[int(c)].position, jump=True)
                                 if c is not None and c.isdigit() else None)

    # -- a range of subgroups -------------------------------------------------------------------

    def selected_range(self) -> tuple[int, int] | None:
        if self.range_start is None:
            return None
        return min(self.range_start, self.cursor), max(self.range_start, self.cursor)

    def action_range_mark(self) -> None:
        self.range_start = None if self.range_start is not None else self.cursor
        self._range_changed()

    def action_range_step(self, step: int) -> None:
        if self.range_start is None:
            self.range_start = self.cursor
        self.move_to(self.cursor + step)
        self._range_changed()

    def _range_changed(self) -> None:
        span = self.selected_range()
        for w in self.query(ControlChart):
            w.border_subtitle = "" if span is None else (
                f"range {safe(self.snap.dataset.labels[span[0]])}..{safe(self.snap.dataset.labels[span[1]])} "
                f"({span[1] - span[0] + 1:,}) · x r a e c act on it · esc drops it")
        self.request_charts()
        self.refresh_bindings()

    def action_mark_all(self) -> None:
        """Mark every signal at the cursor (or in the range) at once: one event."""
        snap = self.snap
        span = self.selected_range() or (self.cursor, self.cursor)
        current = snap.marks.rows[:snap.marks.current]
        if self.range_start is None and self.filter.active:  # every signal the filtered list shows
            shown = self.query_one(SignalList).rows
            here = [r.key for r in shown if r.state != "excluded" and r.first >= 0]
            where, span = f"in the list ({self.filter.words()})", (self.cursor, self.cursor)
        else:
            here = [r.key for r in current if r.state != "excluded" and (r.first <= span[1] and r.last >= span[0])]
            where = (f"at subgroup {safe(snap.dataset.labels[span[0]])}" if span[0] == span[1] else
                     f"in subgroups {safe(snap.dataset.labels[span[0]])}..{safe(snap.dataset.labels[span[1]])}")
        if not here:
            self.notify(f"No signal {where}.", timeout=3)
            return
        choices = [("explained", "Explained"), ("no-cause-found", "No cause found"), ("open", "Reopen")]
        self.app.push_screen(
            ChoiceDialog(f"Mark {len(here)} signal{'s' if len(here) != 1 else ''} {where}",
                         "Every signal that covers it gets the same state and note (one event).", choices),
            lambda c: self.app.many_flow(here, c, span if span[0] != span[1] else None, where)
            if c in ("explained", "no-cause-found", "open") else None)
