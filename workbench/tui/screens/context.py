"""What changed there: the context changes near a signal, a range or a subgroup, and the column ranking."""
from __future__ import annotations

from dataclasses import dataclass

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import Static

from workbench.tui.messages import Computed
from workbench.tui.session import Snapshot
from workbench.tui.view import safe
from workbench.tui.widgets.keybar import KeyBar


@dataclass(frozen=True)
class Where:
    """What the screen looks at: a signal (its run's first point), a range, or one subgroup."""

    first: int
    last: int
    signal: str | None = None
    """The signal in words ("xbar beyond-limits"), or None for a range or a subgroup."""
    key: str | None = None
    """The signal's key (its change point, when it has one, is the anchor)."""


def title_of(snap: Snapshot, where: Where) -> str:
    labels = snap.dataset.labels
    if where.signal is not None:
        return f"What changed there — signal {where.signal} from {labels[where.first]}"
    if where.first != where.last:
        return f"What changed there — range {labels[where.first]} … {labels[where.last]}"
    return f"What changed there — subgroup {labels[where.first]}"


def text_of(snap: Snapshot, where: Where) -> Text:
    """The screen's text (built in a worker)."""
    from workbench.core.context.leads import changes_at
    from workbench.tui.context_view import range_changes, screen_text, signal_changes
    a = snap.analysis
    if where.signal is not None and where.key is not None:
        changes = signal_changes(a, where.key, where.first)
    elif where.first != where.last:
        changes = range_changes(a, where.first, where.last)
    else:
        changes = changes_at(a, where.first, "the subgroup at the cursor") if a.dataset.extras else []
    return screen_text(a, title_of(snap, where), changes)


class ContextScreen(Screen):
    """The leads of one signal, range or subgroup; escape goes back where it was opened."""

    BINDINGS = [Binding("escape", "back", "Back", id="context-back")]

    def __init__(self, where: Where) -> None:
        super().__init__(id="context")
        self.where = where
        self.token = 0

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="context-scroll"):
            yield Static("looking at the context columns…", id="context-text", markup=False)
        yield KeyBar()

    def on_mount(self) -> None:
        self.query_one("#context-scroll").focus()
        if self.app.snapshot is not None:
            self.show_snapshot(self.app.snapshot)

    def show_snapshot(self, snap: Snapshot) -> None:
        self.token += 1
        self._compute(self.token, snap)

    @work(thread=True, exclusive=True, group="context", description="what changed there")
    def _compute(self, token: int, snap: Snapshot) -> None:
        try:
            text = text_of(snap, self.where)
        except Exception as exc:  # shown in place of the text
            text = Text(f"cannot look at the context: {type(exc).__name__}: {safe(str(exc))}")
        self.post_message(Computed("context", token, text))

    @on(Computed)
    def computed(self, msg: Computed) -> None:
        if msg.what == "context" and msg.token == self.token:
            self.query_one("#context-text", Static).update(msg.result)

    def action_back(self) -> None:
        self.app.pop_screen()
