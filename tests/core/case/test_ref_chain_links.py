"""The hash chain's link to the previous event, checked on its own.

Each event stores ``prev``, the hash of the event before it [definition: a hash chain — every
link commits to its predecessor, so an event taken from another chain, or two events swapped,
break the chain even though each event's own hash is valid].  The README promises this check.
"""
from __future__ import annotations

import pytest

from workbench.core.case.casefile import Case, verify
from workbench.core.model import LayoutRequest, Settings


@pytest.fixture
def data(tmp_path):
    path = tmp_path / "data" / "line.csv"
    path.parent.mkdir(parents=True)
    path.write_text("reading\n" + "".join(f"{v}\n" for v in (10.1, 9.8, 10.3, 10.0, 9.7, 10.2, 9.9, 10.4)),
                    encoding="utf-8")
    return path


def make_case(path, data, author, notes):
    with Case.create(data, LayoutRequest(), Settings(), author=author, case_path=path) as case:
        for text in notes:
            case.note(text)
    return path


def event_lines(path):
    lines = path.read_text(encoding="utf-8").split("\n")
    return lines, [i for i, line in enumerate(lines) if line.startswith("  {")]


def test_an_event_spliced_in_from_another_case_breaks_the_chain_at_its_place(tmp_path, data):
    """Mutation killed: the ``prev`` comparison removed from the chain check (case/format.py
    chain_break); without it the spliced file verifies as intact and the rest of the suite passes."""
    ours = make_case(tmp_path / "ours.case.json", data, "ana", ["first look", "second look"])
    theirs = make_case(tmp_path / "theirs.case.json", data, "ben", ["first look", "second look"])
    assert verify(ours).intact and verify(theirs).intact
    lines, idx = event_lines(ours)
    other, other_idx = event_lines(theirs)
    # event 2 of the other case: the same number, a valid hash of its own, a note that applies anywhere,
    # stored exactly as workbench writes it; only its prev names the other case's event 1
    assert lines[idx[1]] != other[other_idx[1]]
    lines[idx[1]] = other[other_idx[1]]
    spliced = tmp_path / "spliced.case.json"
    spliced.write_text("\n".join(lines), encoding="utf-8")
    result = verify(spliced)
    assert not result.intact
    assert result.chain_break is not None and result.chain_break[0] == 2
    assert result.problems[0].startswith("the chain breaks at event 2")


def test_two_events_swapped_break_the_chain_where_the_order_changes(tmp_path, data):
    """Mutation killed: the ``prev`` comparison removed from the chain check; a swapped pair is then
    still refused (by the event numbers) but no chain break is reported at event 3."""
    path = make_case(tmp_path / "ours.case.json", data, "ana", ["a", "b", "c"])
    lines, idx = event_lines(path)
    assert len(idx) == 4
    # swap events 3 and 4, keeping the separators (every event line but the last ends in a comma)
    third, fourth = lines[idx[2]].rstrip(","), lines[idx[3]].rstrip(",")
    lines[idx[2]], lines[idx[3]] = fourth + ",", third
    path.write_text("\n".join(lines), encoding="utf-8")
    result = verify(path, recompute=False)
    assert not result.intact
    assert result.chain_break is not None and result.chain_break[0] == 3
