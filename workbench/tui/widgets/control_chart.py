"""One control chart on the bench: a plotext picture built in a worker, plus a cursor column.

The picture is built off the UI thread for one window of subgroups; moving the cursor only
restyles one column of the finished picture (no plotext, nothing proportional to the series).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from rich.text import Text
from textual import events
from textual.message import Message
from textual_plotext import PlotextPlot

from ..plotting import Picture
from ..window import column_of, position_of


class ControlChart(PlotextPlot):
    """A control chart window; ``show()`` a picture, ``set_cursor()`` a position."""

    @dataclass
    class Clicked(Message):
        """A click on the chart picked a subgroup."""

        chart: "ControlChart"
        position: int

    def __init__(self, *, id: str | None = None, classes: str | None = None) -> None:
        super().__init__(id=id, classes=classes)
        self.picture: Picture | None = None
        self.cursor: int | None = None
        self.codes: np.ndarray | None = None
        self.placeholder = "drawing…"

    def show(self, picture: Picture | None, codes: np.ndarray | None = None) -> None:
        self.picture, self.codes = picture, codes
        self.refresh()

    def set_cursor(self, position: int | None) -> None:
        if position != self.cursor:
            self.cursor = position
            self.refresh()

    def cursor_column(self) -> int | None:
        """Canvas column of the cursor in the current picture (None when outside it)."""
        pic = self.picture
        if pic is None or self.cursor is None or not pic.window.contains(self.cursor):
            return None
        return column_of(self.cursor, pic.window, pic.cols)

    def render(self) -> Text:
        pic = self.picture
        if pic is None:
            return Text(self.placeholder, style="dim")
        col = self.cursor_column()
        if col is None:
            return pic.text
        text = pic.text.copy()
        x = pic.left + col
        for row in range(pic.top, min(pic.top + pic.rows, len(pic.lines))):
            start = pic.lines[row] + x
            text.stylize("reverse", start, start + 1)
        return text

    def on_click(self, event: events.Click) -> None:
        pic = self.picture
        if pic is None:
            return
        col = event.x - pic.left
        if 0 <= col < pic.cols and pic.top <= event.y < pic.top + pic.rows + 1:
            event.stop()
            self.post_message(self.Clicked(self, position_of(col, pic.window, pic.cols, self.codes)))
