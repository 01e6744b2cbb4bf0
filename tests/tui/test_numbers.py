"""Numbers on the bench are never cut: each equals its value by the one formatting rule (core/text.py)."""
from __future__ import annotations

import re

import numpy as np
import pytest

from workbench.core.text import num, nums, reading
from workbench.tui.widgets.panels import SubgroupPanel

from tui_helpers import demo_app, screen_text, settle


def _lines_fit(panel) -> None:
    width = panel.size.width
    for line in panel.plain().splitlines():
        assert len(line) <= width, f"cut at {width}: {line!r}"


@pytest.mark.parametrize("size", [(120, 36), (80, 24)])
async def test_subgroup_panel_and_status_bar_show_whole_numbers(in_tmp, opened, size):
    app = demo_app()
    async with opened(app, size=size) as pilot:
        for keys in ((), ("n",), ("n", "n", "n")):
            await pilot.press(*keys)
            await settle(pilot)
            bench = app.screen
            snap, p = app.snapshot, bench.cursor
            a, ds = snap.analysis, snap.dataset
            panel = bench.query_one(SubgroupPanel)
            _lines_fit(panel)
            text = panel.plain()
            assert f"({p + 1:,} of {ds.m:,})" in text
            for c in a.charts:  # the plotted value, told apart from its limits
                shown = re.search(rf"\b{c.name} (\S+)", text).group(1)
                assert shown == nums((c.values[p], c.lcl[p], c.center[p], c.ucl[p]))[0]
                assert abs(float(shown) - c.values[p]) <= 0.5 * 10 ** (np.floor(np.log10(abs(c.values[p]))) - 3)
            row = ds.values[p]
            mean = row.mean()
            for j, stream in enumerate(ds.streams):
                line = next(x for x in text.splitlines() if x.startswith(stream + " "))
                cells = line.split()
                assert cells[1] == reading(row[j])                              # the reading as recorded
                dev = row[j] - mean
                assert cells[2] == ("+" if dev > 0 else "") + num(dev)          # 4 significant figures
            assert f"range {num(row.max() - row.min())}" in text
            status = bench.query_one("#status").plain()
            assert f"σ {num(a.sigma_within)} " in status
            loc = a.location
            lcl, cl, ucl = nums((loc.lcl[p], loc.center[p], loc.ucl[p]))
            assert f"xbar LCL {lcl} · CL {cl} · UCL {ucl}" in status        # labelled, never cut
            assert float(lcl) < float(cl) < float(ucl)
            for line in status.splitlines():
                assert len(line) <= bench.query_one("#status").size.width
        await pilot.press("q")


@pytest.mark.parametrize("size, words", [((120, 36), "+9 more points"), ((80, 24), "+9 more")])
async def test_a_run_says_how_many_more_points_it_has(in_tmp, opened, size, words):
    # the demo's first signal is a same-side run of 10 subgroups (11:45 to 14:00) [demo_data/README.md]
    app = demo_app()
    async with opened(app, size=size) as pilot:
        for _ in range(4):  # at 80x24 the list shows two signals: n brings the run into view (list order)
            text = screen_text(app)
            if any("2026-03-02 11:45" in x and "xbar" in x for x in text.splitlines()):
                break
            await pilot.press("n")
            await settle(pilot)
        line = next(x for x in text.splitlines() if "2026-03-02 11:45" in x and "xbar" in x)
        assert words in line and "open" in line
        assert re.search(r"\+9(?! more)", text) is None               # never a bare "+9"
        if size == (120, 36):
            assert "cursor column" in text             # the legend says how the cursor is drawn
        await pilot.press("q")
