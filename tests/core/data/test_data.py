"""Tests of the data loader (workbench.core.data.reader) and of the demo data sets.

References used below:
* hashlib (Python standard library, FIPS 180-4 SHA-256) is the reference for the file hash.
* The csv module (Python standard library) writes and reads the reference tables, so the
  loader is checked against an independent reader.
* pandas.to_datetime is the reference parser for timestamps (the loader's stated method).
* RFC 4180 section 2 [definition]: one record a line, the header is the first line; we number
  rows as lines of the file, so the first data row is row 2.
* Control chart constants for the demo-data checks: Montgomery, Introduction to Statistical
  Quality Control, Appendix VI [printed]: n=6 A2 0.483, D4 2.004; n=4 A2 0.729, D4 2.282;
  n=2 d2 1.128, D4 3.267.  p chart limits p̄ ± 3·sqrt(p̄(1−p̄)/n) [definition].
"""
from __future__ import annotations

import csv
import hashlib
import importlib.util
import json
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from workbench.core.data.reader import describe_layout, load
from workbench.core.model import LayoutRequest

DEMO = Path(__file__).resolve().parents[3] / "demo_data"


def write_rows(path: Path, rows: list[list[str]], delimiter: str = ",", encoding: str = "utf-8") -> Path:
    with open(path, "w", newline="", encoding=encoding) as fh:
        csv.writer(fh, delimiter=delimiter, lineterminator="\n").writerows(rows)
    return path


def reference_rows(path: Path, encoding: str = "utf-8") -> list[list[str]]:
    with open(path, newline="", encoding=encoding) as fh:
        return [r for r in csv.reader(fh) if r]


WIDE = [["time", "H1", "H2", "H3"],
        ["2026-03-02 06:00", "500.1", "499.8", "500.3"],
        ["2026-03-02 06:15", "500.4", "", "499.9"],
        ["2026-03-02 06:30", "499.7", "500.0", "500.2"]]


# --- layouts -------------------------------------------------------------------------------

def test_wide_demo_file_matches_csv_module():
    path = DEMO / "filler_line3.csv"
    ds = load(path)
    rows = reference_rows(path)  # csv module: independent reference reader
    assert describe_layout(ds) == "wide: subgroup=time, streams=H1..H6 (detected)"
    assert ds.streams == tuple(rows[0][1:7])                      # time, H1..H6, then the context columns
    assert ds.labels.tolist() == [r[0] for r in rows[1:]]
    np.testing.assert_array_equal(ds.values, np.array([[float(x) for x in r[1:7]] for r in rows[1:]]))
    assert {c: ds.extras[c].tolist() for c in rows[0][7:]} == {c: [r[7 + j] for r in rows[1:]]
                                                               for j, c in enumerate(rows[0][7:])}
    assert ds.values.dtype == np.float64 and ds.values.shape == (144, 6)
    assert ds.rows == 144 and ds.missing == 0 and ds.notices == ()
    # pandas.to_datetime is the reference parser for the time key
    np.testing.assert_array_equal(ds.times, pd.to_datetime(pd.Series(ds.labels)).to_numpy())


def test_long_demo_file_equals_wide_demo_file():
    wide = load(DEMO / "filler_line3.csv")
    long = load(DEMO / "filler_line3_long.csv")
    assert describe_layout(long) == "long: subgroup=time, stream=head, value=fill_ml (detected)"
    assert long.streams == wide.streams
    assert long.labels.tolist() == wide.labels.tolist()
    np.testing.assert_array_equal(long.values, wide.values)
    rows = reference_rows(DEMO / "filler_line3_long.csv")
    first_operator = {}
    for r in rows[1:]:
        first_operator.setdefault(r[0], r[3])
    assert long.extras["operator"].tolist() == [first_operator[lab] for lab in long.labels]


def test_long_streams_and_subgroups_in_order_of_first_appearance(tmp_path):
    p = write_rows(tmp_path / "l.csv", [["batch", "head", "v"], ["b2", "H3", "1"], ["b2", "H1", "2"],
                                       ["b1", "H1", "3"], ["b1", "H2", "4"]])
    ds = load(p)
    assert ds.labels.tolist() == ["b2", "b1"] and ds.streams == ("H3", "H1", "H2")
    np.testing.assert_array_equal(ds.values, [[1, 2, np.nan], [np.nan, 3, 4]])


