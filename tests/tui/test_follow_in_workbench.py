"""Watching on the bench (Phase II): appended rows judged against frozen limits, new signals told."""
from __future__ import annotations

import shutil
from pathlib import Path

from workbench.core.case.casefile import Case
from workbench.demo import DEMO_DIR
from workbench.tui.app import WorkbenchApp
from workbench.tui.session import OpenRequest

from tui_helpers import data_app, screen_text, settle


async def _frozen_case(tmp_path, opened):
    """A case on a copy of the filler demo with its limits frozen in the workbench; (data, case path)."""
    data = tmp_path / "filler.csv"
    shutil.copy(DEMO_DIR / "filler_line3.csv", data)
    app = data_app(data)
    async with opened(app, size=(120, 36)) as pilot:
        assert app.screen.check_action("watch", ()) is None  # nothing to watch against before a freeze
        await pilot.press("L")  # the demo has open signals: the dialog lists them and asks for a reason
        await settle(pilot)
        assert "signal(s) are still open" in screen_text(app)
        await pilot.press(*"trial of the watch", "enter")
        await settle(pilot)
        assert app.snapshot.state.frozen is not None
        assert app.snapshot.events[-1].payload["reason"] == "trial of the watch"
        case_path = app.snapshot.case_path
        m = app.snapshot.dataset.m
        await pilot.press("q")
    return data, case_path, m


def _append(data, lines) -> None:
    with open(data, "a", encoding="utf-8") as fh:
        fh.write("".join(line + "\n" for line in lines))


# Six heads near the demo's 500 mL centre; the planted subgroup has every head about 4 mL high, far
# beyond the X-bar UCL (Montgomery, Introduction to SQC, ch. 6: a point beyond 3 sigma limits) [definition]
CONTEXT = ",L-2292,day,K. Osei,H4 nozzle re-seated 14:55,R-7106,J. Lind"  # the demo's context columns
CALM = "{t},500.1,499.9,500.0,500.2,499.8,500.0" + CONTEXT
HIGH = "{t},504.1,503.9,504.0,504.2,503.8,504.0" + CONTEXT


async def test_watch_finds_a_planted_point_and_records_it(in_tmp, opened):
    data, case_path, m = await _frozen_case(in_tmp, opened)
    app = WorkbenchApp(OpenRequest(case_path), hide_times=True, watch=True, watch_interval=3600, bell=True)
    bells = []
    app.bell = lambda: bells.append(1)
    notes = []
    async with app.run_test(size=(120, 36), notifications=True) as pilot:
        real_notify = app.notify
        app.notify = lambda message, **kw: (notes.append((message, kw.get("severity"))), real_notify(message, **kw))
        await settle(pilot)
        assert Path(app.following).resolve() == data.resolve()
        assert "following filler.csv" in screen_text(app)
        before = app.snapshot.marks.current
        app.poll_watch()
        await settle(pilot)
        assert app.snapshot.dataset.m == m and not bells  # nothing appended: nothing new

        _append(data, [CALM.format(t="2026-03-03 18:00"), HIGH.format(t="2026-03-03 18:15"),
                       CALM.format(t="2026-03-03 18:30")])
        app.poll_watch()
        await settle(pilot)
        snap = app.snapshot
        assert snap.dataset.m == m + 3 and snap.analysis.phase2_start == m
        new = [r for r in snap.marks.rows if r.first == m + 1 and r.rule == "beyond-limits"]
        assert new and new[0].chart == "xbar" and new[0].state == "open"
        assert len(snap.marks.rows) > before
        assert bells == [1]
        assert any(sev == "warning" and "2026-03-03 18:15" in msg and "beyond-limits" in msg for msg, sev in notes)
        # the cursor stayed at the end (it was on the last subgroup) or moves there on request
        bench = app.screen
        bench.move_to(m + 1)
        assert snap.marks.row_at(bench.cursor) is not None  # the signal is in the list, with its breakdown
        await pilot.press("b")
        await settle(pilot)
        assert app.screen.result.verdict
        await pilot.press("escape")
        await settle(pilot)
        from workbench.core.model import Exclusion
        label = str(snap.dataset.labels[m + 1])
        app.act(lambda s: s.exclude(Exclusion(label), "fill valve test", signal=new[0].key))  # while following
        await settle(pilot)
        assert app.following and app.snapshot.analysis.excluded_subgroups[m + 1]
        _append(data, [HIGH.format(t="2026-03-03 18:45")])
        app.poll_watch()
        await settle(pilot)
        assert app.snapshot.dataset.m == m + 4 and len(bells) == 2
        assert app.snapshot.analysis.excluded_subgroups[m + 1]  # the exclusion holds for the new look
        await pilot.press("q")

    with Case.open(case_path, readonly=True) as case:
        seen = [ev for ev in case.events if ev.kind == "data-appended"]
        assert seen and seen[-1].payload["subgroups"] == m + 4
        assert any(k.startswith("xbar/beyond-limits/") for k in seen[-1].payload["signals"])


