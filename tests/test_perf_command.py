"""The performance command's plumbing (never its timings: no test times anything)."""
from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from workbench.core.data.reader import load
from workbench.perf import Board
from workbench.perf_data import parse_scale, wide_values, write_long_csv, write_wide_csv


def test_scale_words():
    # [definition] k = 10^3, M = 10^6 readings
    assert parse_scale("10M") == 10_000_000
    assert parse_scale("1m") == 1_000_000
    assert parse_scale("500k") == 500_000
    assert parse_scale("2_000_000") == 2_000_000
    with pytest.raises(ValueError):
        parse_scale("ten")
    with pytest.raises(ValueError):
        parse_scale("10")  # too few readings to measure anything


def test_board_exit_code_names_the_missed_goal(capsys):
    # [definition] issue 11 item 10: exit 1 when any goal is missed, 0 when all are met, and say which
    met = Board()
    met.add("fast thing", 0.5, 1.0)
    assert met.verdict() == 0
    out = capsys.readouterr().out
    assert "MET" in out and "MISSED" not in out
    missed = Board()
    missed.add("fast thing", 0.5, 1.0)
    missed.add("slow thing", 2.5, 2.0)
    missed.add("not measured", float("nan"), 2.0)
    assert missed.verdict() == 1
    last = capsys.readouterr().out.strip().splitlines()[-1]
    assert "slow thing" in last and "not measured" in last and "fast thing" not in last
    edge = Board()
    edge.add("exactly on the goal", 2.0, 2.0)  # a goal "≤ 2×" is met at 2×
    assert edge.verdict() == 0


def test_generated_wide_file_reads_back(tmp_path):
    path = tmp_path / "w.csv"
    write_wide_csv(path, 1500, 4, seed=3)
    ds = load(path)
    # [definition] the file holds the generated readings, two decimals, one minute apart
    assert ds.layout.kind == "wide" and ds.streams == ("H1", "H2", "H3", "H4")
    np.testing.assert_array_equal(ds.values, wide_values(1500, 4, seed=3))
    assert ds.labels[0] == "2026-01-01 00:00" and ds.labels[61] == "2026-01-01 01:01"
    assert ds.labels[1440] == "2026-01-02 00:00"


def test_generated_long_file_reads_back(tmp_path):
    path = tmp_path / "l.csv"
    write_long_csv(path, 1003, 5, seed=2)  # the last subgroup holds 3 readings
    ds = load(path)
    assert ds.layout.kind == "long" and ds.streams == ("H1", "H2", "H3", "H4", "H5") and ds.m == 201
    want = wide_values(201, 5, seed=2)
    want[-1, 3:] = np.nan
    np.testing.assert_array_equal(ds.values, want)


def test_perf_refuses_an_unknown_part():
    r = subprocess.run([sys.executable, "-m", "workbench", "perf", "--only", "report,warp"],
                       capture_output=True, text=True)
    assert r.returncode == 2 and "warp" in r.stderr and "Traceback" not in r.stderr


def test_open_until_ready_records_the_progress_bar(tmp_path):
    from workbench.tui.perf_keys import open_until_ready
    path = tmp_path / "w.csv"
    write_wide_csv(path, 400, 3)
    shown = tmp_path / "progress.txt"
    open_until_ready(str(path), str(shown), size=(80, 24))
    steps = [int(x) for x in shown.read_text().split(",")]
    # [definition] the opening screen moves its bar forward from reading to drawing
    assert steps == sorted(steps) and steps[-1] == 100 and any(0 < s < 100 for s in steps)
