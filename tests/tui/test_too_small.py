"""Below 80×24 the workbench shows one clear screen asking for a larger terminal (never a collapsed chart)."""
from __future__ import annotations

from workbench.tui.screens.bench import BenchScreen
from workbench.tui.screens.too_small import TooSmallScreen

from tui_helpers import demo_app, screen_text, settle


async def test_a_small_terminal_asks_to_be_enlarged_and_the_bench_comes_back(in_tmp, opened):
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        await pilot.press("n")
        await settle(pilot)
        cursor = app.screen.cursor
        await pilot.resize_terminal(60, 20)
        await settle(pilot)
        assert isinstance(app.screen, TooSmallScreen)
        text = screen_text(app)
        assert "Please enlarge the terminal" in text and "60×20" in text and "80×24" in text
        assert "UCL" not in text                                   # no squeezed chart behind it
        await pilot.resize_terminal(80, 24)                          # the smallest size that works
        await settle(pilot)
        assert isinstance(app.screen, BenchScreen) and app.screen.cursor == cursor
        await pilot.press("q")
