"""Phase II on a database: rows after the last key judged, read from a SQLite file made by the test and
from the real PostgreSQL server (``pg_server`` in tests/conftest.py), rows inserted between polls.

References: Phase II as in Montgomery, *Introduction to Statistical Quality Control*, ch. 5-6 — new
subgroups are judged against the frozen Phase I limits [definition]; the X̄ of a subgroup is the mean of
its readings [definition], computed here with numpy from the rows the test inserted.  The expected
signals are those of the full computation: ``analyse()`` of the whole table read afresh with the case's
frozen limits [definition] — what the incremental watch must reproduce.
"""
from __future__ import annotations

import hashlib
import json
import sqlite3
from pathlib import Path

import numpy as np
import pytest

from sources_common import PG_PASSWORD  # the test role's password: never written anywhere
from workbench.cli import main
from workbench.core.analysis import analyse
from workbench.core.case.casefile import Case
from workbench.core.case.integrity import verify
from workbench.core.data.reader import load
from workbench.core.model import Exclusion, WorkbenchError
from workbench.core.phase2.judge import Watch

HEADS = ("H1", "H2", "H3")
LAYOUT = ["--subgroup", "batch", "--stream", "head", "--value", "ml"]


class Plant:
    """A fill table in a database made by the test: id (the increasing key), batch, head, ml."""

    def __init__(self, execute, commit, param: str) -> None:
        self.execute, self.commit, self.param = execute, commit, param
        self.next_id, self.readings = 1, {}
        self.rng = np.random.default_rng(7)

    def add(self, batches, shift: float = 0.0, heads=HEADS) -> None:
        p = self.param
        for b in batches:
            for h in heads:
                v = float(np.round(10.0 + shift + self.rng.normal(0, 0.5), 3))
                self.execute(f"INSERT INTO fill VALUES ({p}, {p}, {p}, {p})", (self.next_id, f"B{b:03d}", h, v))
                self.readings.setdefault(f"B{b:03d}", []).append(v)
                self.next_id += 1
        self.commit()


@pytest.fixture
def sqlite_plant(tmp_path):
    db = tmp_path / "plant.db"
    con = sqlite3.connect(db)
    con.execute("CREATE TABLE fill (id INTEGER, batch TEXT, head TEXT, ml REAL)")
    plant = Plant(con.execute, con.commit, "?")
    plant.url = f"sqlite:///{db}"
    yield plant
    con.close()


def make_case(tmp_path: Path, plant: Plant, key: list[str] = ("--key", "id")) -> str:
    plant.add(range(1, 26))
    case = str(tmp_path / "fill.case.json")
    assert main(["case", "new", plant.url, "--table", "fill", *key, *LAYOUT, "-o", case]) == 0
    assert main(["case", "freeze", case, "--force", "--reason", "test: Phase I as it stands"]) == 0
    return case


def full(case: str):
    """The whole table read afresh with the case's state: the reference the watch must equal."""
    with Case.open(case, readonly=True) as c:
        src = c.data.source
        import dataclasses
        ds = load(dataclasses.replace(src, key="id"), c.data.request)
        return analyse(ds, c.state.settings, c.state.exclusions, c.state.frozen)


def keys_from(analysis, start: int) -> set[str]:
    return {s.key for s in analysis.signals if s.last >= start}


def test_sqlite_rows_after_the_last_key_are_judged(tmp_path, sqlite_plant):
    plant = sqlite_plant
    case = make_case(tmp_path, plant)
    with Case.open(case) as c:
        w = Watch.start(c)
        assert w.catch_up().positions == range(25, 25)
        plant.add(range(26, 30), shift=2.5)           # four batches far above the centre
        j = w.poll()
        assert j.positions == range(25, 29) and j.update.rows == 12
        xbar = w.analysis.chart_named("xbar")
        for i, label in enumerate(["B026", "B027", "B028", "B029"]):
            assert xbar.values[25 + i] == pytest.approx(np.mean(plant.readings[label]), abs=1e-12)
        assert w.record(j) == "trail"
        plant.add([30], heads=("H1", "H2"))          # a batch half inserted: held back until complete
        j = w.poll()
        assert j.positions == range(29, 29) and j.update.open_subgroup == "B030"
        plant.add([30], heads=("H3",))
        plant.add([31])
        j = w.poll()
        assert [str(w.dataset.labels[p]) for p in j.positions] == ["B030", "B031"]
        w.record(j)
        ref = full(case)
        assert w.analysis.dataset.m == ref.dataset.m == 31
        assert keys_from(w.analysis, 25) == keys_from(ref, 25) != set()
        for mine, theirs in zip(w.analysis.charts, ref.charts):
            np.testing.assert_allclose(mine.values, theirs.values, rtol=0, atol=1e-12)
        np.testing.assert_array_equal(w.dataset.labels, ref.dataset.labels)
    # What Phase II consumed is in the trail: the key, the last key, the rows and their fingerprint.
    doc = json.loads(Path(case).read_text(encoding="utf-8"))
    seen = [e["payload"] for e in doc["trail"] if e["kind"] == "data-appended"]
    assert seen[-1]["key"] == "id" and seen[-1]["last_key"] == plant.next_id - 1 and seen[-1]["rows"] == 93
    # The documented canonical form, written out here: names, then one JSON array a row (floats by repr).
    con = sqlite3.connect(plant.url.removeprefix("sqlite:///"))
    text = '["id","batch","head","ml"]\n' + "".join(
        json.dumps([i, b, h, repr(v)], separators=(",", ":")) + "\n"
        for i, b, h, v in con.execute("SELECT id, batch, head, ml FROM fill ORDER BY id"))
    con.close()
    assert seen[-1]["sha256"] == hashlib.sha256(text.encode()).hexdigest()
    assert seen[-1]["size_bytes"] == len(text.encode())
    # A later watch starts where this one ended: nothing is judged twice.
    with Case.open(case) as c:
        w = Watch.start(c)
        assert w.catch_up().positions == range(31, 31)
    assert verify(case).intact


