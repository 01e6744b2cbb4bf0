"""Report sections: JSON without NaN, terminal text within its width, Markdown, text histogram."""
from __future__ import annotations

import json
import re

import numpy as np
import pytest

from workbench.core.capability.assess import assess
from workbench.core.capability.histogram import EXCLUDED, FULL, LIMIT, OUTSIDE, TARGET
from workbench.core.capability.report import (capability_json, capability_markdown, capability_text,
                                              text_histogram)
from workbench.core.model import Spec

RNG = np.random.default_rng(50)
CASES = {
    "normal": (RNG.normal(10, 1, 80), 0.9, Spec(lsl=6, usl=14)),
    "lower-bounds": (RNG.normal(10, 1, 80), 0.9, Spec(lsl=6, usl=14, bounds="lower", target=9.5)),
    "upper-only": (RNG.normal(10, 1, 25), 0.9, Spec(usl=14)),
    "box-cox": (RNG.lognormal(1, 0.5, 120), 1.0, Spec(lsl=0.5, usl=15, method="box-cox")),
    "percentile": (RNG.gamma(2, 1.5, 120), 1.0, Spec(usl=15, method="percentile")),
    "all-equal": (np.full(30, 2.0), 0.0, Spec(lsl=1, usl=3)),
    "no-within": (RNG.normal(10, 1, 40), None, Spec(lsl=6, usl=14, method="normal")),
    "far-off": (RNG.normal(100, 1, 40), 1.0, Spec(lsl=6, usl=14)),
}


@pytest.fixture(scope="module", params=sorted(CASES))
def cap(request):
    x, sw, spec = CASES[request.param]
    return assess(x, sw, "rbar", spec, open_signals=1)


def test_json_never_contains_nan(cap):
    d = capability_json(cap)
    text = json.dumps(d, allow_nan=False)   # raises on NaN / inf
    assert json.loads(text) == d
    for key in ("method", "sigma_within", "sigma_overall", "ci_level", "bounds", "ppm", "normality", "warnings"):
        assert key in d
    for pair in d["bounds"].values():
        assert pair is None or (isinstance(pair, list) and len(pair) == 2)
    for side in ("below_lsl", "above_usl", "total"):
        assert side in d["ppm"]["observed"]


def test_json_figures_are_the_results(cap):
    d = capability_json(cap)
    assert d["indices"]["cpk"] == cap.cpk and d["indices"]["ppk"] == cap.ppk
    assert d["n"] == cap.n and d["verdict"] == cap.verdict
    if cap.ci_kind == "lower" and cap.cpk_ci is not None:
        assert d["bounds"]["cpk"][1] is None        # +inf upper end -> None


@pytest.mark.parametrize("width", [60, 80, 100])
def test_text_section_fits_its_width_and_never_prints_nan(cap, width):
    text = capability_text(cap, width=width)
    assert max(len(line) for line in text.splitlines()) <= width
    assert not re.search(r"\b(nan|inf)\b", text.lower())   # never a NaN / inf shown as a number
    assert "Verdict:" in text and "Notes:" in text
    assert "not shown to be in control" in " ".join(text.split())   # words may wrap


def test_markdown_section(cap):
    md = capability_markdown(cap)
    assert md.startswith("### Capability against the specification")
    assert "**Verdict:" in md and not re.search(r"\b(nan|inf)\b", md.lower())
    # the composition of our own: no two-column index table and no observed/expected fallout grid
    assert "| Index | Value |" not in md and "| ppm | below LSL" not in md
    assert "```" in md and "spec" in md        # the specification strip, drawn once


def test_histogram_lines_fit_and_markers_sit_at_their_values():
    x = np.random.default_rng(51).normal(10, 1, 500)
    out = text_histogram(x, 6.0, 14.0, 10.0, width=60, height=10)
    lines = out.splitlines()
    assert max(len(line) for line in lines) <= 60
    rows = lines[:10]
    # the tallest bin reaches the top row; the top row's label is the largest bin count
    assert FULL in rows[0]
    gutter = rows[0].index("\u2502") + 1
    counts, _ = np.histogram(x, bins=np.linspace(*_range(x, 6.0, 14.0), 60 - gutter + 1))
    assert rows[0].split()[0] == str(counts.max())
    # LSL/USL lines are drawn in the empty top row at the columns of 6 and 14
    lo, hi = _range(x, 6.0, 14.0)
    for v in (6.0, 14.0):
        col = gutter + int((v - lo) / (hi - lo) * (60 - gutter))
        assert rows[0][col] == LIMIT
    assert TARGET in out and "LSL" in lines[-3] and "USL" in lines[-3]


def _range(x, lsl, usl):
    lo, hi = min(x.min(), lsl), max(x.max(), usl)
    span = hi - lo
    return lo - 0.03 * span, hi + 0.03 * span


def test_histogram_shows_outside_and_excluded_readings():
    x = np.r_[np.random.default_rng(52).normal(10, 1, 200), [15.5, 15.6, 15.7]]
    ex = np.array([9.0, 9.1, 9.2, 9.3])
    out = text_histogram(x, 6.0, 14.0, None, width=50, height=8, excluded=ex)
    assert OUTSIDE in out and EXCLUDED in out and TARGET not in out.splitlines()[0]
    assert text_histogram(x, 6.0, 14.0, None, width=50, height=8).count(EXCLUDED) == 0
    assert "excluded" in out.splitlines()[-1]


def test_histogram_degenerate_inputs():
    assert text_histogram([], 1.0, 2.0, None) == "(no readings to draw)"
    out = text_histogram([5.0] * 10, None, None, None, width=30, height=4)
    assert FULL in out and max(len(line) for line in out.splitlines()) <= 30
