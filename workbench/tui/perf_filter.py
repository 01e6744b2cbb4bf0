"""Filtering the signals list for the performance command: 200,000 subgroups give 3,000+ signals.

Measured like a cursor move (``perf_keys``): press → repaint in milliseconds, the median over a
number of presses, against the same key pressed in an empty Textual app at the same time.  Two
figures: Esc clearing a filter (a real key press that re-lists every signal), and a filter being
applied (what the filter dialog's Apply does after its key press: the list is narrowed and repainted).
"""
from __future__ import annotations

import asyncio
import statistics
import tempfile
import time
from pathlib import Path

from textual._context import active_app

from workbench.tui.perf_keys import _empty_app, _press, _settle, generated_dataset, ready


async def _time(app, empty, size: tuple[int, int], presses: int) -> tuple[list, list, list, int]:
    clear_ms, apply_ms, empty_ms = [], [], []
    async with app.run_test(size=size) as pilot:
        for _ in range(600):
            await pilot.pause()
            if ready(app):
                break
            await asyncio.sleep(0.05)
        else:
            raise RuntimeError("the workbench did not open its bench")
        bench = app.screen
        rows = len(app.snapshot.marks.rows)
        charts = sorted({r.chart for r in app.snapshot.marks.rows})
        async with empty.run_test(size=size) as other:
            await other.pause()
            for i in range(presses + 2):
                active_app.set(app)  # two apps share this task: name the one being filtered
                t = time.perf_counter()
                bench.set_filter(chart=charts[i % len(charts)], state="open")
                await _settle(pilot)
                applied = (time.perf_counter() - t) * 1000.0
                t = time.perf_counter()
                await _press(pilot, "escape")
                cleared = (time.perf_counter() - t) * 1000.0
                if bench.filter.active:
                    raise RuntimeError("Esc did not clear the filter")
                t = time.perf_counter()
                await _press(other, "right")
                plain = (time.perf_counter() - t) * 1000.0
                if i >= 2:  # two warm-up rounds
                    apply_ms.append(applied)
                    clear_ms.append(cleared)
                    empty_ms.append(plain)
        app.close_session()
    return clear_ms, apply_ms, empty_ms, rows


def measure_filter(subgroups: int = 200_000, presses: int = 10, size: tuple[int, int] = (120, 36)) -> dict:
    """Median filter apply / clear → repaint time (ms) and an empty app's key press, with the signal count."""
    from workbench.core.model import Settings
    from workbench.tui.app import WorkbenchApp
    from workbench.tui.session import OpenRequest

    ds = generated_dataset(subgroups)
    with tempfile.TemporaryDirectory() as tmp:
        req = OpenRequest(path=Path(tmp) / "generated.csv", settings=Settings(), dataset=ds,
                          case_path=Path(tmp) / "generated.case.json", reuse="new")
        app = WorkbenchApp(req, hide_times=True)
        clear, apply, empty, rows = asyncio.run(_time(app, _empty_app(), size, presses))
    e = statistics.median(empty)
    return {"clear_ms": round(statistics.median(clear), 3), "apply_ms": round(statistics.median(apply), 3),
            "empty_ms": round(e, 3), "signals": rows,
            "ratio": round(max(statistics.median(clear), statistics.median(apply)) / e, 3) if e > 0 else float("inf")}


if __name__ == "__main__":  # pragma: no cover - manual use
    print(measure_filter())
