"""The stream view: each stream charted on its own, as small multiples; Enter shows one full size.

Every stream's readings become an individuals series with its own I-MR limits
(:func:`workbench.core.stream_charts.stream_charts`, computed in a worker).  The small multiples
fit 80×24; Enter on one shows it full size with its own signals, and n / N step through them.
The note, explain, no-cause and reopen keys answer the case's signal at the subgroup under the
cursor (as on the bench), so the engineer can record what they see without going back.
"""
from __future__ import annotations

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Grid
from textual.screen import Screen
from textual.widgets import Static

from workbench.tui.messages import Computed
from workbench.tui.session import Snapshot
from workbench.tui.view import marks_for, safe
from workbench.tui.widgets.control_chart import ControlChart
from workbench.tui.widgets.keybar import KeyBar
from workbench.tui.window import Window


class StreamScreen(Screen):
    """Small multiples of the streams; one of them full size."""

    BINDINGS = [
        Binding("escape", "back", "Back", id="streams-back"),
        Binding("right,l", "pick(1)", "Next stream / subgroup", id="streams-next", show=False),
        Binding("left,h", "pick(-1)", "Previous stream / subgroup", id="streams-prev", show=False),
        Binding("enter", "full", "Full size / all streams", id="streams-full"),
        Binding("n", "signal(1)", "Next signal of the stream", id="streams-next-signal"),
        Binding("N", "signal(-1)", "Previous signal of the stream", id="streams-prev-signal", show=False),
        Binding("a", "note", "Note", id="streams-note"),
        Binding("e", "mark('explained')", "Explained", id="streams-explain"),
        Binding("c", "mark('no-cause-found')", "No cause", id="streams-no-cause"),
        Binding("o", "mark('open')", "Reopen", id="streams-reopen", show=False),
    ]

    def __init__(self) -> None:
        super().__init__(id="streams")
        self.snap: Snapshot | None = None
        self.charts: list = []
        self.picked = 0
        self.full = False
        self.cursor = 0
        self.token = 0

    def compose(self) -> ComposeResult:
        yield Static("each stream on its own — computing…", id="streams-head", markup=False)
        streams = self.app.snapshot.dataset.streams if self.app.snapshot is not None else ()
        with Grid(id="streams-grid"):
            for j, _ in enumerate(streams):
                yield ControlChart(id=f"stream-{j}", classes="stream-chart")
        yield Static(id="streams-info", markup=False)
        yield KeyBar()

    def on_mount(self) -> None:
        if self.app.snapshot is not None:
            self.show_snapshot(self.app.snapshot)

    def show_snapshot(self, snap: Snapshot) -> None:
        self.snap = snap
        self.token += 1
        self._compute(self.token, snap)

    @work(thread=True, exclusive=True, group="streams", description="streams")
    def _compute(self, token: int, snap: Snapshot) -> None:
        from workbench.core.stream_charts import stream_charts
        try:
            charts = [(sc, marks_for(sc.analysis, None)) for sc in stream_charts(snap.analysis)]
        except Exception as exc:  # shown in place of the charts
            self.post_message(Computed("streams", token, None, str(exc)))
            return
        self.post_message(Computed("streams", token, charts))

    def _draw(self) -> None:
        self.token += 1
        sizes = [(w.size.width, w.size.height) for w in self._widgets()]
        self._build(self.token, self.charts, sizes, self.snap.dataset.labels, self.full, self.picked)

    @work(thread=True, exclusive=True, group="stream-pictures", description="stream-pictures")
    def _build(self, token: int, charts: list, sizes: list, labels, full: bool, picked: int) -> None:
        from workbench.tui.plotting import build, chart_data, label_width
        pics = []
        for j, ((sc, marks), (w, h)) in enumerate(zip(charts, sizes)):
            if w <= 0 or h <= 0 or (full and j != picked):
                pics.append(None)
                continue
            c = sc.analysis.location
            data = chart_data(c, marks.codes[c.name])
            win = Window(0, sc.analysis.dataset.m)
            lw = label_width([data], win, max(w - 14, 10))
            caption = f"{sc.stream} · {len(sc.analysis.signals)} signal(s)"
            pics.append(build(data, win, w, h, lw, labels, None, xticks=full, token=token, caption=caption))
        self.post_message(Computed("stream-pictures", token, pics))

    def _widgets(self) -> list[ControlChart]:
        return list(self.query(".stream-chart").results(ControlChart))

    @on(Computed)
    def computed(self, msg: Computed) -> None:
        if msg.token != self.token:
            return
        if msg.what == "streams":
            if msg.error:
                self.query_one("#streams-head", Static).update(Text(f"no stream view: {safe(msg.error)}"))
                return
            self.charts = msg.result
            self._describe()
            self.call_after_refresh(self._draw)
        elif msg.what == "stream-pictures":
            for w, pic, (sc, marks) in zip(self._widgets(), msg.result, self.charts):
                if pic is not None:
                    w.show(pic, marks.codes[sc.analysis.location.name])
                    w.set_cursor(self.cursor if self.full else None)

    def _describe(self) -> None:
        if not self.charts:
            return
        sc, _marks = self.charts[self.picked]
        b = sc.analysis
        i = b.location
        head = Text()
        head.append("Each stream on its own", style="bold")
        head.append(f" — I-MR on each stream's readings, its own limits (Montgomery). Picked: {safe(sc.stream)}: "
                    f"centre {i.center[0]:.5g}, LCL {i.lcl[0]:.5g}, UCL {i.ucl[0]:.5g}, "
                    f"{len(b.signals)} signal(s). ← → pick · Enter {'all streams' if self.full else 'full size'}")
        self.query_one("#streams-head", Static).update(head)
        for j, w in enumerate(self._widgets()):
            sc_j = self.charts[j][0]
            w.border_title = f"{safe(sc_j.stream)} · {len(sc_j.analysis.signals)}"
            w.set_class(j == self.picked, "picked")
            w.display = not self.full or j == self.picked
        self.query_one("#streams-grid").set_class(self.full, "full")
        self._info()

    def _info(self) -> None:
        if not self.full or self.snap is None:
            self.query_one("#streams-info", Static).update("")
            return
        labels = self.snap.dataset.labels
        row = self.snap.marks.row_at(self.cursor)
        words = f"subgroup {safe(labels[self.cursor])} ({self.cursor + 1:,} of {len(labels):,})"
        if row is not None:
            r = self.snap.marks.rows[row]
            words += f" · case signal {r.chart} {r.rule} ({r.state})"
        self.query_one("#streams-info", Static).update(words)

    def on_control_chart_resized(self) -> None:
        if self.charts:
            self._draw()

    # -- actions ------------------------------------------------------------------------------

    def action_pick(self, step: int) -> None:
        if not self.charts:
            return
        if self.full:
            self.cursor = max(0, min(self.cursor + step, self.snap.dataset.m - 1))
            for w in self._widgets():
                w.set_cursor(self.cursor)
            self._info()
            return
        self.picked = (self.picked + step) % len(self.charts)
        self._describe()

    def action_full(self) -> None:
        if not self.charts:
            return
        self.full = not self.full
        self._describe()
        self.call_after_refresh(self._draw)

    def action_signal(self, step: int) -> None:
        if not self.charts:
            return
        sc, _ = self.charts[self.picked]
        fired = sorted({s.fired[0] if s.fired else s.first for s in sc.analysis.signals})
        ahead = [p for p in fired if (p > self.cursor if step > 0 else p < self.cursor)]
        if not ahead:
            self.notify(f"No signal of {safe(sc.stream)} that way.", timeout=3)
            return
        self.cursor = ahead[0] if step > 0 else ahead[-1]
        if not self.full:
            self.full = True
            self._describe()
            self.call_after_refresh(self._draw)
        for w in self._widgets():
            w.set_cursor(self.cursor)
        self._info()

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        if action in ("note", "mark"):
            snap = self.snap
            if snap is None or snap.readonly or self.app.busy or not self.full:
                return None
        return True

    def action_note(self) -> None:
        self.app.note_flow(str(self.snap.dataset.labels[self.cursor]))

    def action_mark(self, state: str) -> None:
        row = self.snap.marks.row_at(self.cursor)
        self.app.mark_flow(self.snap.marks.rows[row].key if row is not None else None, state)

    def action_back(self) -> None:
        self.app.pop_screen()
