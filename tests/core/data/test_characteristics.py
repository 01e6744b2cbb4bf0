"""Several characteristics in one file: picking one, the overview, and the specification file.

The files are the bundled demo's own readings stacked into one table (fill volume of the filler, torque of
the stable capper), so each characteristic can be checked against the demo file it came from."""
from __future__ import annotations

import csv
import dataclasses
from pathlib import Path

import numpy as np
import pytest

from sources_common import assert_same, report_of, without_context
from workbench.core.analysis import analyse, capability_of
from workbench.core.data.characteristics import ManyCharacteristics, read_specs
from workbench.core.data.reader import characteristics_of, load
from workbench.core.model import LayoutRequest, Settings, Spec, WorkbenchError
from workbench.core.overview import overview

DEMO = Path(__file__).resolve().parents[3] / "demo_data"
FILL = Spec(lsl=497.0, usl=503.0, target=500.0)  # demo_data/README.md
TORQUE = Spec(lsl=1.9, usl=2.5)  # a specification stated for this test (the README gives none)


def stacked(folder: Path) -> Path:
    """One long table with a characteristic column: 'fill volume' rows, then 'cap torque' rows."""
    out = folder / "line3_all.csv"
    with open(out, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["subgroup", "head", "characteristic", "reading"])
        rows = list(csv.reader(open(DEMO / "filler_line3_long.csv", encoding="utf-8")))[1:]
        for t, head, v, _op, *_context in rows:
            w.writerow([t, head, "fill volume", v])
        caps = list(csv.reader(open(DEMO / "stable_caps.csv", encoding="utf-8")))
        for r in caps[1:]:
            for s, v in zip(caps[0][1:], r[1:]):
                w.writerow([r[0], s, "cap torque", v])
    return out


def specs_file(folder: Path) -> Path:
    p = folder / "specs.csv"
    p.write_text("name,LSL,target,USL,unit\nfill volume,497,500,503,mL\ncap torque,1.9,,2.5,N·m\n", encoding="utf-8")
    return p


def test_without_a_choice_the_characteristics_are_named(tmp_path):
    path = stacked(tmp_path)
    assert characteristics_of(path) == ("fill volume", "cap torque")
    with pytest.raises(ManyCharacteristics, match=r"holds 2 characteristics \(fill volume, cap torque\): give "
                                                  r"--characteristic NAME"):
        load(path)


def test_each_characteristic_equals_its_own_file(tmp_path):
    # [definition] the rows of one characteristic are that characteristic's data: the same report as its own file.
    path = stacked(tmp_path)
    fill = load(path, LayoutRequest(characteristic="fill volume"))
    assert fill.characteristic == "fill volume" and "characteristic" not in fill.extras
    assert_same(report_of(without_context(load(DEMO / "filler_line3_long.csv"))), report_of(fill))
    torque = load(path, LayoutRequest(characteristic="cap torque"))
    ref = report_of(load(DEMO / "stable_caps.csv"), Settings(spec=TORQUE))
    assert_same(ref, report_of(torque, Settings(spec=TORQUE)))
    # Errors name the record's own line in the stacked file.
    with pytest.raises(WorkbenchError, match="no characteristic 'label position'"):
        load(path, LayoutRequest(characteristic="label position"))


def test_several_measured_columns(tmp_path):
    # Long data with two number columns: each is a characteristic. The second is the first in grams
    # (x 1.02 g/mL); capability indices do not depend on the unit [definition: (USL - mean)/(3 s) is
    # unchanged when every value and limit is multiplied by the same positive number].
    rows = list(csv.reader(open(DEMO / "filler_line3_long.csv", encoding="utf-8")))
    path = tmp_path / "two.csv"
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["time", "head", "fill_ml", "fill_g"])
        for t, h, v, *_ in rows[1:]:
            w.writerow([t, h, v, repr(float(v) * 1.02)])
    assert characteristics_of(path) == ("fill_ml", "fill_g")
    ml = analyse(load(path, LayoutRequest(characteristic="fill_ml")),
                 Settings(spec=dataclasses.replace(FILL, method="normal")))
    g = analyse(load(path, LayoutRequest(characteristic="fill_g")),
                Settings(spec=Spec(lsl=497 * 1.02, usl=503 * 1.02, target=500 * 1.02, method="normal")))
    assert capability_of(g).ppk == pytest.approx(capability_of(ml).ppk, rel=1e-9)
    assert_same(report_of(without_context(load(DEMO / "filler_line3_long.csv"))),
                report_of(load(path, LayoutRequest(characteristic="fill_ml"))))


def test_overview_equals_the_per_characteristic_reports(tmp_path):
    path = stacked(tmp_path)
    specs = read_specs(str(specs_file(tmp_path)))
    rows = overview(path, LayoutRequest(), Settings(), specs)
    assert [r.name for r in rows] == ["fill volume", "cap torque"]  # open signals first (the filler's planted causes)
    for r, spec in zip(rows, (FILL, Spec(lsl=1.9, usl=2.5))):
        ds = load(path, LayoutRequest(characteristic=r.name))
        a = analyse(ds, Settings(spec=spec))
        assert (r.subgroups, r.readings, r.open_signals) == (ds.m, int((~np.isnan(ds.values)).sum()), len(a.signals))
        assert r.ppk == pytest.approx(capability_of(a).ppk, rel=1e-12)
    assert rows[0].attention and rows[0].open_signals == 15 and not rows[1].attention and rows[1].open_signals == 0
    assert rows[1].unit == "N·m"


def test_specs_file_errors_name_row_and_column(tmp_path):
    p = tmp_path / "s.csv"
    p.write_text("name,LSL,target,USL,unit\nfill,497,500,x503,mL\n", encoding="utf-8")
    with pytest.raises(WorkbenchError, match=r"s\.csv:2:USL: not a number: 'x503'$"):
        read_specs(str(p))
    p.write_text("name,LSL,USL\nfill,1,2\n", encoding="utf-8")
    with pytest.raises(WorkbenchError, match=r"s\.csv:1: .*missing: target, unit\)$"):
        read_specs(str(p))
    p.write_text("name,LSL,target,USL,unit\nfill,5,,2,mL\n", encoding="utf-8")
    with pytest.raises(WorkbenchError, match=r"s\.csv:2:USL: USL 2 is not above LSL 5$"):
        read_specs(str(p))