def test_individuals_with_date_key():
    ds = load(DEMO / "tank_ph.csv")
    rows = reference_rows(DEMO / "tank_ph.csv")
    assert describe_layout(ds) == "individuals: subgroup=date, value=ph (detected)"
    assert ds.streams == ("ph",) and ds.values.shape == (60, 1)
    assert ds.labels.tolist() == [r[0] for r in rows[1:]]
    np.testing.assert_array_equal(ds.values[:, 0], [float(r[1]) for r in rows[1:]])


def test_individuals_without_key_are_numbered_by_data_row(tmp_path):
    p = write_rows(tmp_path / "i.csv", [["thickness"], ["1.5"], ["1.7"], ["1.6"]])
    ds = load(p)
    assert ds.labels.tolist() == ["1", "2", "3"] and ds.streams == ("thickness",)
    assert ds.layout.kind == "individuals" and ds.layout.subgroup is None


@pytest.mark.parametrize("names", [("n", "mean", "range"), ("N", "Average", "R"), ("Size", "XBAR", "Range")])
def test_summary_names_case_insensitive(tmp_path, names):
    p = write_rows(tmp_path / "s.csv", [["subgroup", *names], ["1", "5", "10.2", "1.4"], ["2", "4", "10.0", "0.9"]])
    ds = load(p)
    assert ds.layout.kind == "summary" and ds.is_summary and ds.values is None
    assert ds.summary_n.tolist() == [5, 4]
    np.testing.assert_array_equal(ds.summary_mean, [10.2, 10.0])
    np.testing.assert_array_equal(ds.summary_range, [1.4, 0.9])
    assert ds.summary_sd is None


def test_summary_with_standard_deviation(tmp_path):
    p = write_rows(tmp_path / "s.csv", [["lot", "count", "avg", "stdev"], ["A", "5", "3.1", "0.2"]])
    ds = load(p)
    assert (ds.layout.n, ds.layout.mean, ds.layout.sd) == ("count", "avg", "stdev")
    np.testing.assert_array_equal(ds.summary_sd, [0.2])


def test_attribute_long_demo_file():
    ds = load(DEMO / "closure_rejects.csv")
    rows = reference_rows(DEMO / "closure_rejects.csv")[1:]
    assert describe_layout(ds) == ("long (attribute): subgroup=batch, stream=line, count=rejected, "
                                   "size=inspected (detected)")
    assert ds.is_attribute and ds.values is None and ds.counts.shape == (30, 3) == ds.sizes.shape
    total = {}
    for batch, line, inspected, rejected in rows:
        total[(batch, line)] = (float(inspected), float(rejected))
    for i, b in enumerate(ds.labels):
        for j, line in enumerate(ds.streams):
            assert (ds.sizes[i, j], ds.counts[i, j]) == total[(b, line)]


def test_attribute_one_row_a_subgroup_with_override(tmp_path):
    p = write_rows(tmp_path / "c.csv", [["day", "scratches", "panels"], ["mon", "3", "10"], ["tue", "0", "12"]])
    ds = load(p, LayoutRequest(count="scratches", size="panels"))
    assert ds.layout.kind == "individuals" and not ds.layout.detected and ds.streams == ("scratches",)
    np.testing.assert_array_equal(ds.counts, [[3], [0]])
    np.testing.assert_array_equal(ds.sizes, [[10], [12]])
    ds = load(p, LayoutRequest(count="scratches"))  # c chart data: no sample size
    assert ds.sizes is None


# --- formats, delimiters, encodings ---------------------------------------------------------

@pytest.mark.parametrize("delimiter", [",", ";", "\t", "|"])
def test_delimiter_sniffing(tmp_path, delimiter):
    ds = load(write_rows(tmp_path / "d.txt", WIDE, delimiter))
    assert ds.streams == ("H1", "H2", "H3") and ds.labels.tolist() == [r[0] for r in WIDE[1:]]
    np.testing.assert_array_equal(ds.values, [[500.1, 499.8, 500.3], [500.4, np.nan, 499.9], [499.7, 500.0, 500.2]])


def test_decimal_comma_with_semicolon(tmp_path):
    rows = [[c.replace(".", ",") for c in r] for r in WIDE]
    ds = load(write_rows(tmp_path / "eu.csv", rows, ";"))
    assert ds.values[0].tolist() == [500.1, 499.8, 500.3]
    assert "numbers use a decimal comma" in ds.notices


