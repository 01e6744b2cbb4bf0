"""A break that a ``repair`` event recorded is accepted exactly as recorded, checked on the chain itself.

The rule (case/format.py ``chain_break``): a repair records the broken event's number, stored hash,
computed hash and link; the break is accepted only if all four match, so any further change to that
event breaks the chain again [definition: a hash chain commits to the content it links].  The CLI test
(test_case_attacks_trail.py) checks this through ``case note --repair``; here ``chain_break`` is called on
the file's JSON, so that a key built from the wrong parts fails here.
"""
from __future__ import annotations

import json

from workbench.core.case.casefile import Case
from workbench.core.case.format import chain_break
from workbench.core.model import LayoutRequest, Settings


def test_a_repaired_break_is_accepted_and_a_further_edit_is_not(tmp_path):
    """Kills, in ``chain_break`` and ``break_key``: the accepted breaks looked up with None or with the
    event number None (the repair is then never recognised), the computed hash of the key set to None or
    "", and the stored hash or link read from another field ("XXhashXX", "HASH", "XXprevXX", "PREV", None)."""
    data = tmp_path / "line.csv"
    data.write_text("reading\n" + "".join(f"{v}\n" for v in (10.1, 9.8, 10.3, 10.0, 9.7, 10.2)), encoding="utf-8")
    path = tmp_path / "line.case.json"
    with Case.create(data, LayoutRequest(), Settings(), author="ana", case_path=path) as case:
        case.note("one")
        case.note("two")
    text = path.read_text(encoding="utf-8")
    assert '"text":"two"' in text
    path.write_text(text.replace('"text":"two"', '"text":"TWO"'), encoding="utf-8")
    edited = json.loads(path.read_text(encoding="utf-8"))
    assert chain_break(edited)[0] == 3
    with Case.open(path, repair="typo fixed by hand") as case:
        assert case.events[-1].kind == "repair"
    repaired = json.loads(path.read_text(encoding="utf-8"))
    assert repaired["trail"][3]["payload"]["breaks"][0]["event"] == 3
    assert chain_break(repaired) is None                       # accepted: all four parts match
    again = json.loads(path.read_text(encoding="utf-8").replace('"text":"TWO"', '"text":"Two"'))
    assert chain_break(again)[0] == 3                         # any further edit breaks it again
