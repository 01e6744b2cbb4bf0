"""Stream attribution when a spread is zero: no variance at all, no within-subgroup spread outside the
subgroup shown, a stream constant apart from the reading shown; and the lowest stream named.

Written against the survivors of test_ref_stream_history.py (tests/MUTATION.md).  Each expectation follows
from a division by that zero spread being undefined [definition]; means and SDs by numpy.
"""
import numpy as np

from tests.conftest import make_dataset
from workbench.core.analysis import analyse, comparison_of
from workbench.core.model import Exclusion, Settings
from workbench.core.streams import breakdown


def readings(seed=4):
    return np.random.default_rng(seed).normal(10, 0.3, (40, 4)).round(2)


def test_no_variance_at_all_has_no_share_and_few_streams_no_ranks():
    """Every reading equal: the variance components are both 0, so there is no share between streams;
    with fewer than two streams to compare there are no ranks either.  Kills the share's guard forced or
    ``>= 0`` (0/0) and the ranks starting as "" instead of None."""
    flat = comparison_of(analyse(make_dataset(np.full((10, 3), 7.0)), Settings()))
    assert flat.share_between is None and not flat.differ
    few = comparison_of(analyse(make_dataset([[1.0, 2.0, np.nan], [1.5, np.nan, 3.0], [1.2, np.nan, np.nan]]),
                                Settings(chart="xbar-r")))
    assert few.kruskal_ranks is None


def test_the_advice_names_the_lowest_stream():
    """S4 set 0.5 below the others, S2 0.5 above: "highest mean S2, lowest S4" [means by numpy].  Kills the
    lowest stream looked up from None."""
    v = readings()
    v[:, 1] += 0.5
    v[:, 3] -= 0.5
    c = comparison_of(analyse(make_dataset(v), Settings()))
    assert np.argmin(v.mean(axis=0)) == 3 and "highest mean S2, lowest S4)" in c.advice


def test_no_within_spread_outside_the_subgroup_shown_gives_no_gap():
    """Readings equal within every subgroup but the one shown, which is excluded: σ̂ within is 0, so no
    reading's gap can be scaled (NaN), though the subgroup itself has a range.  Kills the within-sigma guard
    forced (``or True``), ``or`` and ``>= 0`` (a gap of ±∞)."""
    level = np.random.default_rng(1).normal(10, 0.3, 40)
    v = np.repeat(level[:, None], 4, axis=1)
    v[12] = [10.0, 10.4, 9.7, 10.1]
    a = analyse(make_dataset(v), Settings(), [Exclusion("13")])
    assert a.sigma_within == 0
    b = breakdown(a, 12)
    assert b.range > 0 and all(np.isnan(r.gap_z) for r in b.rows)


def test_a_stream_constant_apart_from_its_excluded_reading_has_no_z():
    """Stream S1 reads 10.0 everywhere but at the subgroup shown, where its reading (11.0) is excluded: its
    history has SD 0, so the z of 11.0 against it is undefined (NaN), not +∞.  Kills ``sd >= 0`` and the
    guard forced for z."""
    v = readings()
    v[:, 0] = 10.0
    v[12, 0] = 11.0
    b = breakdown(analyse(make_dataset(v), Settings(), [Exclusion("13", "S1")]), 12)
    assert b.rows[0].stream_sd == 0.0 and np.isnan(b.rows[0].z)
