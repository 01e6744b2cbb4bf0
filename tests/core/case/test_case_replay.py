"""The trail and its replay (pure: no files)."""
from __future__ import annotations

import hashlib

import pytest
from hypothesis import given, settings as hsettings, strategies as st

from workbench.core.case import events as C
from workbench.core.case.format import canonical_json, event_hash, parse, render, seal, sha256
from workbench.core.case.integrity import limits_gaps, snapshot_difference
from workbench.core.model import Exclusion, FrozenLimits, Settings, WorkbenchError

LABELS = [str(i) for i in range(1, 9)]
STREAMS = ["h1", "h2"]
DATA = {"path": "d.csv", "sha256": "a" * 64, "rows": 8, "size_bytes": 100,
        "layout": {"kind": "wide", "streams": STREAMS, "detected": True}, "request": {}}


def created(settings: Settings = Settings()) -> C.Event:
    payload = {"settings": settings.as_dict(), "causes": list(C.DEFAULT_CAUSES),
               "data_ref": sha256(canonical_json(DATA))}
    return seal({"seq": 1, "time": "2024-05-01T08:00:00.000Z", "author": "ana", "kind": "created",
                 "payload": payload}, None)


def append(events: list[C.Event], kind: str, payload: dict, author: str = "ana", **extra) -> C.Event:
    ev = seal({"seq": len(events) + 1, "time": "2024-05-01T08:00:01.000Z", "author": author, "kind": kind,
               "payload": payload, **extra}, events[-1].hash)
    events.append(ev)
    return ev


# ---- hashing and the canonical form ---------------------------------------------------------

def test_sha256_matches_the_published_test_vector():
    # FIPS 180-2, Appendix B.1: SHA-256("abc") [printed]
    assert sha256(b"abc") == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"


def test_canonical_json_sorts_keys_drops_whitespace_and_keeps_utf8():
    # the definition of the canonical form: sorted keys, no whitespace, UTF-8 [definition]
    assert canonical_json({"b": 1, "a": [1.5, "é"], "c": None}) == '{"a":[1.5,"é"],"b":1,"c":null}'.encode("utf-8")


def test_event_hash_covers_everything_but_its_own_hash_field():
    ev = created().as_dict()
    body = {k: v for k, v in ev.items() if k != "hash"}
    # [definition] SHA-256 of the canonical JSON without the hash field
    assert ev["hash"] == hashlib.sha256(canonical_json(body)).hexdigest()
    assert event_hash({**ev, "hash": "0" * 64}) == ev["hash"]
    assert event_hash({**ev, "author": "bo"}) != ev["hash"]


# ---- replay -------------------------------------------------------------------------------

def test_replay_builds_the_state_from_the_events():
    events = [created()]
    append(events, "exclude", {"subgroup": "3", "stream": None, "reason": "tool broke", "cause": "machine",
                               "signal": "xbar/beyond-limits/3"})
    append(events, "exclude", {"subgroup": "5", "stream": "h2", "reason": "typo", "cause": None, "signal": None},
           author="bo")
    append(events, "note", {"on": "subgroup", "target": "5", "text": "checked the log"})
    append(events, "signal", {"key": "xbar/zone-a/6", "state": "explained", "note": "new batch"})
    append(events, "causes", {"causes": ["machine", "tooling"]})
    frozen = FrozenLimits("xbar-r", 10.0, 1.0, 8, {"xbar": {"center": 10.0, "lcl": 8.0, "ucl": 12.0}})
    append(events, "freeze", {"frozen": frozen.as_dict()})
    s = C.replay(events)
    assert s.exclusions == (Exclusion("3"), Exclusion("5", "h2"))
    assert s.exclusion_info["5:h2"].author == "bo" and s.exclusion_info["3"].cause == "machine"
    assert s.notes[0].kind == "subgroup" and s.notes[0].target == "5" and s.notes[0].seq == 4
    assert s.signal_state("xbar/beyond-limits/3") == "excluded"
    assert s.signal_state("xbar/zone-a/6") == "explained"
    assert s.signal_state("xbar/zone-b/7") == "open"
    assert s.causes == ("machine", "tooling")
    assert s.frozen == frozen
    assert s.head_hash == events[-1].hash and s.seq == 7
    # restoring removes the exclusion and the signal it answered reopens
    append(events, "restore", {"subgroup": "3", "stream": None, "reason": "not the tool after all"})
    s2 = C.replay(events)
    assert s2.exclusions == (Exclusion("5", "h2"),)
    assert s2.signal_state("xbar/beyond-limits/3") == "open"


