"""The bench's charts: one picture per chart for the current window, built in a worker.

Mixed into :class:`~workbench.tui.screens.bench.BenchScreen`; a newer request replaces an older
one (exclusive worker, and a token that older results no longer match).
"""
from __future__ import annotations

from textual import work
from textual.worker import get_current_worker

from workbench.tui.messages import ChartsReady
from workbench.tui.plotting import build, chart_data, label_width
from workbench.tui.session import Snapshot
from workbench.tui.widgets.control_chart import ControlChart
from workbench.tui.window import Window, follow, window_at

MIN_WINDOW = 8
"""The fewest subgroups a window shows."""
FIT_PER_COLUMN = 4
"""The first view shows the whole series when it needs no more than this many subgroups a plot column."""


class BenchCharts:
    """Requests and shows the location and spread pictures (``self.snap``, ``self.window`` live on the screen)."""

    def _default_size(self) -> int:
        """The whole series when it fits the plot (at most FIT_PER_COLUMN subgroups a column, every flagged
        point still drawn), else one subgroup per plot column (the y labels take about 13 columns)."""
        width = self.query_one("#location").size.width or self.app.size.width
        cols = max(MIN_WINDOW, width - 13)
        m = self.snap.dataset.m if self.snap is not None else 0
        return m if 0 < m <= FIT_PER_COLUMN * cols else cols

    def request_charts(self) -> None:
        snap = self.snap
        if snap is None:
            return
        widgets = [self.query_one("#location", ControlChart), self.query_one("#spread", ControlChart)]
        sizes = [(w.size.width, w.size.height) for w in widgets]
        if sizes[0][0] <= 0 or sizes[0][1] <= 0:
            return
        if self.window is None or self.auto_window:
            size = self._default_size()
            if self.window is None and size < snap.dataset.m and not getattr(self, "_newest_said", False):
                # too long to show whole: start on the newest part, and say so
                self._newest_said = True
                self.cursor = snap.dataset.m - 1
                self.notify(f"Showing the newest {size:,} of {snap.dataset.m:,} subgroups; 0 shows the whole "
                            "series, Home goes to the first.", timeout=3.5)
            if self.window is None or self.window.size != min(size, snap.dataset.m):
                start = self.window.start if self.window is not None else self.cursor
                self.window = follow(window_at(start, size, snap.dataset.m), self.cursor, snap.dataset.m)
        win = self.window
        self.token += 1
        self._build(self.token, snap, win, sizes, self.selected_range())

    @work(thread=True, exclusive=True, group="charts", description="charts")
    def _build(self, token: int, snap: Snapshot, win: Window, sizes: list[tuple[int, int]],
               selected: tuple[int, int] | None = None) -> None:
        a = snap.analysis
        from workbench.core.analysis import characteristic_of
        from workbench.core.text import printable
        name, unit = characteristic_of(a)
        what = printable(", ".join(t for t in (name, unit) if t)) or None
        changes = snap.marks.changes or {}
        charts = [chart_data(c, snap.marks.codes[c.name], what, changes.get(c.name)) for c in a.charts[:2]]
        cols = max(sizes[0][0] - 14, 10)
        lw = label_width(charts, win, cols)
        m = snap.dataset.m
        caption = f"subgroups {win.start + 1:,}–{win.stop:,} of {m:,}"
        if win.size > sizes[0][0] - lw - 2:
            caption += " · min/max per column"
        if a.phase2_start is not None:
            caption += f" · Phase II from {a.phase2_start + 1:,}"
        worker = get_current_worker()
        pics = []
        try:
            for i, (data, (w, h)) in enumerate(zip(charts, sizes)):
                if worker.is_cancelled:
                    return
                last = i == len(charts) - 1
                pics.append(build(data, win, w, h, lw, snap.dataset.labels, a.phase2_start, xticks=last,
                                  token=token, caption=caption if i == 0 else "", selected=selected))
        except Exception as exc:  # a chart that cannot be drawn says so in its place; the bench goes on
            self.post_message(ChartsReady(token, (), f"cannot draw this window: {type(exc).__name__}: {exc}"))
            return
        self.post_message(ChartsReady(token, tuple(pics)))

    def on_charts_ready(self, msg: ChartsReady) -> None:
        if msg.token != self.token or self.snap is None:
            return
        widgets = [self.query_one("#location", ControlChart), self.query_one("#spread", ControlChart)]
        if msg.error:
            for w in widgets:
                w.placeholder = msg.error
                w.show(None)
            return
        if any(w.size.width != pic.width or w.size.height != pic.height for w, pic in zip(widgets, msg.pictures)):
            self.request_charts()  # the size changed while it was drawn
            return
        for w, pic, data in zip(widgets, msg.pictures, self.snap.analysis.charts):
            w.show(pic, self.snap.marks.codes[data.name])
            w.set_cursor(self.cursor)

    def on_control_chart_resized(self) -> None:
        self.request_charts()
