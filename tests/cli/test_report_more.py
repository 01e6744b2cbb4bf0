"""report --exclude FIRST..LAST=REASON, --summary and --by-stream."""
from __future__ import annotations

import json

import numpy as np
import pytest

from workbench.cli import main

A = [102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1, 101.3, 98.7, 101.1, 98.4, 97.0, 96.7,
     100.3, 101.4, 97.2, 101.0]  # Montgomery & Runger individuals example [printed]


def run(capsys, *argv):
    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def data(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    rows = "".join(f"{i + 1},{a},{b}\n" for i, (a, b) in enumerate(zip(A, reversed(A))))
    (tmp_path / "two.csv").write_text("subgroup,left,right\n" + rows, encoding="utf-8")
    return tmp_path


def test_report_range_exclusion_equals_the_exclusions_one_by_one(data, capsys):
    code, by_range, err = run(capsys, "report", "two.csv", "--format", "json", "--exclude", "3..6=lot 7")
    assert code == 0, err
    singles = [x for i in range(3, 7) for x in ("--exclude", f"{i}=lot 7")]
    code, one_by_one, err = run(capsys, "report", "two.csv", "--format", "json", *singles)
    assert code == 0, err
    r, o = json.loads(by_range), json.loads(one_by_one)
    assert r["charts"] == o["charts"] and r["signals"] == o["signals"] and len(r["excluded"]) == 4
    # the centre without subgroups 3..6 is the mean of the other 16 subgroup means [definition]
    means = (np.array(A) + np.array(A[::-1])) / 2
    assert r["charts"][0]["center"] == pytest.approx(np.delete(means, [2, 3, 4, 5]).mean(), rel=1e-12)
    code, _out, err = run(capsys, "report", "two.csv", "--exclude", "6..3=x")
    assert code == 2 and "comes before" in err


def test_summary_and_by_stream_in_json_text_and_markdown(data, capsys):
    code, out, err = run(capsys, "report", "two.csv", "--format", "json", "--summary", "--by-stream")
    assert code == 0, err
    obj = json.loads(out)
    rows = {(r["chart"], r["rule"]): r for r in obj["rule_summary"]}
    assert rows[("xbar", "beyond-limits")]["points"] == 20
    left = obj["by_stream"][0]
    assert left["stream"] == "left" and left["chart"] == "imr"
    mr = np.abs(np.diff(A)).mean()  # x̄ ± 3·MR̄/d2, d2 = 1.128 [printed]
    assert left["charts"][0]["ucl"] == pytest.approx(np.mean(A) + 3 * mr / 1.128, rel=1e-3)
    code, out, _ = run(capsys, "report", "two.csv", "--summary", "--by-stream")
    assert "signals against chance" in out and "expected by chance" in out and "2Φ(−3)" in out
    assert "each stream on its own" in out and "  left: i centre" in out
    code, out, _ = run(capsys, "report", "two.csv", "--summary", "--format", "markdown")
    assert "## Signals against chance" in out and "| xbar | beyond-limits |" in out
