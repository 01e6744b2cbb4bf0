"""The signals list: one line per signal, drawn line by line (cost independent of the count)."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from rich.segment import Segment
from rich.style import Style
from textual import events
from textual.geometry import Region, Size
from textual.message import Message
from textual.scroll_view import ScrollView
from textual.strip import Strip

from workbench.tui.plotting import COLOUR, GLYPH
from workbench.tui.view import EXCLUDED, OPEN, REVIEWED, STATE_WORDS, SignalRow

BOLD, DIM, REVERSE = Style(bold=True), Style(dim=True), Style(reverse=True)
GLYPH_STYLE = {cls: Style(bold=True, color="rgb({},{},{})".format(*c)) for cls, c in COLOUR.items()}
LINES = 2
"""Lines per signal: what and where, then the rule in words."""
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
        """The rows shown (all signals, or those a filter keeps)."""
        self.indices: np.ndarray | None = None
        """Index of each shown row among all signals (None: every signal is shown, in order)."""
        self._where: dict[int, int] = {}
        self.selected: int | None = None
        """Shown position of the highlighted row."""
        self._base = Style()
        self._cache: dict[tuple[int, int, bool], Strip] = {}

    def set_rows(self, rows: tuple[SignalRow, ...], indices: np.ndarray | None = None) -> None:
        """Show ``rows`` (all signals), or only ``rows[indices]`` (a filter); Picked names the index among all."""
        self.indices = None if indices is None else np.asarray(indices, dtype=np.int64)
        self.rows = rows if indices is None else tuple(rows[i] for i in self.indices.tolist())
        self._where = {} if indices is None else {int(a): i for i, a in enumerate(self.indices.tolist())}
        self.selected = None
        self._cache.clear()
        self.virtual_size = Size(self.size.width, LINES * len(self.rows))
        self.scroll_to(0, 0, animate=False)
        self.refresh()

    def shown(self, index: int | None) -> int | None:
        """Shown position of signal ``index`` (None when the filter hides it)."""
        if index is None or self.indices is None:
            return index
        return self._where.get(int(index))

    def original(self, position: int) -> int:
        """Index among all signals of the row shown at ``position``."""
        return position if self.indices is None else int(self.indices[position])

    def select(self, index: int | None, scroll: bool = True) -> None:
        """Highlight signal ``index`` (among all); ``scroll`` brings it into view (plain cursor steps do not)."""
        index = self.shown(index)
        if index == self.selected:
            if scroll and index is not None:
                self._bring_into_view(index)
            return
        old, self.selected = self.selected, index
        if scroll and index is not None and self._bring_into_view(index):
            return
        for i in (old, index):
            if i is not None:
                self.refresh_lines(LINES * i, LINES)

    def _bring_into_view(self, index: int) -> bool:
        """Scroll row ``index`` into view; True when that scrolled (and so repainted) the list."""
        before = self.scroll_offset.y
        self.scroll_to_region(Region(0, LINES * index, 1, LINES), animate=False, force=True, immediate=True)
        if self.scroll_offset.y != before:
            self.refresh()
            return True
        return False

    def line_parts(self, row: SignalRow, part: int, width: int = 44) -> list[tuple[str, Style | None]]:
        """The segments of line ``part`` (0: what and where, 1: where a shift began and the rule in words) of
        one row.

        A run longer than one subgroup reads ``+9 more points`` (``+9 more`` when the list is narrow)."""
        if part == 1:  # where the shift began comes first and whole, or not at all; the words may be cut
            if row.began and 4 + len(row.began) <= width:
                return [("    " + row.began, None), (" · " + row.words, DIM)]
            return [("    " + row.words, DIM)]
        cls = STATE_CLASS.get(row.state, OPEN)
        state = row.short or STATE_WORDS.get(row.state, row.state)
        more = row.length - 1
        chart = f"{row.chart:<4} "
        where = f"{row.label:<16} "
        if more > 0:  # the longest wording that leaves room for the state, never a bare "+9"
            for words in (f"+{more:,} more point{'s' if more != 1 else ''}", f"+{more:,} more"):
                where = f"{row.label} {words} "
                if 2 + len(chart) + len(where) + len(state) <= width:
                    break
        return [(GLYPH[cls] + " ", GLYPH_STYLE[cls]), (chart, BOLD), (f"{where:<21}", None),
                (state, BOLD if row.state == "open" else DIM)]

    def render_lines(self, crop):
        self._base = self.rich_style
        self._cache.clear()
        return super().render_lines(crop)

    def render_line(self, y: int) -> Strip:
        index, part = divmod(y + self.scroll_offset.y, LINES)
        width, base = self.size.width, self._base
        if index >= len(self.rows):
            return Strip.blank(width, base)
        chosen = index == self.selected
        key = (index, part, chosen)
        strip = self._cache.get(key)
        if strip is None:
            extra = REVERSE if chosen else None
            segs = []
            for text, style in self.line_parts(self.rows[index], part, self.scrollable_content_region.width):
                st = base + style if style is not None else base
                segs.append(Segment(text, st + extra if extra else st))
            strip = Strip(segs).crop_extend(0, width, base + extra if extra else base)
            self._cache[key] = strip
        return strip

    def on_resize(self, event: events.Resize) -> None:
        self.virtual_size = Size(event.size.width, LINES * len(self.rows))

    def on_click(self, event: events.Click) -> None:
        index = (event.y + self.scroll_offset.y) // LINES
        if 0 <= index < len(self.rows):
            event.stop()
            self.post_message(self.Picked(self.original(index)))
