"""Changing the column mapping in the setup: a setup event in the trail that replay reproduces.

The demo file (demo_data/README.md: wide, ``time,H1..H6``) is mapped with five of its six heads; the limits are
recomputed on the readings of those heads, the trail records the mapping, ``verify`` recomputes every recorded
limit under the mapping in force at its event, and reopening the case loads the data the same way. A mapping
that does not load, or that leaves out a stream an exclusion names, is refused in the dialog with one line.
"""
from __future__ import annotations

import numpy as np

from workbench.core.case.casefile import Case, verify
from workbench.core.charts.constants import d2
from workbench.tui.dialogs.setup import SetupDialog
from workbench.tui.screens.bench import BenchScreen

from tui_helpers import demo_app, settle

CASE = "casefiles/filler_line3.case.json"


async def _apply_streams(app, pilot, streams: str) -> SetupDialog:
    await pilot.press("escape", "s")
    await settle(pilot)
    dialog = app.screen
    assert isinstance(dialog, SetupDialog)
    dialog.query_one("#map-streams").value = streams
    await pilot.press("ctrl+s")
    await settle(pilot)
    return dialog


async def test_five_heads_instead_of_six_recomputes_the_limits_and_is_replayed(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        before = len(app.snapshot.events)
        await _apply_streams(app, pilot, "H1,H2,H3,H4,H5")
        assert isinstance(app.screen, BenchScreen)
        snap = app.snapshot
        assert snap.dataset.streams == ("H1", "H2", "H3", "H4", "H5")
        ev = snap.events[-1]
        assert len(snap.events) == before + 1 and ev.kind == "settings"
        assert ev.payload["request"]["streams"] == ["H1", "H2", "H3", "H4", "H5"]
        # X̄-R on the five heads: sigma = R̄/d2(5), R̄ from the readings themselves [definition; d2 from its
        # integral (constants.py is checked against Montgomery App. VI elsewhere)]
        v = snap.dataset.values
        rbar = float(np.mean(v.max(axis=1) - v.min(axis=1)))
        assert abs(snap.analysis.sigma_within - rbar / d2(5)) < 1e-9
        assert "streams=H1,H2,H3,H4,H5 (given)" in str(app.screen.query_one("#mapping-note").render())
        await pilot.press("q")
    v = verify(CASE)
    assert v.intact, v.lines()  # the limits recorded after the change recompute under the new mapping
    with Case.open(CASE, readonly=True) as case:
        assert case.load_dataset().streams == ("H1", "H2", "H3", "H4", "H5")  # replay reproduces it


async def test_a_mapping_that_does_not_load_is_refused_in_the_dialog(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        n = len(app.snapshot.events)
        dialog = await _apply_streams(app, pilot, "H1,H9")
        assert app.screen is dialog  # still open, nothing recorded
        error = str(dialog.query_one("#error").render())
        assert "H9" in error and "\n" not in error.strip()
        assert len(app.snapshot.events) == n
        await pilot.press("escape")
        await settle(pilot)
        # an exclusion of a reading of H6 keeps H6 in any new mapping until it is restored
        await pilot.press("escape")
        await settle(pilot)
        from workbench.core.model import Exclusion
        app.act(lambda s: s.exclude(Exclusion("2026-03-02 06:00", "H6"), "probe slipped"))
        await settle(pilot)
        n = len(app.snapshot.events)
        dialog = await _apply_streams(app, pilot, "H1,H2,H3,H4,H5")
        assert app.screen is dialog
        error = str(dialog.query_one("#error").render())
        assert "2026-03-02 06:00:H6" in error and "restore it first" in error
        assert len(app.snapshot.events) == n
        await pilot.press("escape")
        await settle(pilot)
        await pilot.press("q")
