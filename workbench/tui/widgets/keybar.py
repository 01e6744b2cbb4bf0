"""The key bar: the keys of the current screen in one line; keys that do not apply are dimmed.

One widget (not one per key), so a change of what applies repaints a single line.
"""
from __future__ import annotations

from rich.segment import Segment
from rich.style import Style
from textual import events
from textual.strip import Strip
from textual.widget import Widget

KEY = Style(bold=True, reverse=True)
OFF = Style(dim=True)


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
        self.spans: list[tuple[int, int, object, str]] = []
        self.runs: list[tuple[str, Style | None]] = []

    def on_mount(self) -> None:
        self.screen.bindings_updated_signal.subscribe(self, self._changed)
        self._changed()

    def _changed(self, *_: object) -> None:
        runs, spans, seen, x = [], [], set(), 0
        for active in self.screen.active_bindings.values():
            b = active.binding
            if not b.show or (b.action, id(active.node)) in seen:
                continue
            seen.add((b.action, id(active.node)))
            key = f" {self.app.get_key_display(b)} "
            words = f" {b.description}  "
            runs += [(key, KEY if active.enabled else OFF), (words, None if active.enabled else OFF)]
            spans.append((x, x + len(key) + len(words), active.node, b.action) if active.enabled else (0, 0, None, ""))
            x += len(key) + len(words)
        self.runs, self.spans = runs, spans
        self.refresh()

    def render_line(self, y: int) -> Strip:
        base, width = self.rich_style, self.size.width
        if y:
            return Strip.blank(width, base)
        segs = [Segment(t, base + s if s is not None else base) for t, s in self.runs]
        return Strip(segs).crop_extend(0, width, base)

    def on_click(self, event: events.Click) -> None:
        for start, end, node, action in self.spans:
            if node is not None and start <= event.x < end:
                event.stop()
                self.app.call_later(node.run_action, action)
                return
