"""Attacks on what the trail relies on (issue 10, items 3, 4 and 6), each reproduced and then detected.

Practices followed: a hash chain over canonical JSON where each record carries its predecessor's
SHA-256 [common practice] (FIPS 180-4 for SHA-256 [printed]); a data file that may only grow,
each judged prefix pinned by its size and SHA-256 [definition of the case format].
"""
from __future__ import annotations

import hashlib
import json

import pytest

from workbench.cli import main
from workbench.core.case.casefile import Case, backup_path, verify

# one subgroup of four readings a line; 20 in Phase I, 6 more appended and judged in Phase II
HEADER = "sg,A,B,C,D\n"


def line(i: int) -> str:
    return f"{i},{10 + (i % 5) * 0.1:.1f},{10 + (i % 3) * 0.2:.1f},{9.9 + (i % 4) * 0.1:.1f},{10.1 - (i % 2) * 0.2:.1f}\n"


def run(capsys, *argv) -> tuple[int, str, str]:
    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def judged(tmp_path, monkeypatch, capsys):
    """A frozen case whose 6 appended subgroups were judged (event 3: data-appended)."""
    monkeypatch.chdir(tmp_path)
    data = tmp_path / "line.csv"
    data.write_text(HEADER + "".join(line(i) for i in range(1, 21)), encoding="utf-8")
    assert run(capsys, "case", "new", "line.csv", "-o", "line.case.json")[0] == 0
    assert run(capsys, "case", "freeze", "line.case.json")[0] == 0
    with open(data, "a", encoding="utf-8") as fh:
        fh.write("".join(line(i) for i in range(21, 27)))
    assert run(capsys, "watch", "line.case.json", "--once")[0] in (0, 1)
    with Case.open("line.case.json", readonly=True) as case:
        assert [ev.kind for ev in case.events] == ["created", "freeze", "data-appended"]
        seen = case.events[2].payload
    # the recorded fingerprint is the SHA-256 of the file's first size_bytes bytes [definition]
    raw = data.read_bytes()
    assert seen["size_bytes"] == len(raw) and seen["sha256"] == hashlib.sha256(raw).hexdigest()
    assert verify("line.case.json").intact
    return tmp_path


@pytest.mark.parametrize("edit", ["delete", "rewrite"])
def test_judged_phase2_rows_deleted_or_rewritten_are_reported_with_their_event(judged, capsys, edit):
    data = judged / "line.csv"
    text = data.read_text(encoding="utf-8")
    if edit == "delete":  # drop the last two judged subgroups (before the fix: "intact")
        data.write_text(text[:text.index(line(25))], encoding="utf-8")
    else:  # change one judged reading, same length
        data.write_text(text.replace(line(23), line(23).replace("10.", "11.", 1)), encoding="utf-8")
    result = verify("line.case.json")
    assert not result.intact
    assert "judged at event 3" in result.problems[0] and ("deleted" in result.problems[0])
    code, out, _err = run(capsys, "verify", "line.case.json")
    assert code == 1 and "event 3" in out
    code, _out, err = run(capsys, "report", "line.case.json")
    assert code == 1 and "judged at event 3" in err
    with Case.open("line.case.json", author="bo") as case:  # opened read-only, saying why
        assert case.readonly and "event 3" in case.readonly_reason


def test_rows_appended_after_the_judged_ones_are_fine(judged):
    with open(judged / "line.csv", "a", encoding="utf-8") as fh:
        fh.write(line(27))
    result = verify("line.case.json")
    assert result.intact, result.problems


def test_the_creation_prefix_is_still_checked(judged):
    data = judged / "line.csv"
    data.write_text(data.read_text(encoding="utf-8").replace(line(2), line(2).replace(",", ";", 1)), encoding="utf-8")
    result = verify("line.case.json")
    assert not result.intact and "since the case was created" in result.problems[0]


# ---- anchors: a head hash kept elsewhere, and the .bak (item 4) -------------------------------

