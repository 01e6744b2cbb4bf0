"""Shared fixtures: small in-memory datasets (no files, no home directory)."""
from __future__ import annotations

import numpy as np
import pytest

from workbench.core.model import Dataset, Layout


def make_dataset(values, labels=None, streams=None, path="memory.csv") -> Dataset:
    """A Dataset from an array (subgroups x streams, or 1-D for individuals)."""
    v = np.asarray(values, dtype=float)
    if v.ndim == 1:
        v = v[:, None]
    m, k = v.shape
    labels = np.array([str(x) for x in (labels if labels is not None else range(1, m + 1))])
    streams = tuple(streams) if streams is not None else (("x",) if k == 1 else tuple(f"S{j + 1}" for j in range(k)))
    kind = "individuals" if k == 1 else "wide"
    return Dataset(path=path, sha256="0" * 64, rows=m, size_bytes=0, layout=Layout(kind), labels=labels,
                   streams=streams, values=v)


def make_summary(n, mean, rng=None, sd=None, path="summary.csv") -> Dataset:
    m = len(mean)
    return Dataset(path=path, sha256="0" * 64, rows=m, size_bytes=0, layout=Layout("summary"),
                   labels=np.array([str(i + 1) for i in range(m)]), streams=(), values=None,
                   summary_n=np.asarray(n, float), summary_mean=np.asarray(mean, float),
                   summary_range=None if rng is None else np.asarray(rng, float),
                   summary_sd=None if sd is None else np.asarray(sd, float))


@pytest.fixture(autouse=True)
def _isolate_home(tmp_path, monkeypatch):
    """Tests never read the developer's home directory or author settings."""
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    monkeypatch.setenv("WORKBENCH_AUTHOR", "tester@lab")
    monkeypatch.delenv("NO_COLOR", raising=False)


# ---- a real PostgreSQL server (session-scoped) -----------------------------------------------

from sources_common import PG_PASSWORD  # noqa: E402 (the test role's password; never printed or written)


@pytest.fixture(scope="session")
def pg_server():
    """A throwaway PostgreSQL server on a Unix socket in a temporary folder (stopped at the end)."""
    from workbench import pgserver
    why = pgserver.missing_reason()
    if why:
        pytest.skip(why)
    server = pgserver.TempServer().start()
    try:
        with server.connect() as conn:
            conn.execute(f"CREATE ROLE engineer LOGIN PASSWORD '{PG_PASSWORD}'")
            conn.execute("CREATE DATABASE plant OWNER engineer")
        yield server
    finally:
        server.stop()


@pytest.fixture(scope="session")
def pg_demo(pg_server):
    """The demo's filler data in PostgreSQL: ``filler`` (wide, numeric(5,1) readings, timestamp key) and
    ``filler_long`` (long, double precision); returns the URL with the engineer's password."""
    import csv
    from pathlib import Path
    demo = Path(__file__).resolve().parent.parent / "demo_data"
    with pg_server.connect("plant") as conn:
        conn.execute("SET ROLE engineer")
        rows = list(csv.reader(open(demo / "filler_line3.csv", encoding="utf-8")))  # time, H1..H6, context …
        conn.execute("CREATE TABLE filler (time timestamp, " + ", ".join([f'"{h}" numeric(5,1)' for h in rows[0][1:7]]
                                                                         + [f'"{c}" text' for c in rows[0][7:]]) + ")")
        with conn.cursor() as cur:
            cur.executemany("INSERT INTO filler VALUES (%s" + ", %s" * (len(rows[0]) - 1) + ")", rows[1:])
        long_rows = list(csv.reader(open(demo / "filler_line3_long.csv", encoding="utf-8")))
        conn.execute("CREATE TABLE filler_long (time text, head text, fill_ml double precision, "
                     + ", ".join(f'"{c}" text' for c in long_rows[0][3:]) + ")")
        with conn.cursor() as cur:
            cur.executemany("INSERT INTO filler_long VALUES (%s" + ", %s" * (len(long_rows[0]) - 1) + ")",
                            long_rows[1:])
    return pg_server.url("engineer", PG_PASSWORD, "plant")
