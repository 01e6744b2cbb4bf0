"""A case another session writes opens read-only naming the holder, and becomes writable when it lets go.

Practice followed: an advisory lock named by its holder, retried until released [common practice].
"""
from __future__ import annotations

from pathlib import Path

from tui_helpers import screen_text, settle

from workbench.core.case.casefile import Case
from workbench.core.model import LayoutRequest, Settings
from workbench.tui.app import WorkbenchApp
from workbench.tui.session import OpenRequest


async def test_the_holder_is_shown_and_the_view_becomes_writable_when_it_lets_go(in_tmp, opened):
    data = in_tmp / "line.csv"
    data.write_text("reading\n" + "".join(f"{10 + i % 3 * 0.1:.1f}\n" for i in range(24)), encoding="utf-8")
    path = in_tmp / "casefiles" / "line.case.json"
    Case.create(data, LayoutRequest(), Settings(), author="ana", case_path=path).close()
    holder = Case.open(path, author="holder-in-lab")  # another session (a flock on its own descriptor)
    assert not holder.readonly
    app = WorkbenchApp(OpenRequest(Path(path)), hide_times=True)
    for size in ((120, 36), (80, 24)):
        async with opened(app if size == (120, 36) else WorkbenchApp(OpenRequest(Path(path)), hide_times=True),
                          size=size) as pilot:
            a = pilot.app
            assert a.snapshot.readonly and "holder-in-lab" in a.snapshot.readonly_reason
            assert "read-only" in screen_text(a)
            a.retry_lock()  # what the timer does: the holder still holds it
            await settle(pilot)
            assert a.snapshot.readonly
            if size == (120, 36):
                continue
            holder.note("done here")
            holder.close()
            a.retry_lock()
            await settle(pilot)
            assert not a.snapshot.readonly
            assert [ev.kind for ev in a.snapshot.events][-1] == "note"  # the holder's last event is shown
            a.session.case.note("mine now")
            a.session.close()
