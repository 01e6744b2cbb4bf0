"""An investigation of the bundled demo from start to finish, and the case reopening the same."""
from __future__ import annotations

from workbench.core.analysis import analyse, limits_snapshot
from workbench.core.model import Exclusion
from workbench.tui.dialogs.exclude import ExcludeDialog
from workbench.tui.dialogs.reason import ReasonDialog
from workbench.tui.screens.bench import BenchScreen
from workbench.tui.screens.breakdown import BreakdownScreen
from workbench.tui.screens.trail import TrailScreen

from tui_helpers import demo_app, planted_causes, screen_text, settle


def _drift() -> dict:
    # demo_data/planted.json (written by demo_data/generate.py): the drifting head of the filler
    return next(c for c in planted_causes() if c["file"] == "filler_line3.csv" and c["kind"] == "drift")


async def test_demo_investigation_round_trip(in_tmp, opened):
    drift = _drift()
    app = demo_app()
    async with app.run_test(size=(120, 36), notifications=True) as pilot:
        await settle(pilot)
        bench = app.screen
        assert isinstance(bench, BenchScreen) and bench.cursor == 0
        snap = app.snapshot
        before = limits_snapshot(snap.analysis)

        await pilot.press("n")
        await settle(pilot)
        label = str(snap.dataset.labels[bench.cursor])
        # demo_data/README.md: the drift shows first as ranges beyond the R limit inside the drift window
        assert drift["first"] <= label <= drift["last"]
        assert snap.marks.rows[snap.marks.row_at(bench.cursor)].state == "open"

        await pilot.press("enter")
        await settle(pilot)
        breakdown = app.screen
        assert isinstance(breakdown, BreakdownScreen)
        # demo_data/README.md: "the breakdown points at H4" for the drift's R-chart points
        assert breakdown.result.driver == drift["stream"]
        assert f"stream {drift['stream']}" in screen_text(app)

        await pilot.press("x")
        await settle(pilot)
        assert isinstance(app.screen, ExcludeDialog)
        await pilot.press(*"nozzle H4 changed at 09:50")
        await pilot.press("enter")
        await settle(pilot)
        assert isinstance(app.screen, BreakdownScreen)

        after = app.snapshot
        assert after.state.exclusions == (Exclusion(label),)
        assert after.state.exclusion_info[label].reason == "nozzle H4 changed at 09:50"
        # the limits are recomputed without the subgroup: the same as analyse() given the exclusion
        expected = limits_snapshot(analyse(after.dataset, after.state.settings, [Exclusion(label)]))
        assert limits_snapshot(after.analysis) == expected != before
        last = after.events[-1]
        assert last.kind == "exclude" and last.payload["subgroup"] == label
        assert last.limits_before == before and last.limits_after == expected
        text = screen_text(app)
        assert "Excluded" in text and "→" in text  # the before → after summary is on screen

        await pilot.press("escape")
        await settle(pilot)
        assert isinstance(app.screen, BenchScreen) and app.screen.cursor == after.dataset.index_of(label)
        await pilot.press("t")
        await settle(pilot)
        assert isinstance(app.screen, TrailScreen)
        text = screen_text(app)
        assert "excluded subgroup" in text and "nozzle H4 changed" in text and "intact" in text
        await pilot.press("escape")
        await pilot.press("q")
    saved = (after.state.head_hash, after.state.exclusions, limits_snapshot(after.analysis), len(after.events))

    again = demo_app()
    async with opened(again, size=(120, 36)) as pilot:
        snap = again.snapshot
        assert (snap.state.head_hash, snap.state.exclusions, limits_snapshot(snap.analysis), len(snap.events)) == saved
        assert not snap.readonly
        assert snap.marks.excluded_count == 1
        await pilot.press("q")


async def test_marks_and_restore_are_recorded(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        bench = app.screen
        await pilot.press("n")
        await settle(pilot)
        row = app.snapshot.marks.row_at(bench.cursor)
        key = app.snapshot.marks.rows[row].key
        open_before = app.snapshot.marks.open_count

        await pilot.press("e")
        await settle(pilot)
        assert isinstance(app.screen, ReasonDialog)
        await pilot.press("enter")  # explained needs the cause
        await settle(pilot)
        assert isinstance(app.screen, ReasonDialog)
        assert "required" in str(app.screen.query_one("#error").render())
        await pilot.press(*"nozzle seal worn")
        await pilot.press("enter")
        await settle(pilot)
        assert app.snapshot.state.signal_state(key) == "explained"
        assert app.snapshot.marks.open_count == open_before - 1
        assert app.snapshot.events[-1].kind == "signal"

        await pilot.press("x")
        await settle(pilot)
        await pilot.press(*"test run")
        await pilot.press("enter")
        await settle(pilot)
        assert len(app.snapshot.state.exclusions) == 1
        await pilot.press("r")
        await settle(pilot)
        assert isinstance(app.screen, ReasonDialog)
        await pilot.press("enter")  # restore needs a reason too
        await settle(pilot)
        assert isinstance(app.screen, ReasonDialog)
        await pilot.press(*"was a real reading")
        await pilot.press("enter")
        await settle(pilot)
        assert app.snapshot.state.exclusions == ()
        assert [e.kind for e in app.snapshot.events][-3:] == ["signal", "exclude", "restore"]
        await pilot.press("q")


async def test_frozen_limits_mark_phase_two(in_tmp, opened):
    import numpy as np

    from tui_helpers import data_app
    rng = np.random.default_rng(3)
    rows = [f"{i + 1},{a:.2f},{b:.2f},{c:.2f}" for i, (a, b, c) in enumerate(rng.normal(20, 0.3, (30, 3)))]
    data = in_tmp / "caps.csv"
    data.write_text("sample,S1,S2,S3\n" + "\n".join(rows) + "\n", encoding="utf-8")
    app = data_app(data)
    async with opened(app, size=(120, 36)) as pilot:
        await pilot.press("L")
        await settle(pilot)
        await pilot.click("#choice-freeze")
        await settle(pilot)
        assert app.snapshot.state.frozen is not None and app.snapshot.events[-1].kind == "freeze"
        assert "frozen" in screen_text(app)
        await pilot.press("q")
    more = [f"{i + 31},{a:.2f},{b:.2f},{c:.2f}" for i, (a, b, c) in enumerate(rng.normal(21, 0.3, (10, 3)))]
    with open(data, "a", encoding="utf-8") as fh:
        fh.write("\n".join(more) + "\n")
    app = data_app(data, reuse="reuse")
    async with opened(app, size=(120, 36)) as pilot:
        snap = app.snapshot
        assert snap.dataset.m == 40 and snap.analysis.phase2_start == 30
        text = screen_text(app)
        assert "Phase II from 31" in text  # status bar and chart caption
        pic = app.screen.query_one("#location").picture
        from workbench.tui.window import column_of
        col = pic.left + column_of(30, pic.window, pic.cols)
        assert any(line[col] in "│┼┬┴" for line in pic.plain[pic.top:pic.top + pic.rows])  # the boundary line
        await pilot.press("q")
