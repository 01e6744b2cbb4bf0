"""The pure view helpers: the window, its min/max envelope, point classes and limit summaries."""
from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from tests.conftest import make_dataset
from workbench.core.analysis import analyse, limits_snapshot
from workbench.core.model import Exclusion
from workbench.tui.view import EXCLUDED, NORMAL, OPEN, REVIEWED, limits_change, marks_for
from workbench.tui.widgets.panels import status_lines, subgroup_lines
from workbench.tui.window import Window, column_of, follow, position_of, trace, window_at


@given(st.integers(1, 5000), st.integers(8, 300), st.data())
@settings(max_examples=200, deadline=None)
def test_a_click_on_a_column_picks_a_subgroup_that_the_column_shows(n, cols, data):
    win = Window(0, n)
    col = data.draw(st.integers(0, cols - 1))
    p = position_of(col, win, cols)
    assert 0 <= p < n
    if n > cols:
        assert column_of(p, win, cols) == col  # every column holds at least one subgroup
    else:
        spacing = 2 * cols if n == 1 else (cols - 1) / (n - 1)  # columns between neighbouring subgroups
        assert abs(column_of(p, win, cols) - col) <= spacing / 2 + 0.5 + 1e-9  # nearest, up to rounding


@given(st.integers(100, 20_000), st.integers(10, 200), st.integers(0, 30), st.data())
@settings(max_examples=60, deadline=None)
def test_envelope_keeps_every_flagged_extreme_and_the_range(n, cols, flags, data):
    rng = np.random.default_rng(n)
    values = rng.normal(0, 1, n)
    codes = np.zeros(n, np.uint8)
    picked = data.draw(st.lists(st.integers(0, n - 1), min_size=flags, max_size=flags))
    for i, p in enumerate(picked):
        codes[p] = (OPEN, REVIEWED, EXCLUDED)[i % 3]
    win = Window(0, n)
    tr = trace(values, codes, win, cols)
    # the drawn range is the data's range (a min/max envelope loses no extreme)
    assert tr.lo == values.min() and tr.hi == values.max()
    assert set(np.unique(tr.line_x)) <= set(range(cols))
    for p in picked:
        xs, ys = tr.glyphs[int(codes[p])]
        col = column_of(p, win, cols)
        same = values[(codes == codes[p]) & ((np.arange(n) * cols) // n == col)] if n > cols else values[[p]]
        # the column shows this class's lowest and highest flagged value, so p is never lost from view
        assert np.isclose(ys[xs == col].min(), same.min()) and np.isclose(ys[xs == col].max(), same.max())


def test_follow_pans_by_half_a_window_and_keeps_the_position_visible():
    win = window_at(0, 100, 1000)
    for p in (99, 100, 150, 999, 0, 500):
        win = follow(win, p, 1000)
        assert win.contains(p) and win.size == 100
    assert follow(Window(0, 100), 100, 1000) == Window(50, 150)


def _demo_like():
    rng = np.random.default_rng(5)
    v = rng.normal(10, 0.5, (60, 4))
    v[30, 2] += 6  # one reading far out: beyond the limits on both charts
    return make_dataset(v, streams=("A", "B", "C", "D"))


class _State:
    """The parts of a CaseState the views read."""

    def __init__(self, marks=None, exclusions=()):
        from workbench.core.case.events import SignalState
        self.marks, self.exclusions = marks or {}, tuple(exclusions)
        self.exclusion_info, self.notes, self.frozen = {}, (), None
        # marks as an older case file holds them: by key, without firing points
        self.signal_states = {k: SignalState(v, None, "tester", "", i + 2) for i, (k, v) in enumerate(self.marks.items())}
        self.mark_log = tuple(self.signal_states.items())

    def signal_state(self, key):
        return self.marks.get(key, "open")


def test_marks_classes_and_counts():
    ds = _demo_like()
    a = analyse(ds)
    first = a.signals[0]
    mk = marks_for(a, _State({first.key: "explained"}))
    assert mk.open_count == len(a.signals) - 1 and mk.explained_count == 1
    assert all(mk.codes[first.chart][p] in (REVIEWED, OPEN) for p in first.points)
    assert mk.codes["xbar"][0] == NORMAL or any(0 in s.points for s in a.signals)
    row = mk.next_open(-1, 1)
    assert row is not None and mk.rows[row].state == "open"
    excluded = analyse(ds, exclusions=[Exclusion(ds.labels[30])])
    mk2 = marks_for(excluded, _State(exclusions=[Exclusion(ds.labels[30])]))
    assert mk2.codes["xbar"][30] == EXCLUDED and mk2.excluded_count == 1


def test_limits_change_names_every_limit_before_and_after():
    ds = _demo_like()
    before = limits_snapshot(analyse(ds))
    after = limits_snapshot(analyse(ds, exclusions=[Exclusion(ds.labels[30])]))
    lines = limits_change(before, after)
    assert lines[0].startswith("xbar: UCL ") and "→" in lines[0] and "centre" in lines[0] and "LCL" in lines[0]
    assert lines[1].startswith("r: ")
    assert any(line.startswith("sigma:") for line in lines)


def test_panels_name_the_range_drivers_and_fit_their_width():
    ds = _demo_like()
    a = analyse(ds)
    from workbench.tui.session import Snapshot
    from pathlib import Path
    state = _State()
    snap = Snapshot(ds, a, state, (), marks_for(a, state), Path("casefiles/x.case.json"), None, "me")
    text = subgroup_lines(snap, 30, 44).plain()
    assert "C" in text and "▴ max" in text and "▾ min" in text
    assert "range" in text
    assert next(line for line in text.split("\n") if line.startswith("C ")).endswith("▴ max")  # the planted extreme
    for width in (80, 120):
        lines = status_lines(snap, 30, False, width=width).plain().split("\n")
        assert len(lines) <= 2 and all(len(line) <= width for line in lines)
        assert "x.case.json" in lines[-1] and "saved" in lines[-1]


@given(st.integers(10, 300), st.integers(1, 30))
@settings(max_examples=150, deadline=None)
def test_axis_labels_fit_the_axis_and_never_touch(cols, length):
    from workbench.tui.plotting import tick_layout
    pos, names = tick_layout(cols, lambda c: f"{c:0{length}d}")
    spans = [(p - len(t) // 2, p - len(t) // 2 + len(t)) for p, t in zip(pos, names)]  # centred on the tick
    assert all(0 <= p < cols for p in pos) and len(set(pos)) == len(pos)
    assert all(b0 < a1 for (_, b0), (a1, _) in zip(spans, spans[1:]))


def test_long_labels_keep_their_last_parts():
    from workbench.tui.plotting import fit_label
    assert fit_label("2026-03-02 14:15", 16) == "2026-03-02 14:15"
    assert fit_label("2026-03-02 14:15", 8) == "14:15"
    assert fit_label("batch-000123", 6) == "000123"


def test_cusum_draws_the_lower_side_and_flags_it_there():
    from workbench.core.model import Settings
    from workbench.tui.plotting import LOWER_GLYPH, build, chart_data, label_width
    # in control at 10, then a one-sigma drop: the lower sum C⁻ grows past H while C⁺ stays at 0
    # (Montgomery, Introduction to SQC, tabular CUSUM: C⁻_i = max(0, (mu0 − K) − x_i + C⁻_{i−1})) [definition]
    rng = np.random.default_rng(11)
    x = np.r_[rng.normal(10, 1, 40), rng.normal(8.5, 1, 20)]
    a = analyse(make_dataset(x), Settings(chart="cusum", sigma="known", known_mean=10.0, known_sigma=1.0))
    c = a.chart_named("cusum")
    cm = c.extra["cusum-"]
    codes = marks_for(a, None).codes["cusum"]
    data = chart_data(c, codes)
    np.testing.assert_array_equal(data.lower, -cm)
    down, up = cm > -c.lcl, c.values > c.ucl
    assert down.any() and not up[down].all()
    assert (data.lower_codes[down] == OPEN).all() and (data.lower_codes[~down] == NORMAL).all()
    assert (data.codes[down & ~up] == NORMAL).all()  # the upper side keeps only its own flags
    win = Window(0, x.size)
    pic = build(data, win, 150, 24, label_width([data], win, 150), a.dataset.labels, None, True, 1)
    canvas = "\n".join(pic.plain[pic.top:pic.top + pic.rows])
    lcl_row = next(i for i, ln in enumerate(pic.plain) if "LCL" in ln)
    below = "\n".join(pic.plain[lcl_row + 1:pic.top + pic.rows])
    assert LOWER_GLYPH in canvas and "▲" in below  # −C⁻ drawn, its flagged points beyond −H
