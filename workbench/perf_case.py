"""The case-growth curve of the performance command: what one action and a ``verify`` cost as a
case's trail grows (100, 1,000 and 5,000 exclusions), through the public Case API.

A case is built on a small generated file by plain exclusion events; at each size one more
exclusion is recorded as the workbench records it (analysis before and after, limits written
into the event; the best of three is kept) and the whole file is verified.  Constant cost per
action shows as a flat curve; a cost that grows with the trail shows at a glance.
"""
from __future__ import annotations

import time
from dataclasses import dataclass
from pathlib import Path

SIZES = (100, 1_000, 5_000)


@dataclass(frozen=True)
class GrowthPoint:
    exclusions: int
    """Exclusions in the trail when measured."""
    action_ms: float | None
    """One exclusion recorded as the workbench does it (ms), None when the size was not reached."""
    verify_s: float | None
    """``verify`` of the whole case file (s)."""
    intact: bool = True


def case_growth(folder: Path, sizes: tuple[int, ...] = SIZES, budget_s: float = 120.0) -> list[GrowthPoint]:
    """Measure one action and ``verify`` at each size; sizes not reached within ``budget_s`` of
    building are returned with None (the build itself is then too slow)."""
    from workbench.core.analysis import analyse, limits_snapshot
    from workbench.core.case.casefile import Case
    from workbench.core.case.integrity import verify
    from workbench.core.data.reader import load
    from workbench.core.model import Exclusion, LayoutRequest, Settings
    from workbench.perf_data import write_wide_csv

    data = Path(folder) / "case_growth.csv"
    write_wide_csv(data, max(sizes) + 4 * len(sizes) + 10, 5, seed=11)
    ds = load(data)
    case = Case.create_for(ds, LayoutRequest(), Settings(), "perf", Path(folder) / "case_growth.case.json",
                           limits=limits_snapshot(analyse(ds)))
    labels = [str(x) for x in ds.labels.tolist()]
    out: list[GrowthPoint] = []
    used = 0
    start = time.perf_counter()
    try:
        for size in sizes:
            while used < size and time.perf_counter() - start < budget_s:
                case.exclude(Exclusion(labels[used]), "perf: building the trail")
                used += 1
            if used < size:
                out.append(GrowthPoint(size, None, None))
                continue
            case.analyse(ds)  # the workbench holds the current analysis when the user acts
            times = []
            for _ in range(3):
                t = time.perf_counter()
                case.record_exclusion(ds, Exclusion(labels[used]), "perf: one more")
                times.append(time.perf_counter() - t)
                used += 1
            t = time.perf_counter()
            result = verify(case.path)
            out.append(GrowthPoint(size, 1000 * min(times), time.perf_counter() - t, result.intact))
    finally:
        case.close()
    return out