async def test_the_key_stops_following_and_a_rewritten_file_stops_it(in_tmp, opened):
    data, case_path, m = await _frozen_case(in_tmp, opened)
    app = WorkbenchApp(OpenRequest(case_path), hide_times=True, watch_interval=3600, bell=False)
    app.bell = lambda: (_ for _ in ()).throw(AssertionError("no bell with bell=False"))
    async with app.run_test(size=(120, 36), notifications=True) as pilot:
        await settle(pilot)
        assert app.following is None and app.screen.check_action("watch", ()) is True
        await pilot.press("w")
        await settle(pilot)
        assert Path(app.following).resolve() == data.resolve()
        await pilot.press("w")
        await settle(pilot)
        assert app.following is None and "following filler.csv" not in screen_text(app)
        await pilot.press("w")
        await settle(pilot)
        _append(data, [HIGH.format(t="2026-03-03 18:00")])
        app.poll_watch()
        await settle(pilot)
        assert app.snapshot.dataset.m == m + 1  # judged, and no bell was rung
        app.act(lambda s: s.unfreeze("back to trial limits"))  # a case action while following
        await settle(pilot)
        assert app.following is None and app.snapshot.state.frozen is None
        assert any("unfrozen" in str(n.message) for n in app._notifications)
        app.act(lambda s: s.freeze("frozen again to follow"))  # open signals: with a reason
        await settle(pilot)
        await pilot.press("w")
        await settle(pilot)
        assert app.following is not None
        data.write_text(data.read_text(encoding="utf-8")[:200], encoding="utf-8")  # shrunk
        app.poll_watch()
        await settle(pilot)
        assert app.following is None
        assert any("shrunk" in str(n.message) for n in app._notifications)
        await pilot.press("q")


async def test_watch_a_database_table_by_its_key(in_tmp, opened):
    # A SQLite file made by the test: rows inserted between looks are read after the last id judged and
    # judged against the frozen limits (a subgroup of readings 4 above a centre near 10 is far beyond
    # the X-bar UCL: Montgomery, Introduction to SQC, ch. 6, a point beyond 3 sigma limits) [definition].
    import sqlite3

    import numpy as np

    from workbench.cli import main
    db = in_tmp / "plant.db"
    con = sqlite3.connect(db)
    con.execute("CREATE TABLE fill (id INTEGER, batch TEXT, head TEXT, ml REAL)")
    rng, ids = np.random.default_rng(5), iter(range(1, 10_000))

    def add(batches, shift=0.0):
        for b in batches:
            for h in ("H1", "H2", "H3"):
                con.execute("INSERT INTO fill VALUES (?, ?, ?, ?)", (next(ids), f"B{b:03d}", h,
                                                                     float(10 + shift + rng.normal(0, 0.3))))
        con.commit()

    add(range(1, 26))
    case = str(in_tmp / "fill.case.json")
    assert main(["case", "new", f"sqlite:///{db}", "--table", "fill", "--subgroup", "batch", "--stream", "head",
                 "--value", "ml", "-o", case]) == 0
    assert main(["case", "freeze", case, "--force", "--reason", "trial"]) == 0
    app = WorkbenchApp(OpenRequest(Path(case)), hide_times=True, watch=True, watch_interval=3600, bell=False,
                       watch_key="id")
    async with opened(app, size=(80, 24)) as pilot:
        assert app.following and "following sqlite:///plant.db table fill" in screen_text(app)
        add([26, 27], shift=4.0)
        app.poll_watch()
        await settle(pilot)
        snap = app.snapshot
        assert snap.dataset.m == 27 and snap.analysis.phase2_start == 25
        assert any(r.first == 25 and r.rule == "beyond-limits" for r in snap.marks.rows)  # B026, position 25
        await pilot.press("w")  # stops
        await settle(pilot)
        assert not app.following
        await pilot.press("w")  # starts again: the key recorded by the first look is used
        await settle(pilot)
        assert app.following
    con.close()
    seen = [e for e in Case.open(case, readonly=True).events if e.kind == "data-appended"]
    assert seen[-1].payload["key"] == "id" and seen[-1].payload["last_key"] == 81