def test_xlsx_first_sheet(tmp_path):
    import datetime

    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["time", "H1", "H2"])
    ws.append([datetime.datetime(2026, 3, 2, 6, 0), 500.1, 499.9])
    ws.append([datetime.datetime(2026, 3, 2, 6, 15), 500.3, None])
    wb.create_sheet("notes").append(["ignored"])
    wb.save(tmp_path / "w.xlsx")
    ds = load(tmp_path / "w.xlsx")
    assert ds.layout.kind == "wide" and ds.encoding == "xlsx"
    assert ds.labels.tolist() == ["2026-03-02 06:00", "2026-03-02 06:15"]
    np.testing.assert_array_equal(ds.values, [[500.1, 499.9], [500.3, np.nan]])
    assert ds.missing == 1 and ds.times.dtype.kind == "M"


def test_utf8_bom(tmp_path):
    # Unicode Standard, section 23.8 [definition]: the byte order mark U+FEFF is EF BB BF in UTF-8
    p = write_rows(tmp_path / "b.csv", WIDE, encoding="utf-8-sig")
    assert p.read_bytes()[:3] == b"\xef\xbb\xbf"
    ds = load(p)
    assert ds.layout.subgroup == "time" and ds.encoding == "utf-8-sig" and ds.notices == ()


def test_cp1252_fallback_with_notice(tmp_path):
    # Windows-1252 code page [definition]: 0xE9 is 'é' and 0x80 is '€'; neither is valid UTF-8 alone
    p = tmp_path / "w.csv"
    p.write_bytes(b"batch,x,note\nb1,1.5,caf\xe9\nb2,2.5,\x8010\n")
    ds = load(p)
    assert "file is not UTF-8; read as cp1252" in ds.notices and ds.encoding == "cp1252"
    assert ds.extras["note"].tolist() == ["café", "€10"]


# --- cells, order, identity -----------------------------------------------------------------

def test_missing_cells_and_markers_counted(tmp_path):
    p = write_rows(tmp_path / "m.csv", [["sample", "A", "B"], ["1", "", "2"], ["2", "NA", "3"], ["3", "4", "n/a"],
                                       ["4", "5", "6"]])
    ds = load(p)
    assert ds.missing == 3 and int(np.isnan(ds.values).sum()) == 3


def test_time_sorting_with_notice(tmp_path):
    rows = [WIDE[0], WIDE[2], WIDE[3], WIDE[1]]
    ds = load(write_rows(tmp_path / "t.csv", rows))
    assert "rows were not in time order; sorted by time" in ds.notices
    assert ds.labels.tolist() == [r[0] for r in WIDE[1:]]
    assert ds.values[0].tolist() == [500.1, 499.8, 500.3]
    expect = pd.to_datetime(pd.Series([r[0] for r in WIDE[1:]])).to_numpy()  # pandas: reference parser
    np.testing.assert_array_equal(ds.times, expect)


def test_sorted_file_has_no_notice(tmp_path):
    assert load(write_rows(tmp_path / "t.csv", WIDE)).notices == ()


@pytest.mark.parametrize("name", ["filler_line3.csv", "tank_ph.csv", "closure_rejects.csv"])
def test_sha256_size_and_rows_match_the_file(name):
    path = DEMO / name
    ds = load(path)
    assert ds.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()  # hashlib: reference SHA-256
    assert ds.size_bytes == os.path.getsize(path)
    assert ds.rows == len(reference_rows(path)) - 1  # header excluded
    assert ds.path == str(path)


def test_large_file_hash_computed_beside_parsing(tmp_path):
    rows = [["sample", "A", "B"]] + [[str(i), f"{i % 7}.5", f"{i % 5}.25"] for i in range(1, 120_001)]
    p = write_rows(tmp_path / "big.csv", rows)
    assert p.stat().st_size > 1 << 20  # big enough for the threaded hash
    ds = load(p)
    assert ds.sha256 == hashlib.sha256(p.read_bytes()).hexdigest()  # hashlib: reference SHA-256
    assert ds.rows == 120_000 and ds.labels[-1] == rows[-1][0]
    assert ds.values[-1].tolist() == [float(rows[-1][1]), float(rows[-1][2])]


def test_blank_lines_skipped_but_counted_in_row_numbers(tmp_path):
    p = tmp_path / "b.csv"
    p.write_text("sample,A,B\n\n1,1,2\n\n2,x,4\n", encoding="utf-8")
    ds = load(p, LayoutRequest(skip_bad=True))
    assert ds.rows == 2 and ds.skipped_bad == 1
    # RFC 4180 line numbering with the header as line 1: 'x' sits on line 5
    assert ds.notices == (f"skipped 1 non-numeric cell(s); the first: {p}:5:A: not a number: 'x'",)


