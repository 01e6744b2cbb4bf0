"""No screen shows "None", "nan" or "inf" to a user (issue: the trail once showed ``rules: None → nelson``).

Walks every screen and dialog of the demo (with its specification) and of awkward files — individuals with a
one-sided specification, a stable file with no specification, counts (p chart) with a one-sided limit, an
EWMA and a CUSUM chart — and greps the rendered text after each key. The reports are checked the same way in
tests/cli (every format): here the screens.
"""
from __future__ import annotations

import re
from pathlib import Path

import pytest

from workbench.core.model import LayoutRequest, Settings, Spec
from workbench.demo import DEMO_DIR
from workbench.tui.app import WorkbenchApp
from workbench.tui.session import OpenRequest

from tui_helpers import demo_app, screen_text, settle

BAD = re.compile(r"\bNone\b|\b[Nn]a[Nn]\b|(?<![\w.])-?inf\b|\bInfinity\b")
"""A Python or numpy spelling of 'nothing' or 'not a number' shown to the user."""

WALK = (("n",), ("enter",), ("escape", "f"), ("1",), ("2",), ("3",), ("4",), ("escape", "t"), ("escape", "S"),
        ("escape", "m"), ("enter",), ("escape", "escape", "?"), ("escape", "s"), ("escape", "x"),
        ("escape", "g"), ("escape", "F"), ("escape", "escape", "N"))
"""Next signal, breakdown, fit (each method previewed), trail, summary, stream view (and one stream), help, setup,
exclude, go to, filter, previous signal."""


def _app(name: str, settings: Settings | None = None, request: LayoutRequest | None = None) -> WorkbenchApp:
    kw = {"settings": settings} if settings is not None else {}
    if request is not None:
        kw["request"] = request
    return WorkbenchApp(OpenRequest(Path(DEMO_DIR / name), **kw), hide_times=True)


CASES = {
    "demo with its specification": lambda: demo_app(),
    "individuals, upper limit only": lambda: _app("tank_ph.csv", Settings(spec=Spec(usl=7.5))),
    "no specification": lambda: _app("stable_caps.csv"),
    "counts, upper limit only": lambda: _app("closure_rejects.csv", Settings(spec=Spec(usl=0.05))),
    "EWMA, lower limit only": lambda: _app("filler_line3.csv", Settings(chart="ewma", spec=Spec(lsl=497.0))),
    "CUSUM on individuals": lambda: _app("tank_ph.csv", Settings(chart="cusum")),
}


@pytest.mark.parametrize("size", [(120, 36), (80, 24)])
@pytest.mark.parametrize("case", list(CASES))
async def test_no_screen_shows_none_nan_or_inf(in_tmp, opened, case, size):
    app = CASES[case]()
    seen = []
    async with opened(app, size=size) as pilot:
        text = screen_text(app)
        assert "signals" in text or "Overview" in text, text
        for keys in WALK:
            await pilot.press(*keys)
            await settle(pilot)
            text = screen_text(app)
            seen.append(type(app.screen).__name__)
            bad = [line for line in text.splitlines() if BAD.search(line)]
            assert not bad, f"{case} at {size} after {keys} on {type(app.screen).__name__}: {bad}"
        await pilot.press("escape", "escape", "escape")
        await settle(pilot)
    # the walk reached the screens it names (a walk that never left the bench would prove nothing)
    for name in ("BreakdownScreen", "FitScreen", "TrailScreen", "HelpScreen", "SetupDialog"):
        assert name in seen, (case, seen)


def test_the_grep_catches_what_it_is_for():
    """The pattern finds the spellings a bug would show and passes words that merely contain them."""
    for shown in ("rules: None → nelson", "Cpk nan", "UCL inf", "LCL -inf", "NaN ppm", "Infinity"):
        assert BAD.search(shown), shown
    for fine in ("information", "infinite", "nominal", "Nonetheless", "banana", "—", "n/a"):
        assert not BAD.search(fine), fine
