"""Database sources from the command line: case files record the URL without its password."""
from __future__ import annotations

import json
from pathlib import Path

import pytest

from sources_common import PG_PASSWORD
from workbench.cli import main


def _run(capsys, *argv) -> tuple[int, str]:
    try:
        rc = main([str(a) for a in argv])
    except SystemExit as exc:
        rc = exc.code
    out = capsys.readouterr()
    return rc, out.out + out.err


def test_postgres_case_never_holds_or_prints_the_password(pg_demo, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    # Actions on the case read the rows again: the password comes from the environment (never the case file).
    monkeypatch.setenv("WORKBENCH_DB_PASSWORD", PG_PASSWORD)
    case = tmp_path / "casefiles" / "filler.case.json"
    outputs = []
    for argv in (["report", pg_demo, "--table", "filler"],
                 ["report", pg_demo, "--table", "filler", "--format", "json"],
                 ["case", "new", pg_demo, "--table", "filler"],
                 ["case", "exclude", case, "2026-03-03 15:30", "--reason", "digit slip"],
                 ["case", "show", case],
                 ["verify", case],
                 ["report", case, "--format", "markdown"],
                 ["report", case, "--format", "json"],
                 ["report", pg_demo.replace(PG_PASSWORD, "not-" + PG_PASSWORD), "--table", "filler"]):
        rc, text = _run(capsys, *argv)
        outputs.append(text)
        assert rc == (2 if "not-" in " ".join(map(str, argv)) else 0), text
    assert "intact" in outputs[5] and "excluded subgroup 2026-03-03 15:30" in outputs[3]
    files = [p for p in tmp_path.rglob("*") if p.is_file()]
    assert case in files
    for text in outputs + [p.read_bytes().decode("utf-8", "replace") for p in files]:
        assert PG_PASSWORD not in text
    data = json.loads(case.read_text())["data"]
    assert data["source"] == {"kind": "sql", "url": data["path"], "table": "filler"}
    assert data["path"].startswith("postgresql://engineer@/plant?host=")
    # Without a password from somewhere, the case opens read-only and says why.
    monkeypatch.delenv("WORKBENCH_DB_PASSWORD")
    rc, text = _run(capsys, "verify", case)
    assert rc == 1 and "no password supplied" in text and PG_PASSWORD not in text


def test_verify_notices_a_changed_row(pg_demo, pg_server, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    with pg_server.connect("plant") as conn:
        conn.execute("SET ROLE engineer")
        conn.execute("CREATE TABLE filler_copy AS SELECT * FROM filler ORDER BY time")
    assert _run(capsys, "case", "new", pg_demo, "--table", "filler_copy", "--order", "time")[0] == 0
    monkeypatch.setenv("WORKBENCH_DB_PASSWORD", PG_PASSWORD)
    case = Path("casefiles/filler_copy.case.json")
    assert _run(capsys, "verify", case)[0] == 0
    with pg_server.connect("plant") as conn:
        conn.execute("SET ROLE engineer")
        conn.execute("UPDATE filler_copy SET \"H3\" = \"H3\" + 0.1 WHERE time = '2026-03-02 09:00'")
    rc, text = _run(capsys, "verify", case)
    assert rc == 1 and "have changed since the case was created" in text


def test_sqlite_case_follows_the_case_folder(tmp_path, monkeypatch, capsys):
    import sqlite3
    db = tmp_path / "data" / "line.db"
    db.parent.mkdir()
    con = sqlite3.connect(db)
    con.execute("CREATE TABLE ph (date TEXT PRIMARY KEY, ph REAL)")
    con.executemany("INSERT INTO ph VALUES (?, ?)", [(f"2026-01-{d:02d}", 7.0 + (d % 5) / 10) for d in range(1, 25)])
    con.commit()
    con.close()
    monkeypatch.chdir(tmp_path / "data")
    assert _run(capsys, "case", "new", "sqlite:///line.db", "--table", "ph", "-o", tmp_path / "c" / "ph.case.json")[0] == 0
    ref = json.loads((tmp_path / "c" / "ph.case.json").read_text())["data"]
    assert ref["path"] == "sqlite:///../data/line.db"  # relative to the case file, like a data file
    monkeypatch.chdir(tmp_path)
    rc, text = _run(capsys, "verify", "c/ph.case.json")
    assert rc == 0 and "intact" in text


def test_table_and_query_need_a_url(tmp_path, capsys):
    rc, text = _run(capsys, "report", tmp_path / "x.csv", "--table", "t")
    assert rc == 2 and "need a database URL" in text and text.count("\n") == 1
