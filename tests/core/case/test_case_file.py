"""Case files on disk: round trip, integrity, durability, the lock and the data fingerprint."""
from __future__ import annotations

import json
import math
import re

import pytest
from hypothesis import HealthCheck, given, settings as hsettings, strategies as st

from workbench.core.analysis import analyse, limits_snapshot
from workbench.core.case.casefile import Case, backup_path, lock_path, parse, verify
from workbench.core.case.integrity import snapshot_difference
from workbench.core.model import Exclusion, LayoutRequest, Settings, Spec, WorkbenchError

# Montgomery & Runger, Applied Statistics and Probability for Engineers (3rd ed.), individuals chart
# example [printed]: x̄ = 99.1, MR̄ = 2.59 (exact 99.095, 2.589474)
READINGS = [102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1, 101.3, 98.7, 101.1, 98.4, 97.0, 96.7,
            100.3, 101.4, 97.2, 101.0]


def write_data(path, readings=READINGS):
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("reading\n" + "".join(f"{v}\n" for v in readings), encoding="utf-8")
    return path


@pytest.fixture
def data(tmp_path):
    return write_data(tmp_path / "data" / "line.csv")


@pytest.fixture
def case_path(tmp_path, data):
    path = tmp_path / "casefiles" / "line.case.json"
    with Case.create(data, LayoutRequest(), Settings(), author="ana", case_path=path) as case:
        return case.path


def test_first_limits_are_the_published_individuals_limits(case_path):
    with Case.open(case_path, readonly=True) as case:
        first = case.state.first_limits
    # Montgomery & Runger individuals example: x̄ = 99.095, MR̄ = 2.589474 [printed 99.1, 2.59; exact by definition]
    assert first["charts"]["i"]["center"] == pytest.approx(99.095, abs=1e-9)
    assert first["charts"]["mr"]["center"] == pytest.approx(2.589474, abs=1e-6)
    # UCL = x̄ + 3·MR̄/d2 with d2(2) = 2/√π [definition, REFERENCES closed forms]; printed 105.99 uses d2 = 1.128
    assert first["charts"]["i"]["ucl"] == pytest.approx(99.095 + 3 * 2.5894737 / (2 / math.sqrt(math.pi)), abs=1e-6)
    assert first["charts"]["i"]["ucl"] == pytest.approx(105.99, abs=0.02)


def test_a_case_reopens_with_exactly_the_same_state(case_path):
    with Case.open(case_path, author="bo") as case:
        ds = case.load_dataset()
        case.record_exclusion(ds, Exclusion("2"), "gauge dropped", "measurement")
        case.note("shift change at 10:00")
        case.note("operator confirmed", target="5", on="subgroup")
        case.mark_signal("i/zone-a/2", "no-cause-found", "nothing in the log")
        case.record_settings(ds, Settings(rules="nelson", spec=Spec(lsl=90.0, usl=110.0)))
        case.add_cause("tooling")
        case.record_freeze(ds)
        case.record_unfreeze(ds, "more data coming")
        case.record_restore(ds, Exclusion("2"), "gauge was fine")
        case.record_exclusion(ds, Exclusion("7"), "wrong part", "tooling")
        case.note("ünïcode, <b>markup</b> and \x1b[31m escapes stay as typed")
        state, events = case.state, case.events
    with Case.open(case_path) as again:
        assert again.state == state
        assert again.events == events
        assert not again.readonly and again.notices == []
    assert state.exclusions == (Exclusion("7"),)
    assert state.exclusion_info["7"].author == "bo" and state.exclusion_info["7"].cause == "tooling"
    assert state.settings.rules == "nelson" and state.settings.spec.usl == 110.0
    assert state.frozen is None and "tooling" in state.causes
    assert state.notes[-1].text == "ünïcode, <b>markup</b> and \x1b[31m escapes stay as typed"


