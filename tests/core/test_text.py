"""The one formatting rule for numbers people read (core/text.py)."""
from __future__ import annotations

import math

import numpy as np
import pytest

from workbench.core.text import change_texts, fmt, num, nums, reading


@pytest.mark.parametrize("value, shown", [
    # 4 significant figures, trailing zeros kept [definition: significant figures; 4 is common practice]
    (0.37895, "0.3790"), (500.5661, "500.6"), (499.6379, "499.6"), (-0.116667, "-0.1167"), (1.5, "1.500"),
    (105.96, "106.0"), (0.9, "0.9000"),
    # more integer digits than that: all of them, never cut, never an exponent
    (64995.2, "64995"), (1234567.8, "1234568"),
    # exactly zero, and below 0.0001 with an exponent
    (0.0, "0"), (-0.0, "0"), (1.2344e-7, "1.234e-07"),
])
def test_four_significant_figures(value, shown):
    assert num(value) == shown


@pytest.mark.parametrize("missing", [None, float("nan"), float("inf"), "text"])
def test_missing_values_read_as_a_dash_never_none_or_nan(missing):
    assert num(missing) == "—" and fmt(missing) == "—"


def test_rounding_is_within_half_a_unit_of_the_fourth_figure_on_random_values():
    # [definition] a value rounded to 4 significant figures differs from it by at most half a unit in the 4th
    rng = np.random.default_rng(11)
    for v in rng.lognormal(0, 6, 2000) * rng.choice([-1, 1], 2000):
        text = num(v)
        exponent = math.floor(math.log10(abs(v)))
        unit = 10.0 ** (exponent - 3) if abs(v) < 1e4 else 1.0
        assert abs(float(text) - v) <= unit / 2 * (1 + 1e-9), (v, text)
        digits = text.lstrip("-").split("e")[0].replace(".", "").lstrip("0")
        assert len(digits) == 4 or abs(v) >= 1e4, (v, text)  # trailing zeros kept: always 4 figures


def test_values_that_differ_never_print_alike():
    # a subgroup mean just beyond its UCL must not read as equal to it [definition]
    mean, ucl = 500.5671, 500.5661
    a, b = nums((mean, ucl))
    assert a != b and float(a) > float(b)
    assert nums((500.1, 499.6, 500.6)) == ["500.1", "499.6", "500.6"]  # no more figures than needed
    assert change_texts(1.92461, 1.92459) == ("1.92461", "1.92459")
    assert fmt({"min": 1.7391, "max": 1.7958}) == "1.739 … 1.796 (varies)"


def test_a_reading_shows_every_digit_it_has():
    assert reading(499.8) == "499.8" and reading(2.215) == "2.215" and reading(0.0001234567) == "0.0001234567"
    assert reading(float("nan")) == "—"
