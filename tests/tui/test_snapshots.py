"""Snapshots of the main screens (no clocks, paths or timings on them: times are hidden)."""
from __future__ import annotations

from tui_helpers import demo_app, settle


def _after(*keys, reason: str | None = None):
    async def run_before(pilot) -> None:
        await settle(pilot)
        for key in keys:
            await pilot.press(key)
            await settle(pilot)
            if key == "x" and reason:
                await pilot.press(*reason, "enter")
                await settle(pilot)
    return run_before


def test_bench_at_a_signal(snap_compare, in_tmp):
    assert snap_compare(demo_app(), terminal_size=(120, 36), run_before=_after("n"))


def test_bench_at_80_by_24(snap_compare, in_tmp):
    assert snap_compare(demo_app(), terminal_size=(80, 24), run_before=_after("n", "n"))


def test_breakdown_of_the_drift(snap_compare, in_tmp):
    assert snap_compare(demo_app(), terminal_size=(120, 36), run_before=_after("n", "enter", "down", "down", "down"))


def test_trail_after_an_exclusion(snap_compare, in_tmp):
    assert snap_compare(demo_app(), terminal_size=(120, 36),
                        run_before=_after("n", "x", "t", reason="nozzle H4 changed"))


def test_fit_view_at_120_by_36(snap_compare, in_tmp):
    assert snap_compare(demo_app(), terminal_size=(120, 36), run_before=_after("f"))


def test_fit_view_at_80_by_24(snap_compare, in_tmp):
    assert snap_compare(demo_app(), terminal_size=(80, 24), run_before=_after("f"))
