"""``workbench watch``: headless following of a growing file, ``--once`` for cron jobs.

The expected signals come from the full computation: ``analyse()`` of the whole final file with the
case's frozen limits [definition] — Phase II as in Montgomery, *Introduction to Statistical Quality
Control*, ch. 5-6 (new points judged against frozen Phase I limits) [definition].
"""
from __future__ import annotations

import json
import os
import queue
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pytest

from workbench.cli import main
from workbench.core.case.casefile import Case

TIMEOUT = 60.0
"""Only a failing test waits this long; a passing one returns as soon as the lines are there."""

APPENDER = r"""
import json, os, sys, time
path, delay, pieces = sys.argv[1], float(sys.argv[2]), json.loads(sys.argv[3])
with open(path, "a", encoding="utf-8", newline="") as fh:
    for piece in pieces:
        fh.write(piece)
        fh.flush()
        os.fsync(fh.fileno())
        time.sleep(delay)
"""


def stamp(i: int) -> str:
    return f"2026-03-01 {i // 60:02d}:{i % 60:02d}"


def row(i: int, values) -> str:
    return stamp(i) + "," + ",".join(f"{v:.2f}" for v in values) + "\n"


def make_case(tmp_path: Path, phase1: int = 25, freeze: bool = True) -> tuple[Path, str]:
    """Phase I of in-control readings (4 streams) whose last 4 subgroups sit above the centre, the one
    before them below it."""
    rng = np.random.default_rng(21)
    v = rng.normal(10.0, 1.0, (phase1, 4))
    v[-4:] += 1.0
    v[-5] -= 2.0
    path = tmp_path / "line.csv"
    path.write_text("time,H1,H2,H3,H4\n" + "".join(row(i, v[i]) for i in range(phase1)), encoding="utf-8")
    case = str(tmp_path / "line.case.json")
    assert main(["case", "new", str(path), "-o", case]) == 0
    if freeze:  # Phase I may hold chance signals: freezing them needs a reason (issue 11)
        assert main(["case", "freeze", case, "--force", "--reason", "test: Phase I as it stands"]) == 0
    return path, case


def phase2_rows(start: int, centre: float) -> list[str]:
    """New subgroups: 4 above the centre (a run of 8 across the boundary), one far out, then quiet."""
    out = [row(start + i, [centre + 0.6] * 4) for i in range(4)]
    out.append(row(start + 4, [centre + 4.0] * 4))
    out += [row(start + 5 + i, [centre - 0.3 if i % 2 else centre + 0.2] * 4) for i in range(5)]
    return out


def expected(case: str, start: int) -> tuple[dict[str, set], dict[str, int]]:
    """(key -> new firing positions, key -> last point) of the full analysis at positions >= start."""
    with Case.open(case, readonly=True) as c:
        a = c.analyse(c.load_dataset())
    sigs = [s for s in a.signals if s.last >= start]
    return {s.key: {p for p in s.fired if p >= start} for s in sigs}, {s.key: s.last for s in sigs}


def env(tmp_path: Path) -> dict[str, str]:
    return {**os.environ, "HOME": str(tmp_path / "home"), "WORKBENCH_AUTHOR": "watcher@lab", "PYTHONUNBUFFERED": "1"}


class Lines:
    """Lines of a child's stdout, read on a thread, waited for with a deadline."""

    def __init__(self, proc: subprocess.Popen) -> None:
        self.q: queue.Queue = queue.Queue()
        self.all: list[dict] = []
        threading.Thread(target=self._read, args=(proc.stdout,), daemon=True).start()

    def _read(self, stream) -> None:
        for line in stream:
            self.q.put(json.loads(line))
        self.q.put(None)

    def until(self, done, what: str) -> None:
        deadline = time.monotonic() + TIMEOUT
        while not done(self.all):
            try:
                item = self.q.get(timeout=max(0.01, deadline - time.monotonic()))
            except queue.Empty:
                pytest.fail(f"timed out waiting for {what}; got {self.all}")
            if item is None:
                pytest.fail(f"the watch ended while waiting for {what}; got {self.all}")
            self.all.append(item)


def watch(case: str, tmp_path: Path, *extra: str) -> subprocess.Popen:
    cmd = [sys.executable, "-m", "workbench", "watch", case, "--headless", "--format", "json", "--each",
           "--interval", "0.05", *extra]
    return subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env(tmp_path),
                            cwd=tmp_path)