def test_recorded_limits_are_those_of_the_analysis_before_and_after(case_path):
    with Case.open(case_path) as case:
        ds = case.load_dataset()
        before = limits_snapshot(case.analyse(ds))
        after_analysis = case.record_exclusion(ds, Exclusion("2"), "gauge dropped")
        ev = case.events[-1]
    expected_after = limits_snapshot(analyse(ds, Settings(), [Exclusion("2")]))
    assert snapshot_difference(ev.limits_before, before) is None
    assert snapshot_difference(ev.limits_after, expected_after) is None
    assert snapshot_difference(limits_snapshot(after_analysis), expected_after) is None
    # leaving the low reading 94.8 out raises the centre line: mean of the other 19 readings [definition]
    assert ev.limits_after["charts"]["i"]["center"] == pytest.approx((sum(READINGS) - 94.8) / 19, abs=1e-9)
    assert ev.data_bytes == ds.size_bytes


def test_every_action_is_on_disk_before_it_returns_and_the_previous_version_is_kept(case_path):
    with Case.open(case_path) as case:
        case.note("first")
        on_disk = parse(case_path.read_bytes(), "x")
        assert on_disk.state == case.state
        bak = parse(backup_path(case_path).read_bytes(), "bak")
        assert bak.state.seq == case.state.seq - 1
        assert lock_path(case_path).exists()
    assert not lock_path(case_path).exists()


def test_an_existing_case_is_never_overwritten(tmp_path, data, case_path, monkeypatch):
    before = case_path.read_bytes()
    with pytest.raises(WorkbenchError, match="already exists"):
        Case.create(data, LayoutRequest(), Settings(), case_path=case_path)
    assert case_path.read_bytes() == before
    (tmp_path / "work").mkdir()
    monkeypatch.chdir(tmp_path / "work")
    with Case.create(data, LayoutRequest(), Settings()) as case:  # default: casefiles/<data-stem>.case.json
        assert case.path.as_posix() == "casefiles/line.case.json"
        assert case.data.path == "../../data/line.csv"
    with pytest.raises(WorkbenchError, match="already exists"):
        Case.create(data, LayoutRequest(), Settings())
    with pytest.raises(WorkbenchError, match="ends in .case.json"):
        Case.create(data, LayoutRequest(), Settings(), case_path=tmp_path / "x.json")


# ---- integrity ----------------------------------------------------------------------------

def test_verify_says_intact_and_gives_the_head_hash(case_path):
    with Case.open(case_path) as case:
        ds = case.load_dataset()
        case.record_exclusion(ds, Exclusion("2"), "gauge dropped")
        head = case.state.head_hash
    result = verify(case_path)
    assert result.intact and result.problems == () and result.head_hash == head and result.events == 2
    assert "intact" in result.lines()[0] and head in result.lines()[0]


def test_changing_any_single_character_of_any_event_is_detected(tmp_path, data):
    path = tmp_path / "t.case.json"
    with Case.create(data, LayoutRequest(), Settings(), author="ana", case_path=path) as case:
        case.exclude(Exclusion("3"), "tool", "machine")
        case.note("n")
    raw = path.read_text(encoding="utf-8")
    lines = raw.split("\n")
    targets = [i for i, line in enumerate(lines) if line.startswith('  {"author"') or line.startswith(' "data"')]
    assert len(targets) == 4
    probe = tmp_path / "probe.case.json"
    checked = 0
    for i in targets:
        event_no = 1 if lines[i].startswith(' "data"') else targets.index(i)
        start = lines[i].index("{")
        for pos in range(start, len(lines[i])):
            for ch in "Z7":
                if lines[i][pos] == ch:
                    continue
                edited = lines[:i] + [lines[i][:pos] + ch + lines[i][pos + 1:]] + lines[i + 1:]
                probe.write_text("\n".join(edited), encoding="utf-8")
                try:
                    result = verify(probe, recompute=False)
                except WorkbenchError:
                    checked += 1  # no longer readable as a case file: reported, never "intact"
                    continue
                assert not result.intact, (i, pos, ch)
                if result.chain_break:
                    assert result.chain_break[0] == event_no, (i, pos, ch, result.chain_break)
                else:  # the values still hash (e.g. the last digit of a float that rounds back): text check
                    where = "the data reference" if event_no == 1 and i == targets[0] else f"event {event_no}"
                    assert result.problems[0].startswith(where), (i, pos, ch, result.problems)
                checked += 1
    assert checked > 1000


