"""Headless case commands: workbench case ... and workbench verify."""
from __future__ import annotations

import json
import re
import subprocess
import sys

import pytest

from workbench.cli import main
from workbench.core.case.casefile import Case

# Montgomery & Runger individuals example data [printed]; subgroup 2 holds the low reading 94.8
READINGS = [102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1, 101.3, 98.7, 101.1, 98.4, 97.0, 96.7,
            100.3, 101.4, 97.2, 101.0]
CASE = "casefiles/line.case.json"


def run(capsys, *argv) -> tuple[int, str, str]:
    try:
        code = main(list(argv))
    except SystemExit as exc:  # fail(): one line on stderr, exit 2
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def work(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "line.csv").write_text("reading\n" + "".join(f"{v}\n" for v in READINGS), encoding="utf-8")
    code, out, err = run(capsys, "case", "new", "line.csv", "--author", "ana")
    assert code == 0, err
    assert out.startswith(f"{CASE}: created for line.csv — 20 subgroups, imr chart")
    return tmp_path


def test_new_writes_the_default_case_path_and_refuses_to_overwrite(work, capsys):
    assert (work / CASE).is_file()
    before = (work / CASE).read_bytes()
    code, _out, err = run(capsys, "case", "new", "line.csv")
    assert code == 2 and "already exists" in err and len(err.strip().splitlines()) == 1
    assert (work / CASE).read_bytes() == before
    code, out, _err = run(capsys, "case", "new", "line.csv", "-o", "other.case.json", "--chart", "imr",
                          "--rules", "nelson")
    assert code == 0 and out.startswith("other.case.json: created")
    assert Case.open("other.case.json", readonly=True).state.settings.rules == "nelson"


def test_a_session_of_actions_is_recorded_in_the_trail(work, capsys):
    code, out, err = run(capsys, "case", "exclude", CASE, "2", "--reason", "gauge dropped", "--cause", "measurement",
                         "--author", "bo")
    assert code == 0, err
    assert "event 2: excluded subgroup 2: gauge dropped; cause measurement" in out
    # leaving out 94.8 raises the centre from the mean of 20 readings to the mean of the other 19 [definition]
    # shown to 4 significant figures (the one formatting rule): within half a unit of the last figure
    before, after = re.search(r"centre (\S+) → (\S+),", out).groups()
    assert abs(float(before) - sum(READINGS) / 20) <= 0.005 + 1e-9
    assert abs(float(after) - (sum(READINGS) - 94.8) / 19) <= 0.005 + 1e-9
    assert run(capsys, "case", "note", CASE, "shift change")[0] == 0
    assert run(capsys, "case", "note", CASE, "5", "looked at the part")[0] == 0
    code, out, _ = run(capsys, "case", "set", CASE, "--rules", "nelson")
    assert code == 0 and "rules: the chart's default → nelson" in out
    assert run(capsys, "case", "freeze", CASE)[0] == 0
    code, out, _ = run(capsys, "case", "unfreeze", CASE, "--reason", "new gauge")
    assert code == 0 and "limits unfrozen: new gauge" in out
    assert run(capsys, "case", "restore", CASE, "2", "--reason", "gauge was fine")[0] == 0
    code, out, _ = run(capsys, "case", "causes", CASE, "--add", "tooling")
    assert code == 0 and out.strip().endswith("environment, tooling")
    with Case.open(CASE, readonly=True) as case:
        st = case.state
        kinds = [ev.kind for ev in case.events]
    assert kinds == ["created", "exclude", "note", "note", "settings", "freeze", "unfreeze", "restore", "causes"]
    assert case.events[1].author == "bo" and case.events[2].author == "tester@lab"  # WORKBENCH_AUTHOR (conftest)
    assert st.notes[1].kind == "subgroup" and st.notes[1].target == "5"
    assert st.exclusions == () and st.frozen is None and st.settings.rules == "nelson"


def test_actions_that_do_not_apply_fail_with_one_line(work, capsys):
    for argv, words in [
        (("case", "restore", CASE, "3", "--reason", "x"), "3 is not excluded"),
        (("case", "exclude", CASE, "3", "--reason", "x", "--cause", "weather"), "not in the cause list"),
        (("case", "exclude", CASE, "99", "--reason", "x"), "no subgroup labelled '99'"),
        (("case", "exclude", CASE, "3", "--reason", "   "), "needs some text"),
        (("case", "exclude", CASE, "3", "--reason", "x", "--signal", "i/trend/1"), "no current signal"),
        (("case", "note", CASE, "nowhere", "x"), "neither a subgroup label nor a signal key"),
        (("case", "mark", CASE, "i/zone-a/9", "explained"), "no signal"),
        (("case", "set", CASE), "unchanged"),
        (("case", "unfreeze", CASE, "--reason", "x"), "not frozen"),
        (("case", "exclude", CASE, "3"), "--reason"),
        (("case", "mark", CASE, "i/zone-a/9", "closed"), "invalid choice"),
        (("case", "exclude", "nothing.case.json", "3", "--reason", "x"), "no such case file"),
    ]:
        code, out, err = run(capsys, *argv)
        assert code == 2 and words in err and len(err.strip().splitlines()) == 1, (argv, err)
    with Case.open(CASE, readonly=True) as case:
        assert len(case.events) == 1  # nothing was appended