def test_sqlite_verify_recomputes_limits_on_the_rows_judged(tmp_path, sqlite_plant):
    # An exclusion recorded in Phase II was computed on the rows read then; verify reads the first rows
    # of that size again (in key order) though the table has grown since.
    plant = sqlite_plant
    case = make_case(tmp_path, plant)
    with Case.open(case) as c:
        w = Watch.start(c)
        plant.add(range(26, 29), shift=3.0)
        w.record(w.poll())
        c.record_exclusion(w.dataset, Exclusion("B027"), "test: cap loose")
    plant.add(range(29, 33))
    v = verify(case)
    assert v.intact, v.problems
    # 3 batches of 3 readings judged, 4 batches inserted after: 21 rows more, 9 judged, 12 new
    assert any("has 21 rows more than when the case was created (the first 75 unchanged): 9 of them judged in "
               "Phase II and unchanged; 12 new, Phase II material" in r for r in v.remarks), v.remarks


def test_sqlite_key_going_backwards_stops_the_watch(tmp_path, sqlite_plant):
    plant = sqlite_plant
    case = make_case(tmp_path, plant)
    with Case.open(case) as c:
        w = Watch.start(c)
        plant.add([26])
        assert w.poll().positions == range(25, 26)
        plant.next_id = 5                               # a row behind the last key read: WHERE id > last misses it
        plant.add([27], heads=("H1",))
        j = w.poll()
        assert not j.ok and j.status == "rewritten"
        assert "goes backwards" in j.message and "\n" not in j.message


def test_sqlite_repeated_key_is_one_line_naming_row_and_column(tmp_path, sqlite_plant):
    plant = sqlite_plant
    case = make_case(tmp_path, plant)
    with Case.open(case) as c:
        w = Watch.start(c)
        plant.add([26], heads=("H1",))
        plant.next_id -= 1                              # the next row repeats id 76
        plant.add([26], heads=("H2",))
        with pytest.raises(WorkbenchError) as e:
            w.poll()
    msg = str(e.value)
    # record 77 in key order (75 rows read before, this poll's second row); nothing of the poll was taken
    assert msg.startswith("sqlite:///plant.db table fill:77:id: key 76 is not greater than the key before it (76)")
    assert "\n" not in msg


def test_key_not_increasing_in_phase_one_is_refused(tmp_path, sqlite_plant):
    # A key that does not order the rows as they were read (here: a column that goes down) is refused.
    plant = sqlite_plant
    case = make_case(tmp_path, plant, key=[])
    plant.execute("ALTER TABLE fill ADD COLUMN countdown INTEGER")
    plant.execute("UPDATE fill SET countdown = 1000 - id")
    plant.commit()
    with Case.open(case) as c:
        with pytest.raises(WorkbenchError, match="differ from those read at event 1"):
            Watch.start(c, "countdown")        # read in countdown order, the rows are not those of the creation
        with pytest.raises(WorkbenchError, match="give --key COLUMN"):
            Watch.start(c)


def run(args: list[str]) -> int:
    try:
        return main(args)
    except SystemExit as e:
        return int(e.code)


def test_cli_watch_once_with_key(tmp_path, sqlite_plant, capsys):
    # A case made without --key: ``watch --key`` names it; the key is recorded and used from then on.
    plant = sqlite_plant
    case = make_case(tmp_path, plant, key=[])
    plant.add(range(26, 30), shift=3.0)
    assert run(["watch", case, "--once"]) == 2
    assert "give --key COLUMN" in capsys.readouterr().err
    assert main(["watch", case, "--once", "--key", "id"]) == 1      # new signals
    out = capsys.readouterr()
    assert "by key id" in out.err and "beyond-limits" in out.out
    assert run(["watch", case, "--once", "--key", "batch"]) == 2
    assert "followed by key 'id'" in capsys.readouterr().err
    plant.add([30])
    assert main(["watch", case, "--once"]) in (0, 1)                  # the recorded key is used
    assert verify(case).intact


def test_postgres_rows_inserted_between_polls(tmp_path, pg_server, monkeypatch):
    monkeypatch.setenv("WORKBENCH_DB_PASSWORD", PG_PASSWORD)  # the case never holds it: each look reads it here
    with pg_server.connect("plant") as conn:
        conn.execute("SET ROLE engineer")
        conn.execute("DROP TABLE IF EXISTS fill")
        conn.execute("CREATE TABLE fill (id bigint, batch text, head text, ml double precision)")
        plant = Plant(lambda q, p=(): conn.execute(q, p), conn.commit, "%s")
        plant.url = pg_server.url("engineer", PG_PASSWORD, "plant")
        case = make_case(tmp_path, plant)
        with Case.open(case) as c:
            w = Watch.start(c)
            plant.add(range(26, 29), shift=3.0)
            j = w.poll()
            assert j.positions == range(25, 28)
            w.record(j)
            plant.add(range(29, 31))
            j = w.poll()
            assert j.positions == range(28, 30)
            w.record(j)
            ref = full(case)
            assert keys_from(w.analysis, 25) == keys_from(ref, 25) != set()
            for i in range(25, 30):
                label = str(w.dataset.labels[i])
                assert w.analysis.chart_named("xbar").values[i] == pytest.approx(np.mean(plant.readings[label]),
                                                                                 abs=1e-12)
        assert verify(case).intact
        text = Path(case).read_text(encoding="utf-8")
        assert PG_PASSWORD not in text
