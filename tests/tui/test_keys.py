"""Keys: every binding has an id and a description, appears in help and in the command palette."""
from __future__ import annotations

import pytest
from textual.binding import Binding

from workbench.tui.commands import WorkbenchCommands
from workbench.tui.screens.bench import BenchScreen
from workbench.tui.screens.help import HelpScreen, binding_groups, help_text, key_text

from tui_helpers import demo_app, screen_text, settle

ALL = [(title, b) for title, bindings in binding_groups() for b in bindings]


@pytest.mark.parametrize("title,binding", ALL, ids=[f"{t}:{b.id}" for t, b in ALL])
def test_binding_has_id_description_and_help_line(title, binding):
    assert isinstance(binding, Binding)
    assert binding.id and binding.description
    assert f"{key_text(binding.key):<16}{binding.description}" in help_text().plain


def test_binding_ids_are_unique():
    ids = [b.id for _, b in ALL]
    assert len(ids) == len(set(ids))


async def _hits(screen) -> list[str]:
    provider = WorkbenchCommands(screen)
    return [hit.text async for hit in provider.discover()]


async def test_palette_and_greying_follow_check_action(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        bench = app.screen
        assert isinstance(bench, BenchScreen)
        # subgroup 1 is in control and nothing is excluded: restore and the signal marks do not apply
        assert bench.check_action("restore", ()) is None
        assert bench.check_action("explain", ()) is None
        assert bench.check_action("exclude", ()) is True
        hits = await _hits(bench)
        assert "Exclude" in hits and "Setup" in hits and "Help" in hits and "Quit" in hits
        assert "Restore" not in hits and "Explained" not in hits
        await pilot.press("n")
        await settle(pilot)
        assert bench.check_action("explain", ()) is True
        assert "Explained" in await _hits(bench)

        await pilot.press("question_mark")
        await settle(pilot)
        assert isinstance(app.screen, HelpScreen)
        text = screen_text(app)
        assert "Keys" in text and "Exclude" in text
        await pilot.press("escape")
        await settle(pilot)
        assert isinstance(app.screen, BenchScreen)
        await pilot.press("ctrl+p")
        await settle(pilot)
        await pilot.press(*"setup")
        await pilot.press("enter")
        await settle(pilot)
        from workbench.tui.dialogs.setup import SetupDialog
        assert isinstance(app.screen, SetupDialog)  # the palette ran the bench's setup action
        await pilot.press("escape")
        await settle(pilot)
        await pilot.press("q")


async def test_escape_goes_back_from_every_screen(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        for key in ("enter", "f", "t", "s", "x", "a", "question_mark"):
            await pilot.press(key)
            await settle(pilot)
            assert not isinstance(app.screen, BenchScreen), key
            await pilot.press("escape")
            await settle(pilot)
            assert isinstance(app.screen, BenchScreen), key
        assert len(app.snapshot.events) == 1  # nothing was recorded by going there and back
        await pilot.press("q")
