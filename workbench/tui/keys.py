"""Key names as the help and the command palette show them, and the keys that work on every screen.

Kept apart from the app and the help screen so both (and the palette) can import it without a circle.
"""
from __future__ import annotations

from textual.binding import Binding

KEY_NAMES = {"right": "→", "left": "←", "up": "↑", "down": "↓", "enter": "enter", "escape": "esc",
             "plus": "+", "equals_sign": "=", "minus": "-", "less_than_sign": "<", "greater_than_sign": ">",
             "question_mark": "?", "pageup": "PgUp", "pagedown": "PgDn", "home": "Home", "end": "End"}

APP_BINDINGS = [
    Binding("question_mark,f1", "help", "Help", id="help"),
    Binding("q", "quit", "Quit", id="quit"),
    Binding("ctrl+p", "command_palette", "Commands", id="commands", show=False),
]
"""Keys that work on every screen (the app's own bindings)."""


def key_text(keys: str) -> str:
    """A binding's keys as shown to people (``"question_mark,f1"`` → ``"? / f1"``)."""
    return " / ".join(KEY_NAMES.get(k.strip(), k.strip()) for k in keys.split(","))
