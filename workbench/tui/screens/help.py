"""Help: every key of every screen, with what it does."""
from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from workbench.tui.keys import APP_BINDINGS, KEY_NAMES, key_text  # noqa: F401 (re-exported)
from workbench.tui.plotting import COLOUR, GLYPH, rgb

def binding_groups() -> list[tuple[str, list[Binding]]]:
    """(screen title, bindings) for every screen of the workbench."""
    from workbench.tui.screens.bench import BenchScreen
    from workbench.tui.screens.breakdown import BreakdownScreen
    from workbench.tui.screens.context import ContextScreen
    from workbench.tui.screens.fit import FitScreen
    from workbench.tui.screens.streams import StreamScreen
    from workbench.tui.screens.summary import SummaryScreen
    from workbench.tui.screens.trail import TrailScreen
    groups = [("Bench", BenchScreen.BINDINGS), ("Breakdown", BreakdownScreen.BINDINGS), ("Fit", FitScreen.BINDINGS),
              ("Trail", TrailScreen.BINDINGS), ("Summary", SummaryScreen.BINDINGS),
              ("What changed there", ContextScreen.BINDINGS),
              ("Stream view", StreamScreen.BINDINGS), ("Everywhere", APP_BINDINGS),
              ("Dialogs", [Binding("escape,q", "cancel", "Cancel the dialog (q outside a text field)", id="dialog-cancel"),
                           Binding("enter", "confirm", "Confirm (in a text field)", id="dialog-confirm"),
                           Binding("ctrl+s", "apply", "Apply the setup", id="dialog-apply"),
                           Binding("tab", "focus_next", "Next field", id="dialog-next")])]
    return [(title, [b for b in bindings if isinstance(b, Binding)]) for title, bindings in groups]


def help_text() -> Text:
    t = Text()
    for title, bindings in binding_groups():
        t.append(f"{title}\n", style="bold underline")
        for b in bindings:
            t.append(f"  {key_text(b.key):<16}", style="bold")
            t.append(f"{b.description}\n")
        t.append("\n")
    t.append("Glyphs\n", style="bold underline")
    for cls, words in ((1, "point in an open signal"), (2, "point in a signal marked explained or no cause found"),
                       (3, "point excluded from the limits"), (0, "point in control")):
        t.append(f"  {GLYPH[cls]}  ", style=f"bold {rgb(COLOUR[cls])}")
        t.append(words + "\n")
    from workbench.tui.plotting import CHANGE, CHANGE_GLYPH
    t.append(f"  {CHANGE_GLYPH}  ", style=f"bold {rgb(CHANGE)}")
    t.append("where a sustained shift most likely began (a signal's change point; also in the signals list)\n")
    t.append("  the reversed column is the cursor; a vertical line marks the start of Phase II (frozen limits)\n")
    return t


class HelpScreen(ModalScreen[None]):
    """Lists every key; escape or ? closes it."""

    BINDINGS = [Binding("escape,question_mark,q", "close", "Close help", id="help-close")]

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog wide-dialog", id="help-box"):
            yield Static(Text("Keys — every action is also in the command palette (ctrl+p)", style="bold"),
                         classes="dialog-title")
            with VerticalScroll():
                yield Static(help_text(), id="help-text")

    def action_close(self) -> None:
        self.dismiss(None)