def test_mark_a_detected_signal(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    readings = [10.0, 10.2, 9.9, 10.1, 9.8, 10.0, 10.1, 9.9, 10.0, 10.2, 9.9, 10.1, 15.0, 10.0, 9.9, 10.1, 10.0, 9.8,
                10.2, 10.0]
    (tmp_path / "d.csv").write_text("reading\n" + "".join(f"{v}\n" for v in readings), encoding="utf-8")
    assert run(capsys, "case", "new", "d.csv")[0] == 0
    # 15.0 lies far beyond x̄ + 3·MR̄/d2 of these readings [definition of the individuals limits]
    key = "i/beyond-limits/13"
    code, out, err = run(capsys, "case", "mark", "casefiles/d.case.json", key, "explained", "--note", "new coil")
    assert code == 0, err
    assert f"signal {key} marked explained: new coil" in out
    code, out, _ = run(capsys, "case", "note", "casefiles/d.case.json", key, "coil changed at 10:40")
    assert code == 0 and f"note on signal {key}" in out


def test_verify_exit_codes(work, capsys):
    code, out, _ = run(capsys, "verify", CASE)
    assert code == 0 and out.startswith(f"{CASE}: intact — 1 events, head hash ")
    path = work / CASE
    path.write_bytes(path.read_bytes().replace(b'"author":"ana"', b'"author":"eve"'))
    code, out, _ = run(capsys, "verify", CASE)
    assert code == 1 and "NOT intact — the chain breaks at event 1" in out
    path.write_bytes(path.read_bytes()[:-20])
    code, _out, err = run(capsys, "verify", CASE)
    assert code == 2 and "not valid JSON" in err
    code, _out, err = run(capsys, "verify", "absent.case.json")
    assert code == 2 and "no such case file" in err


def test_verify_reports_changed_and_missing_data(work, capsys):
    (work / "line.csv").write_text("reading\n1\n2\n3\n", encoding="utf-8")
    code, out, _ = run(capsys, "verify", CASE)
    assert code == 1 and "has changed since the case was created" in out
    (work / "line.csv").unlink()
    code, out, _ = run(capsys, "verify", CASE)
    assert code == 1 and "is missing" in out
    code, _out, err = run(capsys, "case", "note", CASE, "x")
    assert code == 2 and "is missing" in err


def test_report_of_a_case_adds_the_case_part(work, capsys):
    run(capsys, "case", "exclude", CASE, "2", "--reason", "gauge dropped")
    code, out, err = run(capsys, "report", CASE, "--format", "markdown")
    assert code == 0, err
    assert "# Case review — line.case.json" in out and "| 2 | gauge dropped |" in out
    code, out, _ = run(capsys, "report", CASE, "--format", "json")
    obj = json.loads(out)
    assert obj["case"]["exclusions"][0]["reason"] == "gauge dropped"
    code, out, _ = run(capsys, "case", "show", CASE)
    assert code == 0 and "integrity intact" in out and "excluded subgroup 2: gauge dropped" in out


def test_the_command_runs_as_a_program(work):
    # the installed entry point, as a user runs it
    done = subprocess.run([sys.executable, "-m", "workbench", "verify", CASE], capture_output=True, text=True,
                          cwd=work)
    assert done.returncode == 0 and "intact" in done.stdout


def test_an_unknown_stream_is_named(tmp_path, monkeypatch, capsys):
    # "18:S9" on data with streams S1..S4: the error names the stream, not a subgroup "18:S9"
    monkeypatch.chdir(tmp_path)
    rows = "".join(f"{i},{10 + i % 3},{11 - i % 2},{10.5},{10 + i % 4 / 2}\n" for i in range(1, 26))
    (tmp_path / "caps.csv").write_text("sample,S1,S2,S3,S4\n" + rows, encoding="utf-8")
    assert run(capsys, "case", "new", "caps.csv")[0] == 0
    code, _out, err = run(capsys, "case", "exclude", "casefiles/caps.case.json", "18:S9", "--reason", "x")
    assert code == 2 and "no stream named 'S9'" in err and "S1, S2, S3, S4" in err
    code, _out, err = run(capsys, "report", "caps.csv", "--exclude", "18:S9=x")
    assert code == 2 and "no stream named 'S9'" in err
