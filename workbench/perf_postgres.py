"""`workbench perf --postgres`: a large PostgreSQL table aggregated in the database, opened in the workbench.

Opt-in (it starts a throwaway PostgreSQL server and fills a table, which takes a while): a table of
``rows`` readings (long layout: subgroup, stream, value; 5 streams) is made inside the server with
``generate_series``.  The reference is the database's own ``GROUP BY`` of the same statistics (n, mean,
range, SD per subgroup), timed through the driver; the figure is the time from starting the workbench on
``URL --table perf_long --aggregate-in-database`` to a usable bench (the case created, the charts drawn),
measured in a child process.  Goal: ≤ 2× the query.
"""
from __future__ import annotations

import subprocess
import sys
import time

ROWS = 10_000_000
STREAMS = 5

_CHILD = r"""
import asyncio, sys, time
from pathlib import Path
t0 = time.perf_counter()
from workbench.core.data.sql import source_from_url
from workbench.tui.app import WorkbenchApp
from workbench.tui.session import OpenRequest
from workbench.tui.screens.bench import BenchScreen
src = source_from_url(sys.argv[1], table="perf_long", aggregate=True)
app = WorkbenchApp(OpenRequest(Path("perf_long"), source=src, case_path=Path(sys.argv[2])), hide_times=True)
async def main():
    async with app.run_test(size=(120, 36)) as pilot:
        while not isinstance(app.screen, BenchScreen) or any(w.is_running for w in app.workers):
            await pilot.pause(0.05)
        print(time.perf_counter() - t0)
asyncio.run(main())
"""


def run(rows: int = ROWS) -> int:
    """Measure the figure; 0 when the goal is met, 1 when missed, 2 when no server can be started."""
    import tempfile
    from pathlib import Path

    from workbench import pgserver
    from workbench.perf import Board
    why = pgserver.missing_reason()
    if why:
        print(f"workbench perf --postgres: {why}", file=sys.stderr)
        return 2
    board = Board()
    subgroups = rows // STREAMS
    with pgserver.TempServer() as server, tempfile.TemporaryDirectory(prefix="workbench-perf-pg-") as tmp:
        print(f"workbench perf --postgres — {subgroups:,} subgroups × {STREAMS} streams = {rows:,} rows in "
              "PostgreSQL", flush=True)
        with server.connect() as conn:
            t = time.perf_counter()
            conn.execute("CREATE UNLOGGED TABLE perf_long (subgroup integer, stream text, value double precision)")
            conn.execute(f"INSERT INTO perf_long SELECT g / {STREAMS}, 'S' || (g % {STREAMS} + 1), "
                         f"10 + sqrt(-2 * ln(1 - random())) * cos(2 * pi() * random()) "
                         f"FROM generate_series(0, {rows - 1}) AS g")
            conn.execute("ANALYZE perf_long")
            board.note(f"table filled in {time.perf_counter() - t:.1f} s")
            query = ("SELECT subgroup, COUNT(value), AVG(value), MAX(value) - MIN(value), STDDEV_SAMP(value) "
                     "FROM perf_long WHERE value IS NOT NULL GROUP BY subgroup ORDER BY subgroup")
            times = []
            for _ in range(2):
                t = time.perf_counter()
                conn.execute(query).fetchall()
                times.append(time.perf_counter() - t)
            ref = min(times)
        url = server.url(pgserver.SUPERUSER, server.password)
        opened = []
        for i in range(2):
            r = subprocess.run([sys.executable, "-c", _CHILD, url, str(Path(tmp) / f"perf{i}.case.json")],
                               capture_output=True, text=True, timeout=3600)
            try:
                opened.append(float(r.stdout.strip().splitlines()[-1]))
            except (ValueError, IndexError):
                board.note(f"the workbench did not open: {(r.stderr or r.stdout).strip()[-300:]}")
                opened.append(float("nan"))
        t_open = min(opened)
        board.note(f"GROUP BY in the database: {ref:.2f} s;  workbench open → usable bench (aggregated in the "
                   f"database): {t_open:.2f} s")
        board.add(f"PostgreSQL {rows:,} rows: open aggregated / the database's GROUP BY", t_open / ref, 2.0)
    return board.verdict()
