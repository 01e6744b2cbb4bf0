"""The headless report: formats, exit codes and one-line errors."""
import json
import subprocess
import sys
from pathlib import Path

import pytest

from workbench.cli import main

DEMO = Path(__file__).resolve().parents[2] / "demo_data"


def run(capsys, *argv):
    try:
        code = main(list(argv))
    except SystemExit as e:
        code = e.code
    out, err = capsys.readouterr()
    return code, out, err


def _no_nan(text):
    def bad(c):
        raise AssertionError(f"JSON holds {c}")
    return json.loads(text, parse_constant=bad)


def test_json_report_schema(capsys):
    code, out, err = run(capsys, "report", str(DEMO / "filler_line3.csv"), "--format", "json")
    assert code == 0, err
    r = _no_nan(out)
    assert r["schema"] == "workbench.report/1"
    assert set(r["source"]) >= {"path", "sha256", "rows"} and r["source"]["rows"] == 144
    assert r["chart"] == "xbar-r" and r["subgroups"] == 144 and r["streams"][0] == "H1"
    assert r["sigma"]["method"] == "rbar/d2" and r["sigma"]["within"] > 0
    assert [c["name"] for c in r["charts"]] == ["xbar", "r"]
    assert set(r["flags"]) == {"xbar", "r"} and "zone-a" in r["flags"]["xbar"]
    s = r["signals"][0]
    assert {"chart", "rule", "first", "last", "points", "subgroups"} <= set(s)
    assert len(s["subgroups"]) == len(s["points"])
    assert r["capability"] is not None  # the demo states its specification
    assert r["layout"]["kind"] == "wide"


def test_text_report_prints_the_detected_mapping(capsys):
    code, out, _ = run(capsys, "report", str(DEMO / "filler_line3_long.csv"))
    assert code == 0
    assert "mapping   long:" in out and "(detected)" in out


def test_markdown_report(capsys):
    code, out, _ = run(capsys, "report", str(DEMO / "stable_caps.csv"), "--format", "markdown")
    assert code == 0 and out.startswith("# Control chart review") and "## Signals (0)" in out


def test_fail_on_signal_exit_codes(capsys):
    assert run(capsys, "report", str(DEMO / "filler_line3.csv"), "--fail-on-signal")[0] == 1
    assert run(capsys, "report", str(DEMO / "stable_caps.csv"), "--fail-on-signal")[0] == 0


def test_exclude_option(capsys):
    args = ["report", str(DEMO / "filler_line3.csv"), "--format", "json"]
    _, before, _ = run(capsys, *args)
    code, after, _ = run(capsys, *args, "--exclude", "2026-03-03 15:30:H2=digit slip")
    assert code == 0
    b, a = json.loads(before), json.loads(after)
    assert a["excluded"] == [{"subgroup": "2026-03-03 15:30", "stream": "H2", "position": 134}]
    assert a["sigma"]["within"] < b["sigma"]["within"]
    assert isinstance(a["charts"][1]["ucl"], list)  # the 5-reading subgroup has its own R limits
    code, _, err = run(capsys, *args, "--exclude", "2026-03-03 15:30:H2")
    assert code == 2 and "reason is required" in err


@pytest.mark.parametrize("content,needle", [
    ("", "empty"),
    ("a,b\n", "header"),
    ("t,x,y\n1,2,3\n2,abc,4\n", ":3:x"),
])
def test_bad_files_give_one_line_and_exit_2(capsys, tmp_path, content, needle):
    f = tmp_path / "bad.csv"
    f.write_text(content)
    code, out, err = run(capsys, "report", str(f))
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and needle in err and "Traceback" not in err


def test_missing_path_and_directory(capsys, tmp_path):
    for p in (tmp_path / "nope.csv", tmp_path):
        code, _, err = run(capsys, "report", str(p))
        assert code == 2 and len(err.strip().splitlines()) == 1


def test_override_naming_a_missing_column(capsys):
    code, _, err = run(capsys, "report", str(DEMO / "stable_caps.csv"), "--subgroup", "nope")
    assert code == 2 and "nope" in err


def test_bad_option_value_is_one_line(capsys):
    code, _, err = run(capsys, "report", str(DEMO / "stable_caps.csv"), "--lsl", "abc")
    assert code == 2 and len(err.strip().splitlines()) == 1
    code, _, err = run(capsys, "report", str(DEMO / "stable_caps.csv"), "--lsl", "3", "--usl", "1")
    assert code == 2 and len(err.strip().splitlines()) == 1


