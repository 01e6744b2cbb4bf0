"""Input edges found while attacking the case file (issue 10, item 9): each one reproduced.

Practices followed: a cell is reported as the user typed it, with file:row:column [common practice
for data-entry errors]; a formula cell's value is the one the spreadsheet program saved (Office Open
XML, ECMA-376 part 1, §18.3.1.4 ``c`` with ``f`` and ``v`` children [printed]); archive readers cap
the unpacked size or the ratio before inflating (the usual zip-bomb guard [common practice]).
"""
from __future__ import annotations

import io
import os
import signal
import subprocess
import sys
import zipfile

import openpyxl
import pytest

from workbench.cli import main
from workbench.core.data import sniff
from workbench.core.data.reader import load
from workbench.core.model import WorkbenchError


def run(capsys, *argv) -> tuple[int, str, str]:
    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


def test_a_formula_cell_without_a_saved_value_is_reported_with_count_and_first_cell(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["reading"])
    for i in range(20):
        ws.append([10 + i % 3 * 0.1])
    ws["A5"] = "=A2+A3"  # openpyxl stores the formula and no value, as a script would
    ws["A9"] = "=A2*2"
    wb.save(tmp_path / "f.xlsx")
    with pytest.raises(WorkbenchError) as e:  # before the fix: 19 subgroups, one silently missing
        load(tmp_path / "f.xlsx")
    assert str(e.value).startswith(f"{tmp_path / 'f.xlsx'}:5:A: 2 formula cells without a saved value")


def test_missing_cells_are_counted_in_the_text_and_markdown_reports(tmp_path, capsys):
    rows = "".join(f"{i},1.{i % 7},2.{i % 5}\n" for i in range(5, 30))
    (tmp_path / "m.csv").write_text("sg,A,B\n1,1.0,2.0\n2,,2.1\n3,1.2,2.2\n4,1.1,\n" + rows, encoding="utf-8")
    code, out, _ = run(capsys, "report", str(tmp_path / "m.csv"))
    assert code == 0 and "cells     2 missing" in out  # two empty cells in the file [definition]
    code, out, _ = run(capsys, "report", str(tmp_path / "m.csv"), "--format", "markdown")
    assert code == 0 and "| missing cells | 2 |" in out


def test_a_header_longer_than_the_sniff_sample_is_read_whole(tmp_path):
    n = sniff.SNIFF_BYTES * 5 // 30 + 10  # the header line alone is longer than the sample
    names = [f"column_with_a_long_name_{i:06d}" for i in range(n)]
    body = "".join(f"{r}," + ",".join(f"{1 + (r + j) % 3 * 0.1:.1f}" for j in range(n)) + "\n" for r in range(1, 4))
    path = tmp_path / "long.csv"
    path.write_text("sg," + ",".join(names) + "\n" + body, encoding="utf-8")
    assert len(path.read_text().splitlines()[0]) > sniff.SNIFF_BYTES * 4
    table = sniff.read_table(path)  # before the fix: "row has N fields, the header has fewer"
    assert list(table.frame.columns) == ["sg"] + names


def test_an_overflowing_number_is_quoted_as_typed(tmp_path):
    (tmp_path / "o.csv").write_text("reading\n1.0\n1e309\n2.0\n", encoding="utf-8")
    with pytest.raises(WorkbenchError) as e:
        load(tmp_path / "o.csv")
    assert str(e.value) == f"{tmp_path / 'o.csv'}:3:reading: not a number: '1e309'"  # was 'inf'


def test_a_workbook_that_unpacks_past_the_cap_is_refused_before_reading(tmp_path, monkeypatch):
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("[Content_Types].xml", "<Types/>")
        z.writestr("xl/worksheets/sheet1.xml", b" " * (16 << 20))  # 16 MiB of blanks, packs to ~16 KiB: ratio > 200
    (tmp_path / "bomb.xlsx").write_bytes(buf.getvalue())
    with pytest.raises(WorkbenchError, match="unpacks to 16 MiB"):
        load(tmp_path / "bomb.xlsx")


DISK_FULL = r"""
import resource, signal, sys
signal.signal(signal.SIGXFSZ, signal.SIG_IGN)            # a write past the limit fails with EFBIG
resource.setrlimit(resource.RLIMIT_FSIZE, (600, 600))     # room for the lock, not for the case
from workbench.cli import main
sys.exit(main(["case", "new", sys.argv[1], "-o", sys.argv[2]]))
"""


@pytest.mark.skipif(not hasattr(signal, "SIGXFSZ"), reason="needs POSIX file-size limits")
def test_a_failed_case_write_names_the_file_and_leaves_no_lock_or_temporary_file(tmp_path):
    data = tmp_path / "line.csv"
    data.write_text("reading\n" + "".join(f"{10 + i % 3 * 0.1:.1f}\n" for i in range(30)), encoding="utf-8")
    case = tmp_path / "casefiles" / "line.case.json"
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    r = subprocess.run([sys.executable, "-c", DISK_FULL, str(data), str(case)], capture_output=True, text=True,
                       env=env)
    assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1, r.stderr
    assert str(case) in r.stderr and "cannot write" in r.stderr
    assert sorted(os.listdir(case.parent)) == []  # no case, no empty .lock, no temporary file
