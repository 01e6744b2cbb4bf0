"""A panel drawn from ready-made lines of (text, style) runs — no markup, no layout on update.

Updating it costs O(lines shown): the runs become strips directly, skipping the conversion a
rich ``Text`` goes through, which matters for the panels that change on every cursor move.
"""
from __future__ import annotations

import textwrap

from rich.cells import cell_len
from rich.segment import Segment
from rich.style import Style
from textual.geometry import Region
from textual.strip import Strip
from textual.widget import Widget

Run = tuple[str, Style | None]
DIFF = True

BOLD = Style(bold=True)
DIM = Style(dim=True)
ITALIC = Style(italic=True)
REVERSE = Style(reverse=True)
BOLD_REVERSE = Style(bold=True, reverse=True)
UNDERLINE_DIM = Style(dim=True, underline=True)


class Lines:
    """Lines of styled runs, built up with ``add`` and ``end``."""

    def __init__(self) -> None:
        self.rows: list[list[Run]] = [[]]

    def add(self, text: str, style: Style | None = None) -> "Lines":
        if text:
            self.rows[-1].append((text, style))
        return self

    def end(self) -> "Lines":
        self.rows.append([])
        return self

    def wrapped(self, text: str, width: int, style: Style | None = None, indent: str = "") -> "Lines":
        """``text`` wrapped to ``width`` (continuation lines indented), each piece on its own line."""
        for piece in textwrap.wrap(text, max(width, 10), subsequent_indent=indent) or [""]:
            self.add(piece, style).end()
        return self

    def plain(self) -> str:
        return "\n".join("".join(t for t, _ in row) for row in self.done())

    def done(self) -> list[list[Run]]:
        return self.rows[:-1] if self.rows and not self.rows[-1] else self.rows


class LinesPanel(Widget):
    """Shows a :class:`Lines`; a new one repaints only this panel."""

    def __init__(self, *, id: str | None = None, classes: str | None = None) -> None:
        super().__init__(id=id, classes=classes)
        self.lines: list[list[Run]] = []
        self._base = Style()
        self._styles: dict[Style | None, Style] = {}

    def set_lines(self, lines: Lines) -> None:
        """Show ``lines``; only the lines that differ from what is shown are repainted."""
        rows, old = lines.done(), self.lines
        if rows == old:
            return
        self.lines = rows
        if DIFF and len(rows) == len(old) and self.size.width:
            width = self.size.width
            self.refresh(*[Region(0, y, width, 1) for y, (a, b) in enumerate(zip(old, rows)) if a != b])
        else:
            self.refresh()

    def plain(self) -> str:
        return "\n".join("".join(t for t, _ in row) for row in self.lines)

    def render_lines(self, crop):
        base = self.rich_style
        if base != self._base:
            self._base, self._styles = base, {}
        return super().render_lines(crop)

    def _style(self, style: Style | None) -> Style:
        st = self._styles.get(style)
        if st is None:
            st = self._styles[style] = self._base + style if style is not None else self._base
        return st

    def render_line(self, y: int) -> Strip:
        base, width = self._base, self.size.width
        if y >= len(self.lines):
            return Strip.blank(width, base)
        segs = [Segment(text, self._style(style)) for text, style in self.lines[y]]
        length = sum(cell_len(text) for text, _ in self.lines[y])
        if length < width:
            segs.append(Segment(" " * (width - length), base))
            length = width
        strip = Strip(segs, length)
        return strip.crop(0, width) if length > width else strip
