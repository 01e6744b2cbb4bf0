"""The exclude dialog: reason (required), cause category, scope (subgroup or one reading)."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, RadioButton, RadioSet, Select, Static

from workbench.core.model import Exclusion

from workbench.tui.view import safe


@dataclass(frozen=True)
class ExcludeChoice:
    """What the user confirmed."""

    target: Exclusion
    reason: str
    cause: str | None


class ExcludeDialog(ModalScreen[ExcludeChoice | None]):
    """Leave a subgroup, or one of its readings, out of the limits."""

    BINDINGS = [Binding("escape,q", "cancel", "Cancel", id="dialog-cancel")]

    def __init__(self, label: str, streams: tuple[str, ...], causes: tuple[str, ...],
                 stream: str | None = None, signal_words: str | None = None,
                 excluded_streams: frozenset[str] = frozenset(),
                 preview: Callable[[str | None], tuple[str, ...]] | None = None,
                 suggestions: tuple[str, ...] = ()) -> None:
        super().__init__(classes="dialog-screen")
        self.label, self.streams, self.causes = label, streams, causes
        self.stream, self.signal_words = stream, signal_words
        self.choosable = tuple(s for s in streams if s not in excluded_streams)
        self.preview = preview or (lambda scope: ())
        """Every signal the exclusion of the subgroup (None) or of one reading (its stream) answers, in words."""
        self._previews: dict[str | None, tuple[str, ...]] = {}
        self.suggestions = suggestions
        """The signal's shape and the cause families often looked at first (shown, never chosen)."""

    def compose(self) -> ComposeResult:
        with VerticalScroll(classes="dialog"):  # scrolls when the terminal is short (80×24)
            yield Static(Text(f"Exclude from the limits — subgroup {safe(self.label)}", style="bold"),
                         classes="dialog-title")
            if self.signal_words:
                yield Static(Text(f"Answers the signal: {self.signal_words}"), classes="dialog-prompt")
            yield Static(self._answers_text(self._initial_scope()), id="answers", classes="dialog-prompt")
            yield Static("Reason (required): why is this point not part of the process?", markup=False)
            yield Input(placeholder="e.g. nozzle 4 blocked, fixed at 10:40", id="reason")
            yield Static("Cause category", markup=False)
            yield Select([(Text(safe(c)), c) for c in self.causes], prompt="(none)", id="cause")
            if self.suggestions:
                yield Static(Text("\n".join(self.suggestions)), id="suggestions", classes="dialog-prompt")
            if self.choosable and len(self.streams) > 1:
                with RadioSet(id="scope"):
                    yield RadioButton("the whole subgroup", value=self.stream is None, id="scope-subgroup")
                    yield RadioButton("one reading (stream below)", value=self.stream is not None,
                                      id="scope-reading")
                start = self.stream if self.stream in self.choosable else self.choosable[0]
                yield Select([(Text(safe(s)), s) for s in self.choosable], value=start, allow_blank=False,
                             id="stream", disabled=self.stream is None)
            yield Label("", id="error", classes="dialog-error", markup=False)
            with Horizontal(classes="dialog-buttons"):
                yield Button("Exclude", variant="warning", id="confirm")
                yield Button("Cancel", id="cancel")

    def on_mount(self) -> None:
        self.query_one("#reason", Input).focus()

    def _initial_scope(self) -> str | None:
        if self.stream is None or not self.choosable or len(self.streams) <= 1:
            return None
        return self.stream if self.stream in self.choosable else self.choosable[0]

    def _answers_text(self, scope: str | None) -> Text:
        """What the exclusion answers for this scope (a reading answers only what stops firing without it)."""
        if scope not in self._previews:
            self._previews[scope] = self.preview(scope)
        answers = self._previews[scope]
        if answers:
            head = ("Signals this exclusion answers:" if scope is None else
                    f"Leaving out reading {safe(scope)} (the subgroup stays, recomputed without it) answers:")
            return Text(head + "\n" + "\n".join(f"  {safe(a)}" for a in answers))
        if scope is None:
            return Text("It answers no signal: none has all its firing points here.")
        return Text(f"Leaving out reading {safe(scope)} answers no signal: the subgroup stays in the limits, "
                    "recomputed from its other readings, and nothing that fires here stops firing.")

    def _show_answers(self) -> None:
        self.query_one("#answers", Static).update(self._answers_text(self._stream()))

    @on(RadioSet.Changed, "#scope")
    def scope_changed(self, event: RadioSet.Changed) -> None:
        self.query_one("#stream", Select).disabled = event.pressed.id != "scope-reading"
        self._show_answers()

    @on(Select.Changed, "#stream")
    def stream_changed(self) -> None:
        self._show_answers()

    def _stream(self) -> str | None:
        if not self.query("#scope"):
            return None
        if not self.query_one("#scope-reading", RadioButton).value:
            return None
        value = self.query_one("#stream", Select).value
        return value if isinstance(value, str) else None

    @on(Input.Changed, "#reason")
    def typed(self, event: Input.Changed) -> None:
        """The hint that a reason is required goes as soon as one is typed."""
        if event.value.strip():
            self.query_one("#error", Label).update("")

    @on(Input.Submitted)
    @on(Button.Pressed, "#confirm")
    def submit(self) -> None:
        reason = self.query_one("#reason", Input).value.strip()
        if not reason:
            self.query_one("#error", Label).update("A reason is required: say why this point is left out.")
            self.query_one("#reason", Input).focus()
            return
        cause = self.query_one("#cause", Select).value
        self.dismiss(ExcludeChoice(Exclusion(self.label, self._stream()), reason,
                                   cause if isinstance(cause, str) else None))

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
