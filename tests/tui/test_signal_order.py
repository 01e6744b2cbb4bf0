"""One order for the signals list and n / N; the exclude dialog lists every signal it answers."""
from __future__ import annotations

from workbench.tui.dialogs.exclude import ExcludeDialog
from workbench.tui.widgets.signal_list import SignalList

from tui_helpers import demo_app, screen_text, settle


async def test_the_list_is_in_firing_order_and_n_visits_every_open_row_in_it(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        mk = app.snapshot.marks
        rows = mk.rows[:mk.current]
        # by first firing point, then chart, then rule [the order the issue asks for]
        assert [(r.anchor, r.chart, r.rule) for r in rows] == sorted((r.anchor, r.chart, r.rule) for r in rows)
        # the demo's first signal by firing is the R chart at 12:30 (the same-side run starts earlier, at
        # 11:45, but fires only at its 8th point) [demo_data/README.md]
        assert (rows[0].chart, rows[0].label) == ("r", "2026-03-02 12:30")
        visited = []
        for _ in range(len(rows)):
            await pilot.press("n")
            await settle(pilot)
            visited.append(app.screen.query_one(SignalList).selected)
        assert visited == list(range(len(rows)))              # n never skips a row, none twice
        for expected in range(len(rows) - 2, -1, -1):
            await pilot.press("N")
            await settle(pilot)
            assert app.screen.query_one(SignalList).selected == expected
        await pilot.press("q")


async def test_the_exclude_dialog_lists_the_signals_it_answers(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        bench = app.screen
        bench.move_to(app.snapshot.dataset.index_of("2026-03-03 15:30"))
        await settle(pilot)
        await pilot.press("x")
        await settle(pilot)
        assert isinstance(app.screen, ExcludeDialog)
        text = screen_text(app)
        assert "r/beyond-limits/2026-03-03 15:30 (1 firing point)" in text
        assert "xbar/beyond-limits/2026-03-03 15:30 (1 firing point)" in text
        await pilot.press(*"digit slip", "enter")
        await settle(pilot)
        last = app.snapshot.events[-1]
        assert set(last.payload["answers"]) == {"r/beyond-limits/2026-03-03 15:30",
                                                "xbar/beyond-limits/2026-03-03 15:30"}
        assert app.snapshot.marks.excluded_count == 1
        await pilot.press("q")


async def test_down_and_up_in_the_list_never_skip_a_row_where_several_signals_cover_the_cursor(in_tmp, opened):
    """↓/j and ↑/k from a subgroup that several signals cover but none fires at (the demo's 75: a zone-A
    signal fires at 76, a zone-B at 77, a same-side run at 82, all starting at or before 75).

    The list selects the latest-starting row covering the cursor (the same-side run), and ↓ used to step on
    from that row: to the signal at 89, skipping the three that fire after the cursor (and ↑ went *forward*
    to 77).  Kills that bug: ↓ must land on the first row firing after the cursor and ↑ on the last one
    firing before it, so no row is stepped over [the list's order: by first firing point, README "signals
    list"; the expected rows are found here from each row's firing point]."""
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        bench, mk = app.screen, app.snapshot.marks
        lst = bench.query_one(SignalList)
        rows = mk.rows[:mk.current]
        fires_at = {r.anchor for r in rows}
        covered, seen = [], set()  # one subgroup for each set of signals covering it (the test stays short)
        for p in range(app.snapshot.dataset.m):
            cover = tuple(i for i, r in enumerate(rows) if r.first <= p <= r.last)
            if p not in fires_at and len(cover) >= 2 and cover not in seen:
                seen.add(cover)
                covered.append(p)
        # the case the docstring names is among them, with its selected row firing after the cursor
        assert 75 in covered and [r.anchor for r in rows if r.first <= 75 <= r.last] == [76, 77, 82]
        tried = 0
        for p in covered:
            after = [i for i, r in enumerate(rows) if r.anchor > p]
            before = [i for i, r in enumerate(rows) if r.anchor < p]
            for key, want in (("j", after[0] if after else None), ("k", before[-1] if before else None)):
                bench.move_to(p)
                await settle(pilot)
                await pilot.press(key)
                await settle(pilot)
                if want is None:
                    assert bench.cursor == p, (p, key)
                    continue
                assert (lst.selected, bench.cursor) == (want, rows[want].anchor), (p, key)
                tried += 1
        assert tried >= 2 * 5
        await pilot.press("q")
