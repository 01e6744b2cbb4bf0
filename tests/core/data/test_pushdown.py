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
