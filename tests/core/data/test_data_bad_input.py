"""Bad input to the data loader: every case is a one-line WorkbenchError naming the file
(and row and column where that applies).

Row numbers follow RFC 4180 section 2 [definition]: records are lines and the header is
line 1, so the first data row is row 2.  Undecodable bytes follow the codec definitions of
UTF-8 (RFC 3629) and Windows-1252 (0x81, 0x8D, 0x8F, 0x90, 0x9D are unassigned) [definition].
"""
from __future__ import annotations

import re

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from workbench.core.data.reader import load
from workbench.core.model import Dataset, LayoutRequest, WorkbenchError

R = LayoutRequest

# (file name, file content, request, expected message after "<path>" — a regex)
CASES = [
    ("empty", b"", R(), r" is empty$"),
    ("blank", b"  \n\n \r\n", R(), r" is empty$"),
    ("header only", b"time,H1,H2\n", R(), r" has a header but no data rows$"),
    ("only empty cells", b"a,b\n,\n,\n", R(), r" has a header but no data rows \(every cell is empty\)$"),
    ("row too long", b"a,b\n1,2\n3,4,5\n", R(), r":3: row has 3 fields, the header has 2$"),
    ("first row too long", b"a,b\n1,2,3\n4,5\n", R(), r":2: row has 3 fields, the header has 2$"),
    ("row too short", b"a,b,c\n1,2,3\n\n4,5\n", R(), r":4: row has 2 fields, the header has 3$"),
    ("short row, CRLF", b"a,b,c\r\n1,2,3\r\n4,5\r\n", R(), r":3: row has 2 fields, the header has 3$"),
    ("short row after quotes", b'lot,x,y\n"L\n1",1,2\nL2,5\n', R(), r":4: row has 2 fields, the header has 3$"),
    ("not a number", b"sample,A,B\n1,1,2\n2,abc,4\n", R(), r":3:A: not a number: 'abc'$"),
    ("infinite", b"sample,A,B\n1,1,2\n2,inf,4\n", R(), r":3:A: not a number: 'inf'$"),
    ("duplicate wide key", b"sample,A,B\n1,1,2\n2,3,4\n1,5,6\n", R(kind="wide"),
     r":4:sample: duplicate subgroup '1' \(also at row 2\)$"),
    ("duplicate individuals key", b"date,ph\n2026-01-01,7.1\n2026-01-01,7.2\n", R(kind="individuals"),
     r":3:date: duplicate subgroup '2026-01-01' \(also at row 2\)$"),
    ("repeating key, no stream", b"batch,v\nb1,1\nb1,2\n", R(),
     r": subgroup column 'batch' repeats \('b1' at rows 2 and 3\) but no stream column was found: give --stream"),
    ("second reading in long", b"batch,head,v\nb1,H1,1\nb1,H2,2\nb1,H1,3\n", R(),
     r":4:v: second reading of stream 'H1' in subgroup 'b1' \(first at row 2\)$"),
    ("empty key", b"batch,A,B\nb1,1,2\n,3,4\n", R(), r":3:batch: empty subgroup key$"),
    ("summary n zero", b"sample,n,mean,range\n1,5,10,1\n2,0,10,1\n", R(), r":3:n: subgroup size must be positive, got 0$"),
    ("summary n negative", b"sample,n,mean,sd\n1,-2,10,1\n", R(), r":2:n: subgroup size must be positive, got -2$"),
    ("summary n fraction", b"sample,n,mean,sd\n1,2.5,10,1\n", R(), r":2:n: subgroup size must be a whole number, got 2.5$"),
    ("summary n empty", b"sample,n,mean,sd\n1,,10,1\n", R(), r":2:n: empty subgroup size$"),
    ("summary range negative", b"sample,n,mean,range\n1,5,10,-1\n", R(), r":2:range: range cannot be negative, got -1$"),
    ("summary without columns", b"a,b\n1,2\n", R(kind="summary"), r": the summary layout needs columns named n"),
    ("negative count", b"batch,inspected,rejected\nB1,100,-1\n", R(), r":2:rejected: negative count -1$"),
    ("fractional count", b"batch,inspected,rejected\nB1,100,1.5\n", R(), r":2:rejected: count is not a whole number: 1.5$"),
    ("zero size", b"batch,inspected,rejected\nB1,0,0\n", R(), r":2:inspected: sample size must be positive, got 0$"),
    ("missing size", b"batch,inspected,rejected\nB1,100,2\nB2,,1\n", R(), r":3:inspected: empty sample size$"),
    ("size without count", b"a,b\n1,2\n", R(size="b"), r"^--size needs --count"),
    ("unknown column", b"sample,A,B\n1,1,2\n", R(subgroup="lot"), r": no column 'lot' \(columns: sample, A, B\)$"),
    ("unknown stream column", b"sample,A,B\n1,1,2\n", R(streams=("A", "C")), r": no column 'C' \(columns: sample, A, B\)$"),
    ("unknown layout", b"a\n1\n", R(kind="stacked"), r"^unknown layout 'stacked' \(choose long, wide, individuals, summary\)$"),
    ("not utf-8 nor cp1252", b"batch,x\nb1,1\n\xc3\x28\x81,2\n", R(), r": byte 0x81 at offset 15 \(line 3\) is neither UTF-8 nor cp1252$"),
    ("NUL byte", b"a,b\n1,\x002\n", R(), r": NUL byte at offset 6 \(line 2\); not a text file"),
    ("duplicate header", b"a,b,a\n1,2,3\n", R(), r":1: column name 'a' appears twice in the header$"),
    ("not a time", b"lot,made,A\nL1,2026-01-01,1\nL2,soon,2\n", R(time="made"), r":3:made: not a time: 'soon'$"),
    ("numbers are not times", b"lot,made,A\nL1,1,1\n", R(time="made"), r": column 'made' holds numbers, not times$"),
    ("no numbers", b"a,b\nx,y\n", R(), r": no column of numbers found \(columns: a, b\)$"),
    ("several values in long", b"batch,head,v,w\nb1,H1,1,2\nb1,H2,2,3\n", R(),
     r" holds 2 characteristics \(v, w\): give --characteristic NAME"),
    ("long without key", b"A,B\n1,2\n", R(kind="long"), r": long data need a subgroup column: give --subgroup$"),
    ("attribute as wide", b"batch,c\nb1,1\n", R(count="c", kind="wide"), r": attribute data \(--count\) are long or individuals"),
]


