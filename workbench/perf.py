"""`workbench bench`: measure the performance goals on data built on the fly.

Each figure is printed with its goal as a ratio to a reference measured in the same run on the
same machine (pandas.read_csv, numpy.cumsum, an empty Textual app), so the goals do not depend
on how fast the machine is.  Nothing here is a test: the test suite never times anything.
"""
from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def _best(fn, repeat: int = 3) -> float:
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def write_wide_csv(path: Path, subgroups: int, streams: int, seed: int = 1) -> None:
    """A wide CSV: time key plus one column per stream (in-control normal readings)."""
    import pandas as pd
    rng = np.random.default_rng(seed)
    values = np.round(rng.normal(500.0, 0.5, (subgroups, streams)), 2)
    start = np.datetime64("2026-01-01T00:00")
    times = (start + np.arange(subgroups) * np.timedelta64(1, "m")).astype(str)
    df = pd.DataFrame(values, columns=[f"H{j + 1}" for j in range(streams)])
    df.insert(0, "time", [t.replace("T", " ") for t in times])
    df.to_csv(path, index=False)


_MEASURE = """
import os, resource, subprocess, sys, time
t = time.perf_counter()
r = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
wall = time.perf_counter() - t
if r.returncode not in (0, 1):
    sys.stderr.write(r.stderr.decode(errors="replace")); sys.exit(3)
print(wall, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)
"""


def _child(cmd: list[str]) -> tuple[float, int]:
    """Wall time (s) and peak resident memory (KiB) of a command.

    A small fresh Python process runs it and reports its child's peak: measured from this
    (large) process, a forked child's peak would include the parent's pages.
    """
    r = subprocess.run([sys.executable, "-c", _MEASURE, *cmd], capture_output=True, text=True)
    if r.returncode != 0:
        raise RuntimeError(f"{' '.join(cmd)} failed: {r.stderr.strip()}")
    wall, rss = r.stdout.split()
    return float(wall), int(rss)


def _line(name: str, value: float, goal: float, unit: str = "×") -> bool:
    ok = value <= goal
    print(f"  {name:<58} {value:8.3f}{unit}   goal ≤ {goal:g}{unit}   {'ok' if ok else 'MISSED'}")
    return ok


