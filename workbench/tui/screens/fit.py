"""The fit view: capability against the specification, in the workbench's own composition.

Left, the pictures on one horizontal scale: the specification strip (LSL … USL once, the within and
overall natural spread as two bands, mean and target marked) above the normal quantile plot of the
readings with the model's line.  Right, the figures as statements led by the verdict: each index with
its bound, the fallout one sentence per side, the model and why, the resolution, the size of any
departure from normal, the warnings and the notes.  The standing cautions stay at the top.
"""
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
from workbench.tui.widgets.keybar import KeyBar

METHODS = ("normal", "box-cox", "percentile", "auto")
CAUTION = ("Indices are estimates from a sample, meaningful only for a stable process (in statistical control); "
           "they support, and never replace, the customer's requirements, your quality system and local "
           "regulations.")


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


STYLE = {"verdict": "bold", "warning": "bold", "note": "italic", "practice": "dim"}


def characteristic(snap: Snapshot) -> tuple[str | None, str | None]:
    """The characteristic's name and unit (printable), when the setup or the data file's header states them."""
    from workbench.core.analysis import characteristic_of
    from workbench.core.text import printable
    return tuple(printable(v) if v else None for v in characteristic_of(snap.analysis))


def figures_text(says: list[tuple[str, str]], gate: Text | None = None) -> Text:
    """The statements as one text: the verdict first (then the stability gate), warnings marked with !,
    notes set apart."""
    t = Text()
    last = None
    for kind, sentence in says:
        if kind in ("warning", "note") and kind != last:
            t.append("\nWarnings\n" if kind == "warning" else "\nNotes\n", style="bold underline")
        prefix = "! " if kind == "warning" else ("· " if kind == "note" else "")
        t.append(prefix + sentence + "\n", style=STYLE.get(kind, ""))
        if kind == "verdict":
            if gate is not None:
                t.append_text(gate)
                t.append("\n")
            t.append("\n")
        last = kind
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
            with VerticalScroll(id="fit-pictures"):
                yield Static("drawing…", id="fit-strip", markup=False)
                yield Static("", id="fit-plot", markup=False)
            with VerticalScroll(id="fit-side"):
                yield Static("assessing…", id="fit-text", markup=False)
        yield KeyBar()

    def on_mount(self) -> None:
        self.query_one("#fit-side").border_title = "figures"
        self.query_one("#fit-pictures").border_title = "specification and readings"
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
        name, unit = characteristic(snap)
        what = (f" of {name}" if name else "") + (f" ({unit})" if unit else "")
        t.append(f"Fit — capability{what} against the specification\n", style="bold")
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
        return t

    def compute(self) -> None:
        pics = self.query_one("#fit-pictures")
        self.token += 1
        self._assess(self.token, self.snap, max(pics.size.width - 5, 40), max(pics.size.height - 12, 6),
                     self.preview)

    @work(thread=True, exclusive=True, group="fit", description="fit")
    def _assess(self, token: int, snap: Snapshot, width: int, plot_height: int,
                preview: str | None = None) -> None:
        from workbench.core.analysis import capability_for
        from workbench.core.capability.report import pictures
        from workbench.core.capability.statements import statements
        a = snap.analysis
        name, unit = characteristic(snap)
        try:
            from workbench.core.case.answers import statuses
            states = statuses(a, snap.state)
            cap = capability_for(a, states)
            if cap is not None and preview and preview != cap.spec.method:  # looking only: nothing recorded
                from workbench.core.analysis import open_signals
                from workbench.core.capability.assess import assess
                from workbench.core.analysis import capability_sigma
                cap = assess(a.readings(), capability_sigma(a), a.sigma_method, replace(cap.spec, method=preview),
                             open_signals=len(open_signals(a, states)))
            if cap is None:
                raise ValueError("no specification is set (press s on the bench to give LSL / USL)")
            strip, legend, plot = pictures(cap, a.readings(), width, unit, plot_height)
            mk = snap.marks
            gate = stability_text(mk.open_count, mk.explained_count + mk.no_cause_count, mk.excluded_count)
            words = figures_text(statements(cap, unit, name), gate)
        except Exception as exc:  # the reason is shown in the view
            self.post_message(Computed("fit", token, None, str(exc) or type(exc).__name__))
            return
        self.post_message(Computed("fit", token, (strip + "\n" + legend, plot or "", words, cap)))

    @on(Computed)
    def computed(self, msg: Computed) -> None:
        if msg.token != self.token:
            return
        text = self.query_one("#fit-text", Static)
        if msg.error:
            text.update(Text(f"No capability figures: {msg.error}", style="bold"))
            self.query_one("#fit-strip", Static).update("")
            self.query_one("#fit-plot", Static).update("")
            return
        strip, plot, words, self.capability = msg.result
        self.query_one("#fit-strip", Static).update(Text(strip, no_wrap=True))
        self.query_one("#fit-plot", Static).update(Text(plot, no_wrap=True))
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
