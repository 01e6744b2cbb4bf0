"""Two writers on one case (issue 10, item 7): they wait for each other and no action is lost.

Practice followed: an advisory exclusive lock (flock) held for the whole read-modify-write,
waited for with a bounded back-off, and a distinct exit status for "busy" [common practice].
"""
from __future__ import annotations

import os
import subprocess
import sys

import pytest

from workbench.cli import main
from workbench.core.case.casefile import Case, verify
from workbench.core.model import LayoutRequest, Settings

WRITER = r"""
import sys
from workbench.core.case.casefile import Case
path, name, n = sys.argv[1], sys.argv[2], int(sys.argv[3])
for i in range(n):
    case = Case.open(path, author=name, wait=60)
    assert not case.readonly, case.readonly_reason
    case.note(f"{name} {i}")
    case.close()
print("done", flush=True)
"""

HOLDER = r"""
import sys
from workbench.core.case.casefile import Case
case = Case.open(sys.argv[1], author="holder-in-lab")
print("holding", flush=True)
sys.stdin.readline()
case.close()
"""


@pytest.fixture
def case_path(tmp_path):
    data = tmp_path / "line.csv"
    data.write_text("reading\n" + "".join(f"{10 + i % 3 * 0.1:.1f}\n" for i in range(12)), encoding="utf-8")
    path = tmp_path / "line.case.json"
    Case.create(data, LayoutRequest(), Settings(), author="ana", case_path=path).close()
    return path


def test_two_scripted_writers_of_50_actions_each_all_land(case_path):
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    procs = [subprocess.Popen([sys.executable, "-c", WRITER, str(case_path), name, "50"], stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, text=True, env=env) for name in ("ana", "bo")]
    for p in procs:
        out, err = p.communicate(timeout=300)
        assert p.returncode == 0 and out.strip() == "done", err
    with Case.open(case_path, readonly=True) as case:
        texts = [n.text for n in case.state.notes]
    # 1 creation + 100 notes; each writer's notes in its own order (before the fix 49 of 100 failed)
    assert len(case.events) == 101
    for name in ("ana", "bo"):
        assert [t for t in texts if t.startswith(name)] == [f"{name} {i}" for i in range(50)]
    assert verify(case_path, recompute=False).intact


def test_a_busy_case_exits_3_with_one_line_naming_the_holder(case_path, capsys):
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    proc = subprocess.Popen([sys.executable, "-c", HOLDER, str(case_path)], stdin=subprocess.PIPE,
                            stdout=subprocess.PIPE, text=True, env=env)
    try:
        assert proc.stdout.readline().strip() == "holding"
        before = case_path.read_bytes()
        try:
            code = main(["case", "note", str(case_path), "x", "--wait", "0.2"])
        except SystemExit as exc:
            code = exc.code
        _out, err = capsys.readouterr()
        assert code == 3 and len(err.strip().splitlines()) == 1
        assert "busy" in err and "holder-in-lab" in err and f"pid {proc.pid}" in err
        assert case_path.read_bytes() == before
    finally:
        proc.stdin.write("\n")
        proc.stdin.close()
        proc.wait()
        proc.stdout.close()
    assert main(["case", "note", str(case_path), "after", "--wait", "5"]) == 0  # free again