@pytest.fixture
def notes(tmp_path, monkeypatch, capsys):
    """A case with 4 events; ``old.json`` is a copy taken after event 2."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "line.csv").write_text(HEADER + "".join(line(i) for i in range(1, 21)), encoding="utf-8")
    assert run(capsys, "case", "new", "line.csv", "-o", "line.case.json")[0] == 0
    assert run(capsys, "case", "note", "line.case.json", "one")[0] == 0
    (tmp_path / "old.json").write_bytes((tmp_path / "line.case.json").read_bytes())
    assert run(capsys, "case", "note", "line.case.json", "two")[0] == 0
    assert run(capsys, "case", "note", "line.case.json", "three")[0] == 0
    return tmp_path


def head_of(path: str) -> str:
    with Case.open(path, readonly=True) as case:
        return case.state.head_hash


def test_expect_head_finds_the_anchor_and_counts_what_follows(notes, capsys):
    with Case.open("line.case.json", readonly=True) as case:
        second = case.events[1].hash
    code, out, _ = run(capsys, "verify", "line.case.json", "--no-recompute", "--expect-head", second[:12])
    assert code == 0 and "is event 2, still on the chain; 2 events follow it" in out
    code, _out, err = run(capsys, "verify", "line.case.json", "--expect-head", second[:11])  # too short
    assert code == 2 and "12 hex digits" in err


def test_a_truncated_or_rolled_back_trail_fails_the_expected_head(notes, capsys):
    kept = head_of("line.case.json")  # the head a reviewer quoted
    (notes / "line.case.json").write_bytes((notes / "old.json").read_bytes())  # an older copy put back
    code, out, _ = run(capsys, "verify", "line.case.json", "--no-recompute", "--expect-head", kept[:16])
    assert code == 1 and "not in the trail" in out


def test_a_bak_that_extends_the_chain_reports_a_rollback_and_is_never_overwritten(notes, capsys):
    (notes / "line.case.json").write_bytes((notes / "old.json").read_bytes())  # events 1-2; the .bak holds 1-3
    bak = backup_path(notes / "line.case.json")
    evidence = bak.read_bytes()
    result = verify("line.case.json", recompute=False)  # before the fix: intact
    assert not result.intact and "possible rollback" in result.problems[0] and "1 more" in result.problems[0]
    assert run(capsys, "verify", "line.case.json", "--no-recompute")[0] == 1
    code, _out, err = run(capsys, "case", "note", "line.case.json", "four")
    assert code == 2 and "possible rollback" in err and ".bak" in err and len(err.strip().splitlines()) == 1
    assert bak.read_bytes() == evidence  # the write path left the evidence alone
    code, _out, err = run(capsys, "case", "note", "line.case.json", "four", "--repair", "older copy put back")
    assert code == 0, err
    kept = [p for p in notes.iterdir() if p.name.startswith("line.case.json.bak.")]
    assert len(kept) == 1 and kept[0].read_bytes() == evidence  # set aside, not overwritten
    with Case.open("line.case.json", readonly=True) as case:
        assert [ev.kind for ev in case.events] == ["created", "note", "repair", "note"]
        assert "possible rollback" in case.events[2].payload["found"][0]
    result = verify("line.case.json", recompute=False)
    assert result.intact and any("repaired by" in r for r in result.remarks)


# ---- no laundering (item 6) -------------------------------------------------------------------

def test_a_reformatted_file_is_not_laundered_by_the_next_write(notes, capsys):
    path = notes / "line.case.json"
    path.write_text(json.dumps(json.loads(path.read_text(encoding="utf-8")), indent=2), encoding="utf-8")
    before = path.read_bytes()
    code, _out, err = run(capsys, "case", "note", "line.case.json", "after")
    assert code == 2 and "does not verify" in err and "not stored the way workbench writes it" in err
    assert path.read_bytes() == before  # before the fix the write re-rendered it and verify said intact
    code, _out, err = run(capsys, "case", "note", "line.case.json", "after", "--repair", "opened in an editor")
    assert code == 0, err
    result = verify("line.case.json", recompute=False)
    assert result.intact and any("opened in an editor" in r and "edited" in r for r in result.remarks)


def test_a_duplicate_key_holding_forged_text_is_flagged_and_blocks_writes(notes, capsys):
    path = notes / "line.case.json"
    raw = path.read_text(encoding="utf-8")
    forged = raw.replace('"text":"two"', '"text":"all fine, nothing found","text":"two"')
    assert forged != raw
    path.write_text(forged, encoding="utf-8")
    assert not verify("line.case.json", recompute=False).intact
    assert run(capsys, "case", "note", "line.case.json", "x")[0] == 2


def test_an_edited_event_stays_broken_after_a_repair_and_any_further_edit_breaks_again(notes, capsys):
    path = notes / "line.case.json"
    path.write_text(path.read_text(encoding="utf-8").replace('"text":"two"', '"text":"TWO"'), encoding="utf-8")
    code, _out, err = run(capsys, "case", "note", "line.case.json", "x")
    assert code == 2 and "event 3" in err
    code, _out, err = run(capsys, "case", "note", "line.case.json", "x", "--repair", "typo fixed by hand")
    assert code == 0, err
    with Case.open("line.case.json", readonly=True) as case:
        rep = case.events[4].payload
    assert rep["breaks"][0]["event"] == 3 and "event 3" in rep["found"][0]
    result = verify("line.case.json", recompute=False)
    assert result.intact and "typo fixed by hand" in " ".join(result.remarks)
    path.write_text(path.read_text(encoding="utf-8").replace('"text":"TWO"', '"text":"Two"'), encoding="utf-8")
    result = verify("line.case.json", recompute=False)
    assert not result.intact and "event 3" in result.problems[0]


# ---- exit codes a script can trust (item 8) ----------------------------------------------------

def test_report_exit_codes_follow_the_table(notes, capsys):
    assert run(capsys, "report", "line.case.json")[0] == 0
    path = notes / "line.case.json"
    good = path.read_bytes()
    path.write_text(good.decode().replace('"text":"two"', '"text":"TWO"'), encoding="utf-8")
    code, out, err = run(capsys, "report", "line.case.json")  # broken chain: was exit 0
    assert code == 1 and "NOT intact" in err and out
    doc = json.loads(good)
    doc["trail"][1], doc["trail"][2] = doc["trail"][2], doc["trail"][1]  # re-ordered trail: was exit 2
    path.write_text(json.dumps(doc), encoding="utf-8")
    code, _out, err = run(capsys, "report", "line.case.json")
    assert code == 1 and "NOT intact" in err
    assert run(capsys, "verify", "line.case.json")[0] == 1
    assert run(capsys, "case", "note", "line.case.json", "x")[0] == 2
    path.write_text("not json", encoding="utf-8")
    assert run(capsys, "report", "line.case.json")[0] == 2  # not a case file at all: bad input
