"""One clear screen asking for a larger terminal, instead of a collapsed chart."""
from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import Static

MIN_WIDTH, MIN_HEIGHT = 80, 24
"""The smallest terminal the workbench is laid out for (the common 80×24)."""


def too_small(width: int, height: int) -> bool:
    return width < MIN_WIDTH or height < MIN_HEIGHT


class TooSmallScreen(Screen):
    """Shown over everything while the terminal is below 80×24; it goes by itself once it is larger."""

    BINDINGS = [Binding("q", "app.quit", "Quit", id="small-quit")]

    def compose(self) -> ComposeResult:
        yield Static(id="too-small-text")

    def on_mount(self) -> None:
        self.show_size(self.app.size.width, self.app.size.height)

    def on_resize(self) -> None:
        self.app.call_after_refresh(self.app.check_size)

    def show_size(self, width: int, height: int) -> None:
        t = Text(justify="center")
        t.append("Please enlarge the terminal\n\n", style="bold")
        t.append(f"This terminal is {width}×{height}; the workbench needs at least {MIN_WIDTH}×{MIN_HEIGHT} to "
                 "draw its charts without squeezing them.\nMake the window larger (or the font smaller): the "
                 "workbench comes back where it was.\n\nq quits (everything is already saved).")
        for text in self.query("#too-small-text").results(Static):  # not there before compose
            text.update(t)
