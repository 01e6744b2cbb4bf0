"""The first screen: what is being opened, with progress while the data load and analyse."""
from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import Screen
from textual.widgets import LoadingIndicator, ProgressBar, Static

from workbench.tui.view import safe
from workbench.tui.widgets.keybar import KeyBar


class LoadingScreen(Screen):
    """Shown while the opening worker runs."""

    BINDINGS = [Binding("escape", "app.quit", "Quit", id="loading-quit", show=False)]

    def __init__(self, what: str) -> None:
        super().__init__(id="loading")
        self.what = what

    def compose(self) -> ComposeResult:
        with Vertical(id="loading-box"):
            yield Static(Text("workbench", style="bold"), id="loading-title")
            yield Static(Text(f"opening {safe(self.what)}"), id="loading-what")
            yield ProgressBar(total=100, show_eta=False, id="loading-bar")
            yield LoadingIndicator()
        yield KeyBar()

    def progress(self, what: str, fraction: float) -> None:
        self.query_one("#loading-what", Static).update(Text(safe(what)))
        self.query_one(ProgressBar).update(progress=round(100 * max(0.0, min(fraction, 1.0))))
