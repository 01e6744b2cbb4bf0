"""Aggregation pushed to the database: one GROUP BY on a real PostgreSQL server equals the in-memory summary."""
from __future__ import annotations

import numpy as np
import pytest

from workbench.core.analysis import analyse
from workbench.core.data import pushdown, sql
from workbench.core.data.reader import load
from workbench.core.model import Settings, WorkbenchError
from workbench.core.streams import breakdown


@pytest.fixture(scope="module")
def both(pg_demo):
    raw = load(sql.source_from_url(pg_demo, table="filler_long"))
    agg = load(sql.source_from_url(pg_demo, table="filler_long", aggregate=True))
    return raw, agg


def test_group_by_equals_the_in_memory_summary(both):
    raw, agg = both
    assert raw.values is not None and agg.is_summary and agg.values is None
    assert agg.source.pushed.sql.count("GROUP BY") == 1
    v = raw.values
    # [definition] n, mean, range and sample SD (n - 1) of each subgroup's readings, computed here with numpy.
    np.testing.assert_array_equal(agg.labels, raw.labels)
    np.testing.assert_array_equal(agg.summary_n, np.sum(~np.isnan(v), axis=1))
    np.testing.assert_allclose(agg.summary_mean, np.nanmean(v, axis=1), rtol=1e-12)
    np.testing.assert_allclose(agg.summary_range, np.nanmax(v, axis=1) - np.nanmin(v, axis=1), rtol=1e-12,
                               atol=1e-12)
    np.testing.assert_allclose(agg.summary_sd, np.nanstd(v, axis=1, ddof=1), rtol=1e-12, atol=1e-13)
    assert any("aggregated in the database" in n for n in agg.notices)


@pytest.mark.parametrize("chart", ["xbar-r", "xbar-s"])
def test_same_limits_and_signals_as_the_readings(both, chart):
    raw, agg = both
    a, b = analyse(raw, Settings(chart=chart)), analyse(agg, Settings(chart=chart))
    for ca, cb in zip(a.charts, b.charts):
        np.testing.assert_allclose(cb.center, ca.center, rtol=1e-12)
        np.testing.assert_allclose(cb.ucl, ca.ucl, rtol=1e-12)
        np.testing.assert_allclose(cb.lcl, ca.lcl, rtol=1e-12, atol=1e-12)
    assert [s.key for s in b.signals] == [s.key for s in a.signals]


def test_breakdown_fetches_one_subgroups_readings(both):
    raw, agg = both
    p = int(np.flatnonzero(agg.labels == "2026-03-03 15:30")[0])
    streams, values = pushdown.readings_of(agg, p)
    got = dict(zip(streams, values.tolist()))
    assert got == dict(zip(raw.streams, raw.values[p].tolist()))
    # The planted mis-keyed reading (demo_data/README.md: H2 at 15:30 on Tuesday) drives the subgroup.
    bd = breakdown(analyse(agg, Settings()), p, (streams, values))
    assert bd.driver == "H2" == breakdown(analyse(raw, Settings()), p).driver


def test_automatic_above_the_row_count(pg_demo, monkeypatch):
    monkeypatch.setattr(pushdown, "AUTO_ROWS", 500)  # the long table has 864 rows, the wide one 144
    assert load(sql.source_from_url(pg_demo, table="filler_long")).is_summary
    assert not load(sql.source_from_url(pg_demo, table="filler")).is_summary


def test_wide_data_are_not_aggregated(pg_demo):
    with pytest.raises(WorkbenchError, match="needs long data"):
        load(sql.source_from_url(pg_demo, table="filler", aggregate=True))


def test_sqlite_has_no_sd_but_ranges(tmp_path):
    import sqlite3
    db = tmp_path / "a.db"
    con = sqlite3.connect(db)
    con.execute("CREATE TABLE r (lot TEXT, head TEXT, x REAL)")
    con.executemany("INSERT INTO r VALUES (?, ?, ?)", [("L1", "a", 1.0), ("L1", "b", 4.0), ("L2", "a", 2.0),
                                                       ("L2", "b", 2.5), ("L3", "a", 3.0), ("L3", "b", 1.0)])
    con.commit()
    ds = load(sql.source_from_url(f"sqlite:///{db}", table="r", aggregate=True))
    # [definition] ranges 3.0, 0.5, 2.0 and means 2.5, 2.25, 2.0 of the rows above.
    assert ds.summary_range.tolist() == [3.0, 0.5, 2.0] and ds.summary_mean.tolist() == [2.5, 2.25, 2.0]
    assert ds.summary_sd is None and ds.labels.tolist() == ["L1", "L2", "L3"]