def test_a_removed_event_breaks_the_chain_at_its_place(case_path):
    with Case.open(case_path) as case:
        for text in ("a", "b", "c"):
            case.note(text)
    doc = json.loads(case_path.read_text(encoding="utf-8"))
    del doc["trail"][2]
    for i, ev in enumerate(doc["trail"], 1):  # even with the numbers made consecutive again
        ev["seq"] = i
    case_path.write_text(json.dumps(doc), encoding="utf-8")
    result = verify(case_path, recompute=False)
    assert not result.intact and result.chain_break[0] == 3


def test_verify_recomputes_the_recorded_limits(case_path):
    with Case.open(case_path) as case:
        ds = case.load_dataset()
        honest = limits_snapshot(case.analyse(ds))
        wrong = json.loads(json.dumps(limits_snapshot(analyse(ds, Settings(), [Exclusion("4")]))))
        wrong["charts"]["i"]["ucl"] *= 1 + 1e-6
        case.exclude(Exclusion("4"), "x", limits_before=honest, limits_after=wrong, data_bytes=ds.size_bytes)
    result = verify(case_path)
    assert not result.intact
    assert "event 2" in result.problems[0] and "charts.i.ucl" in result.problems[0]
    assert verify(case_path, recompute=False).intact  # the chain itself is whole


def test_truncated_json_is_reported_with_line_and_column_and_the_file_is_untouched(case_path):
    with Case.open(case_path) as case:
        case.note("something")
    whole = case_path.read_bytes()
    for cut in (len(whole) // 3, len(whole) - 5, 40):
        case_path.write_bytes(whole[:cut])
        with pytest.raises(WorkbenchError) as err:
            Case.open(case_path)
        assert re.search(re.escape(str(case_path)) + r":\d+:\d+: ", str(err.value))
        assert "previous version" in str(err.value)
        assert case_path.read_bytes() == whole[:cut]
        assert not lock_path(case_path).exists()
        with pytest.raises(WorkbenchError, match=r":\d+:\d+: "):
            verify(case_path)


def test_a_newer_format_version_is_refused(case_path):
    doc = json.loads(case_path.read_text(encoding="utf-8"))
    doc["version"] = 2
    case_path.write_text(json.dumps(doc), encoding="utf-8")
    with pytest.raises(WorkbenchError, match="newer workbench.*version 2"):
        Case.open(case_path)


def valid_doc() -> dict:
    from workbench.core.case.casefile import canonical_json, sha256, seal
    data = {"path": "d.csv", "sha256": "a" * 64, "rows": 3, "size_bytes": 10,
            "layout": {"kind": "individuals", "value": "x", "detected": True}, "request": {}}
    ev = seal({"seq": 1, "time": "2024-01-01T00:00:00.000Z", "author": "a", "kind": "created",
               "payload": {"settings": Settings().as_dict(), "causes": ["machine"],
                           "data_ref": sha256(canonical_json(data))}}, None)
    return {"format": "workbench.case", "version": 1, "data": data, "trail": [ev.as_dict()]}


json_values = st.recursive(st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False, allow_infinity=False)
                           | st.text(max_size=8),
                           lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=6), inner,
                                                                                        max_size=4), max_leaves=12)


def _paths(obj, prefix=()):
    yield prefix
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _paths(v, prefix + (i,))


def _replace(doc, where, value) -> None:
    """Put ``value`` at the path ``where`` when it still exists (earlier mutations may have removed it)."""
    node = doc
    try:
        for key in where[:-1]:
            node = node[key]
        if isinstance(node, (dict, list)):
            node[where[-1]] = value
    except (KeyError, IndexError, TypeError):
        pass


