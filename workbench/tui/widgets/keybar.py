"""The key bar: the keys of the current screen in one line; keys that do not apply are dimmed.

One widget (not one per key), so a change of what applies repaints a single line.  When the
line is too short, dimmed keys go first, then the last keys of the screen; the app's keys
(help, quit) always stay — every key is listed in help and in the command palette.
"""
from __future__ import annotations

from dataclasses import dataclass

from rich.segment import Segment
from rich.style import Style
from textual import events
from textual.strip import Strip
from textual.widget import Widget

KEY = Style(bold=True, reverse=True)
OFF = Style(dim=True)


@dataclass(frozen=True)
class Entry:
    key: str
    words: str
    enabled: bool
    node: object
    action: str
    keep: bool
    """Never left out (the app's own keys)."""

    @property
    def size(self) -> int:
        return len(self.key) + len(self.words) + 4


class KeyBar(Widget, can_focus=False):
    """Shows the screen's active bindings that have ``show=True``."""

    DEFAULT_CSS = """
    KeyBar {
        height: 1;
        dock: bottom;
        background: $footer-background;
    }
    """

    def __init__(self) -> None:
        super().__init__()
        self.entries: list[Entry] = []
        self._fitted: tuple[int, list[Entry]] | None = None

    def on_mount(self) -> None:
        self.screen.bindings_updated_signal.subscribe(self, self._changed)
        self._changed()

    def _changed(self, *_: object) -> None:
        entries, seen = [], set()
        for active in self.screen.active_bindings.values():
            b = active.binding
            if not b.show or (b.action, id(active.node)) in seen:
                continue
            seen.add((b.action, id(active.node)))
            entries.append(Entry(self.app.get_key_display(b), b.description, bool(active.enabled), active.node,
                                 b.action, active.node is self.app))
        if entries != self.entries:
            self.entries, self._fitted = entries, None
            self.refresh()

    def fitted(self, width: int) -> list[Entry]:
        """The entries that fit ``width`` (see the module docstring for what goes first)."""
        if self._fitted is not None and self._fitted[0] == width:
            return self._fitted[1]
        shown = list(self.entries)
        for wanted in (lambda e: not e.enabled, lambda e: True):
            i = len(shown) - 1
            while sum(e.size for e in shown) > width and i >= 0:
                if wanted(shown[i]) and not shown[i].keep:
                    shown.pop(i)
                i -= 1
        self._fitted = (width, shown)
        return shown

    def render_line(self, y: int) -> Strip:
        base, width = self.rich_style, self.size.width
        if y:
            return Strip.blank(width, base)
        segs = []
        for e in self.fitted(width):
            segs.append(Segment(f" {e.key} ", base + (KEY if e.enabled else OFF)))
            segs.append(Segment(f" {e.words} ", base + OFF if not e.enabled else base))
        return Strip(segs).crop_extend(0, width, base)

    def on_click(self, event: events.Click) -> None:
        x = 0
        for e in self.fitted(self.size.width):
            if x <= event.x < x + e.size and e.enabled:
                event.stop()
                self.app.call_later(e.node.run_action, e.action)
                return
            x += e.size