def test_a_live_watch_judges_every_new_subgroup_once_while_rows_arrive_in_pieces(tmp_path):
    path, case = make_case(tmp_path)
    with Case.open(case, readonly=True) as c:
        centre = c.state.frozen.center
    rows = phase2_rows(25, centre)
    pieces = []
    for i, r in enumerate(rows):  # every other row in two pieces, cut mid-line
        pieces += [r[:7], r[7:]] if i % 2 else [r]
    proc = watch(case, tmp_path)
    lines = Lines(proc)
    try:
        lines.until(lambda got: any(x["event"] == "start" for x in got), "the start line")
        appender = subprocess.run([sys.executable, "-c", APPENDER, str(path), "0.08", json.dumps(pieces)],
                                  env=env(tmp_path), timeout=TIMEOUT)
        assert appender.returncode == 0
        judged = lambda got: [x["position"] for x in got if x["event"] == "subgroup"]  # noqa: E731
        lines.until(lambda got: len(judged(got)) >= len(rows), "a line for every new subgroup")
        proc.send_signal(signal.SIGTERM)
        assert proc.wait(timeout=TIMEOUT) == 0, proc.stderr.read()
    finally:
        if proc.poll() is None:
            proc.kill()
    lines.until(lambda got: got and got[-1]["event"] == "stopped", "the stopped line")
    assert judged(lines.all) == list(range(25, 25 + len(rows)))  # each new subgroup exactly once, in order
    fired, last = expected(case, 25)
    got_fired: dict[str, set] = {}
    got_last: dict[str, int] = {}
    for x in lines.all:
        if x["event"] == "signal":
            got_fired.setdefault(x["key"], set()).update(x["fired"])
            got_last[x["key"]] = x["position"]
            assert x["position"] in x["fired"] and x["verdict"]
    assert got_fired == fired and got_last == last
    runs = [k for k in fired if "/same-side/" in k]  # the run that began in Phase I, reported at its new point
    assert runs and min(fired[runs[0]]) == 28 and last[runs[0]] >= 28
    assert any(k.startswith("xbar/beyond-limits/") and last[k] == 29 for k in fired)
    assert main(["verify", case]) == 0  # the case still verifies, with the appended rows


def test_a_live_watch_stops_with_a_clear_message_when_the_file_is_rewritten(tmp_path):
    path, case = make_case(tmp_path)
    proc = watch(case, tmp_path)
    lines = Lines(proc)
    try:
        lines.until(lambda got: any(x["event"] == "start" for x in got), "the start line")
        with open(path, "r+b") as fh:  # same size: the last reading's last digits changed in place
            fh.seek(-3, os.SEEK_END)
            old = fh.read(2)
            fh.seek(-3, os.SEEK_END)
            fh.write(b"11" if old != b"11" else b"22")
        assert proc.wait(timeout=TIMEOUT) == 2
    finally:
        if proc.poll() is None:
            proc.kill()
    lines.until(lambda got: got and got[-1]["event"] == "stopped", "the stopped line")
    assert lines.all[-1]["status"] == "rewritten"
    err = proc.stderr.read()
    assert "was rewritten" in err and "Traceback" not in err


def test_once_exits_1_on_a_new_signal_and_0_when_nothing_new(tmp_path, capsys):
    path, case = make_case(tmp_path)
    with Case.open(case, readonly=True) as c:
        centre = c.state.frozen.center
    assert main(["watch", case, "--once"]) == 0  # nothing appended since the freeze
    with open(path, "a", encoding="utf-8") as fh:
        fh.write(row(25, [centre - 0.3] * 4) + row(26, [centre + 9.0] * 4))
    capsys.readouterr()
    assert main(["watch", case, "--once", "--format", "json"]) == 1
    out = [json.loads(x) for x in capsys.readouterr().out.splitlines()]
    sig = [x for x in out if x["event"] == "signal"]
    assert [(x["chart"], x["rule"], x["position"], x["subgroup"]) for x in sig if x["rule"] == "beyond-limits"] \
        == [("xbar", "beyond-limits", 26, stamp(26))]
    assert main(["watch", case, "--once"]) == 0  # already seen: the case remembers
    with open(path, "a", encoding="utf-8") as fh:
        fh.write(row(27, [centre - 0.3] * 4))
    capsys.readouterr()
    assert main(["watch", case, "--once", "--each"]) == 0
    text = capsys.readouterr().out
    assert text.count("judged:") == 1 and stamp(27) in text
    assert main(["verify", case]) == 0


def test_watching_needs_frozen_limits(tmp_path, capsys):
    _path, case = make_case(tmp_path, freeze=False)
    for mode in ("--once", "--headless"):
        with pytest.raises(SystemExit) as stop:
            main(["watch", case, mode])
        assert stop.value.code == 2
        err = capsys.readouterr().err
        assert "not frozen" in err and f"workbench case freeze {case}" in err


def test_once_reports_a_truncated_file_and_exits_2(tmp_path, capsys):
    path, case = make_case(tmp_path)
    raw = path.read_bytes()
    path.write_bytes(raw[: len(raw) // 2].rsplit(b"\n", 1)[0] + b"\n")
    with pytest.raises(SystemExit) as stop:
        main(["watch", case, "--once"])
    assert stop.value.code == 2
    err = capsys.readouterr().err
    assert "changed" in err and str(path.name) in err and "Traceback" not in err


@pytest.mark.parametrize("interval", ["0", "-1", "soon"])
def test_the_interval_must_be_a_positive_number(tmp_path, interval, capsys):
    _path, case = make_case(tmp_path)
    with pytest.raises(SystemExit) as stop:
        main(["watch", case, "--headless", "--interval", interval])
    assert stop.value.code == 2
    assert "interval" in capsys.readouterr().err