def test_leading_zero_keys_keep_their_text(tmp_path):
    ds = load(write_rows(tmp_path / "z.csv", [["batch", "A", "B"], ["007", "1", "2"], ["010", "3", "4"]]))
    assert ds.labels.tolist() == ["007", "010"]


def test_one_subgroup_is_valid(tmp_path):
    ds = load(write_rows(tmp_path / "o.csv", WIDE[:2]))
    assert ds.m == 1 and ds.k == 3


def test_quoted_fields(tmp_path):
    p = write_rows(tmp_path / "q.csv", [["lot", "A", "B"], ["L,1", "1", "2"], ["L\n2", "3", "4"]])
    ds = load(p)
    assert ds.labels.tolist() == ["L,1", "L\n2"] and ds.values.tolist() == [[1, 2], [3, 4]]


# --- overrides ------------------------------------------------------------------------------

def test_overrides_kind_and_columns(tmp_path):
    p = write_rows(tmp_path / "o.csv", [["when", "who", "A", "B", "C"], ["1", "x", "1", "2", "3"], ["2", "y", "4", "5", "6"]])
    ds = load(p, LayoutRequest(kind="wide", subgroup="when", streams=("C", "A")))
    assert ds.layout.detected is False and ds.streams == ("C", "A") and ds.labels.tolist() == ["1", "2"]
    assert ds.values.tolist() == [[3, 1], [6, 4]] and set(ds.extras) == {"who", "B"}
    assert describe_layout(ds) == "wide: subgroup=when, streams=C,A (as given)"
    ds = load(p, LayoutRequest(kind="individuals", value="B"))
    assert ds.streams == ("B",) and ds.values[:, 0].tolist() == [2, 5]


def test_override_long_stream_and_value(tmp_path):
    p = write_rows(tmp_path / "l.csv", [["run", "gauge", "reading", "temp"], ["r1", "g1", "1", "20"],
                                       ["r1", "g2", "2", "21"], ["r2", "g1", "3", "22"]])
    ds = load(p, LayoutRequest(subgroup="run", stream="gauge", value="reading"))
    assert ds.layout.kind == "long" and ds.streams == ("g1", "g2")
    np.testing.assert_array_equal(ds.values, [[1, 2], [3, np.nan]])
    assert ds.extras["temp"].tolist() == ["20 | 21", "22"]         # r1's two values kept as its set
    assert ds.extra_sets == {"temp": {0: ("20", "21")}}


def test_override_time_column(tmp_path):
    p = write_rows(tmp_path / "t.csv", [["lot", "made", "A", "B"], ["L2", "2026-01-02", "1", "2"],
                                       ["L1", "2026-01-01", "3", "4"]])
    ds = load(p, LayoutRequest(time="made"))
    assert ds.labels.tolist() == ["L1", "L2"] and ds.layout.time == "made"
    assert "rows were not in time order; sorted by made" in ds.notices


# --- demo data ------------------------------------------------------------------------------

