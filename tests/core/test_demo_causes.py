"""The planted causes of the invented demo scenario are found and attributed to the right stream.

demo_data/planted.json is written by the seeded generator (demo_data/generate.py); the data are invented,
so these tests check the tool's behaviour on the demo, not a published value.
"""
import json
from pathlib import Path

import pytest

from workbench.core.analysis import analyse
from workbench.core.data.reader import load
from workbench.core.model import Exclusion, Settings
from workbench.core.streams import breakdown

DEMO = Path(__file__).resolve().parents[2] / "demo_data"
PLANTED = json.loads((DEMO / "planted.json").read_text())


def planted(kind, file="filler_line3.csv"):
    return next(p for p in PLANTED if p["kind"] == kind and p["file"] == file)


@pytest.fixture(scope="module", params=["filler_line3.csv", "filler_line3_long.csv"])
def filler(request):
    ds = load(DEMO / request.param)
    return ds, analyse(ds, Settings())


def _window(ds, p):
    labels = list(ds.labels)
    return labels.index(p["first"]), labels.index(p["last"])


def test_drifting_head_is_found_and_attributed(filler):
    ds, a = filler
    lo, hi = _window(ds, planted("drift"))
    inside = [s for s in a.signals if lo <= s.last and s.first <= hi]
    assert inside, "no signal during the H4 drift"
    drivers = {breakdown(a, f).driver for s in inside for f in s.fired if lo <= f <= hi}
    assert drivers == {"H4"} or ("H4" in drivers and None in drivers and len(drivers) == 2)


def test_lot_change_step_is_found_as_a_common_cause(filler):
    ds, a = filler
    lo, hi = _window(ds, planted("step"))
    x_signals = [s for s in a.signals if s.chart == "xbar" and lo <= s.last and s.first <= hi]
    assert any(s.rule == "beyond-limits" for s in x_signals)
    verdicts = [breakdown(a, f) for s in x_signals for f in s.fired if lo <= f <= hi]
    common = [b for b in verdicts if b.driver is None and "moved together" in b.verdict]
    assert len(common) >= len(verdicts) / 2  # mostly "all streams together", not one head


def test_mis_keyed_reading_is_found_and_excluding_it_clears_the_signal(filler):
    ds, a = filler
    p = planted("mis-keyed")
    pos = list(ds.labels).index(p["first"])
    assert pos in a.chart_named("r").flags["beyond-limits"]
    assert pos in a.chart_named("xbar").flags["beyond-limits"]
    b = breakdown(a, pos)
    assert b.driver == p["stream"] and "maximum" in b.verdict
    j = ds.streams.index(p["stream"])
    assert ds.values[pos, j] == pytest.approx(p["recorded"])
    after = analyse(ds, Settings(), [Exclusion(p["first"], p["stream"])])
    assert pos not in after.chart_named("r").flags["beyond-limits"]
    assert pos not in after.chart_named("xbar").flags["beyond-limits"]
    assert after.chart_named("r").ucl[0] < a.chart_named("r").ucl[0]


def test_stable_dataset_has_no_signals():
    a = analyse(load(DEMO / "stable_caps.csv"), Settings())
    assert a.signals == ()


def test_individuals_step_is_found():
    ds = load(DEMO / "tank_ph.csv")
    a = analyse(ds, Settings())
    assert a.chart == "imr"
    lo, hi = _window(ds, planted("step", "tank_ph.csv"))
    assert any(lo <= s.first <= hi for s in a.signals)


def test_count_data_cause_is_attributed_to_the_line():
    ds = load(DEMO / "closure_rejects.csv")
    a = analyse(ds, Settings())
    assert a.chart == "p"
    lo, hi = _window(ds, planted("rate", "closure_rejects.csv"))
    sig = [s for s in a.signals if lo <= s.first <= hi]
    assert sig and all(breakdown(a, f).driver == "L2" for s in sig for f in s.fired)
    assert not [s for s in a.signals if not (lo <= s.first <= hi)]
