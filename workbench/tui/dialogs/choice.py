"""A dialog with a message and a few labelled choices (e.g. reuse an existing case or start anew)."""
from __future__ import annotations

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Static


class ChoiceDialog(ModalScreen[str | None]):
    """Pick one of ``choices`` ((id, label) pairs); escape returns None."""

    BINDINGS = [Binding("escape,q", "cancel", "Cancel", id="dialog-cancel")]

    def __init__(self, title: str, message: str, choices: list[tuple[str, str]]) -> None:
        super().__init__(classes="dialog-screen")
        self.title_text, self.message, self.choices = title, message, choices

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(Text(self.title_text, style="bold"), classes="dialog-title")
            yield Static(Text(self.message), classes="dialog-prompt")
            with Horizontal(classes="dialog-buttons"):
                for i, (cid, label) in enumerate(self.choices):
                    yield Button(label, id=f"choice-{cid}", variant="primary" if i == 0 else "default")

    def on_mount(self) -> None:
        self.query(Button).first().focus()

    @on(Button.Pressed)
    def chosen(self, event: Button.Pressed) -> None:
        self.dismiss((event.button.id or "").removeprefix("choice-"))

    def action_cancel(self) -> None:
        self.dismiss(None)
