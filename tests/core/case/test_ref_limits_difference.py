"""The comparison of recorded and recomputed limits (``snapshot_difference``) and the lines ``verify``
prints, tested directly on small snapshots written here.

Written against the mutants that survived the case tests (tests/MUTATION.md): no test compared snapshots
holding lists (per-point limits), a relative tolerance other than the default, or numbers at the edge of
zero, and none read a NOT-intact verification with several problems.  The expected words follow the
function's contract: the first difference, named by its path in the snapshot.
"""
from workbench.core.case.integrity import Verification, limits_gaps, snapshot_difference


def test_equal_snapshots_with_lists_and_numbers_within_the_tolerance():
    """Nested dicts and lists that agree to 1e-9 relative have no difference; a tolerance of 1e-3 accepts
    a difference of 1e-5; 0 and 1e-310 are the same limit (absolute floor 1e-300).  Kills the list
    branch's ``or``, ``==`` for the lengths, each argument of the element comparison dropped or None, the
    tolerance not passed on (``rel_tol`` dropped, ``rel`` None) and the absolute floor dropped."""
    rec = {"xbar": {"center": 10.0, "ucl": [12.0, 12.5, 13.0]}, "sigma": 1.0}
    assert snapshot_difference(rec, {"xbar": {"center": 10.0, "ucl": [12.0, 12.5 * (1 + 1e-12), 13.0]},
                                     "sigma": 1.0}) is None
    assert snapshot_difference([1.0, 2.0], [1.0, 2.00002], rel=1e-3) is None
    assert snapshot_difference({"lcl": [0.0, 0.0]}, {"lcl": [1e-310, 0.0]}) is None


def test_the_first_difference_is_named_by_its_path():
    """The message names the path (``xbar.ucl[1]``), the recorded and the recomputed value; a length
    mismatch names the list and both lengths; a key on one side only is named; a top-level scalar is
    called ``limits``.  Kills the paths built with ``rstrip(None)``, ``lstrip`` or ``"XX.XX"``, the
    default name altered, and the lengths' message."""
    rec = {"xbar": {"center": 10.0, "ucl": [12.0, 12.5, 13.0]}}
    assert snapshot_difference(rec, {"xbar": {"center": 10.0, "ucl": [12.0, 12.6, 13.0]}}) == \
        "xbar.ucl[1]: recorded 12.5, recomputed 12.6"
    assert snapshot_difference(rec, {"xbar": {"center": 10.0, "ucl": [12.0, 12.5]}}) == \
        "xbar.ucl: 3 values recorded, 2 recomputed"
    assert snapshot_difference({"a": 1.0}, {"a": 1.0, "b": 2.0}) == "b: present in only one of them"
    assert snapshot_difference(1.0, 2.0) == "limits: recorded 1.0, recomputed 2.0"
    assert snapshot_difference({"chart": "xbar-r"}, {"chart": "xbar-s"}) == \
        "chart: recorded 'xbar-r', recomputed 'xbar-s'"
    assert snapshot_difference([[1.0, 2.0]], [[1.0, 3.0]]) == "[0][1]: recorded 2.0, recomputed 3.0"
    # a list on one side only is a plain difference (kills the list branch taken when either is a list)
    assert snapshot_difference({"ucl": [1.0]}, {"ucl": 1.0}) == "ucl: recorded [1.0], recomputed 1.0"


def test_limits_gaps_follow_the_previous_limits_on_the_same_data():
    """An event whose limits before differ from the previous event's limits after (same data) is named;
    on other data it is not compared."""
    class Ev:
        def __init__(self, seq, before, after, nbytes=100):
            self.seq, self.limits_before, self.limits_after, self.data_bytes = seq, before, after, nbytes
    events = [Ev(1, None, {"u": 1.0}), Ev(2, {"u": 1.0}, {"u": 2.0}), Ev(3, {"u": 2.5}, None),
              Ev(4, {"u": 9.0}, None, nbytes=200)]
    assert limits_gaps(events) == ["event 3: its limits before do not follow the previous limits "
                                   "(u: recorded 2.0, recomputed 2.5)"]


def test_a_case_that_is_not_intact_lists_every_problem_and_note():
    """``verify``'s lines: the first problem on the head line, every other one as "also", every remark as
    "note".  Kills the head set to None, the first problem read as the second and the rest started at the
    third."""
    v = Verification("c.case.json", False, 5, None, (3, "link"), None, ("first", "second", "third"), ("remark",))
    assert v.lines() == ["c.case.json: NOT intact — first", "  also: second", "  also: third", "  note: remark"]
    ok = Verification("c.case.json", True, 5, "ab12", None, None, (), ())
    assert ok.lines() == ["c.case.json: intact — 5 events, head hash ab12"]
