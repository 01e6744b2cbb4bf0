"""Working through many signals in the workbench: ranges, go to, filters, summary, stream view, retract."""
from __future__ import annotations

import numpy as np

from workbench.core.rule_summary import rule_summary
from workbench.tui.dialogs.choice import ChoiceDialog
from workbench.tui.dialogs.filter import FilterDialog
from workbench.tui.dialogs.reason import ReasonDialog
from workbench.tui.filters import SignalFilter, filter_rows, goto_position
from workbench.tui.screens.bench import BenchScreen
from workbench.tui.screens.breakdown import BreakdownScreen
from workbench.tui.screens.streams import StreamScreen
from workbench.tui.screens.summary import SummaryScreen
from workbench.tui.screens.trail import TrailScreen
from workbench.tui.widgets.signal_list import SignalList

from tui_helpers import demo_app, planted_causes, screen_text, settle


def _step() -> dict:
    # demo_data/planted.json: the lot change, a step of all heads from "first" to "last"
    return next(c for c in planted_causes() if c["file"] == "filler_line3.csv" and c["kind"] == "step")


async def _type(pilot, text: str) -> None:
    await pilot.press(*[{" ": "space", ".": "full_stop", ":": "colon", "-": "minus"}.get(ch, ch) for ch in text])


async def test_a_range_excludes_the_lot_change_in_one_event(in_tmp, opened):
    step = _step()
    async with opened() as pilot:
        app = pilot.app
        bench = app.screen
        ds = app.snapshot.dataset
        first, last = ds.index_of(step["first"]), ds.index_of(step["last"])
        bench.move_to(first)
        await pilot.press("space")
        for _ in range(last - first):
            await pilot.press("right")
        await settle(pilot)
        assert bench.selected_range() == (first, last)
        # the range is drawn on both charts: its ends as vertical lines in the pictures
        for chart in ("#location", "#spread"):
            assert "range" in str(app.screen.query_one(chart).border_subtitle)
        await pilot.press("x")
        await settle(pilot)
        assert isinstance(app.screen, ReasonDialog)
        await _type(pilot, "new lot")
        await pilot.press("enter")
        await settle(pilot)
        snap = app.snapshot
        assert len(snap.state.exclusions) == last - first + 1
        ev = snap.events[-1]
        assert ev.kind == "exclude" and ev.payload["range"]["count"] == last - first + 1
        assert ev.payload["range"]["first"] == step["first"] and ev.payload["range"]["last"] == step["last"]
        assert sum(1 for e in snap.events if e.kind == "exclude") == 1
        await pilot.press("escape")  # drops the range
        assert bench.selected_range() is None


async def test_go_to_a_position_a_label_a_time_and_a_note(in_tmp, opened):
    async with opened() as pilot:
        app = pilot.app
        bench = app.screen
        ds = app.snapshot.dataset
        # the three ways to name a subgroup [definition: label, 1-based position, first at or after a time]
        assert goto_position(ds, "20") == 19
        assert goto_position(ds, str(ds.labels[30])) == 30
        assert goto_position(ds, "2026-03-03 08:07") == ds.index_of("2026-03-03 08:15")
        assert goto_position(ds, "no such thing") is None
        await pilot.press("g")
        await settle(pilot)
        assert isinstance(app.screen, ReasonDialog)
        await _type(pilot, "2026-03-03 08:07")
        await pilot.press("enter")
        await settle(pilot)
        assert bench.cursor == ds.index_of("2026-03-03 08:15")
        # a note, then found by a word of it
        await pilot.press("a")
        await settle(pilot)
        await _type(pilot, "viscosity low")
        await pilot.press("enter")
        await settle(pilot)
        bench.move_to(0)
        await pilot.press("g")
        await settle(pilot)
        await _type(pilot, "viscosity")
        await pilot.press("enter")
        await settle(pilot)
        assert bench.cursor == ds.index_of("2026-03-03 08:15")


async def test_filters_combine_show_in_the_title_and_clear_with_one_key(in_tmp, opened):
    async with opened() as pilot:
        app = pilot.app
        bench = app.screen
        rows = app.snapshot.marks.rows
        lst = bench.query_one(SignalList)
        bench.set_filter(chart="xbar", rule="zone-a")
        await settle(pilot)
        want = [r.key for r in rows if r.chart == "xbar" and r.rule == "zone-a"]  # [definition]
        assert [r.key for r in lst.rows] == want and 0 < len(want) < len(rows)
        title = str(bench.query_one("#signals").border_title)
        assert "chart xbar" in title and "rule zone-a" in title and f"{len(want)} of {len(rows)}" in title
        await pilot.press("j")
        await settle(pilot)
        assert lst.rows[lst.selected].key == want[0]
        await pilot.press("escape")
        await settle(pilot)
        assert not bench.filter.active and len(lst.rows) == len(rows)
        # the dialog: the chart r alone
        await pilot.press("F")
        await settle(pilot)
        dialog = app.screen
        assert isinstance(dialog, FilterDialog)
        dialog.query_one("#filter-chart").value = "r"
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert isinstance(app.screen, BenchScreen)
        assert {r.chart for r in lst.rows} == {"r"}
        # by driving stream (the breakdown's driver where each signal fired), computed in a worker
        bench.set_filter(stream="H4")
        await settle(pilot)
        assert bench.drivers is not None and lst.rows
        assert all(bench.drivers[r.anchor] == "H4" for r in lst.rows)


