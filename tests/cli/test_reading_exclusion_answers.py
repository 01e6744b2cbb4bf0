"""Leaving out one reading (SUBGROUP:STREAM) answers a signal only where the recomputed point no longer fires.

Common practice: a wrong reading is corrected or dropped and the sample is kept, its statistic recomputed from
the other readings (the subgroup stays in the limits). So a signal at that subgroup is explained by the reading
only when the recomputed point no longer fires for the signal's chart and rule; where the other readings still
signal, the signal stays open and needs its own answer. The scenario is the demo's [demo_data/README.md]: at
2026-03-03 15:30 head H2 was recorded as 509.6 mL for 500.6 mL (beyond the limits on the X̄ and the R chart).
"""
from __future__ import annotations

import json
import shutil

import numpy as np
import pytest

from workbench.cli import main
from workbench.core.case.answers import answered_words, exclusion_answers, statuses
from workbench.core.case.casefile import Case
from workbench.core.model import Exclusion
from workbench.demo import DEMO_FILE

CASE = "casefiles/filler_line3.case.json"
AT = "2026-03-03 15:30"
XBAR, R = f"xbar/beyond-limits/{AT}", f"r/beyond-limits/{AT}"


def run(capsys, *argv) -> tuple[int, str, str]:
    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


def states(capsys) -> dict[str, str]:
    code, out, err = run(capsys, "report", CASE, "--format", "json")
    assert code == 0, err
    return {s["key"]: s.get("state", "open") for s in json.loads(out)["signals"]}


@pytest.fixture
def demo(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    shutil.copy(DEMO_FILE, tmp_path / DEMO_FILE.name)
    assert run(capsys, "case", "new", DEMO_FILE.name)[0] == 0
    return tmp_path


def _trail_answers(path: str) -> dict:
    return json.loads(open(path, encoding="utf-8").read())["trail"][-1]["payload"]["answers"]


def test_the_reading_that_caused_the_signal_answers_it(demo, capsys):
    """H2's 509.6 drove both points: without it the subgroup's mean and range are ordinary, so both signals
    go away with it and the trail names them as answered."""
    code, out, _ = run(capsys, "case", "exclude", CASE, f"{AT}:H2", "--reason", "509.6 typed for 500.6")
    assert code == 0
    assert set(_trail_answers(CASE)) == {XBAR, R}
    assert _trail_answers(CASE)[XBAR] == [AT]
    now = states(capsys)
    assert XBAR not in now and R not in now  # the recomputed point no longer fires on either chart


def test_another_reading_of_the_subgroup_answers_nothing_and_the_signals_stay_open(demo, capsys):
    """Leaving out H1 keeps H2's 509.6 in the subgroup: the recomputed point still fires on both charts, so
    neither signal is answered — not in the trail, and not as 'excluded' in the report (the bug this
    kills: a reading's exclusion counting its whole subgroup, showing a still-firing point as excluded)."""
    code, out, _ = run(capsys, "case", "exclude", CASE, f"{AT}:H1", "--reason", "gauge dropped", "--signal", XBAR)
    assert code == 0
    answers = _trail_answers(CASE)
    assert answers == {XBAR: []}  # named, but it still fires: it stays open
    now = states(capsys)
    assert now[XBAR] == "open" and now[R] == "open"


def test_the_dialog_preview_equals_what_the_trail_records(demo):
    """The exclude dialog lists exactly what the recorded event answers (same function, same analysis)."""
    case = Case.open(demo / CASE)
    try:
        ds = case.load_dataset()
        before = case.analyse(ds)
        for stream, expected in (("H2", {XBAR, R}), ("H5", set())):
            preview = exclusion_answers(before, case.state, Exclusion(AT, stream))
            assert {k for k, v in preview.items() if v} == expected
        words = answered_words(exclusion_answers(before, case.state, Exclusion(AT, "H5"), XBAR), reading=True)
        assert words == [f"{XBAR} (still fires without this reading: it stays open)"]
        case.record_exclusion(ds, Exclusion(AT, "H5"), "checked", signal=XBAR)
        after = case.analyse(ds)
        st = statuses(after, case.state)
        assert XBAR not in st or st[XBAR].state == "open"
        # the subgroup stays in the limits: only the reading is left out [definition of a reading exclusion]
        p = ds.index_of(AT)
        assert not np.asarray(after.excluded_subgroups, bool)[p]
    finally:
        case.close()


def test_a_whole_subgroup_still_answers_every_signal_there(demo, capsys):
    """The subgroup rule is unchanged: excluding 15:30 as a whole answers both signals (their only firing
    points leave the limits)."""
    assert run(capsys, "case", "exclude", CASE, AT, "--reason", "whole sample suspect")[0] == 0
    assert set(_trail_answers(CASE)) == {XBAR, R}
    now = states(capsys)  # excluded points leave the rule sequences (README, run rules)
    assert XBAR not in now and R not in now


def test_case_set_maps_the_columns_anew_and_verify_recomputes_under_it(demo, capsys):
    """``case set --streams``: one setup event holding the mapping; the report charts five heads; verify
    recomputes the recorded limits under the mapping in force at each event (a verify that used the data
    reference's own mapping would find the limits after the change differ); an unknown column is one line,
    exit 2, nothing recorded."""
    code, out, _ = run(capsys, "case", "set", CASE, "--streams", "H1,H2,H3,H4,H5")
    assert code == 0 and "column mapping: streams H1,H2,H3,H4,H5" in out
    rep = json.loads(run(capsys, "report", CASE, "--format", "json")[1])
    assert rep["streams"] == ["H1", "H2", "H3", "H4", "H5"]
    assert run(capsys, "verify", CASE)[0] == 0
    size = len(open(CASE, encoding="utf-8").read())
    code, _, err = run(capsys, "case", "set", CASE, "--streams", "H1,H9")
    assert code == 2 and "'H9'" in err and len(err.strip().splitlines()) == 1
    assert len(open(CASE, encoding="utf-8").read()) == size
