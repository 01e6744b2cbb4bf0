"""Signal states are kept against firing points (chart + rule), not labels (core/case/answers.py).

The scenario is the demo's [demo_data/README.md]: the R chart's beyond-limits points at 12:30 and 13:00
(the H4 drift) and the mis-keyed reading 2026-03-03 15:30:H2 that widens the R limits.
"""
from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from workbench.cli import main
from workbench.core.case.casefile import Case
from workbench.demo import DEMO_FILE

CASE = "casefiles/filler_line3.case.json"
FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"


def run(capsys, *argv) -> tuple[int, str, str]:
    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


def report(capsys) -> dict:
    code, out, err = run(capsys, "report", CASE, "--format", "json")
    assert code == 0, err
    return json.loads(out)


def signal(rep: dict, key: str) -> dict:
    return next(s for s in rep["signals"] if s["key"] == key)


@pytest.fixture
def demo(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    shutil.copy(DEMO_FILE, tmp_path / DEMO_FILE.name)
    assert run(capsys, "case", "new", DEMO_FILE.name)[0] == 0
    return tmp_path


def test_a_run_that_grows_is_open_with_its_new_points_counted(demo, capsys):
    key = "r/beyond-limits/2026-03-02 12:30"
    before = signal(report(capsys), key)
    assert before["fired"] == [26] and before["state"] == "open"
    assert run(capsys, "case", "mark", CASE, key, "explained", "--note", "nozzle H4 seated badly")[0] == 0
    assert signal(report(capsys), key)["state"] == "explained"
    # the reading leaves the limits: R̄ falls, the limit tightens and 12:30 … 13:15 all fire: the run at
    # 12:30 grows into the separate signal at 13:00 (merged), which nobody looked at [definition]
    code, out, _ = run(capsys, "case", "exclude", CASE, "2026-03-03 15:30:H2", "--reason", "digit slip")
    assert code == 0
    grown = signal(report(capsys), key)
    assert grown["fired"] == [26, 27, 28, 29]
    assert grown["state"] == "open" and grown["answered"] == 1 and grown["answer"] == "explained"
    assert grown["state_words"] == "explained 1 of 4 firing points — 3 new"
    code, out, _ = run(capsys, "report", CASE, "--fail-on-signal")
    assert code == 1 and "[explained 1 of 4 firing points — 3 new]" in out
    # answering the new points closes it again
    assert run(capsys, "case", "mark", CASE, key, "explained", "--note", "same nozzle")[0] == 0
    assert signal(report(capsys), key)["state"] == "explained"


def test_a_signal_whose_points_were_all_answered_keeps_its_state(demo, capsys):
    key = "xbar/zone-a/2026-03-03 00:45"
    assert run(capsys, "case", "mark", CASE, key, "no-cause-found", "--note", "night log checked")[0] == 0
    assert run(capsys, "case", "exclude", CASE, "2026-03-03 15:30:H2", "--reason", "digit slip")[0] == 0
    kept = signal(report(capsys), key)
    assert kept["fired"] == [76] and kept["state"] == "no-cause-found" and "answered" not in kept


def test_an_exclusion_answers_every_signal_it_explains(demo, capsys):
    # the whole subgroup 15:30 leaves the limits: both the X̄ and the R chart fired only there
    code, out, _ = run(capsys, "case", "exclude", CASE, "2026-03-03 15:30", "--reason", "digit slip H2",
                       "--signal", "r/beyond-limits/2026-03-03 15:30")
    assert code == 0
    assert ("answers r/beyond-limits/2026-03-03 15:30 (1 firing point), xbar/beyond-limits/2026-03-03 15:30 "
            "(1 firing point)") in out
    rep = report(capsys)
    answered = {s["key"]: s["state"] for s in rep["case"]["signals"]}
    assert answered == {"r/beyond-limits/2026-03-03 15:30": "excluded", "xbar/beyond-limits/2026-03-03 15:30": "excluded"}
    assert not any(s["key"].endswith("15:30") for s in rep["signals"])  # the excluded point left the rules
    trail = [t["summary"] for t in rep["case"]["trail"]]
    assert "xbar/beyond-limits/2026-03-03 15:30" in trail[-1]


def test_an_exclusion_of_one_point_of_a_long_run_answers_only_that_point(demo, capsys):
    # 08:00 is the first of eight beyond-limits points of the lot change: the other seven stay open
    key = "xbar/beyond-limits/2026-03-03 08:00"
    code, out, _ = run(capsys, "case", "exclude", CASE, "2026-03-03 08:00", "--reason", "new lot", "--signal", key)
    assert code == 0 and f"answers {key} (1 firing point)" in out
    rep = report(capsys)
    rest = signal(rep, "xbar/beyond-limits/2026-03-03 08:15")
    assert rest["state"] == "open" and len(rest["fired"]) == 7


def test_a_case_written_before_firing_points_were_recorded_replays_to_the_same_states(tmp_path, capsys,
                                                                                       monkeypatch):
    # tests/fixtures/legacy_marks.case.json was written by the previous release (marks and exclusions by
    # key only); its states as that release reported them [the previous release's own report]
    (tmp_path / "demo_data").mkdir()
    (tmp_path / "tests" / "fixtures").mkdir(parents=True)
    # the demo file as it was when the case was written (before the context columns were added)
    shutil.copy(FIXTURES / "filler_line3_v1.csv", tmp_path / "demo_data" / DEMO_FILE.name)
    case = tmp_path / "tests" / "fixtures" / "legacy_marks.case.json"
    shutil.copy(FIXTURES / "legacy_marks.case.json", case)
    assert "fired" not in case.read_text() and "answers" not in case.read_text()
    code, out, err = run(capsys, "verify", str(case))
    assert code == 0, out + err
    code, out, err = run(capsys, "report", str(case), "--format", "json")
    assert code == 0, err
    rep = json.loads(out)
    states = {s["key"]: s["state"] for s in rep["signals"] if s["state"] != "open"}
    assert states == {"r/beyond-limits/2026-03-02 12:30": "explained",
                      "xbar/zone-a/2026-03-03 00:45": "no-cause-found"}
    gone = {s["key"]: s["state"] for s in rep["case"]["signals"] if not s["detected"]}
    assert gone == {"xbar/zone-b/2026-03-03 08:00": "excluded", "r/beyond-limits/2026-03-03 15:30": "excluded"}
    assert Case.open(case, readonly=True).state.seq == 5


def test_freezing_with_open_signals_needs_force_and_a_reason(demo, capsys):
    code, _out, err = run(capsys, "case", "freeze", CASE)
    assert code == 2 and "15 signal(s) are still open" in err and "--force --reason" in err
    assert run(capsys, "case", "freeze", CASE, "--force")[0] == 2           # a reason is required too
    code, out, _ = run(capsys, "case", "freeze", CASE, "--force", "--reason", "trial limits for the new line")
    assert code == 0 and "with 15 open signals: trial limits for the new line" in out
    ev = Case.open(CASE, readonly=True).events[-1]
    assert ev.kind == "freeze" and ev.payload["reason"] == "trial limits for the new line"
    assert len(ev.payload["open_signals"]) == 15
    assert run(capsys, "verify", CASE)[0] == 0
