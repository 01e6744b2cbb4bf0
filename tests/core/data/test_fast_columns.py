"""The pyarrow column conversions give what pandas.read_csv and the general conversions give.

Awkward files are generated (quotes, a byte-order mark, cp1252, missing cells, CRLF, a partly
written last line); each is loaded with the fast conversions on and off, and the cells are
compared with what ``pandas.read_csv`` reads from the same file ([definition]: the workbench's
reading is pandas' parse, cells stripped, empty cells missing).
"""
from __future__ import annotations

import csv
import io

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from workbench.core.model import LayoutRequest
from workbench.core.data import cells, sniff
from workbench.core.data.reader import load

WORDS = ["H1", "head 2", "lot,7", 'say "x"', "Zürich", "µm", "é", "  pad  ", "nan", "x"]


@st.composite
def awkward_file(draw):
    n = draw(st.integers(3, 40))
    streams = draw(st.integers(2, 4))
    start = np.datetime64("2026-01-01T06:00") + draw(st.integers(0, 10_000)) * np.timedelta64(1, "m")
    form = draw(st.sampled_from(["%Y-%m-%d %H:%M", "%Y-%m-%dT%H:%M:%S", "%Y-%m-%d"]))
    step = np.timedelta64(1, "D") if form == "%Y-%m-%d" else np.timedelta64(draw(st.integers(1, 90)), "m")
    times = [pd.Timestamp(start + i * step).strftime(form) for i in range(n)]
    rows = []
    for i in range(n):
        row = [times[i]]
        for _ in range(streams):
            kind = draw(st.sampled_from(["num", "num", "num", "empty"]))
            v = draw(st.floats(-1e4, 1e4, allow_nan=False).map(lambda x: round(x, 3)))
            row.append("" if kind == "empty" and i > 0 else f"{v}")  # the first row fills every stream
        row.append(draw(st.sampled_from(WORDS)))
        rows.append(row)
    header = ["time"] + [f"S{j + 1}" for j in range(streams)] + ["note"]
    buf = io.StringIO(newline="")
    quoting = draw(st.sampled_from([csv.QUOTE_MINIMAL, csv.QUOTE_NONNUMERIC, csv.QUOTE_ALL]))
    w = csv.writer(buf, quoting=quoting if quoting != csv.QUOTE_NONNUMERIC else csv.QUOTE_MINIMAL,
                   lineterminator=draw(st.sampled_from(["\n", "\r\n"])))
    w.writerow(header)
    w.writerows(rows)
    text = buf.getvalue()
    encoding = draw(st.sampled_from(["utf-8", "utf-8-sig", "cp1252"]))
    if encoding == "cp1252":
        text = text.replace("µ", "µ")  # both in cp1252
    partial = draw(st.booleans())
    if partial:  # a logger still writing: the last line has no end and too few fields
        text += times[-1][:7]
    return text.encode(encoding), encoding, partial, n


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(case=awkward_file())
def test_fast_conversions_equal_pandas_read_csv(case, tmp_path, monkeypatch):
    raw, encoding, partial, n = case
    path = tmp_path / "awkward.csv"
    path.write_bytes(raw)
    # the streams named: random readings can put one stream 100 pooled SDs from the others, which stops
    # detection (a check of its own, tests/core/data); here only the conversions are compared
    header = raw.decode(encoding).lstrip("\ufeff").splitlines()[0].replace('"', "").split(",")
    request = LayoutRequest(streams=tuple(c for c in header if c.startswith("S")))
    monkeypatch.setattr(cells, "FAST", True)
    fast = load(path, request)
    table = sniff.read_table(path)
    monkeypatch.setattr(cells, "FAST", False)
    general = load(path, request)

    # the pandas reading of the same bytes (the partial line left out, as the workbench does)
    complete = raw[: raw.rstrip(b"\r\n").rfind(b"\n") + 1] if partial else raw
    ref = pd.read_csv(io.BytesIO(complete), encoding="utf-8-sig" if encoding != "cp1252" else "cp1252",
                      dtype=str, keep_default_na=False)
    assert fast.m == general.m == len(ref) == n
    np.testing.assert_array_equal(fast.labels, ref["time"].str.strip().to_numpy(dtype=str))
    np.testing.assert_array_equal(fast.labels, general.labels)
    for j, name in enumerate(fast.streams):
        want = pd.to_numeric(ref[name].replace("", np.nan)).to_numpy(dtype=float)
        np.testing.assert_array_equal(fast.values[:, j], want)
    np.testing.assert_array_equal(fast.values, general.values)
    np.testing.assert_array_equal(fast.times, general.times)
    assert fast.times.dtype == general.times.dtype
    assert list(fast.extras) == list(general.extras) == ["note"]
    np.testing.assert_array_equal(fast.extras["note"], ref["note"].str.strip().to_numpy(dtype=str))
    np.testing.assert_array_equal(fast.extras["note"], general.extras["note"])
    assert (fast.missing, fast.notices) == (general.missing, general.notices)
    if encoding != "cp1252":  # pandas holds the text of a UTF-8 file in pyarrow: the fast path ran
        assert cells.arrow.arrow_strings(table.frame["time"]) is not None


