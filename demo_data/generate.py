"""Write the demo data sets (invented; see README.md) and planted.json.

    python demo_data/generate.py            # rewrites the files beside this script
    python demo_data/generate.py --out DIR  # writes them to DIR instead

Deterministic: every file comes from ``numpy.random.default_rng`` seeded with SEED and the
file's own number, and values are written with fixed rounding, so a run reproduces the
committed files byte for byte.
"""
from __future__ import annotations

import argparse
import json
from datetime import date, datetime, timedelta
from pathlib import Path

import numpy as np

SEED = 20260302
# Each file draws from default_rng([SEED, file number, variant]).  The variant is the first
# one (counting from 0) for which, with the planted readings left out of the limits, no
# beyond-limits, zone A (2 of 3), zone B (4 of 5) or 8-on-one-side pattern appears in the
# rest of the file, so that the signals a reader finds are the planted ones.
VARIANT = {1: 0, 2: 1, 3: 0, 4: 2}

# Line 3 filler: six heads, one fill per head every 15 minutes, three 12-hour shifts.
FILL_START = datetime(2026, 3, 2, 6, 0)
FILL_SUBGROUPS = 144
FILL_TARGET = 500.0
FILL_SD = 0.30  # within-head standard deviation, mL
FILL_WANDER = 0.03  # level wander shared by all heads between subgroups, mL
HEADS = ("H1", "H2", "H3", "H4", "H5", "H6")
HEAD_OFFSET = (0.05, -0.10, 0.00, 0.05, 0.10, -0.05)
OPERATORS = ("A. Reyes", "T. Brandt", "K. Osei")  # invented crews, one per shift
DRIFT_FIRST, DRIFT_FULL, DRIFT_LAST, DRIFT_SIZE = 16, 27, 35, 1.5  # H4 nozzle change
STEP_FIRST, STEP_LAST, STEP_SIZE = 104, 119, 0.6  # new concentrate lot, all heads
MISKEY_AT, MISKEY_HEAD, MISKEY_INTENDED, MISKEY_RECORDED = 134, "H2", 500.6, 509.6
# Context columns (the log beside the readings).  The concentrate lot changes to L-2292 with the step and the
# nozzle service log records the H4 nozzle swap and re-seat (the drift): both line up with planted causes.
# The earlier lot change (L-2290 -> L-2291 during the night), the shift, the label roll and the checker who
# took the sample line up with none.  Drawn from their own generator, so the fills are those of before.
LOTS = ((0, "L-2290"), (60, "L-2291"), (STEP_FIRST, "L-2292"))
SERVICE = ((0, "PM 2026-02-27"), (DRIFT_FIRST, "H4 nozzle swap 09:50"), (DRIFT_LAST + 1, "H4 nozzle re-seated 14:55"))
LABEL_ROLLS = ((0, "R-7101"), (10, "R-7102"), (44, "R-7103"), (64, "R-7104"), (92, "R-7105"), (124, "R-7106"))
CHECKERS = ("J. Lind", "M. Ito", "S. Park")  # invented; whoever was free took the sample
NOZZLE_IDS = ("N-311", "N-312", "N-313", "N-314", "N-315", "N-316")
NEW_H4_NOZZLE = "N-402"
CONTEXT = ("concentrate_lot", "shift", "operator", "nozzle_service", "label_roll", "checker")

PH_START, PH_DAYS, PH_MEAN, PH_SD = date(2026, 1, 5), 60, 7.20, 0.06
PH_SHIFT_FIRST, PH_SHIFT_SIZE = 44, 0.15  # softener cartridge change

CAP_SUBGROUPS, CAP_MEAN, CAP_SD = 100, 2.20, 0.06
SPINDLES, SPINDLE_OFFSET = ("S1", "S2", "S3", "S4"), (0.01, -0.01, 0.00, 0.00)

BATCHES, LINES = 30, ("L1", "L2", "L3")
LINE_RATE = (0.008, 0.010, 0.012)
REJECT_LINE, REJECT_FIRST, REJECT_LAST, REJECT_RATE = "L2", 17, 21, 0.035  # 0-based batch positions


def _rng(file_no: int) -> np.random.Generator:
    return np.random.default_rng([SEED, file_no, VARIANT[file_no]])