@pytest.mark.parametrize("kind, payload, words", [
    ("restore", {"subgroup": "4", "stream": None, "reason": "x"}, "not excluded"),
    ("exclude", {"subgroup": "4", "stream": None, "reason": "  ", "cause": None, "signal": None}, "reason"),
    ("exclude", {"subgroup": "4", "stream": None, "reason": "x", "cause": "weather", "signal": None}, "cause"),
    ("exclude", {"subgroup": "", "stream": None, "reason": "x"}, "subgroup"),
    ("unfreeze", {"reason": "x"}, "not frozen"),
    ("signal", {"key": "xbar/trend/2", "state": "closed"}, "signal state"),
    ("note", {"on": "case", "target": "", "text": ""}, "text"),
    ("note", {"on": "case", "target": "3", "text": "x"}, "no target"),
    ("note", {"on": "stream", "target": "h1", "text": "x"}, "note is on"),
    ("settings", {"settings": Settings().as_dict()}, "did not change"),
    ("settings", {"settings": {**Settings().as_dict(), "chart": "pie"}}, "chart kind"),
    ("settings", {"settings": {**Settings().as_dict(), "cusum_k": "big"}}, "wrong type"),
    ("settings", {"settings": {**Settings().as_dict(), "colour": "red"}}, "unknown setting"),
    ("causes", {"causes": ["machine", "machine"]}, "distinct"),
    ("exclude", {"subgroup": "4", "reason": "x", "extra": 1}, "unknown payload field"),
])
def test_an_event_that_does_not_apply_is_refused_with_its_number(kind, payload, words):
    events = [created()]
    append(events, kind, payload)
    with pytest.raises(WorkbenchError, match=r"event 2: .*" + words):
        C.replay(events)


def test_the_trail_must_start_with_one_created_event():
    events = [created()]
    append(events, "created", events[0].payload)
    with pytest.raises(WorkbenchError, match="event 2"):
        C.replay(events)
    with pytest.raises(WorkbenchError, match="empty"):
        C.replay([])


def test_event_shape_checks_sequence_and_fields():
    d = created().as_dict()
    with pytest.raises(WorkbenchError, match="sequence number"):
        C.Event.from_dict({**d, "seq": 2}, 1)
    with pytest.raises(WorkbenchError, match="unknown field"):
        C.Event.from_dict({**d, "colour": "red"}, 1)
    with pytest.raises(WorkbenchError, match="ISO 8601"):
        C.Event.from_dict({**d, "time": "yesterday"}, 1)
    with pytest.raises(WorkbenchError, match="author"):
        C.Event.from_dict({**d, "author": ""}, 1)


# ---- replay is a pure function: property tests ----------------------------------------------

texts = st.text(min_size=1, max_size=12).filter(str.strip)
actions = st.lists(st.tuples(st.sampled_from(["toggle", "note", "mark", "causes", "freeze", "setup"]),
                             st.sampled_from(LABELS), st.sampled_from([None] + STREAMS), texts,
                             st.sampled_from(C.MARKS)), max_size=12)


def build(ops) -> list[C.Event]:
    """A valid trail from a list of random actions (each chosen to apply to the state so far)."""
    events = [created()]
    state = C.replay(events)
    for op, label, stream, text, mark in ops:
        key = label if stream is None else f"{label}:{stream}"
        if op == "toggle" and key in state.exclusion_info:
            kind, payload = "restore", {"subgroup": label, "stream": stream, "reason": text}
        elif op == "toggle":
            kind, payload = "exclude", {"subgroup": label, "stream": stream, "reason": text,
                                        "cause": state.causes[0] if state.causes else None,
                                        "signal": f"xbar/trend/{label}"}
        elif op == "note":
            kind, payload = "note", {"on": "subgroup", "target": key, "text": text}
        elif op == "mark":
            kind, payload = "signal", {"key": f"xbar/zone-a/{label}", "state": mark, "note": text}
        elif op == "causes":
            kind, payload = "causes", {"causes": list(dict.fromkeys([text.strip(), *state.causes]))}
        elif op == "freeze" and state.frozen is None:
            kind, payload = "freeze", {"frozen": FrozenLimits("xbar-r", 1.0, 0.5, 8).as_dict()}
        elif op == "freeze":
            kind, payload = "unfreeze", {"reason": text}
        else:
            rules = "nelson" if state.settings.rules != "nelson" else "limits-only"
            kind, payload = "settings", {"settings": Settings(rules=rules).as_dict()}
        append(events, kind, payload)
        state = C.apply(state, events[-1])
    return events


