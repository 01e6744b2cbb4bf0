"""What changed there: context changes near an anchor, and the demo's planted lot change."""
from __future__ import annotations

import dataclasses
import json

import numpy as np

from tests.conftest import make_dataset
from workbench.core.analysis import analyse
from workbench.core.context.leads import WINDOW, changes_at, leads_at_many, range_leads, signal_leads
from workbench.core.context.words import CAUTION, change_sentence
from workbench.core.data.reader import load
from workbench.core.report import report_json
from workbench.demo import DEMO_FILE

PLANTED = json.loads((DEMO_FILE.parent / "planted.json").read_text(encoding="utf-8"))


def _ds(m=40, **cols):
    ds = make_dataset(np.random.default_rng(5).normal(0, 1, (m, 3)))
    return dataclasses.replace(ds, extras={k: np.asarray(v, dtype=str) for k, v in cols.items()})


def test_changes_within_the_window_either_side_and_no_further():
    """A change at q is where subgroup q first has the new value; listed when |q − anchor| ≤ WINDOW (3).
    Mutation killed: the window one short or one long on either side, before/after swapped."""
    assert WINDOW == 3
    m = 40
    col = ["a"] * 17 + ["b"] * 6 + ["c"] * (m - 23)            # changes at 17 and 23
    a = analyse(_ds(m, tool=col))
    at = {anchor: [(c.position, c.offset, c.before, c.after) for c in changes_at(a, anchor)] for anchor in
          (13, 14, 20, 26, 27)}
    assert at[13] == []                                       # 17 is 4 after
    assert at[14] == [(17, 3, "a", "b")]
    assert at[20] == [(17, -3, "a", "b"), (23, 3, "b", "c")]
    assert at[26] == [(23, -3, "b", "c")] and at[27] == []


def test_nearest_first_and_many_anchors_equal_one_at_a_time():
    m = 40
    a = analyse(_ds(m, tool=["a"] * 18 + ["b"] * (m - 18), crew=["x"] * 20 + ["y"] * (m - 20)))
    got = changes_at(a, 19)
    assert [abs(c.offset) for c in got] == sorted(abs(c.offset) for c in got)     # no lead: nearest first
    anchors = np.arange(m)
    many = leads_at_many(a, anchors)
    for p in anchors.tolist():
        assert [(c.column, c.position) for c in many[p]] == [(c.column, c.position) for c in changes_at(a, p)]


def test_a_column_that_changes_at_most_subgroups_is_not_listed():
    m = 40
    a = analyse(_ds(m, serial=[f"S{i}" for i in range(m)], tool=["a"] * 20 + ["b"] * 20))
    assert [c.column for c in changes_at(a, 20)] == ["tool"]


def test_a_range_lists_the_changes_near_its_start_and_after_its_end():
    m = 40
    a = analyse(_ds(m, tool=["a"] * 10 + ["b"] * 12 + ["c"] * (m - 22)))
    got = range_leads(a, 10, 21)
    assert {(c.position, c.anchor) for c in got} == {(10, "the start of the range"),
                                                     (22, "the first subgroup after the range")}


def test_the_planted_lot_change_is_the_first_lead_of_its_signal():
    """demo_data/planted.json: the lot change (a step of all heads) begins at "first"; the generator logs the new
    concentrate lot L-2292 from that subgroup (demo_data/README.md)."""
    step = next(c for c in PLANTED if c["file"] == "filler_line3.csv" and c["kind"] == "step")
    ds = load(DEMO_FILE)
    a = analyse(ds)
    start = ds.index_of(step["first"])
    sig = next(s for s in a.signals if s.chart == "xbar" and s.rule == "beyond-limits" and s.first == start)
    first = signal_leads(a, sig)[0]
    assert (first.column, first.position, first.before, first.after, first.lead) == \
        ("concentrate_lot", start, "L-2291", "L-2292", True)
    words = change_sentence(first, step["first"])
    # the step's change point (Samuel, Pignatiello & Calvin 1998, core/charts/changepoint.py) is its first subgroup
    assert words.startswith("concentrate_lot changed L-2291 → L-2292 at the estimated change point") and "+" in words
    rep = report_json(a)
    js = next(d for d in rep["signals"] if d["key"] == sig.key)
    assert js["leads"][0]["column"] == "concentrate_lot" and js["leads"][0]["lead"] is True
    assert rep["context"]["caution"] == CAUTION and "not verdicts" in CAUTION


