"""The column-mapping dialog, shown when the layout of a data file cannot be detected."""
from __future__ import annotations

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Label, Select, SelectionList, Static

from workbench.core.model import LayoutRequest

from workbench.tui.view import safe

KINDS = (("detect", None), ("long: one reading a row, a stream column", "long"),
         ("wide: one subgroup a row, one column per stream", "wide"),
         ("individuals: one reading a row", "individuals"),
         ("summary: n, mean and range or sd per row", "summary"))


class MappingDialog(ModalScreen[LayoutRequest | None]):
    """Say which column holds what; returns the LayoutRequest to load with."""

    BINDINGS = [Binding("escape,q", "cancel", "Cancel", id="dialog-cancel")]

    def __init__(self, message: str, filename: str, columns: tuple[str, ...], samples: dict[str, str],
                 request: LayoutRequest) -> None:
        super().__init__(classes="dialog-screen")
        self.message, self.filename, self.columns, self.samples = message, filename, columns, samples
        self.request = request

    def _select(self, wid: str, current: str | None) -> Select:
        opts = [(Text(safe(c)), c) for c in self.columns]
        return Select(opts, prompt="(none)", value=current if current in self.columns else Select.NULL, id=wid)

    def compose(self) -> ComposeResult:
        r = self.request
        with Vertical(classes="dialog wide-dialog"):
            yield Static(Text(f"Map the columns of {safe(self.filename)}", style="bold"), classes="dialog-title")
            yield Static(Text(safe(self.message)), classes="dialog-prompt")
            with VerticalScroll(classes="mapping-fields"):
                yield Static("Layout", markup=False)
                yield Select([(k, v) for k, v in KINDS if v], prompt="detect", value=r.kind or Select.NULL,
                             id="map-kind")
                for wid, words, cur in (("map-subgroup", "Subgroup column (label or time)", r.subgroup),
                                        ("map-stream", "Stream column (long layout)", r.stream),
                                        ("map-value", "Reading column (long / individuals)", r.value),
                                        ("map-time", "Time column (orders the rows)", r.time)):
                    yield Static(words, markup=False)
                    yield self._select(wid, cur)
                yield Static("Stream columns (wide layout)", markup=False)
                yield SelectionList(*[(Text(f"{safe(c)}  e.g. {safe(self.samples.get(c, ''))}"), c, c in r.streams)
                                      for c in self.columns], id="map-streams")
            yield Label("", id="error", classes="dialog-error", markup=False)
            with Horizontal(classes="dialog-buttons"):
                yield Button("Load", variant="primary", id="confirm")
                yield Button("Cancel", id="cancel")

    def _value(self, wid: str) -> str | None:
        v = self.query_one(f"#{wid}", Select).value
        return v if isinstance(v, str) else None

    @on(Button.Pressed, "#confirm")
    def submit(self) -> None:
        streams = tuple(self.query_one("#map-streams", SelectionList).selected)
        req = LayoutRequest(kind=self._value("map-kind"), subgroup=self._value("map-subgroup"),
                            stream=self._value("map-stream"), value=self._value("map-value"),
                            time=self._value("map-time"), streams=streams,
                            skip_bad=self.request.skip_bad)
        if req == LayoutRequest(skip_bad=self.request.skip_bad):
            self.query_one("#error", Label).update("Choose at least a layout or one column.")
            return
        self.dismiss(req)

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