@pytest.mark.parametrize("name,content,request_,pattern", CASES, ids=[c[0] for c in CASES])
def test_bad_input_is_one_line_error(tmp_path, name, content, request_, pattern):
    path = tmp_path / "data.csv"
    path.write_bytes(content)
    with pytest.raises(WorkbenchError) as info:
        load(path, request_)
    msg = str(info.value)
    assert "\n" not in msg
    if not pattern.startswith("^"):
        assert msg.startswith(str(path)), msg
        pattern = "^" + re.escape(str(path)) + pattern
    assert re.search(pattern, msg), msg


def test_skip_bad_turns_the_error_into_a_count(tmp_path):
    path = tmp_path / "data.csv"
    path.write_bytes(b"sample,A,B\n1,1,2\n2,abc,4\n3,?,5\n4,3,6\n5,4,7\n")
    ds = load(path, R(skip_bad=True))
    assert ds.skipped_bad == 2 and ds.missing == 0
    assert ds.notices == (f"skipped 2 non-numeric cell(s); the first: {path}:3:A: not a number: 'abc'",)


def test_missing_path(tmp_path):
    with pytest.raises(WorkbenchError, match=r"^no such file: .*nothing\.csv$"):
        load(tmp_path / "nothing.csv")


def test_directory(tmp_path):
    with pytest.raises(WorkbenchError, match=r" is a directory, not a data file$"):
        load(tmp_path)


def test_damaged_workbook(tmp_path):
    path = tmp_path / "w.xlsx"
    path.write_bytes(b"PK\x03\x04 not really a zip archive")
    with pytest.raises(WorkbenchError, match=r"w\.xlsx: cannot read as an XLSX workbook: "):
        load(path)


def test_non_number_in_workbook_names_the_sheet_row(tmp_path):
    import openpyxl

    wb = openpyxl.Workbook()
    for row in (["lot", "A", "B"], ["L1", 1.0, 2.0], ["L2", "bad", 3.0]):
        wb.active.append(row)
    wb.save(tmp_path / "w.xlsx")
    with pytest.raises(WorkbenchError, match=r"w\.xlsx:3:A: not a number: 'bad'$"):
        load(tmp_path / "w.xlsx")


