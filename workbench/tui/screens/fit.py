"""The fit view: capability against the specification, with its histogram, bounds and cautions."""
from __future__ import annotations

from dataclasses import replace

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, VerticalScroll
from textual.screen import Screen
from textual.widgets import Static

from workbench.tui.messages import Computed
from workbench.tui.session import Snapshot
from workbench.tui.widgets.histogram import FitPlot, fit_picture
from workbench.tui.widgets.keybar import KeyBar

METHODS = ("normal", "box-cox", "percentile", "auto")
CAUTION = ("Capability indices are estimates from a sample, and they are only meaningful for a stable "
           "process (in statistical control). They support, and never replace, the customer's requirements, "
           "your quality system and local regulations.")


def stability_text(open_count: int, explained: int, excluded: int) -> Text:
    t = Text()
    t.append("Stability gate: ", style="bold")
    if open_count:
        s = "signal" if open_count == 1 else "signals"
        t.append(f"{open_count} open {s} on the charts — the process is not shown to be stable, so these "
                 "indices describe the readings so far and do not predict future output. Investigate the "
                 "signals first.", style="bold")
    else:
        t.append(f"no open signals on the charts ({explained} explained or no cause found, {excluded} "
                 "excluded from the limits).")
    return t


class FitScreen(Screen):
    """Capability of the non-excluded readings.  ``1``–``4`` preview a method (nothing is recorded);
    ``u`` uses the previewed method for the case (one setup event in the trail)."""

    BINDINGS = [
        Binding("escape", "back", "Back", id="fit-back"),
        Binding("1", "method('normal')", "Normal", id="fit-normal"),
        Binding("2", "method('box-cox')", "Box-Cox", id="fit-box-cox"),
        Binding("3", "method('percentile')", "Percentile", id="fit-percentile"),
        Binding("4", "method('auto')", "Auto", id="fit-auto"),
        Binding("u", "use_method", "Use this method for the case", id="fit-use"),
        Binding("s", "setup", "Setup", id="fit-setup"),
    ]

    def __init__(self) -> None:
        super().__init__(id="fit")
        self.snap: Snapshot | None = None
        self.token = 0
        self.capability = None
        self.preview: str | None = None
        """A method looked at but not chosen for the case (None: the case's own)."""
        """The capability shown (core Capability; its gate counts the case's open signals)."""

    def compose(self) -> ComposeResult:
        yield Static(id="fit-head", markup=False)
        with Horizontal(id="fit-body"):
            yield FitPlot(id="fit-plot")
            with VerticalScroll(id="fit-side"):
                yield Static("assessing…", id="fit-text", markup=False)
        yield KeyBar()

    def on_mount(self) -> None:
        self.query_one("#fit-side").border_title = "capability"
        if self.app.snapshot is not None:
            self.show_snapshot(self.app.snapshot)

    def spec(self):
        return self.snap.state.settings.spec if self.snap is not None else None

    def show_snapshot(self, snap: Snapshot) -> None:
        self.snap = snap
        self.query_one("#fit-head", Static).update(self._head())
        spec = self.spec()
        has_spec = spec is not None and (spec.lsl is not None or spec.usl is not None)
        self.query_one("#fit-body").display = has_spec
        if has_spec:
            self.compute()
        self.refresh_bindings()

    def _head(self) -> Text:
        snap, spec = self.snap, self.spec()
        t = Text()
        t.append("Fit — capability against the specification\n", style="bold")
        t.append(CAUTION + "\n", style="italic")
        if spec is None or (spec.lsl is None and spec.usl is None):
            t.append("\nNo specification is set, so there is nothing to fit against. Press s to open the setup "
                     "and enter LSL and/or USL (with a target and the required index if you have them).",
                     style="bold")
            return t
        t.append("Method: ")
        shown = self.preview or spec.method
        for i, m in enumerate(METHODS, 1):
            t.append(f" {i} {m} ", style="bold reverse" if m == shown else "")
            t.append(" ")
        if self.preview:
            t.append(f" previewing — the case uses {spec.method}; u: use this method for the case", style="italic")
        t.append("\n")
        mk = snap.marks
        t.append_text(stability_text(mk.open_count, mk.explained_count + mk.no_cause_count, mk.excluded_count))
        return t

    def compute(self) -> None:
        plot = self.query_one(FitPlot)
        side = self.query_one("#fit-side")
        self.token += 1
        self._assess(self.token, self.snap, plot.size.width, plot.size.height, max(side.size.width - 2, 40),
                     self.preview)

    @work(thread=True, exclusive=True, group="fit")
    def _assess(self, token: int, snap: Snapshot, width: int, height: int, text_width: int,
                preview: str | None = None) -> None:
        from workbench.core.analysis import capability_for
        from workbench.core.capability.report import capability_text
        a = snap.analysis
        try:
            from workbench.core.case.answers import statuses
            states = statuses(a, snap.state)
            cap = capability_for(a, states)
            if cap is not None and preview and preview != cap.spec.method:  # looking only: nothing recorded
                from workbench.core.analysis import open_signals
                from workbench.core.capability.assess import assess
                cap = assess(a.readings(), a.sigma_within, a.sigma_method, replace(cap.spec, method=preview),
                             open_signals=len(open_signals(a, states)))
            if cap is None:
                raise ValueError("no specification is set (press s on the bench to give LSL / USL)")
            picture = fit_picture(cap, a.readings(), width, height)
            words = Text(capability_text(cap, text_width))
        except Exception as exc:  # the reason is shown in the view
            self.post_message(Computed("fit", token, None, str(exc) or type(exc).__name__))
            return
        self.post_message(Computed("fit", token, (picture, words, cap)))

    @on(Computed)
    def computed(self, msg: Computed) -> None:
        if msg.token != self.token:
            return
        text = self.query_one("#fit-text", Static)
        if msg.error:
            text.update(Text(f"No capability figures: {msg.error}", style="bold"))
            self.query_one(FitPlot).show(None)
            return
        picture, words, self.capability = msg.result
        self.query_one(FitPlot).show(picture)
        text.update(words)

    def on_resize(self) -> None:
        if self.snap is not None and self.query_one("#fit-body").display:
            self.call_after_refresh(self.compute)

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        snap = self.snap
        if action in ("method", "setup") and (snap is None or snap.readonly or self.app.busy):
            return None
        if action == "method":
            spec = self.spec()
            if spec is None or (spec.lsl is None and spec.usl is None) or (self.preview or spec.method) == parameters[0]:
                return None
        if action == "use_method":
            return True if self.preview and snap is not None and not snap.readonly and not self.app.busy else None
        return True

    def action_back(self) -> None:
        self.app.pop_screen()

    def action_setup(self) -> None:
        self.app.setup_flow()

    def action_method(self, method: str) -> None:
        """Look at another method: the figures change on screen only (nothing goes in the trail)."""
        self.preview = None if method == self.spec().method else method
        self.query_one("#fit-head", Static).update(self._head())
        self.compute()
        self.refresh_bindings()

    def action_use_method(self) -> None:
        """Use the previewed method for the case: one setup event."""
        method, self.preview = self.preview, None
        settings = self.snap.state.settings
        self.app.settings_flow(replace(settings, spec=replace(settings.spec, method=method)),
                               f"capability method {method}")
