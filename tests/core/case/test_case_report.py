"""The case part of the reports."""
from __future__ import annotations

import json
import re

import pytest

from workbench.core.case import review as R
from workbench.core.case.casefile import Case, verify
from workbench.core.model import Exclusion, LayoutRequest, Settings

# Montgomery & Runger individuals example data [printed]; subgroup 2 holds the low reading 94.8
READINGS = [102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1, 101.3, 98.7, 101.1, 98.4, 97.0, 96.7,
            100.3, 101.4, 97.2, 101.0]
HOSTILE = "see <script>alert(1)</script> | **bold** \x1b[2J\x1b]0;title\x07 done"


@pytest.fixture
def case(tmp_path):
    data = tmp_path / "line.csv"
    data.write_text("reading\n" + "".join(f"{v}\n" for v in READINGS), encoding="utf-8")
    c = Case.create(data, LayoutRequest(), Settings(), author="ana", case_path=tmp_path / "line.case.json")
    ds = c.load_dataset()
    c.record_exclusion(ds, Exclusion("2"), "gauge dropped", "measurement", author="bo")
    c.note(HOSTILE, target="5", on="subgroup")
    c.mark_signal("i/zone-a/3", "no-cause-found", "nothing in the log")
    c.record_settings(ds, Settings(rules="nelson"))
    c.record_freeze(ds)
    yield c, ds
    c.close()


def test_markdown_review_holds_what_a_reviewer_signs(case):
    c, ds = case
    a = c.analyse(ds)
    text = R.case_report_markdown(c, a, capability_section="### Fit\n\nCpk 1.2")
    st = c.state
    assert f"`{c.data.sha256}`" in text                     # data identity
    assert f"`{st.head_hash}`" in text and "| integrity | intact |" in text
    assert "| 2 | gauge dropped | measurement | — | bo |" in text   # exclusion with reason, cause, author
    assert st.exclusion_info["2"].time in text
    assert "| `rules` | nelson |" in text and "rules: the chart's default → nelson" in text
    assert "no-cause-found" in text and "nothing in the log" in text
    assert "## Capability" in text and "Cpk 1.2" in text
    assert "Limits frozen at event 6 by ana" in text
    # limits as first computed and as now: the first centre is the mean of all 20 readings [definition]
    first_centre = sum(READINGS) / 20
    shown = re.search(r"\| i \| (\S+) \|", text).group(1)   # 4 significant figures: half a unit of the last
    assert abs(float(shown) - first_centre) <= 0.005 + 1e-9
    assert "Reviewer:" in text and f"up to event {st.seq}" in text
    for ev in c.events:
        assert f"`{ev.hash[:16]}`" in text


def test_text_fields_are_shown_not_obeyed(case):
    c, ds = case
    a = c.analyse(ds)
    md, txt = R.case_report_markdown(c, a), R.case_report_text(c, a)
    for out in (md, txt):
        assert "\x1b" not in out and "\x07" not in out
        assert "\\x1b[2J" in out or "\\\\x1b\\[2J" in out
    assert "<script>" not in md and "\\<script\\>" in md
    assert "\\| \\*\\*bold\\*\\*" in md                       # a pipe in a note does not break the table
    assert "<script>alert(1)</script>" in txt                 # plain text: markup is harmless, shown as typed
    assert c.state.notes[0].text == HOSTILE                   # and stored as typed


def test_json_case_object_is_plain_json_with_text_as_stored(case):
    c, ds = case
    obj = R.case_report_json(c, c.analyse(ds))
    again = json.loads(json.dumps(obj, allow_nan=False))
    assert again["integrity"]["intact"] is True and again["integrity"]["head_hash"] == c.state.head_hash
    assert again["exclusions"] == [{"target": "2", "subgroup": "2", "stream": None, "reason": "gauge dropped",
                                    "cause": "measurement", "signal": None, "author": "bo",
                                    "time": c.state.exclusion_info["2"].time, "seq": 2}]
    assert again["notes"][0]["text"] == HOSTILE
    assert again["frozen"]["subgroups"] == 20
    assert [e["seq"] for e in again["trail"]] == list(range(1, 7))
    assert again["limits_first"] == c.state.first_limits
    assert {s["key"]: s["state"] for s in again["signals"]}["i/zone-a/3"] == "no-cause-found"


def test_a_broken_trail_is_reported_in_the_review(case, tmp_path):
    c, _ds = case
    path = c.path
    c.close()
    path.write_bytes(path.read_bytes().replace(b"gauge dropped", b"gauge dr0pped"))
    reopened = Case.open(path, readonly=True)
    v = verify(path, recompute=False)
    md = R.case_report_markdown(reopened, None, v)
    assert "NOT intact: the chain breaks at event 2" in md
    assert "NOT intact" in R.case_report_text(reopened, None, v)
    assert R.case_report_json(reopened, None, v)["integrity"]["intact"] is False


def test_without_an_analysis_the_recorded_limits_are_shown(case):
    c, _ds = case
    md = R.case_report_markdown(c)
    assert "No signal has a state yet." not in md   # a marked signal is still listed
    assert "i/zone-a/3" in md
    assert R.case_report_json(c)["limits_now"] == c.state.limits


def test_md_escapes_markup_and_control_characters():
    # CommonMark 0.30, section 2.4: any ASCII punctuation may be backslash-escaped [definition]
    assert R.md("a*b_c`d|e<f>[g]#h\x1b") == "a\\*b\\_c\\`d\\|e\\<f\\>\\[g\\]\\#h\\\\x1b"
