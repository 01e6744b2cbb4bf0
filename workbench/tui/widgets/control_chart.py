"""One control chart on the bench: a plotext picture built in a worker, plus a cursor column.

The picture (plotext output already cut into strips) is built off the UI thread for one window
of subgroups.  Moving the cursor only repaints two one-cell-wide columns: the old and the new
cursor position — no plotext, nothing proportional to the series or even to the picture.

The chart has no border, padding, tint or opacity, so what Textual's styles cache would make of a
line is the line itself with the app's line filters applied.  ``render_lines`` keeps those finished
lines (the picture's, and the cursor column's) and hands them out again, so a cursor move costs a
few new cursor cells instead of re-rendering every line it crosses; a chart that is styled in a way
that changes its lines goes through the styles cache as any widget does.
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

from workbench.tui.plotting import Picture
from workbench.tui.window import column_of, position_of

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
        self._done_key: tuple | None = None
        self._done_styled: tuple[Strip, ...] | None = None
        self._done: dict[int, Strip] = {}
        """Finished lines (filters applied) without the cursor, by line, for ``_done_key``."""
        self._done_cursor: dict[int, Strip] = {}
        """Finished lines with the cursor, by line, for the cursor column ``_cursor_x``."""
        self._cursor_x: int | None = None

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
        if not self._plain():
            self._done_key = None
            return super().render_lines(crop)
        return self._finished_lines(crop)

    def _plain(self) -> bool:
        """True when the styles cache would pass lines through unchanged (bar the line filters)."""
        styles = self.styles
        return not (self.BLANK or any(styles.padding) or any(edge for edge, _ in styles.border)
                    or any(edge for edge, _ in styles.outline) or styles.tint.a or styles.text_opacity != 1.0
                    or (styles.has_rule("hatch") and styles.hatch != "none") or self.opacity != 1.0
                    or (self.auto_links and self.hover_style._link_id))

    def _finished_lines(self, crop) -> list[Strip]:
        """Lines as the styles cache would finish them, from this widget's own cache of them."""
        self._styles_cache.clear()  # so a later trip through it cannot show stale lines
        base_background, background = self.background_colors
        filters = tuple(self.get_line_filters())
        size, width, height = self.size, *self.content_region.size  # no gutter: region == content
        col = self.cursor_column()
        pic = self.picture
        x = None if col is None or pic is None else pic.left + col
        key = (self.picture, self.placeholder, self._base, size, width, height, background, base_background, filters)
        styled = self._lines() if pic is not None else None  # rebuilt after a resize, even at the same size
        if key != self._done_key or styled is not self._done_styled:
            self._done_key, self._done_styled = key, styled
            self._done, self._done_cursor, self._cursor_x = {}, {}, x
        elif x != self._cursor_x:
            self._done_cursor, self._cursor_x = {}, x
        inner = self._styles_cache.get_inner_outer(base_background, background)[0].rich_style
        done, done_cursor = self._done, self._done_cursor
        rows = range(pic.top, pic.top + pic.rows) if x is not None else range(0)
        strips = []
        for y in crop.line_range:
            cache = done_cursor if y in rows else done
            strip = cache.get(y)
            if strip is None:
                strip = (self.render_line(y).adjust_cell_length(width, inner) if y < height
                         else Strip.blank(width, inner))
                for line_filter in filters:
                    strip = strip.apply_filter(line_filter, background)
                cache[y] = strip
            strips.append(strip)
        if crop.column_span != (0, width):
            x1, x2 = crop.column_span
            strips = [strip.crop(x1, x2) for strip in strips]
        return strips

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
        if x >= strip.cell_length:  # a picture drawn for a narrower widget (a resize in flight): no cursor cell
            return strip
        if not simple:  # wide characters: the general (slower) way
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
