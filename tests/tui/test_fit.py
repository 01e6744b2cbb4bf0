"""The fit view: cautions always visible, the method switch recorded, no specification handled."""
from __future__ import annotations

import numpy as np
import pytest

from workbench.tui.screens.fit import FitScreen

from tui_helpers import data_app, demo_app, screen_text, settle


async def test_fit_view_shows_cautions_and_records_the_method(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 40)) as pilot:
        await pilot.press("f")
        await settle(pilot)
        assert isinstance(app.screen, FitScreen)
        text = screen_text(app)
        # the standing cautions the issue asks for
        assert "estimates" in text and "stable process" in text
        assert "customer's requirements" in text and "local regulations" in text
        assert "Stability gate" in text and "open signals" in text
        assert "LSL 497" in text and "USL 503" in text  # demo_data/README.md: specification 497.0–503.0 mL
        assert "Cpk" in text or "Ppk" in text
        events = len(app.snapshot.events)
        await pilot.press("1")  # looking is not recording: the previewed figures, no trail event
        await settle(pilot)
        assert len(app.snapshot.events) == events and app.snapshot.state.settings.spec.method == "auto"
        assert "Method: normal" in screen_text(app) and "previewing" in screen_text(app)
        assert app.screen.check_action("method", ("normal",)) is None  # already shown
        await pilot.press("u")  # use this method for the case: one setup event
        await settle(pilot)
        snap = app.snapshot
        assert len(snap.events) == events + 1
        assert snap.events[-1].kind == "settings" and snap.state.settings.spec.method == "normal"
        assert "Method: normal" in screen_text(app) and "previewing" not in screen_text(app)
        await pilot.press("escape", "q")


async def test_fit_view_without_a_specification_offers_the_setup(in_tmp, opened):
    rng = np.random.default_rng(8)
    rows = [f"{i + 1},{a:.3f},{b:.3f}" for i, (a, b) in enumerate(rng.normal(3, 0.1, (25, 2)))]
    (in_tmp / "gap.csv").write_text("sample,A,B\n" + "\n".join(rows) + "\n", encoding="utf-8")
    app = data_app(in_tmp / "gap.csv")
    async with opened(app, size=(120, 36)) as pilot:
        await pilot.press("f")
        await settle(pilot)
        assert "No specification is set" in screen_text(app) and "Press s" in screen_text(app)
        assert not app.screen.query_one("#fit-body").display
        await pilot.press("s")
        await settle(pilot)
        dialog = app.screen
        dialog.query_one("#lsl").value = "2.6"
        dialog.query_one("#usl").value = "3.4"
        dialog.action_apply()
        await settle(pilot)
        assert isinstance(app.screen, FitScreen) and app.screen.query_one("#fit-body").display
        assert "Cp" in screen_text(app)
        await pilot.press("escape", "q")


async def test_the_stability_gate_counts_only_open_signals(in_tmp, opened):
    from workbench.core.analysis import capability_for, open_signals
    app = demo_app()
    async with opened(app, size=(120, 40)) as pilot:
        total = len(app.snapshot.analysis.signals)
        await pilot.press("n", "e")
        await settle(pilot)
        await pilot.press(*"seal worn", "enter")
        await settle(pilot)
        await pilot.press("f")
        await settle(pilot)
        cap = app.screen.capability
        snap = app.snapshot
        # the gate counts signals not yet explained (issue 7): one explained, one fewer counted
        assert cap.open_signals == total - 1 == len(open_signals(snap.analysis, snap.state.signal_states))
        assert cap == capability_for(snap.analysis, snap.state.signal_states)
        await pilot.press("escape", "q")


@pytest.mark.parametrize("size", [(120, 36), (80, 24)])
async def test_fit_view_composition_at_both_sizes(in_tmp, opened, size):
    """The strip, the quantile plot and the statements led by the verdict, on one screen at 80×24 too."""
    from workbench.core.capability.picture import POINT
    app = demo_app()
    async with opened(app, size=size) as pilot:
        await pilot.press("f")
        await settle(pilot)
        text = screen_text(app)
        assert "LSL 497" in text and "\u251c" in text and "\u2524" in text       # the strip: the limits drawn once
        assert "99.865%" in text and POINT in text                               # the quantile plot
        side = str(app.screen.query_one("#fit-text").render())
        assert side.startswith("Verdict:")                                       # statements led by the verdict
        assert "Below the LSL" in side and "Above the USL" in side
        assert "local regulations" in text                                       # the standing caution
        assert "fill volume (mL)" in text and "503 mL" in side                   # demo_data/README.md: in mL
        assert "histogram" not in text.lower()
        await pilot.press("escape", "q")


async def test_name_and_unit_on_the_charts_and_from_the_setup(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        assert "fill volume, mL" in screen_text(app)                             # the bench charts' titles
        await pilot.press("s")
        await settle(pilot)
        dialog = app.screen
        dialog.query_one("#name").value = "net volume"
        dialog.query_one("#unit").value = "cL"
        dialog.action_apply()
        await settle(pilot)
        settings = app.snapshot.state.settings
        assert (settings.name, settings.unit) == ("net volume", "cL")            # recorded in the trail
        assert app.snapshot.events[-1].kind == "settings"
        await pilot.press("f")
        await settle(pilot)
        assert "capability of net volume (cL)" in screen_text(app)
        await pilot.press("escape", "q")