def _generator():
    spec = importlib.util.spec_from_file_location("demo_generate", DEMO / "generate.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_generator_reproduces_committed_files_byte_for_byte(tmp_path):
    written = _generator().write_all(tmp_path)
    names = sorted(p.name for p in written)
    assert names == sorted(["filler_line3.csv", "filler_line3_long.csv", "tank_ph.csv", "stable_caps.csv",
                            "closure_rejects.csv", "planted.json"])
    for name in names:
        assert (tmp_path / name).read_bytes() == (DEMO / name).read_bytes(), name


PLANTED = json.loads((DEMO / "planted.json").read_text(encoding="utf-8"))


def _xbar_r(values):
    xbar, r = values.mean(axis=1), values.max(axis=1) - values.min(axis=1)
    return xbar, r


def test_planted_labels_exist_and_readme_states_them():
    readme = (DEMO / "README.md").read_text(encoding="utf-8")
    assert "497.0–503.0 mL" in readme
    for cause in PLANTED:
        for name in [cause["file"], *cause["also_in"]]:
            ds = load(DEMO / name)
            assert ds.index_of(cause["first"]) <= ds.index_of(cause["last"])
            assert cause["stream"] is None or cause["stream"] in ds.streams
        assert cause["first"] in readme and cause["last"] in readme


def test_filler_mis_keyed_reading_beyond_xbar_and_r_limits():
    cause = next(c for c in PLANTED if c["kind"] == "mis-keyed")
    ds = load(DEMO / cause["file"])
    i, j = ds.index_of(cause["first"]), ds.stream_index(cause["stream"])
    assert ds.values[i, j] == cause["recorded"] == 509.6
    xbar, r = _xbar_r(ds.values)
    a2, d4 = 0.483, 2.004  # Montgomery App. VI, n = 6 [printed]
    assert xbar[i] > xbar.mean() + a2 * r.mean() and r[i] > d4 * r.mean()
    assert int(np.argmax(ds.values[i])) == j


def test_filler_lot_step_beyond_xbar_limits():
    cause = next(c for c in PLANTED if c["kind"] == "step" and c["file"] == "filler_line3.csv")
    ds = load(DEMO / cause["file"])
    lo, hi = ds.index_of(cause["first"]), ds.index_of(cause["last"])
    xbar, r = _xbar_r(ds.values)
    ucl = xbar.mean() + 0.483 * r.mean()  # A2(6) = 0.483, Montgomery App. VI [printed]
    assert (xbar[lo:hi + 1] > ucl).sum() >= (hi - lo + 1) // 2
    assert not (xbar[:lo] > ucl).any()


def test_filler_h4_drift_shows_on_r_and_xbar_and_points_at_h4():
    drift = next(c for c in PLANTED if c["kind"] == "drift")
    ds = load(DEMO / drift["file"])
    lo, hi = ds.index_of(drift["first"]), ds.index_of(drift["last"])
    h4 = ds.stream_index("H4")
    xbar, r = _xbar_r(ds.values)
    d4 = 2.004  # D4(6), Montgomery App. VI [printed]
    r_hits = np.flatnonzero(r > d4 * r.mean())
    in_drift = [i for i in r_hits if lo <= i <= hi]
    assert in_drift and all(int(np.argmax(ds.values[i])) == h4 for i in in_drift)
    # Western Electric same-side test: 8 successive X̄ above the centre line, inside the drift
    above = xbar > xbar.mean()
    assert any(above[i - 7:i + 1].all() for i in range(lo + 7, hi + 1))
    # With the other planted causes left out of the limits, an X̄ beyond the UCL inside the drift
    keep = np.ones(ds.m, bool)
    for c in PLANTED:
        if c["file"] == drift["file"] and c is not drift:
            keep[ds.index_of(c["first"]):ds.index_of(c["last"]) + 1] = False
    ucl = xbar[keep].mean() + 0.483 * r[keep].mean()
    assert (xbar[lo:hi + 1] > ucl).any()


def test_stable_caps_in_control():
    ds = load(DEMO / "stable_caps.csv")
    assert ds.values.shape == (100, 4)
    xbar, r = _xbar_r(ds.values)
    a2, d4 = 0.729, 2.282  # Montgomery App. VI, n = 4 [printed]
    assert (np.abs(xbar - xbar.mean()) < a2 * r.mean()).all() and (r < d4 * r.mean()).all()


def test_tank_ph_shift_beyond_individuals_limits():
    cause = next(c for c in PLANTED if c["file"] == "tank_ph.csv")
    ds = load(DEMO / cause["file"])
    lo = ds.index_of(cause["first"])
    x = ds.values[:, 0]
    before = x[:lo]
    mr = np.abs(np.diff(before)).mean()
    ucl = before.mean() + 3 * mr / 1.128  # d2(2) = 1.128, Montgomery App. VI [printed]
    lcl = before.mean() - 3 * mr / 1.128
    assert ((before < ucl) & (before > lcl)).all() and (x[lo:] > ucl).any()
    assert abs((x[lo:].mean() - before.mean()) - cause["magnitude"]) < 0.05


def test_closure_rejects_planted_rate_above_p_limits():
    cause = next(c for c in PLANTED if c["file"] == "closure_rejects.csv")
    ds = load(DEMO / cause["file"])
    j, lo, hi = ds.stream_index(cause["stream"]), ds.index_of(cause["first"]), ds.index_of(cause["last"])
    keep = np.ones(ds.m, bool)
    keep[lo:hi + 1] = False
    for s in range(ds.k):
        c, n = ds.counts[:, s], ds.sizes[:, s]
        mask = keep if s == j else np.ones(ds.m, bool)
        pbar = c[mask].sum() / n[mask].sum()
        above = c / n > pbar + 3 * np.sqrt(pbar * (1 - pbar) / n)  # p chart UCL [definition]
        assert not above[mask].any()
        if s == j:
            assert above[lo:hi + 1].all()