@pytest.mark.parametrize("cells_text, want", [
    (["a", "", "ccc", "  pad "], ["a", "", "ccc", "pad"]),
    (["nan", "", "NaN"], ["nan", "", "NaN"]),  # the text "nan" is kept; an empty cell is ""
    (["Zürich", "x"], None),  # not ASCII: the general conversion decides
])
def test_text_of_arrow_strings(cells_text, want):
    s = pd.Series(cells_text, dtype=pd.StringDtype("pyarrow", na_value=np.nan)).replace("", np.nan)
    got = cells.arrow.text(s)
    if want is None:
        assert got is None
    else:
        np.testing.assert_array_equal(cells._strip(got), want)


def test_times_of_another_form_fall_back():
    s = pd.Series(["2026-01-01 06:00", "2026-02-30 06:00"], dtype=pd.StringDtype("pyarrow", na_value=np.nan))
    assert cells.arrow.iso_times(s, ["2026-01-01 06:00"]) is None  # 30 February: the general parser decides
    ok = pd.Series(["2026-01-01 06:00", None, "2026-01-02 07:30"], dtype=pd.StringDtype("pyarrow", na_value=np.nan))
    got = cells.arrow.iso_times(ok, ["2026-01-01 06:00"])
    want = pd.to_datetime(ok, format="ISO8601").to_numpy()
    np.testing.assert_array_equal(got, want)


@pytest.mark.parametrize("cells_text, ok", [
    (["2024-02-29", "2024-03-01"], True),  # [definition] Gregorian calendar: 2024 is a leap year
    (["2023-02-28", "2023-02-29"], False),  # 2023 is not
    (["2026-01-01T23:59:59", "2026-12-31T00:00:00"], True),
    (["2026-01-01 24:00", "2026-01-01 00:00"], False),  # hour 24: the general parser decides
    (["2026-01-01 06:60", "2026-01-01 00:00"], False),
    (["2026-13-01", "2026-01-01"], False),
    (["2026-01-01 06:00", "2026-01-01 6:00"], False),  # another form further down
])
def test_iso_times_check_every_cell(cells_text, ok):
    s = pd.Series(cells_text, dtype=pd.StringDtype("pyarrow", na_value=np.nan))
    got = cells.arrow.iso_times(s, cells_text[:1])
    if ok:
        np.testing.assert_array_equal(got, pd.to_datetime(s, format="ISO8601").to_numpy())
    else:
        assert got is None


def _load_plain(path, monkeypatch):
    """The reference: subgroups found by factorizing the key text of every row, repeats found by hashing
    the text (no shortcut through parsed times, nor through "one fixed-width form, one text per time")."""
    import dataclasses
    from workbench.core.data import reader, sniff
    as_times = sniff.as_times

    def plain_times(table, column):
        t = as_times(table, column)
        return None if t is None else dataclasses.replace(t, one_form=False)
    with monkeypatch.context() as m:
        m.setattr(reader._Builder, "factorize_keys",
                  lambda self, col: pd.factorize(self.order(self.texts(col, "subgroup key"))))
        m.setattr(cells, "_adjacent_repeat", lambda text, values: False)
        m.setattr(sniff, "as_times", plain_times)
        return load(path)


@pytest.mark.parametrize("body", [
    # the same time written two ways is two subgroups, as the text says
    "2026-01-01 00:00,H1,1\n2026-01-01T00:00,H2,2\n2026-01-01 00:00,H2,3\n2026-01-01 00:01,H1,4\n"
    "2026-01-01 00:01,H2,5\n",
    # rows out of time order
    "2026-01-01 00:02,H1,1\n2026-01-01 00:02,H2,2\n2026-01-01 00:01,H1,3\n2026-01-01 00:01,H2,4\n",
])
def test_long_layout_groups_by_time_as_by_text(tmp_path, monkeypatch, body):
    path = tmp_path / "long.csv"
    path.write_text("time,head,value\n" + body)
    fast, plain = load(path), _load_plain(path, monkeypatch)
    np.testing.assert_array_equal(fast.labels, plain.labels)
    np.testing.assert_array_equal(fast.values, plain.values)
    np.testing.assert_array_equal(fast.times, plain.times)
    assert fast.layout == plain.layout and fast.layout.kind == "long"


def test_generated_long_file_groups_as_by_text(tmp_path, monkeypatch):
    from workbench.perf_data import write_long_csv
    path = tmp_path / "long.csv"
    write_long_csv(path, 2003, 4)
    fast, plain = load(path), _load_plain(path, monkeypatch)
    assert fast.m == plain.m == 501
    np.testing.assert_array_equal(fast.labels, plain.labels)
    np.testing.assert_array_equal(fast.values, plain.values)