# --- junk: a Dataset or a WorkbenchError, nothing else ---------------------------------------

CELLS = st.sampled_from(["", " ", "1", "2.5", "-3", "1e3", "x", "NA", "inf", "nan", "2026-03-02 06:00", "2026-13-45",
                         "H1", "H2", "b1", '"q,uote"', "0", "007", "é", "\t"])
NAMES = st.sampled_from(["time", "batch", "head", "n", "mean", "range", "sd", "H1", "H2", "A", "rejected",
                         "inspected", "value", "", "line", "sample"])


@st.composite
def tables(draw):
    names = draw(st.lists(NAMES, min_size=1, max_size=5))
    rows = draw(st.lists(st.lists(CELLS, min_size=len(names) - 1, max_size=len(names) + 1), max_size=12))
    delim = draw(st.sampled_from([",", ";", "\t", "|"]))
    end = draw(st.sampled_from(["\n", "\r\n"]))
    return end.join(delim.join(r) for r in [names, *rows]).encode("utf-8") + draw(st.sampled_from([b"", b"\n"]))


def _load_junk(tmp_path, data: bytes, suffix: str = ".csv"):
    path = tmp_path / f"junk{suffix}"
    path.write_bytes(data)
    try:
        ds = load(path)
    except WorkbenchError as exc:
        assert "\n" not in str(exc)
        return None
    assert isinstance(ds, Dataset)
    return ds


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.one_of(st.binary(max_size=300), st.text(max_size=300).map(lambda s: s.encode("utf-8", "replace"))),
       suffix=st.sampled_from([".csv", ".tsv", ".xlsx"]))
def test_junk_bytes_never_crash(tmp_path, data, suffix):
    _load_junk(tmp_path, data, suffix)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=tables())
def test_junk_tables_give_consistent_datasets(tmp_path, data):
    ds = _load_junk(tmp_path, data)
    if ds is None:
        return
    assert len(set(ds.labels.tolist())) == ds.m >= 1  # labels unique
    assert ds.rows >= ds.m if ds.layout.kind != "long" else ds.rows >= 1
    grid = ds.values if ds.values is not None else (ds.counts if ds.is_attribute else ds.summary_mean[:, None])
    assert grid.shape == (ds.m, ds.k) and grid.dtype == float
    if ds.times is not None:
        assert len(ds.times) == ds.m and (ds.times[1:] >= ds.times[:-1]).all()
    raw = (tmp_path / "junk.csv").read_bytes()
    # the fingerprint covers the bytes read: all of them, or all but a partly written last line
    assert ds.sha256 == __import__("hashlib").sha256(raw[:ds.size_bytes]).hexdigest()
    assert ds.size_bytes == len(raw) or (any("still being written" in n for n in ds.notices)
                                         and raw[:ds.size_bytes].endswith(b"\n"))


def test_count_above_size_is_refused_by_p_charts_but_allowed_for_u(tmp_path):
    # defectives cannot outnumber the units inspected (p, np); defects can (u) [definition]
    from workbench.core.analysis import analyse
    from workbench.core.model import Settings
    f = tmp_path / "counts.csv"
    f.write_bytes(b"batch,line,inspected,rejected\nB1,L1,100,3\nB1,L2,90,120\nB2,L1,100,4\nB2,L2,90,5\n")
    ds = load(f)
    with pytest.raises(WorkbenchError, match=r":3:rejected: count 120 is larger than the sample size 90 \(a p chart"):
        analyse(ds, Settings(chart="p"))
    assert analyse(ds, Settings(chart="u")).chart == "u"


def test_unterminated_short_last_line_is_left_out_with_a_notice(tmp_path):
    # a logger still writing its last line: the complete rows load, the partial one waits (issue 7)
    import hashlib
    f = tmp_path / "growing.csv"
    body = b"time,a,b,c\n1,1,2,3\n2,2,3,4\n"
    f.write_bytes(body + b"3,1,2")
    ds = load(f)
    assert ds.m == 2 and any("still being written" in n for n in ds.notices)
    assert ds.size_bytes == len(body) and ds.sha256 == hashlib.sha256(body).hexdigest()  # hashlib as reference
    f.write_bytes(body + b"3,1,2,3")  # complete but unterminated: a normal last line
    assert load(f).m == 3
