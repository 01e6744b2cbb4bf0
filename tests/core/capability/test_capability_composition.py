"""The fit view's and the reports' composition: specification strip, quantile plot, statements.

Sources: Blom's plotting position (i − 3/8)/(n + 1/4) (Blom 1958) [from memory]; the 0.135 % /
50 % / 99.865 % points are Φ(−3), Φ(0), Φ(3) [definition]; natural spread ±3σ [definition].
"""
from __future__ import annotations

import re

import numpy as np
import pytest
from scipy import stats

from workbench.core.capability.assess import assess
from workbench.core.capability.picture import (BEYOND, OVERALL, POINT, WITHIN, plotting_positions, quantile_plot,
                                               spec_strip)
from workbench.core.capability.report import capability_text
from workbench.core.capability.statements import statements
from workbench.core.capability.words import num
from workbench.core.model import Spec
from workbench.core.text import fmt

X = np.random.default_rng(60).normal(10.0, 1.0, 400)
CAP = assess(X, 0.9, "rbar", Spec(lsl=6.0, usl=14.0, target=10.0))


def _col(v, lo, hi, cols):
    return min(max(int((v - lo) / (hi - lo) * cols), 0), cols - 1)


def test_strip_draws_the_limits_once_and_both_bands_at_their_values():
    lo, hi = 4.0, 16.0
    rows = spec_strip(CAP, width=9 + 60, lo_hi=(lo, hi)).splitlines()
    spec = next(r for r in rows if r.startswith("spec"))[9:]
    assert spec.count("\u251c") == 1 and spec.count("\u2524") == 1          # LSL and USL, once each
    assert spec.index("\u251c") == _col(6.0, lo, hi, 60) and spec.index("\u2524") == _col(14.0, lo, hi, 60)
    within = next(r for r in rows if r.startswith("within"))[9:]
    overall = next(r for r in rows if r.startswith("overall"))[9:]
    w_lo, w_hi = CAP.mean - 3 * 0.9, CAP.mean + 3 * 0.9                     # ±3σ within [definition]
    assert within.index(WITHIN) == _col(w_lo, lo, hi, 60) and within.rindex(WITHIN) == _col(w_hi, lo, hi, 60)
    o_lo = CAP.mean - 3 * CAP.sigma_overall
    assert overall.index(OVERALL) == _col(o_lo, lo, hi, 60)
    assert "mean " + fmt(CAP.mean) in rows[-1]


def test_strip_marks_spread_beyond_a_limit():
    cap = assess(X, 0.9, "rbar", Spec(lsl=8.0, usl=14.0))                   # −3σ reaches below 8
    assert BEYOND in spec_strip(cap, width=80)
    assert BEYOND not in spec_strip(CAP, width=80)


def test_plotting_positions_follow_blom():
    x, z = plotting_positions([3.0, 1.0, 2.0])
    assert list(x) == [1.0, 2.0, 3.0]
    assert z == pytest.approx(stats.norm.ppf((np.arange(1, 4) - 0.375) / 3.25))   # Blom [from memory]
    # rounded readings: one point per cell, at its upper edge, at the cumulative share
    x, z = plotting_positions([1.0, 1.0, 2.0, 3.0, 3.0, 3.0], step=1.0)
    assert list(x) == [1.5, 2.5, 3.5]
    assert z == pytest.approx(stats.norm.ppf((np.array([2, 3, 6]) - 0.375) / 6.25))


def test_quantile_plot_puts_the_normal_line_through_the_median_row():
    lo, hi = 4.0, 16.0
    lines = quantile_plot(CAP, X, width=69, height=15, lo_hi=(lo, hi)).splitlines()
    mid = next(i for i, line in enumerate(lines) if line.strip().startswith("50%"))
    body = lines[mid][9:]
    # at the column of the mean the model's line (or a reading on it) sits on the 50 % row [definition]
    assert body[_col(CAP.mean, lo, hi, 60)] in "\u00b7" + POINT
    top = next(i for i, line in enumerate(lines) if line.strip().startswith("99.865%"))
    assert top < mid and POINT in "".join(lines[:top + 1])                  # the largest readings plot high
    assert all(len(line) <= 69 for line in lines)


def test_statements_lead_with_the_verdict_and_keep_every_figure():
    says = statements(CAP, unit="mm", name="bore")
    assert says[0] == ("verdict", f"Verdict: {CAP.verdict}")
    text = " ".join(t for _, t in says)
    for v in (CAP.cp, CAP.cpl, CAP.cpu, CAP.cpk, CAP.pp, CAP.ppl, CAP.ppu, CAP.ppk, CAP.cpm, CAP.k):
        assert num(v) in text
    for ci in (CAP.cp_ci, CAP.cpk_ci, CAP.pp_ci, CAP.ppk_ci, CAP.cpm_ci):   # each bounded index with its bound
        assert f"{num(ci[0])} \u2013 {num(ci[1])}" in text
    fallout = [t for k, t in says if k == "fallout"]
    assert [t.split(" (")[0] for t in fallout[:2]] == ["Below the LSL", "Above the USL"]   # one sentence a side
    assert "6 mm" in text and "bore" in text
    assert any(k == "resolution" for k, _ in says) and says[-1][0] == "note"


def test_one_sided_specification_has_one_fallout_side():
    cap = assess(X, 0.9, "rbar", Spec(usl=14.0))
    sides = [t for k, t in statements(cap) if k == "fallout"]
    assert len(sides) == 2 and sides[0].startswith("Above the USL") and sides[1].startswith("In all")


def test_text_report_order_and_width():
    text = capability_text(CAP, width=70, readings=X, name="bore", unit="mm")
    lines = text.splitlines()
    assert lines[0] == "Capability of bore (mm) against the specification"
    assert lines[2].startswith("Verdict:")
    assert max(len(line) for line in lines) <= 70
    assert text.index("spec ") < text.index("Within (") < text.index("Normal quantile plot") < text.index("Notes:")
    assert not re.search(r"\b(nan|inf)\b", text.lower())
