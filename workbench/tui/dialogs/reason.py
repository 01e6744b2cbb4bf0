"""A dialog that asks for one line of text: a reason, a note or the cause of a signal."""
from __future__ import annotations

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Static


class ReasonDialog(ModalScreen[str | None]):
    """Ask for text; ``required`` refuses an empty answer with a visible message."""

    BINDINGS = [Binding("escape,q", "cancel", "Cancel", id="dialog-cancel")]

    def __init__(self, title: str, prompt: str, confirm: str = "Confirm", required: bool = True,
                 placeholder: str = "", value: str = "", needed: str = "A reason is required",
                 suggestions: tuple[str, ...] = ()) -> None:
        super().__init__(classes="dialog-screen")
        self.needed = needed
        self.title_text, self.prompt, self.confirm = title, prompt, confirm
        self.required, self.placeholder, self.value = required, placeholder, value
        self.suggestions = suggestions
        """Lines shown under the input: e.g. a signal's shape and the cause families often looked at first."""

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(Text(self.title_text, style="bold"), classes="dialog-title")
            yield Static(Text(self.prompt), classes="dialog-prompt")
            yield Input(value=self.value, placeholder=self.placeholder, id="reason")
            if self.suggestions:
                yield Static(Text("\n".join(self.suggestions)), id="suggestions", classes="dialog-prompt")
            yield Label("", id="error", classes="dialog-error", markup=False)
            with Horizontal(classes="dialog-buttons"):
                yield Button(self.confirm, variant="primary", id="confirm")
                yield Button("Cancel", id="cancel")

    def on_mount(self) -> None:
        self.query_one("#reason", Input).focus()

    @on(Input.Changed, "#reason")
    def typed(self, event: Input.Changed) -> None:
        """The hint that a reason is required goes as soon as one is typed."""
        if event.value.strip():
            self.query_one("#error", Label).update("")

    @on(Input.Submitted)
    @on(Button.Pressed, "#confirm")
    def submit(self) -> None:
        text = self.query_one("#reason", Input).value.strip()
        if self.required and not text:
            self.query_one("#error", Label).update(f"{self.needed}: this field cannot be empty.")
            self.query_one("#reason", Input).focus()
            return
        self.dismiss(text)

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
