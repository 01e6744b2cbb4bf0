"""Ranges on the command line (``FIRST..LAST``) and retractions: one event each, nothing deleted."""
from __future__ import annotations

import dataclasses
import json

import pytest

from workbench.cli import main
from workbench.core.case.casefile import Case
from workbench.core.case.events import replay

# Montgomery & Runger individuals example data [printed]
READINGS = [102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1, 101.3, 98.7, 101.1, 98.4, 97.0, 96.7,
            100.3, 101.4, 97.2, 101.0]
TIMES = [f"2024-05-01 {8 + i // 4:02d}:{15 * (i % 4):02d}" for i in range(len(READINGS))]


def run(capsys, *argv) -> tuple[int, str, str]:
    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def work(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    rows = "".join(f"{t},{v}\n" for t, v in zip(TIMES, READINGS))
    (tmp_path / "line.csv").write_text("time,reading\n" + rows, encoding="utf-8")
    for name in ("one", "range"):
        code, _out, err = run(capsys, "case", "new", "line.csv", "-o", f"{name}.case.json", "--author", "ana",
                              "--rules", "nelson")
        assert code == 0, err
    return tmp_path


def _analysis(path):
    case = Case.open(path, readonly=True)
    return case, case.analyse(case.load_dataset())


def test_a_range_exclusion_equals_the_same_exclusions_one_by_one(work, capsys):
    for label in TIMES[2:7]:  # positions 3..7, one event each
        assert run(capsys, "case", "exclude", "one.case.json", label, "--reason", "lot 7")[0] == 0
    code, out, err = run(capsys, "case", "exclude", "range.case.json", "3..7", "--reason", "lot 7")
    assert code == 0, err
    # one event for the range: its ends and count, and the limits before -> after printed once [definition]
    assert f"event 2: excluded subgroups {TIMES[2]}..{TIMES[6]} (5 subgroups): lot 7" in out
    assert out.count("  i: centre") == 1 and out.count("  mr: centre") == 1
    one, a_one = _analysis("one.case.json")
    rng, a_rng = _analysis("range.case.json")
    assert len(rng.events) == 2 and len(one.events) == 6
    assert rng.state.exclusions == one.state.exclusions
    assert rng.events[-1].limits_after == one.events[-1].limits_after
    assert [s.key for s in a_rng.signals] == [s.key for s in a_one.signals]
    # the centre without positions 3..7 is the mean of the other 15 readings [definition]
    assert a_rng.location.center[0] == pytest.approx((sum(READINGS) - sum(READINGS[2:7])) / 15)
    assert run(capsys, "verify", "range.case.json")[0] == 0


def test_range_ends_are_labels_or_positions_and_restore_and_note_take_ranges(work, capsys):
    code, out, err = run(capsys, "case", "exclude", "range.case.json", f"{TIMES[1]}..5", "--reason", "probe")
    assert code == 0, err
    assert "(4 subgroups)" in out
    code, out, err = run(capsys, "case", "restore", "range.case.json", "1..20", "--reason", "probe was fine")
    assert code == 0, err
    assert f"restored subgroups {TIMES[0]}..{TIMES[19]} (4 subgroups)" in out  # only the 4 excluded ones
    assert Case.open("range.case.json", readonly=True).state.exclusions == ()
    code, out, err = run(capsys, "case", "note", "range.case.json", "10..12", "operator changed the gauge")
    assert code == 0, err
    note = Case.open("range.case.json", readonly=True).state.notes[-1]
    assert note.kind == "range" and note.target == f"{TIMES[9]}..{TIMES[11]}"


@pytest.mark.parametrize("target, words", [("7..3", "comes before"), ("3..99", "not a position 1..20"),
                                           ("3..", "give both ends"), ("x..4", "no subgroup labelled 'x'")])
def test_a_bad_range_is_one_line_exit_2_and_changes_nothing(work, capsys, target, words):
    before = (work / "range.case.json").read_bytes()
    code, out, err = run(capsys, "case", "exclude", "range.case.json", target, "--reason", "x")
    assert code == 2 and words in err and len(err.strip().splitlines()) == 1 and out == ""
    assert (work / "range.case.json").read_bytes() == before


def _without(events, gone):
    """The trail with the events ``gone`` and every retraction left out, renumbered [definition]."""
    kept = [e for e in events if e.seq not in gone and e.kind != "retract"]
    return [dataclasses.replace(e, seq=i + 1) for i, e in enumerate(kept)]


def test_retract_replays_to_the_state_without_the_retracted_event(work, capsys):
    case = "range.case.json"
    assert run(capsys, "case", "exclude", case, TIMES[1], "--reason", "gauge dropped")[0] == 0
    assert run(capsys, "case", "note", case, TIMES[4], "burr on the part")[0] == 0
    assert run(capsys, "case", "exclude", case, "9..11", "--reason", "new lot")[0] == 0
    before = json.loads((work / case).read_text())["trail"]
    code, out, err = run(capsys, "case", "retract", case, "2", "--reason", "the gauge was fine")
    assert code == 0, err
    assert "event 5: retracted event 2: the gauge was fine" in out and "centre" in out  # limits moved back
    c = Case.open(case, readonly=True)
    # nothing deleted: the earlier events are stored unchanged, and the retraction names event 2 by its hash
    assert json.loads((work / case).read_text())["trail"][:4] == before
    assert c.events[-1].payload == {"event": 2, "hash": c.events[1].hash, "reason": "the gauge was fine"}
    ref = replay(_without(c.events, {2}))
    assert c.state.exclusions == ref.exclusions and c.state.notes == tuple(
        dataclasses.replace(n, seq=n.seq + 1) for n in ref.notes)
    assert c.state.retracted == {2: 5}
    assert run(capsys, "verify", case)[0] == 0
    # the trail shows the original as retracted
    code, out, _ = run(capsys, "case", "show", case)
    assert "[retracted by event 5] excluded subgroup 2024-05-01 08:15" in out
    # without an event number: the author's own last action (the range exclusion, event 4)
    code, out, err = run(capsys, "case", "retract", case, "--reason", "lot was fine")
    assert code == 0, err
    c = Case.open(case, readonly=True)
    assert c.state.exclusions == () and c.state.retracted == {2: 5, 4: 6}
    assert c.analyse(c.load_dataset()).location.center[0] == pytest.approx(sum(READINGS) / 20)  # [definition]


def test_retract_refuses_what_a_later_event_depends_on_and_repeats(work, capsys):
    case = "range.case.json"
    assert run(capsys, "case", "exclude", case, TIMES[1], "--reason", "gauge dropped")[0] == 0
    assert run(capsys, "case", "restore", case, TIMES[1], "--reason", "gauge fine")[0] == 0
    before = (work / case).read_bytes()
    code, _out, err = run(capsys, "case", "retract", case, "2", "--reason", "x")
    assert code == 2 and "event 3 no longer applies" in err and (work / case).read_bytes() == before
    for event, words in (("1", "cannot be retracted"), ("9", "no event 9")):
        code, _out, err = run(capsys, "case", "retract", case, event, "--reason", "x")
        assert code == 2 and words in err and (work / case).read_bytes() == before
    assert run(capsys, "case", "retract", case, "3", "--reason", "restored too early")[0] == 0
    code, _out, err = run(capsys, "case", "retract", case, "3", "--reason", "again")
    assert code == 2 and "already retracted" in err
    assert [e.subgroup for e in Case.open(case, readonly=True).state.exclusions] == [TIMES[1]]


def test_mark_every_signal_in_a_range_with_one_event(work, capsys):
    case = "known.case.json"  # known mean 100 and sigma 1: 94.8, 96.7, 97.0 lie beyond 3 sigma [definition]
    assert run(capsys, "case", "new", "line.csv", "-o", case, "--sigma", "known", "--known-mean", "100",
               "--known-sigma", "1")[0] == 0
    c, a = _analysis(case)
    c.close()
    assert len(a.signals) >= 2
    first = min(s.fired[-1] for s in a.signals) + 1  # the earliest signal lies wholly before the range
    span = f"{first + 1}..20"
    code, out, err = run(capsys, "case", "mark", case, span, "no-cause-found", "--note", "checked the log")
    assert code == 0, err
    c = Case.open(case, readonly=True)
    assert len(c.events) == 2
    inside = {s.key for s in a.signals if max(s.fired) >= first}  # fired in the range [definition]
    assert inside and len(inside) < len(a.signals)
    assert {s.key for s in a.signals if c.state.signal_state(s.key) == "no-cause-found"} == inside
    assert c.events[-1].payload["range"]["count"] == 20 - first
