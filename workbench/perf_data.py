"""Generated data and process measurements for the performance command (``workbench perf``).

The files are written as fixed-width rows straight from numpy (a 10 M reading file in about a
second): a time key ``YYYY-MM-DD HH:MM`` one minute apart, and in-control normal readings
500 ± 0.5 written with two decimals.  Nothing here is a test.
"""
from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

import numpy as np

SCALES = {"k": 1_000, "m": 1_000_000}


def parse_scale(text: str) -> int:
    """``10M`` -> 10_000_000, ``500k`` -> 500_000, ``2000000`` -> 2_000_000."""
    t = str(text).strip().lower().replace("_", "").replace(",", "")
    mult = SCALES.get(t[-1:], 1)
    num = t[:-1] if t[-1:] in SCALES else t
    try:
        value = float(num) * mult
    except ValueError:
        raise ValueError(f"--scale {text!r}: give a number of readings such as 1M, 10M or 500k") from None
    if value < 1000:
        raise ValueError(f"--scale {text!r}: at least 1k readings")
    return int(value)


def _time_bytes(m: int, start: str = "2026-01-01T00:00") -> np.ndarray:
    """``YYYY-MM-DD HH:MM`` of m minutes from ``start`` as an (m, 16) uint8 array."""
    times = np.datetime64(start) + np.arange(m) * np.timedelta64(1, "m")
    text = np.datetime_as_string(times, unit="m").astype("S16")
    out = text.view(np.uint8).reshape(m, 16).copy()
    out[:, 10] = ord(" ")
    return out


def _reading_bytes(values: np.ndarray) -> np.ndarray:
    """Readings 100 ≤ x < 1000 with two decimals as an (..., 6) uint8 array ``ddd.dd``."""
    cents = np.rint(values * 100).astype(np.int64)
    if cents.size and (cents.min() < 10_000 or cents.max() >= 100_000):
        raise ValueError("generated readings must lie in [100, 1000)")
    out = np.empty(cents.shape + (6,), np.uint8)
    for pos, div in zip((0, 1, 2, 4, 5), (10_000, 1_000, 100, 10, 1)):
        out[..., pos] = (cents // div) % 10 + 48
    out[..., 3] = ord(".")
    return out


def wide_values(subgroups: int, streams: int, seed: int = 1) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.round(rng.normal(500.0, 0.5, (subgroups, streams)), 2)


def write_wide_csv(path: Path, subgroups: int, streams: int, seed: int = 1) -> None:
    """A wide CSV: ``time`` plus one column per stream (H1, H2, ...)."""
    values = wide_values(subgroups, streams, seed)
    width = 16 + 7 * streams + 1
    rows = np.empty((subgroups, width), np.uint8)
    rows[:, :16] = _time_bytes(subgroups)
    cells = _reading_bytes(values)
    for j in range(streams):
        at = 16 + 7 * j
        rows[:, at] = ord(",")
        rows[:, at + 1:at + 7] = cells[:, j]
    rows[:, -1] = ord("\n")
    with open(path, "wb") as fh:
        fh.write(("time," + ",".join(f"H{j + 1}" for j in range(streams)) + "\n").encode())
        rows.tofile(fh)


def write_long_csv(path: Path, rows: int, streams: int = 5, seed: int = 5) -> None:
    """A long CSV of ``rows`` readings: ``time,head,value`` with ``streams`` heads per subgroup."""
    if not 1 <= streams <= 9:
        raise ValueError("long data: 1 to 9 streams")
    m = -(-rows // streams)
    values = wide_values(m, streams, seed).reshape(-1)[:rows]
    width = 16 + 3 + 7 + 1
    out = np.empty((rows, width), np.uint8)
    out[:, :16] = np.repeat(_time_bytes(m), streams, axis=0)[:rows]
    out[:, 16] = ord(",")
    out[:, 17] = ord("H")
    out[:, 18] = (np.arange(rows) % streams) + ord("1")
    out[:, 19] = ord(",")
    out[:, 20:26] = _reading_bytes(values)
    out[:, 26] = ord("\n")
    with open(path, "wb") as fh:
        fh.write(b"time,head,value\n")
        out.tofile(fh)


_MEASURE = """
import os, resource, subprocess, sys, time
t = time.perf_counter()
r = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
wall = time.perf_counter() - t
if r.returncode not in (0, 1):
    sys.stderr.write(r.stderr.decode(errors="replace")); sys.exit(3)
print(wall, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)
"""


def child(cmd: list[str]) -> tuple[float, int]:
    """Wall time (s) and peak resident memory (KiB) of a command.

    A small fresh Python process runs it and reports its child's peak: measured from this
    (large) process, a forked child's peak would include the parent's pages.
    """
    r = subprocess.run([sys.executable, "-c", _MEASURE, *cmd], capture_output=True, text=True)
    if r.returncode != 0:
        raise RuntimeError(f"{' '.join(cmd)} failed: {r.stderr.strip()}")
    wall, rss = r.stdout.split()
    return float(wall), int(rss)


def versus(reference: list[str], subject: list[str], rounds: int = 2) -> tuple[tuple[float, int], tuple[float, int]]:
    """Best (time, peak) of each command over ``rounds`` alternating runs (a busy machine slows both alike)."""
    ref, sub = [], []
    for _ in range(rounds):
        ref.append(child(reference))
        sub.append(child(subject))
    return (min(r[0] for r in ref), min(r[1] for r in ref)), (min(s[0] for s in sub), min(s[1] for s in sub))


def read_csv_process(path: Path) -> list[str]:
    """The reference: a process that only reads the file with ``pandas.read_csv`` (its default parser)."""
    return [sys.executable, "-c", f"import pandas; pandas.read_csv({str(path)!r})"]


def best(fn, repeat: int = 3) -> float:
    out = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        out = min(out, time.perf_counter() - t)
    return out
