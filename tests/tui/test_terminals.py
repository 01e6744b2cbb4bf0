"""Terminal sizes, resizing, NO_COLOR, read-only cases and text fields shown literally."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from workbench.core.case.casefile import Case
from workbench.core.model import Dataset, Layout, Settings
from workbench.tui.app import WorkbenchApp
from workbench.tui.screens.bench import BenchScreen
from workbench.tui.session import OpenRequest

from tui_helpers import demo_app, screen_text, settle


async def test_usable_at_80_by_24(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(80, 24)) as pilot:
        bench = app.screen
        assert isinstance(bench, BenchScreen) and bench.has_class("narrow") and bench.has_class("short")
        loc, spread = bench.query_one("#location"), bench.query_one("#spread")
        assert loc.picture is not None and spread.picture is not None
        assert loc.size.height >= 6 and spread.size.height >= 5
        side = bench.query_one("#side")
        assert side.region.y >= loc.region.bottom  # the side panels stack under the charts
        text = screen_text(app)
        assert "UCL" in text and "signals" in text and "filler_line3.case.json" in text
        await pilot.press("n", "enter")
        await settle(pilot)
        assert "Verdict" in screen_text(app)
        await pilot.press("escape", "v")  # hide the panels: the charts take the room
        await settle(pilot)
        assert bench.query_one("#location").size.height > loc.size.height - 1
        await pilot.press("q")


@pytest.mark.parametrize("sizes", [((120, 36), (80, 24), (200, 60), (50, 14), (120, 36))])
async def test_resizing_never_crashes(in_tmp, sizes):
    app = demo_app()
    async with app.run_test(size=sizes[0]) as pilot:
        await settle(pilot)
        for w, h in sizes[1:]:
            await pilot.resize_terminal(w, h)
            await settle(pilot)
            if w < 80 or h < 24:  # below 80×24: one screen asks for a larger terminal
                from workbench.tui.screens.too_small import TooSmallScreen
                assert isinstance(app.screen, TooSmallScreen)
                continue
            bench = app.screen
            pic = bench.query_one("#location").picture
            assert pic is not None and pic.width == bench.query_one("#location").size.width
            await pilot.press("n", "right", "plus", "minus", "0")
            await settle(pilot)
        await pilot.press("q")


def test_no_color_is_respected(monkeypatch):
    monkeypatch.setenv("NO_COLOR", "1")
    # https://no-color.org: a program that sees NO_COLOR set does not add colour (Textual drops it)
    assert WorkbenchApp(OpenRequest(Path("x.csv"))).no_color
    monkeypatch.delenv("NO_COLOR")
    assert not WorkbenchApp(OpenRequest(Path("x.csv"))).no_color


async def test_read_only_when_another_session_writes(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        await pilot.press("q")
    holder = Case.open(in_tmp / "casefiles" / "filler_line3.case.json", author="someone@else")
    try:
        app = demo_app()
        async with opened(app, size=(120, 36)) as pilot:
            bench = app.screen
            assert app.snapshot.readonly and "someone@else" in app.snapshot.readonly_reason
            for action in ("exclude", "note", "setup", "freeze"):
                assert bench.check_action(action, ()) is None, action
            await pilot.press("x")
            await settle(pilot)
            assert isinstance(app.screen, BenchScreen)  # nothing opens for an action that does not apply
            assert "read-only" in screen_text(app)
            await pilot.press("q")
    finally:
        holder.close()


async def test_markup_and_escapes_in_data_show_literally(in_tmp, opened):
    rng = np.random.default_rng(11)
    streams = ("[bold]A", "B\x1b[31m", "C")
    ds = Dataset(path="odd.csv", sha256="0" * 64, rows=30, size_bytes=0, layout=Layout("wide", streams=streams),
                 labels=np.array([f"[i]{i}" for i in range(30)]), streams=streams,
                 values=rng.normal(10, 1, (30, 3)))
    app = WorkbenchApp(OpenRequest(Path("odd.csv"), settings=Settings(), dataset=ds,
                                   case_path=in_tmp / "odd.case.json"), hide_times=True)
    async with opened(app, size=(120, 36)) as pilot:
        text = screen_text(app)
        assert "[bold]A" in text and "B\\x1b[31m" in text and "[i]0" in text
        await pilot.press("a")
        await settle(pilot)
        await pilot.press(*"[red]see")
        await pilot.press("enter")
        await settle(pilot)
        assert app.snapshot.state.notes[-1].text == "[red]see"
        assert "note: [red]see" in screen_text(app)
        await pilot.press("q")


async def test_a_click_on_a_point_selects_its_subgroup(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        bench = app.screen
        chart = bench.query_one("#location")
        pic = chart.picture
        from workbench.tui.window import position_of
        col = pic.cols // 3
        await pilot.click("#location", offset=(pic.left + col, pic.top + 2))
        await settle(pilot)
        assert bench.cursor == position_of(col, pic.window, pic.cols, chart.codes)
        assert chart.cursor_column() == col or abs(chart.cursor_column() - col) <= 1
        await pilot.press("q")


async def test_opening_reports_progress(in_tmp):
    from workbench.tui.messages import OpenProgress
    seen = []
    app = demo_app()
    async with app.run_test(size=(120, 36), message_hook=lambda m: seen.append(m)) as pilot:
        await settle(pilot)
        stages = [m.what for m in seen if isinstance(m, OpenProgress)]
        assert any(s.startswith("reading") for s in stages) and any(s.startswith("analysing") for s in stages)
        assert [m.fraction for m in seen if isinstance(m, OpenProgress)] == sorted(
            m.fraction for m in seen if isinstance(m, OpenProgress))
        await pilot.press("q")


def test_benchmark_reports_both_round_trips():
    from workbench.tui.perf_keys import measure_keypress
    result = measure_keypress(subgroups=3000, presses=3)
    assert set(result) >= {"app_ms", "empty_ms", "ratio"}
    assert result["app_ms"] > 0 and result["empty_ms"] > 0
    assert result["ratio"] == pytest.approx(result["app_ms"] / result["empty_ms"], rel=1e-2)


def _limit_rows(picture) -> dict[str, tuple[int, str]]:
    """Each y label the chart shows (UCL, CL, LCL) -> (row, its number), read off the drawn picture."""
    import re
    out = {}
    for i, line in enumerate(picture.plain):
        m = re.match(r"^\s*(UCL|CL|LCL)[ ~](\S+)├", line)
        if m:
            out[m.group(1)] = (i, m.group(2))
    return out


@pytest.mark.parametrize("size", [(120, 36), (80, 24)])
async def test_each_chart_draws_its_three_limit_lines_on_rows_of_their_own(in_tmp, opened, size):
    """At 80×24 the R chart once had three plot rows, its CL overwrote its UCL and the UCL was not drawn.
    Every chart on the bench shows UCL, CL and LCL, each labelled on its own row, the row drawn as a line (─),
    with the numbers by the one formatting rule (core/text.py: nums tells the three apart)."""
    from workbench.core.text import nums
    app = demo_app()
    async with opened(app, size=size) as pilot:
        bench = app.screen
        a = app.snapshot.analysis
        for wid, chart in (("#location", a.charts[0]), ("#spread", a.charts[1])):
            pic = bench.query_one(wid).picture
            rows = _limit_rows(pic)
            assert set(rows) == {"UCL", "CL", "LCL"}, (wid, size, pic.plain)
            assert len({r for r, _ in rows.values()}) == 3
            assert rows["UCL"][0] < rows["CL"][0] < rows["LCL"][0]  # drawn in order, top to bottom
            for word, (row, text) in rows.items():
                assert pic.plain[row].count("─") >= 3, (word, pic.plain[row])  # the line shows between points
            assert [rows[w][1] for w in ("LCL", "CL", "UCL")] == \
                nums((float(chart.lcl[0]), float(chart.center[0]), float(chart.ucl[0])))
        await pilot.press("q")


def test_a_short_plot_gives_up_the_room_beyond_the_limits_before_a_limit_line():
    """plotting.reach_for: on a tall plot the axis reaches 1.5 band widths beyond the limits; on a short one
    less, down to none, so the band LCL…UCL keeps 2.5 rows (three lines on rows of their own) [definition:
    band share 1/((1+2·reach)(1+2·pad)) of rows−1 steps]."""
    from workbench.tui.plotting import LINE_ROWS, PAD, REACH, reach_for
    assert reach_for(40) == REACH
    assert reach_for(3) == 0.0 and reach_for(4) == 0.0
    for rows in range(5, 40):
        r = reach_for(rows)
        assert 0 <= r <= REACH
        assert (rows - 1) / ((1 + 2 * r) * (1 + 2 * PAD)) >= LINE_ROWS - 1e-9  # the band keeps its rows
