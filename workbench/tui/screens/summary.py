"""The signals summary: per chart and rule, what fired against what chance alone would give."""
from __future__ import annotations

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import DataTable, Static

from workbench.tui.messages import Computed
from workbench.tui.session import Snapshot
from workbench.tui.widgets.keybar import KeyBar


def summary_rows(snap: Snapshot) -> list:
    """The summary of a snapshot (runs in a worker): states from the case, answered signals included."""
    from workbench.core.rule_summary import rule_summary
    marks = snap.marks
    answered = [(r.chart, r.rule) for r in marks.rows[marks.current:]]
    states = {r.key: r.state for r in marks.rows[:marks.current]}
    return rule_summary(snap.analysis, lambda key: states.get(key, "open"), answered)


class SummaryScreen(Screen):
    """One line per chart and rule; Enter filters the bench's signals list to that chart and rule."""

    BINDINGS = [
        Binding("escape", "back", "Back", id="summary-back"),
        Binding("enter", "pick", "Show these signals", id="summary-pick"),
    ]

    def __init__(self) -> None:
        super().__init__(id="summary")
        self.rows: list = []
        self.token = 0

    def compose(self) -> ComposeResult:
        yield Static("signals against chance — computing…", id="summary-head", markup=False)
        yield DataTable(id="summary-table", cursor_type="row", zebra_stripes=True)
        yield Static(id="summary-formulas", markup=False)
        yield KeyBar()

    def on_mount(self) -> None:
        from workbench.core.rule_summary import HEADINGS
        table = self.query_one(DataTable)
        for h in HEADINGS:
            table.add_column(h, key=h)
        if self.app.snapshot is not None:
            self.show_snapshot(self.app.snapshot)
        table.focus()

    def show_snapshot(self, snap: Snapshot) -> None:
        self.token += 1
        self._compute(self.token, snap)

    @work(thread=True, exclusive=True, group="summary", description="summary")
    def _compute(self, token: int, snap: Snapshot) -> None:
        try:
            rows = summary_rows(snap)
        except Exception as exc:  # shown in place of the table
            self.post_message(Computed("summary", token, None, f"{type(exc).__name__}: {exc}"))
            return
        self.post_message(Computed("summary", token, (snap, rows)))

    @on(Computed)
    def computed(self, msg: Computed) -> None:
        if msg.what != "summary" or msg.token != self.token:
            return
        head = self.query_one("#summary-head", Static)
        if msg.error:
            head.update(Text(f"no summary: {msg.error}", style="bold"))
            return
        from workbench.core.rule_summary import summary_cells
        snap, self.rows = msg.result
        table = self.query_one(DataTable)
        table.clear()
        for r in self.rows:
            cells = summary_cells(r)
            table.add_row(*cells[:-1], Text(cells[-1], style="bold" if "×" in cells[-1] else ""))
        total = sum(r.signals for r in self.rows)
        fired = sum(r.firing_points for r in self.rows)
        expected = sum(r.expected or 0.0 for r in self.rows)
        head.update(Text.assemble(
            ("Signals against chance", "bold"),
            f" — {total:,} signals, {fired:,} firing points on {snap.dataset.m:,} subgroups; in-control data of "
            f"this length would give about {expected:,.1f} firing points by chance. Enter shows a row's signals."))
        lines = ["expected = the sum over the chart's points of the rule's exact per-point probability on "
                 "in-control data (independent normal points with the chart's centre and sigma):"]
        lines += [f"  {r.chart} {r.rule}: {r.formula}" for r in self.rows]
        self.query_one("#summary-formulas", Static).update("\n".join(lines))

    @on(DataTable.RowSelected)
    def row_selected(self) -> None:
        self.action_pick()

    def action_pick(self) -> None:
        table = self.query_one(DataTable)
        if not self.rows or not 0 <= table.cursor_row < len(self.rows):
            return
        r = self.rows[table.cursor_row]
        self.app.pop_screen()
        bench = self.app.bench()
        if bench is not None:
            bench.set_filter(chart=r.chart, rule=r.rule)

    def action_back(self) -> None:
        self.app.pop_screen()
