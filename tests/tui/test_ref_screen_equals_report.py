"""Screen = report: what the workbench shows for the demo equals what ``report --format json`` says.

The README promises "the headless report (same numbers as the screen)".  Both are read as a person or a
script would: the limits, σ and the open-signal count off the bench's rendered text, the capability
figures off the fit view's rendered text, and the report from the CLI's JSON.  Statistics must read
exactly as the one formatting rule (``workbench.core.text.num`` / ``nums``) writes the report's value;
the ppm figures, which have their own precision, must agree with the report to half a unit in the last
digit shown [definition of rounding to the shown digits], e.g. "0.022" stands for 0.0215 … 0.0225.
"""
from __future__ import annotations

import json
import re

import pytest

from workbench.cli import main
from workbench.core.text import num, nums
from workbench.demo import demo_path
from workbench.tui.screens.bench import BenchScreen
from workbench.tui.screens.fit import FitScreen

from tui_helpers import demo_app, settle

NUMBER = r"-?[0-9][0-9,]*(?:\.[0-9]+)?(?:e[-+]?[0-9]+)?"


def region_text(app, widget) -> str:
    """The characters a widget occupies on the screen now (styles dropped)."""
    r = widget.region
    strips = app.screen._compositor.render_strips()
    return "\n".join("".join(s.text for s in strips[y].crop(r.x, r.x + r.width)) for y in range(r.y, r.y + r.height))


def widget_text(widget) -> str:
    """The text a Static-like widget renders (all of it, also the part scrolled out of view)."""
    rendered = widget.render()
    return getattr(rendered, "plain", None) or str(rendered)


def agrees(shown: str, value: float) -> bool:
    """True when ``shown`` is ``value`` rounded to the digits shown (half a unit in the last place)."""
    text = shown.replace(",", "")
    mantissa, _, exp = text.partition("e")
    decimals = len(mantissa.partition(".")[2])
    unit = 10.0 ** (-decimals) * (10.0 ** int(exp) if exp else 1.0)
    return abs(float(text) - value) <= 0.5 * unit * (1 + 1e-9) + 1e-12


def report_json(capsys) -> dict:
    try:
        code = main(["report", str(demo_path()), "--format", "json"])
    except SystemExit as e:  # pragma: no cover - main returns normally
        code = e.code
    out = capsys.readouterr().out
    assert code == 0
    return json.loads(out)


async def test_the_bench_and_the_fit_view_show_the_reports_numbers(in_tmp, opened, capsys):
    """Mutation killed: the ppm table's "below LSL" and "above USL" columns swapped
    (capability/report.py _ppm_rows, used by the fit view): the screen then shows 0.022 ppm expected below
    the LSL where the report's JSON says 0.0018; the rest of the suite (core, CLI, TUI) passes with it."""
    rep = report_json(capsys)
    charts = {c["name"]: c for c in rep["charts"]}
    app = demo_app()
    async with opened(app, size=(120, 36)) as pilot:
        bench = app.screen
        assert isinstance(bench, BenchScreen)
        status = region_text(app, bench.query_one("#status"))
        # chart kind and σ within: " xbar-r  σ 0.3790 rbar/d2 │ ..."
        kind = re.search(r"\b(xbar-r|xbar-s|imr|p|np|c|u|ewma|cusum)\s+σ\s+(" + NUMBER + ")", status)
        assert kind, status
        assert kind.group(1) == rep["chart"]
        assert kind.group(2) == num(rep["sigma"]["within"]), (kind.group(2), rep["sigma"]["within"])
        # each chart's limits at the cursor: "xbar LCL 499.6 · CL 500.1 · UCL 500.6"
        for name, chart in charts.items():
            m = re.search(rf"(?<![\w-]){re.escape(name)} LCL ({NUMBER}) · CL ({NUMBER}) · UCL ({NUMBER})", status)
            assert m, (name, status)
            want = nums((chart["lcl"], chart["center"], chart["ucl"]))
            assert list(m.groups()) == want, (name, m.groups(), want)
        # the open signals: the status bar and the signals panel's title both count the report's signals
        open_count = re.search(r"open (\d+)", status)
        assert open_count and int(open_count.group(1)) == len(rep["signals"])
        title = str(bench.query_one("#signals").border_title)
        assert re.search(rf"\b{len(rep['signals'])} open of {len(rep['signals'])}\b", title), title

        await pilot.press("f")
        await settle(pilot)
        assert isinstance(app.screen, FitScreen)
        text = " ".join(widget_text(app.screen.query_one("#fit-text")).split())  # wrapped lines joined
        cap = rep["capability"]
        assert re.search(rf"\b{cap['n']} readings\b", text), text
        assert f"Method: {cap['method']}" in text
        within = re.search(rf"Within \(σ ({NUMBER})", text)
        assert within and within.group(1) == num(cap["sigma_within"]), (within, cap["sigma_within"])
        overall = re.search(rf"σ of the readings ({NUMBER})", text)
        assert overall and overall.group(1) == num(cap["sigma_overall"]), (overall, cap["sigma_overall"])
        shown_indices = 0
        for key, value in cap["indices"].items():
            label = {"k": "centring k"}.get(key, key[0].upper() + key[1:])
            m = re.search(rf"(?<![\w-]){re.escape(label)} ({NUMBER}|n/a)(?=[\s,.;]|$)", text)
            assert m, (label, text)
            if value is None:
                assert m.group(1) == "n/a", (label, m.group(1))
            else:
                assert m.group(1) == num(value), (label, m.group(1), value)
                shown_indices += 1
        assert shown_indices >= 4  # Pp, Ppl, Ppu, Ppk at least (the demo's percentile method)
        # fallout: one sentence per side, observed ppm in brackets, expected overall "… ppm from the … model"
        for side, key in (("Below the LSL", "below_lsl"), ("Above the USL", "above_usl")):
            m = re.search(rf"{side} \([^)]*\): \d+ of \d+ readings observed \(({NUMBER}) ppm\); expected "
                          rf"(?:{NUMBER}|n/a) ppm within and ({NUMBER}) ppm", text)
            assert m, (side, text)
            assert agrees(m.group(1), cap["ppm"]["observed"][key]), (side, m.group(1))
            assert agrees(m.group(2), cap["ppm"]["overall"][key]), (side, m.group(2))
        await pilot.press("q")


@pytest.mark.parametrize("shown, value, ok", [
    ("500.57", 500.5660851, True), ("500.57", 500.5749, True), ("500.57", 500.5751, False),
    ("1,157", 1157.407, True), ("1,157", 1157.6, False), ("0.0018", 0.0018459, True), ("0.022", 0.0215348, True),
    ("2.3e-05", 2.34e-05, True), ("2.3e-05", 2.36e-05, False), ("0", 0.0, True), ("0", 0.6, False),
])
def test_the_agreement_rule_itself(shown, value, ok):
    # half a unit in the last shown digit [definition of rounding]; the cases can fail both ways
    assert agrees(shown, value) is ok
