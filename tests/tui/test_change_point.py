"""Where a shift began, on the chart and in the signals list; shape and cause families in the dialogs.

The demo's planted step (demo_data/planted.json: a new concentrate lot from 2026-03-03 08:00, written by the
seeded generator, not by the estimator) is the reference for the marker: the change point of the mean
chart's run there must be drawn at that subgroup's column.  Cause families: Western Electric (1956) /
Montgomery, patterns on control charts [common practice, from memory] — shown, never chosen.
"""
from __future__ import annotations

from textual.widgets import Select

from workbench.tui.dialogs.exclude import ExcludeDialog
from workbench.tui.dialogs.reason import ReasonDialog
from workbench.tui.plotting import CHANGE_GLYPH, legend_text
from workbench.tui.screens.bench import BenchScreen
from workbench.tui.widgets.control_chart import ControlChart
from workbench.tui.widgets.signal_list import SignalList
from workbench.tui.window import column_of

from tui_helpers import demo_app, planted_causes, screen_text, settle


def _step():
    return next(p for p in planted_causes() if p["kind"] == "step" and p["file"] == "filler_line3.csv")


def _row_began_at(app, label):
    rows = app.snapshot.marks.rows
    return next(i for i, r in enumerate(rows) if r.chart == "xbar" and r.began == f"began {label}")


def _column_has(pic, col, glyph) -> bool:
    return any(line[pic.left + col] == glyph for line in pic.plain[pic.top:pic.top + pic.rows]
               if len(line) > pic.left + col)


async def test_the_change_point_is_drawn_at_the_planted_step_and_named_in_the_list(in_tmp, opened):
    """Mutation killed: the marker drawn at the first flagged point instead of the change point, or on the
    wrong chart; the list's began text dropped."""
    step = _step()["first"]
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        screen = app.screen
        assert isinstance(screen, BenchScreen)
        await pilot.press("0")  # the whole series
        await settle(pilot)
        ds = app.snapshot.dataset
        where = ds.index_of(step)
        row = _row_began_at(app, step)  # a mean-chart signal whose shift began at the planted step
        first_flag = app.snapshot.marks.rows[row].first
        loc = screen.query_one("#location", ControlChart).picture
        spread = screen.query_one("#spread", ControlChart).picture
        col = column_of(where, loc.window, loc.cols)
        assert _column_has(loc, col, CHANGE_GLYPH)
        assert not any(CHANGE_GLYPH in line for line in spread.plain)  # the spread chart gets no change point
        if column_of(first_flag, loc.window, loc.cols) != col:
            assert app.snapshot.marks.rows[row].first != where
        # in the list: the row's second line begins with where the shift began, never cut
        lst = screen.query_one(SignalList)
        parts = lst.line_parts(app.snapshot.marks.rows[row], 1, 44)
        assert parts[0][0] == f"    began {step}"
        narrow = lst.line_parts(app.snapshot.marks.rows[row], 1, 20)
        assert "began" not in narrow[0][0]  # too narrow for the whole label: left out, not cut
        assert f"{CHANGE_GLYPH} shift began" in str(legend_text())  # the legend names the glyph (last)
        await pilot.press("q")


async def test_the_marker_survives_no_colour(in_tmp, opened, monkeypatch):
    monkeypatch.setenv("NO_COLOR", "1")
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        await pilot.press("0")
        await settle(pilot)
        chart_lines = screen_text(app).split("\n")[:18]  # the mean chart, drawn as characters without colour
        assert any(CHANGE_GLYPH in ln for ln in chart_lines)
        await pilot.press("q")


async def test_exclude_and_explain_dialogs_suggest_cause_families_and_choose_none(in_tmp, opened):
    """Mutation killed: a suggestion pre-selected in the cause list; suggestions for the wrong shape."""
    step = _step()["first"]
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        screen = app.screen
        row = _row_began_at(app, step)
        r = app.snapshot.marks.rows[row]
        screen.move_to(r.anchor, jump=True, row=row)
        await settle(pilot)
        await pilot.press("x")
        await settle(pilot)
        dialog = app.screen
        assert isinstance(dialog, ExcludeDialog)
        words = screen_text(app)
        assert "Shape: a sustained shift" in words and f"began {step} (most likely)" in words
        shown = str(dialog.query_one("#suggestions").render())
        assert "Often looked at first (suggestions; none is chosen): material — a new lot or supplier;" in shown
        assert dialog.query_one("#cause", Select).is_blank()  # shown, never chosen
        await pilot.press(*"lot change")
        await pilot.click("#confirm")
        await settle(pilot)
        label = str(app.snapshot.dataset.labels[r.anchor])
        assert app.snapshot.state.exclusion_info[label].cause is None  # recorded without a category
        await pilot.press("q")


async def test_explain_dialog_shows_the_shape_of_a_single_far_point(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        screen = app.screen
        rows = app.snapshot.marks.rows
        row = next(i for i, r in enumerate(rows) if r.shape == "single" and r.chart == "xbar" and r.state == "open")
        screen.move_to(rows[row].anchor, jump=True, row=row)
        await settle(pilot)
        await pilot.press("e")
        await settle(pilot)
        assert isinstance(app.screen, ReasonDialog)
        words = screen_text(app)
        assert "Shape: a single far point." in words and "most likely" not in words
        shown = str(app.screen.query_one("#suggestions").render())
        assert "none is chosen): measurement — a misread" in shown  # measurement first for a single point
        await pilot.press("escape")
        await settle(pilot)
        await pilot.press("q")
