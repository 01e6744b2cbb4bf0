"""Reopening a case puts the bench back where it was: cursor, zoom window, selected signal.

The view is kept in a sidecar beside the case (``*.case.json.view``), outside the hash-chained trail: looking
is not recording, so the case file's bytes and ``verify`` never change by it, and a missing or corrupt sidecar
opens the default view.
"""
from __future__ import annotations

from pathlib import Path

from workbench.core.case.casefile import verify
from workbench.tui.screens.bench import BenchScreen
from workbench.tui.viewstate import view_path
from workbench.tui.widgets.signal_list import SignalList

from tui_helpers import demo_app, settle

CASE = Path("casefiles/filler_line3.case.json")


async def _look_around(opened):
    """Go to the third open signal, zoom in twice and step right once; return what the bench showed."""
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        await pilot.press("escape", "n", "n", "n")
        await settle(pilot)
        await pilot.press("plus", "plus")
        await settle(pilot)
        bench = app.screen
        assert isinstance(bench, BenchScreen)
        row = bench.query_one(SignalList).selected
        key = app.snapshot.marks.rows[bench._row].key
        seen = (bench.cursor, bench.window, key, row)
        await pilot.press("q")
    return seen


async def test_reopening_puts_cursor_zoom_and_signal_back(in_tmp, opened):
    cursor, window, key, _row = await _look_around(opened)
    assert window.size < 144  # zoomed in: not the whole series
    raw = CASE.read_bytes()
    assert view_path(CASE).is_file()
    result = verify(CASE)
    assert result.intact and result.events == 1  # looking wrote no event: the trail is the case's creation alone
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        bench = app.screen
        assert bench.cursor == cursor
        assert bench.window == window and not bench.auto_window
        assert app.snapshot.marks.rows[bench._row].key == key
        await pilot.press("q")
    assert CASE.read_bytes() == raw  # reopening and quitting again changed nothing in the case file


async def test_a_corrupt_or_stale_sidecar_opens_the_default_view(in_tmp, opened):
    await _look_around(opened)
    default_cursor = None
    for text in ("{not json", '{"format": "workbench.view", "version": 1, "cursor": "1999-01-01 00:00", '
                               '"window": null, "signal": null}'):
        view_path(CASE).write_text(text, encoding="utf-8")
        app = demo_app()
        async with opened(app, size=(120, 36)) as pilot:
            bench = app.screen
            assert isinstance(bench, BenchScreen)
            if default_cursor is None:
                default_cursor = bench.cursor
            assert bench.cursor == default_cursor == 0  # the demo fits whole: the default view starts at 1
            assert bench.auto_window
            await pilot.press("q")
    assert verify(CASE).intact
