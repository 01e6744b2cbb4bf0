"""One control chart on the bench: a plotext picture built in a worker, plus a cursor column.

The picture (plotext output already cut into strips) is built off the UI thread for one window
of subgroups.  Moving the cursor only repaints two one-cell-wide columns: the old and the new
cursor position — no plotext, nothing proportional to the series or even to the picture.
"""
from __future__ import annotations

from bisect import bisect_right
from dataclasses import dataclass

import numpy as np
from rich.segment import Segment
from rich.style import Style
from textual import events
from textual.geometry import Region
from textual.message import Message
from textual.strip import Strip
from textual_plotext import PlotextPlot

from ..plotting import Picture
from ..window import column_of, position_of

CURSOR = Style(reverse=True)


class ControlChart(PlotextPlot):
    """A control chart window; ``show()`` a picture, ``set_cursor()`` a position."""

    @dataclass
    class Resized(Message):
        """The chart's size changed: its picture must be rebuilt for the new size."""

        chart: "ControlChart"

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
        self._base = Style()
        self._styled: tuple[Strip, ...] | None = None
        self._runs: dict[int, tuple[list, list[int], bool]] = {}

    def show(self, picture: Picture | None, codes: np.ndarray | None = None) -> None:
        self.picture, self.codes, self._styled = picture, codes, None
        self.refresh()

    def set_cursor(self, position: int | None) -> None:
        if position == self.cursor:
            return
        old = self.cursor_column()
        self.cursor = position
        new = self.cursor_column()
        pic = self.picture
        if pic is None:
            return
        for col in {old, new} - {None}:
            self.refresh(Region(pic.left + col, pic.top, 1, pic.rows))

    def cursor_column(self) -> int | None:
        """Canvas column of the cursor in the current picture (None when outside it)."""
        pic = self.picture
        if pic is None or self.cursor is None or not pic.window.contains(self.cursor):
            return None
        return column_of(self.cursor, pic.window, pic.cols)

    def render_lines(self, crop):
        base = self.rich_style
        if base != self._base:
            self._base, self._styled = base, None
        return super().render_lines(crop)

    def _lines(self) -> tuple[Strip, ...]:
        """The picture's strips with the widget's base style applied (once per picture and style)."""
        if self._styled is None and self.picture is not None:
            width = self.size.width
            self._styled = tuple(s.apply_style(self._base).crop_extend(0, width, self._base)
                                 for s in self.picture.strips)
            self._runs = {}
        return self._styled or ()

    def _cursor_strip(self, y: int, x: int) -> Strip:
        """Line ``y`` with cell ``x`` reversed, splitting only the segment that holds it."""
        strip = self._styled[y]
        runs = self._runs.get(y)
        if runs is None:
            segs = list(strip)
            starts, pos, simple = [], 0, True
            for seg in segs:
                starts.append(pos)
                pos += seg.cell_length
                simple = simple and seg.cell_length == len(seg.text)
            runs = self._runs[y] = (segs, starts, simple)
        segs, starts, simple = runs
        if not simple or x >= strip.cell_length:  # wide characters: the general (slower) way
            left, mid, right = strip.divide((x, x + 1, strip.cell_length))[:3]
            return Strip.join((left, mid.apply_style(CURSOR), right))
        i = bisect_right(starts, x) - 1
        text, style, _ = segs[i]
        k = x - starts[i]
        parts = [Segment(text[:k], style)] if k else []
        parts.append(Segment(text[k], (style or Style()) + CURSOR))
        if k + 1 < len(text):
            parts.append(Segment(text[k + 1:], style))
        return Strip(segs[:i] + parts + segs[i + 1:], strip.cell_length)

    def render_line(self, y: int) -> Strip:
        pic = self.picture
        if pic is None:
            width = self.size.width
            return _text_strip(self.placeholder, width, self._base) if y == 0 else Strip.blank(width, self._base)
        lines = self._lines()
        if y >= len(lines):
            return Strip.blank(self.size.width, self._base)
        col = self.cursor_column()
        if col is not None and pic.top <= y < pic.top + pic.rows:
            return self._cursor_strip(y, pic.left + col)
        return lines[y]

    def on_resize(self) -> None:
        self._styled = None
        self.post_message(self.Resized(self))

    def on_click(self, event: events.Click) -> None:
        pic = self.picture
        if pic is None:
            return
        col = event.x - pic.left
        if 0 <= col < pic.cols and pic.top <= event.y < pic.top + pic.rows + 1:
            event.stop()
            self.post_message(self.Clicked(self, position_of(col, pic.window, pic.cols, self.codes)))


def _text_strip(text: str, width: int, style: Style) -> Strip:
    from rich.segment import Segment
    return Strip([Segment(text, style + Style(dim=True))]).crop_extend(0, width, style)
