"""The signals-list filter: chart, rule, state and driving stream (any combination)."""
from __future__ import annotations

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Label, Select, Static

from workbench.tui.filters import STATE_CHOICES, SignalFilter

FIELDS = ("chart", "rule", "state", "stream")


class FilterDialog(ModalScreen[SignalFilter | None]):
    """Pick what the signals list keeps; "any" leaves a field open.  Returns the filter, or None (cancel)."""

    BINDINGS = [Binding("escape", "cancel", "Cancel", id="filter-cancel"),
                Binding("ctrl+s", "apply", "Apply", id="filter-apply")]

    def __init__(self, current: SignalFilter, charts: tuple[str, ...], rules: tuple[str, ...],
                 streams: tuple[str, ...]) -> None:
        super().__init__(classes="dialog-screen")
        self.current = current
        self.options = {"chart": charts, "rule": rules, "state": STATE_CHOICES, "stream": streams}

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(Text("Filter the signals", style="bold"), classes="dialog-title")
            yield Static("Keep the signals of one chart, rule, state or driving stream (the stream the breakdown "
                         "names where the signal fired). Esc on the bench clears the filter.", classes="dialog-prompt")
            for name in FIELDS:
                words = "driving stream" if name == "stream" else name
                value = getattr(self.current, name)
                kw = {"value": value} if value in self.options[name] else {}
                yield Select([(v.replace("-", " ") if name == "state" else v, v) for v in self.options[name]],
                             prompt=f"{words}: any", id=f"filter-{name}", allow_blank=True, **kw)
            yield Label("", classes="dialog-error", markup=False)
            with Horizontal(classes="dialog-buttons"):
                yield Button("Apply", variant="primary", id="apply")
                yield Button("Clear", id="clear")
                yield Button("Cancel", id="cancel")

    def on_mount(self) -> None:
        self.query_one("#filter-chart", Select).focus()

    def chosen(self) -> SignalFilter:
        values = {}
        for name in FIELDS:
            v = self.query_one(f"#filter-{name}", Select).value
            values[name] = v if isinstance(v, str) else None
        return SignalFilter(**values)

    @on(Button.Pressed, "#apply")
    def action_apply(self) -> None:
        self.dismiss(self.chosen())

    @on(Button.Pressed, "#clear")
    def clear(self) -> None:
        self.dismiss(SignalFilter())

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
