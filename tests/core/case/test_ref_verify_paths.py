"""``verify`` on each of its paths, called directly: an expected head on and off the chain and behind a
break, a signers file with no sign-off, a broken chain asked to recompute, a trail that does not replay.

Written against the survivors of the case tests (tests/MUTATION.md): these paths were exercised only by
the CLI and attack tests outside the fast selection.  The expectations are the function's contract
(README "verify"): every problem named, the first one on the head line, nothing written.
"""
from __future__ import annotations

import json

import pytest

from workbench.core.case.casefile import Case, verify
from workbench.core.model import LayoutRequest, Settings


@pytest.fixture
def case(tmp_path):
    data = tmp_path / "line.csv"
    data.write_text("reading\n" + "".join(f"{v}\n" for v in (10.1, 9.8, 10.3, 10.0, 9.7, 10.2, 9.9, 10.4)),
                    encoding="utf-8")
    path = tmp_path / "line.case.json"
    with Case.create(data, LayoutRequest(), Settings(), author="ana", case_path=path) as c:
        c.note("one")
        c.note("two")
    return path


def hashes(path):
    return [ev["hash"] for ev in json.loads(path.read_text(encoding="utf-8"))["trail"]]


def test_an_expected_head_on_the_chain_is_a_remark_and_off_it_a_problem(case):
    """Kills the head check's arguments dropped or None, its words dropped, and the remark / problem
    choice forced either way."""
    h = hashes(case)
    good = verify(case, recompute=False, expect_head=h[1][:16])
    assert good.intact and good.path == str(case) and good.events == 3 and good.head_hash == h[-1]
    assert any(r.startswith(f"the expected head {h[1][:16]} is event 2, still on the chain; 1 event follows")
               for r in good.remarks)
    bad = verify(case, recompute=False, expect_head="0123456789abcdef")
    assert not bad.intact and bad.problems[0].startswith("the expected head 0123456789abcdef is not in the trail")


def test_an_expected_head_behind_a_break_is_a_problem(case):
    """The head is event 3 but the chain breaks at event 2: a problem, not a remark.  Kills the break not
    passed to the head check (None or dropped)."""
    h = hashes(case)
    case.write_text(case.read_text(encoding="utf-8").replace('"text":"one"', '"text":"ONE"'), encoding="utf-8")
    result = verify(case, recompute=False, expect_head=h[2][:16])
    assert not result.intact
    assert f"the expected head {h[2][:16]} is event 3, but the chain breaks before it at event 2" in result.problems


def test_a_signers_file_without_a_sign_off_is_a_problem(case, tmp_path):
    """Kills the sign-off test inverted or renamed and the words of the problem altered or None."""
    signers = tmp_path / "allowed_signers"
    signers.write_text("", encoding="utf-8")
    result = verify(case, recompute=False, signers=signers)
    assert not result.intact
    assert result.problems == ("the trail holds no sign-off to check against the signers file",)
    assert verify(case, recompute=False).intact


def test_a_broken_chain_asked_to_recompute_says_it_could_not(case):
    """A broken chain is not recomputed; verify says the limits were only compared along the trail.
    Kills the remark dropped, set to None or its words altered, and the data status dropped."""
    case.write_text(case.read_text(encoding="utf-8").replace('"text":"two"', '"text":"TWO"'), encoding="utf-8")
    result = verify(case, recompute=True)
    assert not result.intact and result.problems[0].startswith("the chain breaks at event 3")
    assert ("the recorded limits were only compared along the trail, not recomputed (the chain or the data do "
            "not allow it)") in result.remarks
    assert result.data is not None and result.path == str(case)


def test_a_trail_that_does_not_replay_is_reported_with_its_break_and_the_reason(case):
    """An event whose kind is unknown: the chain breaks there and the trail cannot be replayed; verify
    reports both, counts the events and names the file.  Kills, on that path: the break looked up or
    reported with the wrong parts, the problem list or its items set to None, and the fields of the
    result (path, intact, events, problems) set to None."""
    doc = json.loads(case.read_text(encoding="utf-8"))
    doc["trail"][2]["kind"] = "no-such-kind"
    case.write_text(json.dumps(doc), encoding="utf-8")
    result = verify(case, recompute=False, expect_head="0123456789abcdef")
    assert result.path == str(case) and result.intact is False and result.events == 3
    assert result.chain_break is not None and result.chain_break[0] == 3
    assert result.problems[0] == f"the chain breaks at event 3: {result.chain_break[1]}"
    assert result.problems[1] == ("the expected head 0123456789abcdef could not be looked for: the trail does "
                                  "not replay")
    assert len(result.problems) == 3 and result.problems[2] and "None" not in result.problems[2]