def _stamp(i: int) -> str:
    return (FILL_START + timedelta(minutes=15 * i)).strftime("%Y-%m-%d %H:%M")


def _batch(i: int) -> str:
    return f"B{i + 1:03d}"


def filler() -> tuple[list[str], np.ndarray, list[str]]:
    """Subgroup labels, fills (subgroups x heads, mL, rounded to 0.1) and the operator."""
    rng = _rng(1)
    m, k = FILL_SUBGROUPS, len(HEADS)
    level = FILL_TARGET + rng.normal(0.0, FILL_WANDER, size=(m, 1))
    fills = level + np.asarray(HEAD_OFFSET) + rng.normal(0.0, FILL_SD, size=(m, k))
    i = np.arange(m)
    ramp = np.clip((i - DRIFT_FIRST + 1) / (DRIFT_FULL - DRIFT_FIRST + 1), 0.0, 1.0) * DRIFT_SIZE
    fills[:, HEADS.index("H4")] += np.where(i <= DRIFT_LAST, ramp, 0.0)
    fills[STEP_FIRST:STEP_LAST + 1, :] += STEP_SIZE
    fills = np.round(fills, 1)
    fills[MISKEY_AT, HEADS.index(MISKEY_HEAD)] = MISKEY_RECORDED
    operators = [OPERATORS[min(j // 48, 2)] for j in range(m)]
    return [_stamp(j) for j in range(m)], fills, operators


def _from(steps: tuple, i: int) -> str:
    """The value in force at subgroup ``i`` of a log of (first subgroup, value) steps."""
    return [v for start, v in steps if start <= i][-1]


def context() -> dict[str, list[str]]:
    """The filler's context columns, one value a subgroup (see CONTEXT)."""
    rng = np.random.default_rng([SEED, 1, 1000])
    m = FILL_SUBGROUPS
    checker = rng.integers(0, len(CHECKERS), size=m)
    return {
        "concentrate_lot": [_from(LOTS, i) for i in range(m)],
        "shift": ["night" if 48 <= i < 96 else "day" for i in range(m)],
        "operator": [OPERATORS[min(i // 48, 2)] for i in range(m)],
        "nozzle_service": [_from(SERVICE, i) for i in range(m)],
        "label_roll": [_from(LABEL_ROLLS, i) for i in range(m)],
        "checker": [CHECKERS[c] for c in checker],
    }


def nozzle_id(i: int, head: int) -> str:
    """The nozzle fitted on a head at subgroup ``i`` (H4's was swapped at 09:50 on the first day)."""
    return NEW_H4_NOZZLE if head == HEADS.index("H4") and i >= DRIFT_FIRST else NOZZLE_IDS[head]


def tank_ph() -> tuple[list[str], np.ndarray]:
    rng = _rng(2)
    ph = PH_MEAN + rng.normal(0.0, PH_SD, size=PH_DAYS)
    ph[PH_SHIFT_FIRST:] += PH_SHIFT_SIZE
    return [(PH_START + timedelta(days=d)).isoformat() for d in range(PH_DAYS)], np.round(ph, 2)


def caps() -> np.ndarray:
    rng = _rng(3)
    torque = CAP_MEAN + np.asarray(SPINDLE_OFFSET) + rng.normal(0.0, CAP_SD, size=(CAP_SUBGROUPS, len(SPINDLES)))
    return np.round(torque, 2)


def rejects() -> tuple[np.ndarray, np.ndarray]:
    """Inspected and rejected closures, batches x lines."""
    rng = _rng(4)
    inspected = rng.integers(80, 121, size=(BATCHES, len(LINES))) * 10
    rate = np.tile(np.asarray(LINE_RATE), (BATCHES, 1))
    rate[REJECT_FIRST:REJECT_LAST + 1, LINES.index(REJECT_LINE)] = REJECT_RATE
    return inspected, rng.binomial(inspected, rate)


def planted() -> list[dict]:
    """The planted causes, for the README and the tests."""
    return [
        {"file": "filler_line3.csv", "also_in": ["filler_line3_long.csv"], "kind": "drift", "stream": "H4",
         "first": _stamp(DRIFT_FIRST), "full": _stamp(DRIFT_FULL), "last": _stamp(DRIFT_LAST),
         "magnitude": DRIFT_SIZE, "unit": "mL",
         "cause": "nozzle change on head H4 at 09:50; the nozzle was re-seated at 14:55"},
        {"file": "filler_line3.csv", "also_in": ["filler_line3_long.csv"], "kind": "step", "stream": None,
         "first": _stamp(STEP_FIRST), "last": _stamp(STEP_LAST), "magnitude": STEP_SIZE, "unit": "mL",
         "cause": "new lot of concentrate with a lower viscosity; the volume setting was corrected at 11:55"},
        {"file": "filler_line3.csv", "also_in": ["filler_line3_long.csv"], "kind": "mis-keyed", "stream": MISKEY_HEAD,
         "first": _stamp(MISKEY_AT), "last": _stamp(MISKEY_AT),
         "magnitude": round(MISKEY_RECORDED - MISKEY_INTENDED, 1), "unit": "mL", "recorded": MISKEY_RECORDED, "intended": MISKEY_INTENDED,
         "cause": "reading typed by hand with a digit slip (509.6 for 500.6)"},
        {"file": "tank_ph.csv", "also_in": [], "kind": "step", "stream": "ph",
         "first": (PH_START + timedelta(days=PH_SHIFT_FIRST)).isoformat(),
         "last": (PH_START + timedelta(days=PH_DAYS - 1)).isoformat(), "magnitude": PH_SHIFT_SIZE, "unit": "pH",
         "cause": "softener cartridge of the rinse-water supply changed the evening before"},
        {"file": "closure_rejects.csv", "also_in": [], "kind": "rate", "stream": REJECT_LINE,
         "first": _batch(REJECT_FIRST), "last": _batch(REJECT_LAST),
         "magnitude": round(REJECT_RATE - LINE_RATE[LINES.index(REJECT_LINE)], 3), "unit": "fraction rejected",
         "cause": "liner misfeed on the L2 capper after a die change"},
    ]


def _write(path: Path, header: str, rows: list[str]) -> Path:
    with open(path, "w", encoding="utf-8", newline="\n") as fh:
        fh.write(header + "\n")
        fh.writelines(r + "\n" for r in rows)
    return path


def write_all(out: Path) -> list[Path]:
    """Write every demo file into ``out``; returns the paths written."""
    out.mkdir(parents=True, exist_ok=True)
    stamps, fills, operators = filler()
    ctx = context()
    assert ctx["operator"] == operators
    cells = [[ctx[c][i] for c in CONTEXT] for i in range(len(stamps))]
    rest = [c for c in CONTEXT if c != "operator"]
    written = [
        _write(out / "filler_line3.csv", "time," + ",".join(HEADS) + "," + ",".join(CONTEXT),
               [s + "," + ",".join(f"{v:.1f}" for v in row) + "," + ",".join(c)
                for s, row, c in zip(stamps, fills, cells)]),
        _write(out / "filler_line3_long.csv", "time,head,fill_ml,operator," + ",".join(rest) + ",nozzle_id",
               [f"{s},{h},{v:.1f},{ctx['operator'][i]}," + ",".join(ctx[c][i] for c in rest) + f",{nozzle_id(i, j)}"
                for i, (s, row) in enumerate(zip(stamps, fills)) for j, (h, v) in enumerate(zip(HEADS, row))]),
    ]
    days, ph = tank_ph()
    written.append(_write(out / "tank_ph.csv", "date,ph", [f"{d},{v:.2f}" for d, v in zip(days, ph)]))
    torque = caps()
    written.append(_write(out / "stable_caps.csv", "sample," + ",".join(SPINDLES),
                          [f"{i + 1}," + ",".join(f"{v:.2f}" for v in row) for i, row in enumerate(torque)]))
    inspected, rejected = rejects()
    written.append(_write(out / "closure_rejects.csv", "batch,line,inspected,rejected",
                          [f"{_batch(b)},{line},{inspected[b, j]},{rejected[b, j]}"
                           for b in range(BATCHES) for j, line in enumerate(LINES)]))
    path = out / "planted.json"
    path.write_text(json.dumps(planted(), indent=2) + "\n", encoding="utf-8", newline="\n")
    written.append(path)
    return written


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Write the workbench demo data sets.")
    parser.add_argument("--out", type=Path, default=Path(__file__).resolve().parent)
    args = parser.parse_args(argv)
    for p in write_all(args.out):
        print(p)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
