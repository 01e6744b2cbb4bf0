"""Dialogs: an empty reason is refused, the setup records a settings event, the mapping dialog."""
from __future__ import annotations

from workbench.tui.dialogs.choice import ChoiceDialog
from workbench.tui.dialogs.exclude import ExcludeDialog
from workbench.tui.dialogs.mapping import MappingDialog
from workbench.tui.dialogs.setup import SetupDialog
from workbench.tui.screens.bench import BenchScreen

from tui_helpers import data_app, demo_app, screen_text, settle


async def test_exclude_dialog_refuses_an_empty_reason(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        await pilot.press("x")
        await settle(pilot)
        dialog = app.screen
        assert isinstance(dialog, ExcludeDialog)
        await pilot.press("space", "space", "enter")  # blanks are no reason
        await settle(pilot)
        assert app.screen is dialog
        assert "A reason is required" in screen_text(app)
        await pilot.click("#confirm")
        await settle(pilot)
        assert app.screen is dialog
        await pilot.press("g")  # a reason is being typed: the hint that one is required goes
        await settle(pilot)
        assert "A reason is required" not in screen_text(app)
        await pilot.press("escape")
        await settle(pilot)
        assert isinstance(app.screen, BenchScreen)
        assert app.snapshot.state.exclusions == () and len(app.snapshot.events) == 1
        await pilot.press("q")


async def test_exclude_one_reading_from_the_dialog(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        await pilot.press("x")
        await settle(pilot)
        dialog = app.screen
        await pilot.press(*"bubble in the bottle")
        dialog.query_one("#scope-reading").value = True
        await settle(pilot)
        dialog.query_one("#stream").value = "H3"
        dialog.query_one("#cause").value = "material"
        await pilot.click("#confirm")
        await settle(pilot)
        state = app.snapshot.state
        label = str(app.snapshot.dataset.labels[0])
        assert [e.key for e in state.exclusions] == [f"{label}:H3"]
        assert state.exclusion_info[f"{label}:H3"].cause == "material"
        assert app.snapshot.analysis.excluded_cells[0, 2] and not app.snapshot.analysis.excluded_subgroups[0]
        await pilot.press("q")


async def test_setup_refuses_bad_numbers_and_records_a_settings_event(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        await pilot.press("s")
        await settle(pilot)
        dialog = app.screen
        assert isinstance(dialog, SetupDialog)
        assert "beyond-limits" in screen_text(app)  # each rule explained in words
        dialog.query_one("#usl").value = "five hundred"
        dialog.action_apply()
        await settle(pilot)
        assert app.screen is dialog and "not a number" in screen_text(app)
        dialog.query_one("#usl").value = "503"
        dialog.query_one("#rules").value = "nelson"
        await settle(pilot)
        assert "✓ trend" in screen_text(app)
        dialog.action_apply()
        await settle(pilot)
        assert isinstance(app.screen, BenchScreen)
        snap = app.snapshot
        assert snap.events[-1].kind == "settings" and snap.state.settings.rules == "nelson"
        assert snap.analysis.location.rules == ("beyond-limits", "zone-a", "zone-b", "same-side", "trend",
                                                "alternating", "hugging", "avoid-centre")
        await pilot.press("q")


async def test_mapping_dialog_when_the_layout_is_not_detected(in_tmp, opened):
    # numbered cavities: the key repeats and no text column can be the stream, so detection stops
    rows = ["lot,cavity_no,reading"] + [f"L{i // 2 + 1},{i % 2 + 1},{10 + (i * 7) % 5 / 10}" for i in range(40)]
    (in_tmp / "moulds.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    app = data_app(in_tmp / "moulds.csv")
    async with opened(app, size=(120, 36)) as pilot:
        dialog = app.screen
        assert isinstance(dialog, MappingDialog)
        assert "give --stream" in screen_text(app)
        dialog.query_one("#map-kind").value = "long"
        dialog.query_one("#map-subgroup").value = "lot"
        dialog.query_one("#map-stream").value = "cavity_no"
        dialog.query_one("#map-value").value = "reading"
        await settle(pilot)
        dialog.submit()
        await settle(pilot)
        assert isinstance(app.screen, BenchScreen)
        ds = app.snapshot.dataset
        assert (ds.m, ds.streams) == (20, ("1", "2"))
        assert (in_tmp / "casefiles" / "moulds.case.json").is_file()
        await pilot.press("q")


async def test_an_existing_case_is_offered(in_tmp, opened):
    rows = ["sample,S1,S2,S3"] + [f"{i + 1},{5 + i % 3 / 10},{5 + i % 4 / 10},{5 + i % 5 / 10}" for i in range(30)]
    (in_tmp / "torque.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    first = data_app(in_tmp / "torque.csv")
    async with opened(first, size=(120, 36)) as pilot:
        assert isinstance(first.screen, BenchScreen)
        await pilot.press("q")
    for choice, name in (("new", "torque-2.case.json"), ("reuse", "torque.case.json")):
        app = data_app(in_tmp / "torque.csv")
        async with opened(app, size=(120, 36)) as pilot:
            assert isinstance(app.screen, ChoiceDialog)
            await pilot.click(f"#choice-{choice}")
            await settle(pilot)
            assert isinstance(app.screen, BenchScreen)
            assert app.snapshot.case_name == name
            await pilot.press("q")


async def test_q_in_a_dialog_cancels_it_or_types_it_never_quits(in_tmp, opened):
    from workbench.tui.dialogs.reason import ReasonDialog
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        await pilot.press("L")  # open signals: the freeze asks for a reason (q types there)
        await settle(pilot)
        assert isinstance(app.screen, ReasonDialog)
        await pilot.press("escape")
        await settle(pilot)
        assert app.is_running and isinstance(app.screen, BenchScreen) and app.snapshot.state.frozen is None
        await pilot.press("a")  # a note: q is a letter of the text
        await settle(pilot)
        assert isinstance(app.screen, ReasonDialog)
        await pilot.press(*"quick q")
        assert app.is_running and app.screen.query_one("#reason").value == "quick q"
        await pilot.press("escape")
        await settle(pilot)
        await pilot.press("s")
        await settle(pilot)
        dialog = app.screen
        assert isinstance(dialog, SetupDialog)
        dialog.query_one("#chart").focus()  # a drop-down list, not a text field
        await pilot.press("q")
        await settle(pilot)
        assert app.is_running and isinstance(app.screen, BenchScreen)
        assert len(app.snapshot.events) == 1  # nothing was recorded
        await pilot.press("q")
    assert app.return_code == 0


async def test_exclude_dialog_preview_follows_the_scope_reading_by_reading(in_tmp, opened):
    """The list of answered signals is what the trail will record for the scope chosen: the whole subgroup
    2026-03-03 15:30 answers both beyond-limits signals; the reading H2 (the mis-keyed 509.6, demo_data/README.md)
    answers them too, because the subgroup recomputed without it no longer fires; the reading H5 answers
    nothing (H2's 509.6 still drives the point). Confirming H5 records no answered signal."""
    from textual.widgets import RadioButton, Select, Static
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        bench = app.screen
        bench.move_to(app.snapshot.dataset.index_of("2026-03-03 15:30"))
        await settle(pilot)
        await pilot.press("x")
        await settle(pilot)
        dialog = app.screen
        assert isinstance(dialog, ExcludeDialog)
        answers = lambda: str(dialog.query_one("#answers", Static).render())  # noqa: E731
        assert "xbar/beyond-limits/2026-03-03 15:30 (1 firing point)" in answers()
        assert "r/beyond-limits/2026-03-03 15:30 (1 firing point)" in answers()
        dialog.query_one("#scope-reading", RadioButton).value = True
        await settle(pilot)
        dialog.query_one("#stream", Select).value = "H2"
        await settle(pilot)
        assert "Leaving out reading H2" in answers() and "r/beyond-limits/2026-03-03 15:30 (1 firing point)" in answers()
        dialog.query_one("#stream", Select).value = "H5"
        await settle(pilot)
        assert "still fires without this reading" in answers() or "answers no signal" in answers()
        assert "(1 firing point)" not in answers()
        dialog.query_one("#reason").value = "gauge dropped"
        await pilot.click("#confirm")
        await settle(pilot)
        ev = app.snapshot.events[-1]
        assert ev.kind == "exclude" and ev.payload["stream"] == "H5"
        assert not any(ev.payload["answers"].values())
        await pilot.press("q")
