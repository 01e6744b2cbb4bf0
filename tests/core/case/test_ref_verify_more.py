"""``verify``: problems found before the recomputation are kept, a trail that does not replay although its
chain is whole, a file that is not JSON, a rolled-back file beside a longer ``.bak``, a reformatted file.

Written against the survivors of test_ref_verify_paths.py (tests/MUTATION.md).  The expectations are the
function's contract (README "verify": every problem named, none dropped) and the hash chain's definition
(each event's hash covers its content and the previous hash).
"""
from __future__ import annotations

import json
import re

import pytest

from workbench.core.case.anchors import backup_path
from workbench.core.case.casefile import Case, verify
from workbench.core.case.format import event_hash
from workbench.core.model import LayoutRequest, Settings, WorkbenchError


def make(tmp_path, notes):
    data = tmp_path / "line.csv"
    data.write_text("reading\n" + "".join(f"{v}\n" for v in (10.1, 9.8, 10.3, 10.0, 9.7, 10.2, 9.9, 10.4)),
                    encoding="utf-8")
    path = tmp_path / "line.case.json"
    versions = []
    with Case.create(data, LayoutRequest(), Settings(), author="ana", case_path=path) as c:
        versions.append(path.read_text(encoding="utf-8"))
        for text in notes:
            c.note(text)
            versions.append(path.read_text(encoding="utf-8"))
    return path, versions


def test_a_problem_found_before_the_recomputation_is_kept(tmp_path):
    """An expected head that is not in the trail, with the limits recomputed: still not intact.  Kills the
    recomputation's problems replacing the list (``problems = …``) instead of extending it."""
    path, _ = make(tmp_path, ["one"])
    result = verify(path, recompute=True, expect_head="0123456789abcdef")
    assert not result.intact and result.problems[0].startswith("the expected head 0123456789abcdef is not in")


def test_a_whole_chain_whose_trail_does_not_replay(tmp_path):
    """An event of an unknown kind with its hashes made consistent (a forged but whole chain): no chain
    break, and the replay's reason is the problem.  Kills the break words built when there is no break
    (``if broken or True``)."""
    path, _ = make(tmp_path, ["one", "two"])
    doc = json.loads(path.read_text(encoding="utf-8"))
    trail = doc["trail"]
    trail[1]["kind"] = "no-such-kind"
    trail[1]["hash"] = event_hash(trail[1])
    trail[2]["prev"] = trail[1]["hash"]
    trail[2]["hash"] = event_hash(trail[2])
    path.write_text(json.dumps(doc), encoding="utf-8")
    result = verify(path, recompute=False)
    assert result.chain_break is None and not result.intact and len(result.problems) == 1


def test_a_file_that_is_not_json_names_the_file(tmp_path):
    """Bad input names the file (README "Bad input").  Kills the source given to the JSON reader as None
    or "None"."""
    path = tmp_path / "broken.case.json"
    path.write_text("{not json", encoding="utf-8")
    with pytest.raises(WorkbenchError, match="^" + re.escape(str(path))):
        verify(path)


def test_a_file_rolled_back_beside_a_longer_bak_is_a_problem(tmp_path):
    """The file holds events 1–2 while the ``.bak`` beside it holds 1–3: a possible rollback.  Kills the
    ``.bak`` finding dropped."""
    path, versions = make(tmp_path, ["one", "two"])
    backup_path(path).write_text(versions[2], encoding="utf-8")
    path.write_text(versions[1], encoding="utf-8")
    result = verify(path, recompute=False)
    assert not result.intact and "possible rollback" in result.problems[0]


def test_a_reformatted_file_is_named_as_edited(tmp_path):
    """The same values written with other whitespace: the text differs from what workbench writes.  Kills
    that problem appended as None."""
    path, _ = make(tmp_path, ["one"])
    path.write_text(json.dumps(json.loads(path.read_text(encoding="utf-8")), indent=2), encoding="utf-8")
    result = verify(path, recompute=False)
    assert not result.intact and "not stored the way workbench writes it" in result.problems[0]