# ---- fetched column-wise, fingerprinted column by column --------------------------------------------------

def test_columnar_fingerprint_is_the_documented_form():
    # The form stated in workbench/core/data/sql.py, written out here byte by byte with struct and json
    # (IEEE 754 binary64 little-endian, NaN as 0x7ff8000000000000; int64 little-endian; text as JSON lines).
    import hashlib
    import json
    import struct

    import pandas as pd
    frame = pd.DataFrame({"lot": pd.Series(["L1", None, "Ü\"2"], dtype=object), "n": np.array([5, 4, 1]),
                          "sd": np.array([0.25, 1e-300, np.nan])})
    text = (b'["lot","n","sd"]\n'
            + b'["lot","text",3]\n' + b'"L1"\nnull\n' + json.dumps("Ü\"2", ensure_ascii=False).encode() + b"\n"
            + b'["n","int64",3]\n' + struct.pack("<3q", 5, 4, 1)
            + b'["sd","float64",3]\n' + struct.pack("<2d", 0.25, 1e-300) + bytes.fromhex("000000000000f87f"))
    assert sql.fingerprint_columns(frame) == (hashlib.sha256(text).hexdigest(), len(text))
    # any other NaN payload counts as the same empty value
    odd = frame.assign(sd=np.array([0.25, 1e-300, np.frombuffer(bytes.fromhex("010000000000f8ff"), "<f8")[0]]))
    assert sql.fingerprint_columns(odd) == sql.fingerprint_columns(frame)


def _by_rows(src, statement, names):
    """The statement's rows fetched one by one through the driver, as a frame (the reference)."""
    cols, rows = sql.run(src, statement)
    return sql.to_frame(names, rows)


@pytest.mark.parametrize("key_sql, key_type", [("time", str), ("(ROW_NUMBER() OVER ()) / 6", int)])
def test_copied_rows_equal_the_drivers_rows_bit_for_bit(pg_demo, key_sql, key_type):
    # COPY … TO STDOUT as CSV parsed by pandas must give the very doubles the driver returns row by row.
    src = sql.source_from_url(pg_demo, table="filler_long")
    statement = (f"SELECT k AS workbench_key, COUNT(v) AS n, AVG(v) AS mean, MAX(v) - MIN(v) AS range, "
                 f"STDDEV_SAMP(v) AS sd, NULL AS first_time FROM (SELECT {key_sql} AS k, fill_ml * 1.000001 AS v "
                 "FROM filler_long) AS t GROUP BY k ORDER BY workbench_key")
    names = ["key", "n", "mean", "range", "sd", "first_time"]
    engine = sql.engine_of(src)
    try:
        fast = pushdown._copied(src, statement, names, key_type, engine)
    finally:
        engine.dispose()
    ref = _by_rows(src, statement, names)
    assert fast is not None and len(fast) == len(ref) > 100
    for c in ("mean", "range", "sd"):
        a, b = fast[c].to_numpy(np.float64), ref[c].to_numpy(np.float64)
        assert np.array_equal(a.view(np.int64), b.view(np.int64)) or np.array_equal(a, b, equal_nan=True)
    assert fast["n"].tolist() == ref["n"].tolist() and fast["key"].tolist() == list(ref["key"])
    keep = ["key", "n", "mean", "range", "sd"]
    assert sql.fingerprint_columns(fast[keep]) == sql.fingerprint_columns(ref[keep])


def test_new_cases_record_the_columnar_fingerprint_old_ones_keep_the_rows(both, pg_demo):
    _raw, agg = both
    assert agg.source.fingerprint == "columns" and agg.source.as_dict()["fingerprint"] == "columns"
    frame = pushdown.sql.to_frame(["time", "n", "mean", "range", "sd", "first_time"],
                                  sql.run(agg.source, agg.source.pushed.sql)[1])
    assert agg.sha256 == sql.fingerprint_columns(frame[["time", "n", "mean", "range", "sd"]])[0]
    # A case made before the columnar form records no "fingerprint": its rows are fingerprinted row by row.
    old = sql.SqlSource.from_dict({"kind": "sql", "url": agg.source.url, "table": "filler_long", "aggregate": True},
                                  "test")
    assert old.fingerprint == "rows" and "fingerprint" not in old.as_dict()
    again = load(sql.SqlSource(old.url, old.table, aggregate=True, fingerprint="rows",
                               password=sql.source_from_url(pg_demo, table="filler_long").password))
    names, rows = sql.run(again.source, again.source.pushed.sql)
    assert again.sha256 == sql.fingerprint(names, rows)[0] != agg.sha256
    np.testing.assert_array_equal(again.summary_mean, agg.summary_mean)
