"""The signals list: one line per signal, drawn line by line (cost independent of the count)."""
from __future__ import annotations

from dataclasses import dataclass

from rich.segment import Segment
from rich.style import Style
from textual import events
from textual.geometry import Region, Size
from textual.message import Message
from textual.scroll_view import ScrollView
from textual.strip import Strip

from ..plotting import COLOUR, GLYPH
from ..view import EXCLUDED, OPEN, REVIEWED, STATE_WORDS, SignalRow

STATE_CLASS = {"open": OPEN, "explained": REVIEWED, "no-cause-found": REVIEWED, "excluded": EXCLUDED}


class SignalList(ScrollView, can_focus=False):
    """Rows of (glyph, chart, subgroups, state, rule in words); one row is selected."""

    @dataclass
    class Picked(Message):
        """A click picked a row."""

        index: int

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.rows: tuple[SignalRow, ...] = ()
        self.selected: int | None = None

    def set_rows(self, rows: tuple[SignalRow, ...]) -> None:
        self.rows = rows
        if self.selected is not None and self.selected >= len(rows):
            self.selected = None
        self.virtual_size = Size(self.size.width, len(rows))
        self.refresh()

    def select(self, index: int | None) -> None:
        if index == self.selected:
            return
        self.selected = index
        if index is not None:
            self.scroll_to_region(Region(0, index, 1, 1), animate=False, force=True, immediate=True)
        self.refresh()

    def line_text(self, row: SignalRow) -> list[tuple[str, Style | None]]:
        cls = STATE_CLASS.get(row.state, OPEN)
        glyph = Style(color=f"rgb{COLOUR[cls]}", bold=True)
        return [(GLYPH[cls] + " ", glyph), (f"{row.chart:<5.5} ", None), (f"{row.span:<13.13} ", None),
                (f"{STATE_WORDS.get(row.state, row.state):<14.14} ", Style(dim=row.state != "open")),
                (row.words, Style(dim=True))]

    def render_line(self, y: int) -> Strip:
        index = y + self.scroll_offset.y
        width = self.size.width
        base = self.rich_style
        if index >= len(self.rows):
            return Strip.blank(width, base)
        chosen = index == self.selected
        segs = []
        for text, style in self.line_text(self.rows[index]):
            st = base + style if style is not None else base
            if chosen:
                st = st + Style(reverse=True)
            segs.append(Segment(text, st))
        strip = Strip(segs).crop(0, width)
        pad = width - strip.cell_length
        if pad > 0:
            strip = Strip(list(strip) + [Segment(" " * pad, base + Style(reverse=True) if chosen else base)])
        return strip

    def on_resize(self, event: events.Resize) -> None:
        self.virtual_size = Size(event.size.width, len(self.rows))

    def on_click(self, event: events.Click) -> None:
        index = event.y + self.scroll_offset.y
        if 0 <= index < len(self.rows):
            event.stop()
            self.post_message(self.Picked(index))
