"""The Kruskal–Wallis test without a sort: equal to scipy.stats.kruskal wherever it claims exact ranks."""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy import stats

from workbench.core.ranks import kruskal_with_method


def _check(groups):
    h, p, how = kruskal_with_method(groups)
    ref = stats.kruskal(*groups)  # [printed] Kruskal & Wallis (1952) as implemented by scipy.stats.kruskal
    assert how.startswith("exact")
    assert h == pytest.approx(ref.statistic, rel=1e-9, abs=1e-9)
    assert p == pytest.approx(ref.pvalue, rel=1e-7, abs=1e-300)
    return how


@settings(max_examples=60, deadline=None)
@given(decimals=st.integers(0, 4), k=st.integers(2, 5), seed=st.integers(0, 2**31 - 1),
       shift=st.floats(-3, 3), level=st.sampled_from([0.0, 7.5, -250.0, 10_000.0]))
def test_counted_ranks_equal_scipy_on_rounded_readings(decimals, k, seed, shift, level):
    rng = np.random.default_rng(seed)
    sizes = rng.integers(2, 40, k)
    groups = [np.round(level + rng.normal(shift * (j == 0), 1.0, n), decimals) for j, n in enumerate(sizes)]
    if np.unique(np.concatenate(groups)).size < 2:
        return  # all identical: undefined (checked below)
    how = _check(groups)
    assert "counted" in how  # rounded readings never need the sort


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 2**31 - 1), k=st.integers(2, 4))
def test_sorted_ranks_equal_scipy_on_full_precision_readings(seed, k):
    rng = np.random.default_rng(seed)
    groups = [rng.normal(0, 1, int(n)) for n in rng.integers(2, 30, k)]
    how = _check(groups)
    assert "sort" in how  # full-precision readings have no resolution to count at


def test_codes_that_would_merge_two_readings_fall_back_to_the_sort():
    # 0.1 and 0.1 + 1 ulp share the code 1 at resolution 0.1 but are different readings, not a tie;
    # the odd reading sits past the sample that picks the resolution, so only the full check sees it
    rng = np.random.default_rng(5)
    a = np.r_[np.round(rng.normal(0, 1, 800), 1), np.nextafter(0.1, 1.0)]
    b = np.round(rng.normal(0, 1, 700), 1)
    assert "sort" in _check([a, b])
    a[-1] = 0.1
    assert "counted" in _check([a, b])


def test_ties_and_negative_zero():
    # [definition] -0.0 == 0.0 is one tied value; the tie correction applies
    a = np.array([0.0, -0.0, 1.0, 2.0, 2.0])
    b = np.array([0.0, 3.0, 3.0, 4.0])
    assert "counted" in _check([a, b])


def test_all_identical_is_undefined():
    assert kruskal_with_method([np.ones(4), np.ones(5)])[:2] == (None, None)


def test_wide_range_falls_back_to_the_sort():
    a = np.array([0.0, 1e9, 5.0])
    b = np.array([1.0, 2.5e9, 7.0])
    assert "sort" in _check([a, b])
