"""Following a trail one event at a time (what a session and ``verify`` do) equals replaying it whole.

The reference is the definition of the case state: the replay of the whole trail from the first
event [definition]; the incremental path keeps the exclusions in a sorted structure and must end
in the same state, exclusions in the same order, after every prefix.
"""
from __future__ import annotations

from hypothesis import given, settings as hsettings, strategies as st

from workbench.core.case.events import _Builder, apply, replay
from workbench.core.case.format import seal
from workbench.core.case.payload import exclusion_order

LABELS = [str(i) for i in range(1, 13)] + ["10a", "2b"]
STREAMS = [None, "A", "B"]


def body(seq, kind, payload):
    return {"seq": seq, "time": "2026-03-01T00:00:00.000Z", "author": "t", "kind": kind, "payload": payload}


@hsettings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["exclude", "restore", "note", "retract"]), st.sampled_from(LABELS),
                          st.sampled_from(STREAMS)), min_size=1, max_size=40))
def test_incremental_state_equals_the_full_replay_after_every_event(steps):
    events = [seal(body(1, "created", {"settings": {}, "causes": ["machine"], "data_ref": "x"}), None)]
    state = replay(events)
    excluded: set = set()
    for kind, label, stream in steps:
        key = label if stream is None else f"{label}:{stream}"
        seq = len(events) + 1
        if kind == "exclude" and key not in excluded:
            p = {"subgroup": label, "stream": stream, "reason": "r"}
        elif kind == "restore" and key in excluded:
            p = {"subgroup": label, "stream": stream, "reason": "r"}
        elif kind == "retract" and len(events) > 1 and events[-1].kind == "note":
            p = {"event": events[-1].seq, "hash": events[-1].hash, "reason": "r"}
        else:
            kind, p = "note", {"on": "case", "target": "", "text": key}
        ev = seal(body(seq, kind, p), events[-1].hash)
        events.append(ev)
        state = apply(state, ev)
        if kind == "exclude":
            excluded.add(key)
        elif kind == "restore":
            excluded.discard(key)
        whole = replay(events)
        assert state.exclusions == whole.exclusions
        assert dict(state.exclusion_info) == dict(whole.exclusion_info)
        assert state.notes == whole.notes and state.head_hash == whole.head_hash
        assert [e.key for e in state.exclusions] == sorted(excluded, key=lambda k: exclusion_order(
            whole.exclusions[[x.key for x in whole.exclusions].index(k)]))
        assert list(state.exclusions) == sorted(state.exclusions, key=exclusion_order)


def test_a_builder_keeps_its_sorted_exclusions_without_sorting_again():
    b = _Builder()
    b.apply(seal(body(1, "created", {"settings": {}, "causes": [], "data_ref": "x"}), None))
    prev = b.head
    for i, label in enumerate(["9", "10", "1", "10a"], 2):
        ev = seal(body(i, "exclude", {"subgroup": label, "reason": "r"}), prev)
        b.apply(ev)
        prev = ev.hash
        b.state()
    # string order of labels, as exclusion_order defines it [definition]
    assert [t.subgroup for t in b.order[1]] == ["1", "10", "10a", "9"]
    assert b.order[0] == sorted(b.order[0])


def test_a_case_state_s_sorted_exclusions_give_the_same_analysis_as_any_order():
    # the reference is analyse() on the same exclusions in another order, sorted by analyse itself [definition]
    import numpy as np

    from workbench.core.analysis import analyse, limits_snapshot
    from workbench.core.model import Dataset, Layout, Settings
    rng = np.random.default_rng(5)
    v = rng.normal(10, 1, (40, 3))
    ds = Dataset(path="m.csv", sha256="0" * 64, rows=40, size_bytes=0, layout=Layout("wide"),
                 labels=np.array([str(i) for i in range(1, 41)]), streams=("A", "B", "C"), values=v)
    events = [seal(body(1, "created", {"settings": {}, "causes": [], "data_ref": "x"}), None)]
    for i, (label, stream) in enumerate([("7", None), ("12", "B"), ("30", None), ("12", "A"), ("3", None)], 2):
        events.append(seal(body(i, "exclude", {"subgroup": label, "stream": stream, "reason": "r"}), events[-1].hash))
    st = replay(events)
    a = analyse(ds, Settings(), st.exclusions)
    b = analyse(ds, Settings(), list(reversed(st.exclusions)))
    assert a.exclusions == b.exclusions and limits_snapshot(a) == limits_snapshot(b)
    assert np.array_equal(a.excluded_cells, b.excluded_cells)
