"""The overview screen: several characteristics, what needs attention first; Enter opens the bench."""
from __future__ import annotations

import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "core" / "data"))
from test_characteristics import specs_file, stacked  # noqa: E402
from tui_helpers import data_app, screen_text, settle  # noqa: E402

from workbench.core.data.characteristics import read_specs  # noqa: E402


@pytest.mark.parametrize("size", [(120, 36), (80, 24)])
async def test_overview_then_bench(tmp_path, monkeypatch, size):
    monkeypatch.chdir(tmp_path)
    path = stacked(tmp_path)
    app = data_app(path, specs=read_specs(str(specs_file(tmp_path))))
    async with app.run_test(size=size) as pilot:
        await settle(pilot)
        from workbench.tui.screens.overview import OverviewScreen
        assert isinstance(app.screen, OverviewScreen)
        text = screen_text(app)
        assert "Overview" in text and "fill volume" in text and "cap torque" in text
        # Attention first: the filler (15 open signals) above the stable capper.
        assert text.index("fill volume") < text.index("cap torque")
        await pilot.press("down", "enter")
        await settle(pilot)
        from workbench.tui.screens.bench import BenchScreen
        assert isinstance(app.screen, BenchScreen)
        assert app.snapshot.dataset.characteristic == "cap torque"
        assert app.snapshot.analysis.settings.spec.usl == 2.5  # from the specification file
    case = tmp_path / "casefiles" / "line3_all-cap_torque.case.json"
    assert case.is_file() and '"characteristic":"cap torque"' in case.read_text()


@pytest.mark.parametrize("size", [(120, 36), (80, 24)])
async def test_status_bar_names_the_characteristic_and_unit(tmp_path, monkeypatch, size):
    # Data of several characteristics: the status bar says which one the bench shows, with its unit from the
    # specification file (N·m for cap torque), whole, at 80 columns too; a limits piece is whole or left out.
    monkeypatch.chdir(tmp_path)
    path = stacked(tmp_path)
    app = data_app(path, specs=read_specs(str(specs_file(tmp_path))))
    async with app.run_test(size=size) as pilot:
        await settle(pilot)
        await pilot.press("down", "enter")
        await settle(pilot)
        a = app.snapshot.analysis
        line = next(ln for ln in screen_text(app).splitlines() if f" {a.chart} " in ln and "σ" in ln)
        assert line.lstrip().startswith("cap torque (N·m) │")
        from workbench.core.text import nums
        p = app.screen.cursor
        for c in a.charts:
            if f"│ {c.name} LCL" in line:
                lcl, cl, ucl = nums((c.lcl[p], c.center[p], c.ucl[p]))
                assert f"│ {c.name} LCL {lcl} · CL {cl} · UCL {ucl}" in line