def test_module_entry_point_no_traceback(tmp_path):
    bad = tmp_path / "x.csv"
    bad.write_bytes(b"t,x\n1,\xff\xfe\x00\n")
    r = subprocess.run([sys.executable, "-m", "workbench", "report", str(bad)], capture_output=True, text=True,
                       timeout=120)
    # bad input: exit 2 with one line naming the file and where (the project's rule for bad input);
    # the NUL is byte 8 of the file (0-based), on line 2 [definition: offsets counted from 0]
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert r.stderr.strip().splitlines() == [f"workbench: error: {bad}: NUL byte at offset 8 (line 2); "
                                             "not a text file (UTF-16 is not supported)"]
    assert r.stdout == ""


def test_points_option_adds_labels_and_values(capsys):
    code, out, _ = run(capsys, "report", str(DEMO / "tank_ph.csv"), "--format", "json", "--points")
    r = _no_nan(out)
    assert code == 0 and len(r["labels"]) == r["subgroups"] == len(r["charts"][0]["values"])
    assert r["charts"][1]["values"][0] is None  # the first moving range is undefined
    _, out, _ = run(capsys, "report", str(DEMO / "tank_ph.csv"), "--format", "json")
    assert "labels" not in json.loads(out) and "values" not in json.loads(out)["charts"][0]


def test_report_of_a_case_whose_data_changed_still_gives_the_record(capsys, tmp_path, monkeypatch):
    import shutil
    monkeypatch.chdir(tmp_path)
    data = tmp_path / "f.csv"
    shutil.copy(DEMO / "filler_line3.csv", data)
    assert run(capsys, "case", "new", str(data), "-o", "c.case.json")[0] == 0
    assert run(capsys, "case", "exclude", "c.case.json", "2026-03-03 15:30:H2", "--reason", "digit slip",
               "--signal", "r/beyond-limits/2026-03-03 15:30")[0] == 0
    code, out, _ = run(capsys, "report", "c.case.json", "--format", "markdown")
    assert code == 0 and "r/beyond-limits/2026-03-03 15:30" in out  # answered signal listed
    data.write_text(data.read_text().replace("499.8", "499.9", 1))
    code, out, err = run(capsys, "report", "c.case.json", "--format", "markdown")
    assert code == 1 and "Data unavailable" in out and "digit slip" in out and "has changed" in err
    code, out, _ = run(capsys, "report", "c.case.json", "--format", "json")
    assert code == 1 and json.loads(out)["data_unavailable"]


def test_name_and_unit_on_every_report(capsys, tmp_path):
    """demo_data/README.md: the demo's fill volume is in mL; --name/--unit and a header like fill_mL name it."""
    code, out, err = run(capsys, "report", str(DEMO / "filler_line3.csv"), "--format", "text")
    assert code == 0, err
    assert "measured  fill volume (mL)" in out and "Capability of fill volume (mL)" in out and "503 mL" in out
    code, out, _ = run(capsys, "report", str(DEMO / "filler_line3.csv"), "--format", "markdown")
    assert "| measured | fill volume (mL) |" in out and "### Capability of fill volume (mL)" in out
    path = tmp_path / "bores.csv"
    rows = [f"{i + 1},{10 + ((i * 7) % 11 - 5) / 100:.2f}" for i in range(60)]
    path.write_text("part,bore_mm\n" + "\n".join(rows) + "\n", encoding="utf-8")
    code, out, err = run(capsys, "report", str(path), "--layout", "individuals", "--subgroup", "part", "--value",
                         "bore_mm", "--lsl", "9.8", "--usl", "10.2", "--format", "json")
    assert code == 0, err
    assert json.loads(out)["characteristic"] == {"name": "bore", "unit": "mm"}
    code, out, err = run(capsys, "report", str(path), "--layout", "individuals", "--subgroup", "part", "--value",
                         "bore_mm", "--lsl", "9.8", "--usl", "10.2", "--name", "bore diameter", "--unit", "µm",
                         "--format", "text")
    assert code == 0, err
    assert "measured  bore diameter (µm)" in out and "10.2 µm" in out
