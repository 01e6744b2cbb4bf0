"""Context columns are kept per subgroup in every layout; a value that varies inside a subgroup keeps its set."""
from __future__ import annotations

import sqlite3

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from workbench.core.data import sql
from workbench.core.data.reader import load

LONG = ("time,head,fill,lot,crew\n"
        "2026-01-01 06:00,H1,10.1,L1,ann\n2026-01-01 06:00,H2,10.3,L1,ann\n"
        "2026-01-01 06:15,H1,10.2,L1,ann\n2026-01-01 06:15,H2,10.0,L2,ann\n"     # the lot varies inside
        "2026-01-01 06:30,H1,9.9,L2,bob\n2026-01-01 06:30,H2,10.4,L1,bob\n"      # … in the other order
        "2026-01-01 06:45,H1,10.0,L2,bob\n2026-01-01 06:45,H2,10.2,L2,bob\n")


def _check_long(ds):
    # the distinct values of each subgroup in first-seen order [definition of the kept set]
    assert ds.extras["lot"].tolist() == ["L1", "L1 | L2", "L2 | L1", "L2"]
    assert ds.extra_sets["lot"] == {1: ("L1", "L2"), 2: ("L2", "L1")}
    assert ds.context_values("lot", 1) == ("L1", "L2") and ds.context_values("lot", 0) == ("L1",)
    assert ds.extras["crew"].tolist() == ["ann", "ann", "bob", "bob"] and "crew" not in ds.extra_sets


def test_long_csv(tmp_path):
    p = tmp_path / "long.csv"
    p.write_text(LONG, encoding="utf-8")
    _check_long(load(p))


def test_long_rows_out_of_time_order_keep_the_order_of_time(tmp_path):
    lines = LONG.splitlines()
    p = tmp_path / "shuffled.csv"
    p.write_text("\n".join([lines[0]] + lines[1:][::-1]) + "\n", encoding="utf-8")   # newest first
    ds = load(p)
    assert ds.extras["lot"].tolist()[0] == "L1" and set(ds.extra_sets["lot"][1]) == {"L1", "L2"}


def test_long_parquet_and_sqlite_go_through_the_same_reader(tmp_path):
    rows = [r.split(",") for r in LONG.splitlines()]
    head, body = rows[0], rows[1:]
    table = pa.table({h: [r[i] if h != "fill" else float(r[i]) for r in body] for i, h in enumerate(head)})
    pq.write_table(table, tmp_path / "long.parquet")
    _check_long(load(tmp_path / "long.parquet"))
    db = tmp_path / "plant.db"
    con = sqlite3.connect(db)
    con.execute("CREATE TABLE fills (time TEXT, head TEXT, fill REAL, lot TEXT, crew TEXT)")
    con.executemany("INSERT INTO fills VALUES (?, ?, ?, ?, ?)", [(r[0], r[1], float(r[2]), r[3], r[4]) for r in body])
    con.commit()
    con.close()
    _check_long(load(sql.source_from_url(f"sqlite:///{db}", table="fills")))


def test_long_counts_keep_the_set_too(tmp_path):
    p = tmp_path / "rejects.csv"
    p.write_text("batch,line,inspected,rejected,die\nB1,L1,100,2,D1\nB1,L2,100,3,D2\nB2,L1,100,1,D1\n"
                 "B2,L2,100,2,D1\n", encoding="utf-8")
    ds = load(p)
    assert ds.counts is not None and ds.extras["die"].tolist() == ["D1 | D2", "D1"]


def test_one_row_a_subgroup_layouts_keep_each_row(tmp_path):
    wide = tmp_path / "wide.csv"
    wide.write_text("time,H1,H2,lot\n2026-01-01,1.0,1.1,A\n2026-01-02,1.2,1.0,B\n", encoding="utf-8")
    ind = tmp_path / "ind.csv"
    ind.write_text("date,ph,tank\n2026-01-01,7.1,T1\n2026-01-02,7.2,T2\n2026-01-03,7.0,T2\n", encoding="utf-8")
    summ = tmp_path / "summ.csv"
    summ.write_text("sample,n,mean,range,crew\n1,5,10.0,1.0,ann\n2,5,10.2,0.8,bob\n", encoding="utf-8")
    counts = tmp_path / "counts.csv"
    counts.write_text("batch,inspected,rejected,die\nB1,100,2,D1\nB2,100,3,D2\n", encoding="utf-8")
    for path, col, want in ((wide, "lot", ["A", "B"]), (ind, "tank", ["T1", "T2", "T2"]),
                            (summ, "crew", ["ann", "bob"]), (counts, "die", ["D1", "D2"])):
        ds = load(path)
        assert ds.extras[col].tolist() == want and ds.extra_sets == {}, path.name


def test_a_subgroup_with_a_blank_beside_a_value_keeps_the_value(tmp_path):
    p = tmp_path / "blank.csv"
    p.write_text("time,head,fill,note\n2026-01-01 06:00,H1,1.0,\n2026-01-01 06:00,H2,1.1,re-seated\n"
                 "2026-01-01 06:15,H1,1.0,\n2026-01-01 06:15,H2,1.2,\n", encoding="utf-8")
    ds = load(p)
    assert ds.extras["note"].tolist() == ["re-seated", ""] and ds.extra_sets == {}
    assert np.all(ds.values[:, 0] == [1.0, 1.0])
