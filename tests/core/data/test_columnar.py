"""Parquet and Feather / Arrow IPC input: files written by pyarrow in the test, read like CSV."""
from __future__ import annotations

import csv
import datetime as dt
import decimal
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.feather as feather
import pyarrow.ipc as ipc
import pyarrow.parquet as pq
import pytest

from sources_common import assert_same, report_of, without_context
from workbench.core.data import columnar
from workbench.core.data.reader import load
from workbench.core.model import LayoutRequest, WorkbenchError

DEMO = Path(__file__).resolve().parents[3] / "demo_data"
DEMO_FILES = ["filler_line3.csv", "filler_line3_long.csv", "closure_rejects.csv", "stable_caps.csv", "tank_ph.csv"]


def _arrow_of(csv: Path) -> pa.Table:
    # The CSV cells as pyarrow reads them on its own (types inferred by pyarrow, not by workbench).
    import pyarrow.csv as pcsv
    return pcsv.read_csv(csv)


def _write(table: pa.Table, path: Path, kind: str) -> Path:
    if kind == "parquet":
        pq.write_table(table, path)
    elif kind == "feather":
        feather.write_feather(table, path)
    elif kind == "feather-v1":
        feather.write_feather(table, path, version=1)
    else:
        with pa.OSFile(str(path), "wb") as sink, ipc.new_stream(sink, table.schema) as w:
            w.write_table(table)
    return path


@pytest.mark.parametrize("kind", ["parquet", "feather", "stream"])
@pytest.mark.parametrize("name", DEMO_FILES)
def test_same_report_as_the_csv(tmp_path, name, kind):
    # [definition] the same cells in another container are the same data: every limit, signal and
    # capability figure equals the CSV's (1e-12), in every layout (wide, long, counts, individuals).
    csv = DEMO / name
    ds = load(_write(_arrow_of(csv), tmp_path / f"{csv.stem}.{kind}", kind))
    ref = load(csv)
    assert ds.layout.kind == ref.layout.kind and ds.layout.detected
    assert ds.m == ref.m and ds.streams == ref.streams
    assert_same(report_of(ref), report_of(ds))


def test_extension_alone_is_not_needed(tmp_path):
    # The format comes from the first bytes: a Parquet file named .dat is still read as Parquet.
    path = _write(_arrow_of(DEMO / "tank_ph.csv"), tmp_path / "ph.dat", "parquet")
    assert columnar.kind_of(path) == "parquet"
    assert load(path).m == load(DEMO / "tank_ph.csv").m


def test_only_the_mapped_columns_are_read(tmp_path):
    # With the mapping given, the other columns never leave the file (column-wise reading).
    t = _arrow_of(DEMO / "filler_line3_long.csv")
    t = t.append_column("comment", pa.array(["x" * 50] * len(t)))
    path = _write(t, tmp_path / "long.parquet", "parquet")
    seen = []
    table = columnar.read_table(path, wanted=lambda names: seen.append(names) or ["time", "head", "fill_ml"])
    header = next(csv.reader(open(DEMO / "filler_line3_long.csv", encoding="utf-8")))
    assert seen == [header + ["comment"]]
    assert list(table.frame.columns) == ["time", "head", "fill_ml"]
    ds = load(path, LayoutRequest(subgroup="time", value="fill_ml"))
    assert "operator" not in ds.extras and any(f"3 of the file's {len(header) + 1} columns" in n
                                                for n in ds.notices)
    assert_same(report_of(without_context(load(DEMO / "filler_line3_long.csv"))), report_of(ds))
    # Without the readings named, detection needs every column and all are read.
    assert set(load(path).extras) == set(header[3:]) | {"comment"}


def test_arrow_types(tmp_path):
    # Dictionary-encoded names, decimals, a time zone and a null in an integer column.
    stamps = [dt.datetime(2026, 3, 2, 8, 0, tzinfo=dt.timezone(dt.timedelta(hours=h))) for h in (0, 2, -1, 1)]
    t = pa.table({
        "time": pa.array(stamps, pa.timestamp("us", tz="UTC")),
        "lot": pa.array(["A", "B", "A", "B"]).dictionary_encode(),
        "width": pa.array([decimal.Decimal("1.25"), decimal.Decimal("1.50"), None, decimal.Decimal("1.75")],
                          pa.decimal128(5, 2)),
        "count_x": pa.array([1, None, 3, 4], pa.int32()),
    })
    path = _write(t, tmp_path / "types.parquet", "parquet")
    ds = load(path, LayoutRequest(value="width", time="time"))
    # [definition] UTC instants: 08:00+02 = 06:00Z, 08:00+01 = 07:00Z, 08:00Z, 08:00-01 = 09:00Z
    assert [str(x) for x in ds.times.astype("datetime64[m]")] == [
        "2026-03-02T06:00", "2026-03-02T07:00", "2026-03-02T08:00", "2026-03-02T09:00"]
    assert ds.values[:, 0].tolist()[:2] == [1.5, 1.75] and ds.missing == 1
    assert ds.extras["lot"].tolist() == ["B", "B", "A", "A"]


def test_bad_cell_is_named_by_record(tmp_path):
    # A text cell in a number column: the error names the file, the record number and the column.
    t = pa.table({"sample": [1, 2, 3, 4], "a": ["1.0", "2.0", "oops", "4.0"], "b": [1.0, 2.0, 3.0, 4.0]})
    path = _write(t, tmp_path / "bad.parquet", "parquet")
    with pytest.raises(WorkbenchError, match=r"bad\.parquet:3:a: not a number: 'oops'$"):
        load(path)


def test_damaged_file_is_one_line(tmp_path):
    path = tmp_path / "broken.parquet"
    path.write_bytes(b"PAR1" + b"\x00" * 40)
    with pytest.raises(WorkbenchError, match=r"broken\.parquet: cannot read as Parquet: ") as exc:
        load(path)
    assert "\n" not in str(exc.value)


def test_a_columnar_file_is_not_followed(tmp_path):
    # Phase II follows appended bytes; a Parquet file is rewritten whole, so following it is refused in words.
    from workbench.core.phase2.follow import Follower
    path = _write(_arrow_of(DEMO / "tank_ph.csv"), tmp_path / "ph.parquet", "parquet")
    with pytest.raises(WorkbenchError, match="cannot be followed"):
        Follower.open(path)