def test_the_planted_nozzle_swap_is_found_at_both_ends_of_the_drift_range():
    """demo_data/planted.json: the H4 drift from "first" to "last"; the service log records the nozzle swap and
    the re-seat (demo_data/README.md)."""
    drift = next(c for c in PLANTED if c["file"] == "filler_line3.csv" and c["kind"] == "drift")
    ds = load(DEMO_FILE)
    a = analyse(ds)
    first, last = ds.index_of(drift["first"]), ds.index_of(drift["last"])
    got = [(c.column, c.position, c.offset) for c in range_leads(a, first, last) if c.column == "nozzle_service"]
    assert got == [("nozzle_service", first, 0), ("nozzle_service", last + 1, 0)]


def test_a_given_anchor_replaces_the_start_of_the_run():
    """An estimated change point passed in moves the window (the anchor is the caller's)."""
    ds = load(DEMO_FILE)
    a = analyse(ds)
    sig = next(s for s in a.signals if s.chart == "xbar" and s.rule == "same-side")   # the drift's run
    assert not [c for c in signal_leads(a, sig) if c.column == "nozzle_service"]
    swap = ds.index_of(next(c for c in PLANTED if c["kind"] == "drift")["first"])
    got = signal_leads(a, sig, anchor=swap + 1)
    assert [(c.column, c.offset, c.anchor) for c in got if c.column == "nozzle_service"] == \
        [("nozzle_service", -1, "the estimated change point")]


def test_with_the_planted_causes_excluded_no_context_column_is_a_lead():
    """demo_data/README.md: before exclusion the shift, the operator and the label roll read as leads only because
    the planted causes fell on them; with the three planted causes (demo_data/planted.json) left out, none is.
    Mutation killed: excluded subgroups kept in the ranking."""
    from workbench.core.context.ranking import context_of
    from workbench.core.model import Exclusion
    ds = load(DEMO_FILE)
    before = context_of(analyse(ds))
    assert {"concentrate_lot", "operator", "shift"} <= {s.column for s in before.leads}
    out = []
    for c in (c for c in PLANTED if c["file"] == "filler_line3.csv"):
        out += [Exclusion(str(lab)) for lab in ds.labels[ds.index_of(c["first"]):ds.index_of(c["last"]) + 1]]
    after = context_of(analyse(ds, exclusions=out))
    assert after.used == ds.m - len(out) and after.leads == ()


def test_data_without_context_columns_have_a_null_context_and_no_leads():
    rep = report_json(analyse(load(DEMO_FILE.parent / "tank_ph.csv")))      # date, ph: no other column
    assert rep["signals"] and rep["context"] is None and all("leads" not in s for s in rep["signals"])


def test_the_anchor_is_the_change_point_when_the_signal_has_one():
    """demo_data/README.md: the runs below the centre line in the night are a consequence of the planted causes —
    the mean falls back when the H4 nozzle is re-seated (demo_data/planted.json: the drift's "last" subgroup).
    Their change point lies just after the re-seat, so the service log's change is listed there, though the runs
    themselves begin hours later.  Mutation killed: the run's start used where a change point exists."""
    from workbench.core.charts import changepoint as CP
    drift = next(c for c in PLANTED if c["file"] == "filler_line3.csv" and c["kind"] == "drift")
    ds = load(DEMO_FILE)
    a = analyse(ds)
    reseat = ds.index_of(drift["last"]) + 1
    table = a.signals
    i = next(i for i, s in enumerate(table) if s.chart == "xbar" and s.rule == "zone-a" and s.first > reseat + 20)
    cp = CP.signal_shapes(a).change(i)
    assert cp is not None and abs(cp.index - reseat) <= WINDOW
    got = [(c.column, c.position, c.offset, c.anchor) for c in signal_leads(a, table[i])]
    assert ("nozzle_service", reseat, reseat - cp.index, "the estimated change point") in got
    js = next(d for d in report_json(a)["signals"] if d["key"] == table[i].key)
    assert any(d["column"] == "nozzle_service" and d["position"] == reseat for d in js["leads"])
