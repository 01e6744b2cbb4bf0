"""The overview: one row per characteristic, what needs attention first; choosing one opens the bench."""
from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static

from workbench.core.text import fmt
from workbench.tui.view import safe


class OverviewScreen(Screen[str | None]):
    """Lists the characteristics of the data (``core.overview`` rows); Enter opens one on the bench."""

    BINDINGS = [Binding("enter", "choose", "Open on the bench", id="overview-open"),
                Binding("q,escape", "leave", "Quit", id="overview-quit")]

    def __init__(self, source: str, rows) -> None:
        super().__init__()
        self.source, self.rows = source, tuple(rows)

    def compose(self) -> ComposeResult:
        with Vertical(id="overview"):
            yield Static(Text.assemble(("Overview", "bold"), f" — {safe(self.source)}: {len(self.rows)} "
                                       "characteristics, what needs attention first"), id="overview-title")
            yield DataTable(id="overview-table", cursor_type="row", zebra_stripes=True)
            yield Static(Text("Open signals are on trial limits (nothing excluded yet); Ppk where a specification "
                              "is known (--lsl/--usl or --specs). Enter opens the characteristic on the bench.",
                              style="dim"), id="overview-note")
        yield Footer()

    def on_mount(self) -> None:
        table = self.query_one(DataTable)
        table.add_columns("characteristic", "readings", "subgroups", "open signals", "Ppk", "needs attention")
        for r in self.rows:
            mark = Text("▲ " if r.attention else "  ", style="bold red" if r.attention else "")
            table.add_row(Text.assemble(mark, safe(r.name)), f"{r.readings:,}", f"{r.subgroups:,}",
                          str(r.open_signals), fmt(r.ppk, 3), safe(r.error or r.words), key=r.name)
        table.focus()

    def action_choose(self) -> None:
        table = self.query_one(DataTable)
        if self.rows:
            self.dismiss(self.rows[table.cursor_row].name)

    def on_data_table_row_selected(self, event: DataTable.RowSelected) -> None:
        self.dismiss(str(event.row_key.value))

    def action_leave(self) -> None:
        self.dismiss(None)