@hsettings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_junk_given_to_the_loader_raises_only_workbench_errors(data):
    doc = valid_doc()
    paths = list(_paths(doc))[1:]
    for _ in range(data.draw(st.integers(1, 3))):
        _replace(doc, data.draw(st.sampled_from(paths)), data.draw(json_values))
    text = json.dumps(doc)
    raw = text[: data.draw(st.just(len(text)) | st.integers(0, len(text)))].encode()
    try:
        parse(raw, "junk.case.json")
    except WorkbenchError:
        pass


@hsettings(max_examples=100, deadline=None)
@given(st.binary(max_size=300) | st.text(max_size=300).map(lambda t: t.encode("utf-8", "surrogatepass")))
def test_arbitrary_bytes_given_to_the_loader_raise_only_workbench_errors(raw):
    with pytest.raises(WorkbenchError):
        parse(raw, "junk.case.json")


def test_deep_nesting_and_special_numbers_are_refused_cleanly():
    for raw in (b"[" * 100000, b'{"format": "workbench.case", "version": NaN}', b"1" * 5000):
        with pytest.raises(WorkbenchError):
            parse(raw, "junk.case.json")


# ---- the data fingerprint -----------------------------------------------------------------

def test_appended_rows_keep_the_case_usable_with_a_notice(case_path, data):
    with Case.open(case_path) as case:
        ds = case.load_dataset()
        case.record_freeze(ds)
    with open(data, "a", encoding="utf-8") as fh:
        fh.write("99.5\n104.0\n")
    with Case.open(case_path) as case:
        assert not case.readonly and case.data_status.status == "appended"
        assert any("grown" in n and "2 rows" in n and "Phase II" in n for n in case.notices)
        ds = case.load_dataset()
        a = case.analyse(ds)
        assert ds.m == 22 and a.phase2_start == 20
        case.record_exclusion(ds, Exclusion("22"), "new gauge")
        assert case.events[-1].data_bytes == ds.size_bytes
    result = verify(case_path)  # limits of every event recomputed on the data each one saw
    assert result.intact, result.problems
    assert any("grown" in r for r in result.remarks)


def test_changed_data_give_a_read_only_view_with_the_reason(case_path, data):
    data.write_text(data.read_text().replace("94.8", "94.9"))
    with Case.open(case_path) as case:
        assert case.readonly and "changed since the case was created" in case.readonly_reason
        with pytest.raises(WorkbenchError, match="read-only"):
            case.note("x")
    result = verify(case_path)
    assert not result.intact and "changed" in result.problems[0]


def test_missing_data_are_named_clearly(case_path, data):
    data.unlink()
    with Case.open(case_path) as case:
        assert case.readonly and "missing" in case.readonly_reason
        assert str(data) in case.readonly_reason or "line.csv" in case.readonly_reason
        with pytest.raises(WorkbenchError, match="line.csv is missing"):
            case.load_dataset()
    result = verify(case_path)
    assert not result.intact and "missing" in result.problems[0]


# ---- one writer at a time -----------------------------------------------------------------

def test_a_second_writer_gets_a_read_only_view_naming_the_holder(case_path):
    first = Case.open(case_path, author="ana")
    try:
        second = Case.open(case_path, author="bo")
        assert second.readonly and "open for writing by ana" in second.readonly_reason
        assert any("ana" in n for n in second.notices)
        with pytest.raises(WorkbenchError, match="read-only"):
            second.note("mine")
        first.note("still writable")
    finally:
        first.close()
    with Case.open(case_path, author="bo") as third:
        assert not third.readonly
        assert third.state.notes[-1].text == "still writable"


def test_a_file_changed_behind_the_writers_back_is_not_overwritten(case_path):
    with Case.open(case_path) as case:
        edited = case_path.read_bytes().replace(b'"author":"ana"', b'"author":"eve"')
        case_path.write_bytes(edited)
        with pytest.raises(WorkbenchError, match="changed by something else"):
            case.note("x")
        assert case_path.read_bytes() == edited
