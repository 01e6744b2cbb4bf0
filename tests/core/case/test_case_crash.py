"""A writer killed with SIGKILL at random moments loses no acknowledged action."""
from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import time

import pytest

from workbench.core.case.casefile import Case, lock_path, parse, backup_path, verify
from workbench.core.model import LayoutRequest, Settings

pytestmark = pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs POSIX signals")

# The driver appends actions forever and prints "ack N" after each append has returned.
DRIVER = r"""
import sys
from workbench.core.case.casefile import Case
from workbench.core.model import Exclusion
case = Case.open(sys.argv[1], author="driver")
if case.readonly:
    print("readonly", case.readonly_reason, flush=True)
    sys.exit(3)
print("open", flush=True)
step = 0
while True:
    step += 1
    label = str(step % 20 + 1)
    if step % 4 == 0:
        ev = (case.restore(Exclusion(label), "back") if label in case.state.exclusion_info
              else case.exclude(Exclusion(label), "step %d" % step, "machine"))
    elif step % 7 == 0:
        ev = case.mark_signal("i/trend/%s" % label, "explained", "step %d" % step)
    else:
        ev = case.note("step %d" % step)
    print("ack", ev.seq, ev.hash, flush=True)
"""


def test_kill_9_at_random_moments_loses_no_acknowledged_action(tmp_path):
    data = tmp_path / "line.csv"
    data.write_text("reading\n" + "".join(f"{10 + (i % 7) * 0.1:.1f}\n" for i in range(30)), encoding="utf-8")
    path = tmp_path / "casefiles" / "line.case.json"
    Case.create(data, LayoutRequest(), Settings(), author="ana", case_path=path).close()
    rng = random.Random(20240501)  # fixed seed: the kill moments are random but repeatable
    acked: dict[int, str] = {}
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    for _round in range(8):
        proc = subprocess.Popen([sys.executable, "-c", DRIVER, str(path)], stdout=subprocess.PIPE, text=True, env=env)
        assert proc.stdout.readline().strip() == "open"
        wanted = rng.randint(1, 25)
        got = 0
        while got < wanted:
            line = proc.stdout.readline()
            assert line.startswith("ack"), line
            _, seq, digest = line.split()
            acked[int(seq)] = digest
            got += 1
        time.sleep(rng.uniform(0, 0.01))  # land somewhere inside a later append
        proc.send_signal(signal.SIGKILL)
        for line in proc.stdout.read().splitlines():  # acks printed before the kill landed
            _, seq, digest = line.split()
            acked[int(seq)] = digest
        proc.wait()
        proc.stdout.close()
        assert lock_path(path).exists()  # left behind by the killed writer
        with Case.open(path, author="checker") as case:
            assert not case.readonly, case.readonly_reason
            assert any("stale lock" in n and "driver" in n for n in case.notices)
            hashes = {ev.seq: ev.hash for ev in case.events}
            for seq, digest in acked.items():
                assert hashes.get(seq) == digest, f"acknowledged event {seq} lost"
        result = verify(path, recompute=False)
        assert result.intact, result.problems
        parse(backup_path(path).read_bytes(), "bak")  # the previous version is whole too
        assert not [n for n in os.listdir(path.parent) if n.endswith((".tmp", ".wbtmp"))]
    assert len(acked) >= 6


HOLDER = r"""
import sys
from workbench.core.case.casefile import Case
case = Case.open(sys.argv[1], author="holder-in-lab")
print("readonly" if case.readonly else "holding", flush=True)
sys.stdin.readline()
case.close()
"""


def test_a_writer_in_another_process_is_named_and_its_lock_respected(tmp_path):
    data = tmp_path / "line.csv"
    data.write_text("reading\n1.0\n2.0\n1.5\n", encoding="utf-8")
    path = tmp_path / "line.case.json"
    Case.create(data, LayoutRequest(), Settings(), author="ana", case_path=path).close()
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    proc = subprocess.Popen([sys.executable, "-c", HOLDER, str(path)], stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                            text=True, env=env)
    try:
        assert proc.stdout.readline().strip() == "holding"
        with Case.open(path, author="bo") as second:
            assert second.readonly
            assert "holder-in-lab" in second.readonly_reason and f"pid {proc.pid}" in second.readonly_reason
    finally:
        proc.stdin.write("\n")
        proc.stdin.close()
        proc.wait()
        proc.stdout.close()
    with Case.open(path, author="bo") as third:  # closed cleanly: no stale-lock notice
        assert not third.readonly and third.notices == []