@hsettings(max_examples=60, deadline=None)
@given(actions)
def test_replaying_twice_gives_the_same_state(ops):
    events = build(ops)
    first, second = C.replay(events), C.replay(list(events))
    assert first == second
    # applying one event at a time reaches the same state as replaying the whole trail
    step = C.replay(events[:1])
    for ev in events[1:]:
        step = C.apply(step, ev)
    assert step == first


@hsettings(max_examples=40, deadline=None)
@given(actions)
def test_a_rendered_trail_parses_back_to_the_same_state_and_events(ops):
    events = tuple(build(ops))
    doc = parse(render(DATA, events), "memory.case.json")
    assert doc.chain_break is None
    assert doc.events == events
    assert doc.state == C.replay(events)


# ---- small helpers ------------------------------------------------------------------------

@pytest.mark.parametrize("text, shown", [
    # ESC is 0x1B and a CSI sequence is ESC [ ... (ECMA-48, 5th ed., 5.4) [definition]
    ("\x1b[31mred\x1b[0m", "\\x1b[31mred\\x1b[0m"),
    ("line\nbreak\ttab\rcr", "line\\nbreak\\ttab\\rcr"),
    ("bell\x07 del\x7f c1\x9b", "bell\\x07 del\\x7f c1\\x9b"),
    # U+202E RIGHT-TO-LEFT OVERRIDE is a format character, category Cf (Unicode Character Database) [definition]
    ("abc\u202edef", "abc\\u202edef"),
    ("Müller ±3σ <b>bold</b> *x*", "Müller ±3σ <b>bold</b> *x*"),
])
def test_printable_makes_control_characters_visible(text, shown):
    assert C.printable(text) == shown


def test_snapshot_difference_uses_a_relative_tolerance():
    a = {"sigma": 2.0, "charts": {"xbar": {"center": 10.0, "lcl": 7.0, "ucl": 13.0}, "r": {"lcl": None}}}
    near = {"sigma": 2.0 * (1 + 1e-12), "charts": {"xbar": {"center": 10.0, "lcl": 7.0, "ucl": 13.0},
                                                    "r": {"lcl": None}}}
    far = {"sigma": 2.0, "charts": {"xbar": {"center": 10.0, "lcl": 7.0, "ucl": 13.0 * (1 + 1e-6)},
                                    "r": {"lcl": None}}}
    assert snapshot_difference(a, near) is None
    assert "charts.xbar.ucl" in snapshot_difference(a, far)
    assert "present in only one" in snapshot_difference(a, {"sigma": 2.0})
    assert snapshot_difference({"v": {"min": 1.0, "max": 2.0}}, {"v": 1.5}) is not None


def test_limits_gaps_finds_a_before_that_does_not_follow_the_previous_after():
    events = [created()]
    snap = {"sigma": 1.0, "charts": {"i": {"center": 5.0, "lcl": 2.0, "ucl": 8.0}}}
    other = {"sigma": 1.1, "charts": {"i": {"center": 5.0, "lcl": 1.7, "ucl": 8.3}}}
    append(events, "exclude", {"subgroup": "1", "reason": "x"}, limits_before=snap, limits_after=other, data_bytes=1)
    append(events, "restore", {"subgroup": "1", "reason": "y"}, limits_before=other, limits_after=snap, data_bytes=1)
    assert limits_gaps(events) == []
    append(events, "exclude", {"subgroup": "2", "reason": "x"}, limits_before=other, limits_after=other, data_bytes=1)
    gaps = limits_gaps(events)
    assert len(gaps) == 1 and gaps[0].startswith("event 4")


def test_default_author_prefers_the_option_then_the_environment_then_user_at_host(monkeypatch):
    import getpass
    import socket
    monkeypatch.setattr(getpass, "getuser", lambda: "kim")
    monkeypatch.setattr(socket, "gethostname", lambda: "lab-7")
    monkeypatch.setenv("WORKBENCH_AUTHOR", "env-author")
    assert C.default_author("opt") == "opt"
    assert C.default_author(None) == "env-author"
    monkeypatch.delenv("WORKBENCH_AUTHOR")
    assert C.default_author(None) == "kim@lab-7"


def test_utc_now_is_iso_8601_utc():
    from datetime import datetime, timezone
    t = C.utc_now()
    # ISO 8601 with a Z designator for UTC [definition]
    assert t.endswith("Z") and datetime.fromisoformat(t).tzinfo == timezone.utc


def test_describe_shows_text_fields_printable():
    events = [created()]
    ev = append(events, "note", {"on": "case", "target": "", "text": "see \x1b[2J here"})
    assert C.describe(ev) == "note on the case: see \\x1b[2J here"
