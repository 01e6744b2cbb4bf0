"""report --all-characteristics and --characteristic / --specs from the command line."""
from __future__ import annotations

import json
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "core" / "data"))
from test_characteristics import specs_file, stacked  # noqa: E402

from workbench.cli import main  # noqa: E402


def _run(capsys, *argv) -> tuple[int, str]:
    try:
        rc = main([str(a) for a in argv])
    except SystemExit as exc:
        rc = exc.code
    out = capsys.readouterr()
    return rc, out.out + out.err


def test_overview_formats_equal_the_single_reports(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path, specs = stacked(tmp_path), specs_file(tmp_path)
    rc, text = _run(capsys, "report", path, "--all-characteristics", "--specs", specs, "--format", "json")
    assert rc == 0
    rows = json.loads(text)["characteristics"]
    assert [r["name"] for r in rows] == ["fill volume", "cap torque"]
    for r in rows:
        rc, one = _run(capsys, "report", path, "--characteristic", r["name"], "--specs", specs, "--format", "json")
        single = json.loads(one)
        assert rc == 0 and r["subgroups"] == single["subgroups"] and r["open_signals"] == len(single["signals"])
        assert r["ppk"] == single["capability"]["indices"]["ppk"]
    rc, md = _run(capsys, "report", path, "--all-characteristics", "--format", "markdown")
    assert rc == 0 and md.startswith("# Overview") and "| fill volume | 864 | 144 | 15 |" in md
    rc, txt = _run(capsys, "report", path, "--all-characteristics")
    assert rc == 0 and "needs attention" in txt and txt.index("fill volume") < txt.index("cap torque")
    rc, err = _run(capsys, "report", path)
    assert rc == 2 and "give --characteristic NAME" in err


def test_case_records_its_characteristic(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = stacked(tmp_path)
    rc, _ = _run(capsys, "case", "new", path, "--characteristic", "cap torque", "--specs", specs_file(tmp_path))
    assert rc == 0
    case = tmp_path / "casefiles" / "line3_all-cap_torque.case.json"
    doc = json.loads(case.read_text())
    assert doc["data"]["request"]["characteristic"] == "cap torque"
    assert doc["trail"][0]["payload"]["settings"]["spec"]["usl"] == 2.5
    rc, text = _run(capsys, "verify", case)
    assert rc == 0 and "intact" in text