def test_filter_rows_keeps_exactly_the_matching_rows():
    from types import SimpleNamespace as R
    rows = [R(chart="xbar", rule="zone-a", state="open", anchor=1), R(chart="r", rule="beyond-limits", state="open",
            anchor=2), R(chart="xbar", rule="zone-a", state="explained", anchor=3)]
    assert filter_rows(rows, SignalFilter()).tolist() == [0, 1, 2]
    assert filter_rows(rows, SignalFilter(chart="xbar")).tolist() == [0, 2]
    assert filter_rows(rows, SignalFilter(chart="xbar", state="open")).tolist() == [0]
    assert filter_rows(rows, SignalFilter(stream="H1"), {1: "H1", 2: "H2", 3: None}).tolist() == [0]


async def test_summary_table_and_enter_filters_the_list(in_tmp, opened):
    async with opened() as pilot:
        app = pilot.app
        await pilot.press("S")
        await settle(pilot)
        screen = app.screen
        assert isinstance(screen, SummaryScreen)
        expected = rule_summary(app.snapshot.analysis)
        assert [(r.chart, r.rule, r.signals, r.firing_points) for r in screen.rows] == \
            [(r.chart, r.rule, r.signals, r.firing_points) for r in expected]
        text = screen_text(app)
        assert "expected by chance" in text and "2Φ(−3)" in text
        await pilot.press("enter")  # the first row: xbar beyond-limits
        await settle(pilot)
        bench = app.screen
        assert isinstance(bench, BenchScreen)
        assert bench.filter == SignalFilter(chart=expected[0].chart, rule=expected[0].rule)


async def test_breakdown_answers_where_you_stand_and_retract_from_the_trail(in_tmp, opened):
    async with opened() as pilot:
        app = pilot.app
        await pilot.press("n", "enter")
        await settle(pilot)
        assert isinstance(app.screen, BreakdownScreen)
        await pilot.press("e")
        await settle(pilot)
        dialog = app.screen
        assert isinstance(dialog, ReasonDialog)
        await _type(pilot, "nozzle")
        await pilot.press("enter")
        await settle(pilot)
        assert isinstance(app.screen, BreakdownScreen)
        ev = app.snapshot.events[-1]
        assert ev.kind == "signal" and ev.payload["state"] == "explained"
        marked = ev.seq
        await pilot.press("escape", "t")
        await settle(pilot)
        assert isinstance(app.screen, TrailScreen)
        await pilot.press("R")
        await settle(pilot)
        await _type(pilot, "wrong signal")
        await pilot.press("enter")
        await settle(pilot)
        snap = app.snapshot
        assert snap.events[-1].kind == "retract" and snap.events[-1].payload["event"] == marked
        assert snap.state.retracted == {marked: snap.events[-1].seq}
        assert ev.payload["key"] not in snap.state.signal_states  # back to open
        assert "[retracted by event" in screen_text(app)


async def test_stream_view_fits_80x24_and_shows_one_stream_full_size(in_tmp, opened):
    async with opened(size=(80, 24)) as pilot:
        app = pilot.app
        await pilot.press("m")
        await settle(pilot)
        screen = app.screen
        assert isinstance(screen, StreamScreen)
        charts = screen._widgets()
        assert len(charts) == 6 and all(c.picture is not None for c in charts)
        assert all(c.region.right <= 80 and c.region.bottom <= 24 for c in charts)
        await pilot.press("right", "enter")
        await settle(pilot)
        assert screen.full and screen.picked == 1
        big = charts[1]
        assert big.picture is not None and big.size.width > 60
        assert "H2" in screen_text(app)


async def test_mark_every_signal_the_filter_shows_in_one_event(in_tmp, opened):
    async with opened() as pilot:
        app = pilot.app
        bench = app.screen
        bench.set_filter(chart="r")
        await settle(pilot)
        keys = [r.key for r in bench.query_one(SignalList).rows]
        assert len(keys) >= 2
        await pilot.press("M")
        await settle(pilot)
        assert isinstance(app.screen, ChoiceDialog)
        app.screen.dismiss("no-cause-found")
        await settle(pilot)
        await _type(pilot, "gauge checked")
        await pilot.press("enter")
        await settle(pilot)
        snap = app.snapshot
        assert snap.events[-1].payload["keys"] == keys
        assert all(snap.state.signal_state(k) == "no-cause-found" for k in keys)
        assert sum(1 for e in snap.events if e.kind == "signal") == 1


async def test_notices_stay_off_the_status_bar_and_go_at_the_next_key(in_tmp, opened):
    app = demo_app()
    async with opened(app, notifications=True) as pilot:
        await pilot.press("x")
        await settle(pilot)
        await _type(pilot, "probe")
        await pilot.press("enter")
        await settle(pilot)
        assert len(app._notifications) >= 1
        rack = app.screen.query_one("ToastRack")
        status = app.screen.query_one("#status")
        location = app.screen.query_one("#location")
        for toast in rack.query("Toast"):
            r = toast.region
            assert r.bottom <= status.region.y  # never over the status bar
            assert r.x >= location.region.x + 12  # never over the chart's y axis and its labels
        await pilot.press("right")
        await settle(pilot)
        assert len(app._notifications) == 0