def run_bench(subgroups: int = 200_000, streams: int = 5, quick: bool = False) -> int:
    import pandas as pd

    from workbench.core.analysis import analyse
    from workbench.core.data.reader import load
    from workbench.core.model import Exclusion, Settings
    from workbench.core.charts import rules as R

    results: list[bool] = []
    with tempfile.TemporaryDirectory(prefix="workbench-bench-") as tmp:
        path = Path(tmp) / "bench_wide.csv"
        write_wide_csv(path, subgroups, streams)
        n_read = subgroups * streams
        print(f"workbench bench — {subgroups:,} subgroups × {streams} streams = {n_read:,} readings "
              f"({path.stat().st_size / 1e6:.1f} MB wide CSV)")

        t_read = _best(lambda: pd.read_csv(path))
        t_load = _best(lambda: load(path))
        ds = load(path)
        print(f"  pandas.read_csv alone: {t_read * 1000:.0f} ms;  workbench load: {t_load * 1000:.0f} ms")

        # 1. report --format json end to end, as a user runs it, against a process that only reads the CSV
        py = sys.executable
        reader = [py, "-c", f"import pandas; pandas.read_csv({str(path)!r})"]
        report = [py, "-m", "workbench", "report", str(path), "--format", "json", "-o", os.devnull]
        if not quick:
            t_r, mem_r = min(_child(reader) for _ in range(2))
            t_w, mem_w = min(_child(report) for _ in range(2))
            print(f"  process reading the CSV with pandas: {t_r:.2f} s, peak {mem_r / 1024:.0f} MiB;  "
                  f"report --format json: {t_w:.2f} s, peak {mem_w / 1024:.0f} MiB")
            results.append(_line("report --format json end to end / read_csv process", t_w / t_r, 2.0))
            results.append(_line("peak memory of report / read_csv process", mem_w / mem_r, 2.5))

        # 2. the nelson rule set on 1,000,000 points against one numpy.cumsum of the same array
        x = np.random.default_rng(2).standard_normal(1_000_000)
        zeros, ones = np.zeros_like(x), np.ones_like(x)
        lo, hi, ex = np.full_like(x, -3.0), np.full_like(x, 3.0), np.zeros(x.size, bool)
        rs = R.resolve("nelson")
        t_cs = _best(lambda: np.cumsum(x), 7)
        t_rules = _best(lambda: R.evaluate(x, zeros, ones, lo, hi, ex, rs))
        results.append(_line("nelson rules on 1,000,000 points / numpy.cumsum", t_rules / t_cs, 30.0))

        # 3. analyse() again after one exclusion against the read_csv time
        settings = Settings()
        analyse(ds, settings)
        label = str(ds.labels[ds.m // 2])
        t_an = _best(lambda: analyse(ds, settings, [Exclusion(label)]))
        print(f"  analyse() after one exclusion: {t_an * 1000:.0f} ms")
        results.append(_line("analyse() after one exclusion / read_csv", t_an / t_read, 0.25))

        # 4. Phase II: judging one appended subgroup against a full load of the file
        ratio = bench_append(Path(tmp), subgroups=subgroups, streams=streams)
        results.append(_line("append one subgroup and judge it / full load", ratio, 0.05))

        # 5. the workbench's keypress round trip against an empty Textual app
        if not quick:
            try:
                from workbench.tui.perf_keys import measure_keypress
            except ImportError:
                measure_keypress = None
            if measure_keypress is not None:
                k = measure_keypress(subgroups)
                print(f"  cursor move with {subgroups:,} subgroups: {k['app_ms']:.1f} ms;  "
                      f"empty Textual app: {k['empty_ms']:.1f} ms")
                results.append(_line("cursor move repaint / empty app keypress", k["ratio"], 3.0))
    print("all goals met" if all(results) else "some goals missed")
    return 0


def bench_append(tmpdir: Path, subgroups: int = 200_000, streams: int = 5) -> float:
    """Time to read and judge one appended subgroup, as a fraction of a full load of the file."""
    from workbench.core.analysis import analyse, freeze
    from workbench.core.data.reader import load
    from workbench.core.phase2.follow import Follower
    from workbench.core.phase2.judge import extend, new_signals
    path = Path(tmpdir) / "phase2_append.csv"
    write_wide_csv(path, subgroups, streams, seed=3)
    follower = Follower.open(path)
    fr = freeze(analyse(follower.dataset))
    before = analyse(follower.dataset, frozen=fr)
    loads = []
    for _ in range(3):
        t = time.perf_counter()
        load(path)
        loads.append(time.perf_counter() - t)
    t_load = min(loads)
    rng = np.random.default_rng(4)
    stamp = follower.dataset.times[-1]
    polls, judges = [], []
    for _ in range(7):
        stamp = stamp + np.timedelta64(1, "m")
        row = [str(stamp.astype("datetime64[m]")).replace("T", " ")] + [f"{v:.2f}" for v in rng.normal(500, 0.5, streams)]
        with open(path, "a", encoding="utf-8") as fh:
            fh.write(",".join(row) + "\n")
        t0 = time.perf_counter()
        u = follower.poll()
        t1 = time.perf_counter()
        after = extend(before, u.dataset, fr)
        new_signals(before, after)
        t2 = time.perf_counter()
        if u.new != 1:
            raise RuntimeError(f"bench_append: expected one new subgroup, the poll found {u.new}")
        polls.append(t1 - t0)
        judges.append(t2 - t1)
        before = after
    best = int(np.argmin(np.add(polls, judges)))
    print(f"  append one subgroup to {subgroups:,}: read {polls[best] * 1000:.1f} ms + judge "
          f"{judges[best] * 1000:.1f} ms;  full load {t_load * 1000:.0f} ms")
    return (polls[best] + judges[best]) / t_load
