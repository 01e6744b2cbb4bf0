"""Stream comparison and attribution."""
import numpy as np
import pytest
from scipy import stats

from tests.conftest import make_dataset
from workbench.core.analysis import analyse, comparison_of
from workbench.core.model import Exclusion, Settings
from workbench.core.streams import breakdown, kruskal_wallis


def _data(shift=0.0, seed=4):
    rng = np.random.default_rng(seed)
    v = rng.normal(10, 1, (60, 4)).round(1)  # rounding makes ties, to exercise the tie correction
    v[:, 2] += shift
    return v


@pytest.mark.parametrize("shift", [0.0, 0.4, 2.0])
def test_anova_and_kruskal_equal_scipy(shift):
    # scipy.stats.f_oneway and scipy.stats.kruskal as the reference implementations
    v = _data(shift)
    cmp_ = comparison_of(analyse(make_dataset(v), Settings()))
    f = stats.f_oneway(*v.T)
    k = stats.kruskal(*v.T)
    assert cmp_.anova_f == pytest.approx(f.statistic, rel=1e-10)
    assert cmp_.anova_p == pytest.approx(f.pvalue, rel=1e-8, abs=1e-300)
    assert cmp_.kruskal_h == pytest.approx(k.statistic, rel=1e-10)
    assert cmp_.kruskal_p == pytest.approx(k.pvalue, rel=1e-8, abs=1e-300)
    assert cmp_.differ == (f.pvalue < 0.05)


def test_kruskal_all_identical_is_undefined():
    assert kruskal_wallis([np.ones(4), np.ones(5)]) == (None, None)


def test_variance_components_and_advice():
    # one-way random-effects model, method of moments (Montgomery, Design and Analysis of Experiments)
    v = _data(2.0)
    cmp_ = comparison_of(analyse(make_dataset(v), Settings()))
    groups = v.T
    msw = np.mean([g.var(ddof=1) for g in groups])
    msb = 60 * np.var(groups.mean(axis=1), ddof=1)
    assert cmp_.var_within == pytest.approx(msw)
    assert cmp_.var_between == pytest.approx((msb - msw) / 60)
    assert cmp_.differ and "streams differ" in cmp_.advice and "S3" in cmp_.advice


def test_excluded_readings_leave_the_stream_history():
    v = _data()
    a = analyse(make_dataset(v), Settings(), [Exclusion("5", "S2")])
    assert comparison_of(a).counts == (60, 59, 60, 60)
    assert comparison_of(a).means[1] == pytest.approx(np.delete(v[:, 1], 4).mean())


def test_breakdown_names_the_stream_out_of_line_and_its_range_share():
    v = _data()
    v[30] = [10.0, 10.2, 9.9, 10.1]
    v[30, 3] = 14.0
    a = analyse(make_dataset(v), Settings())
    b = breakdown(a, 30)
    row = b.rows[3]
    assert b.driver == "S4" and row.role == "max"
    # share of the range: (R - R without S4) / R
    assert row.range_share == pytest.approx((14.0 - 9.9 - (10.2 - 9.9)) / (14.0 - 9.9))
    assert row.deviation == pytest.approx(14.0 - v[30].mean())
    assert "S4" in b.verdict and "maximum" in b.verdict
    assert b.rows[0].role == "" and b.rows[0].range_share == 0.0


def test_breakdown_common_cause_when_all_streams_move():
    v = _data()
    v[40] += 2.5
    b = breakdown(analyse(make_dataset(v), Settings()), 40)
    assert b.driver is None and "moved together" in b.verdict


def test_breakdown_of_an_excluded_subgroup_still_names_its_driver():
    v = _data()
    v[30, 3] += 5.0
    a = analyse(make_dataset(v), Settings(), [Exclusion("31")])
    b = breakdown(a, 30)
    assert b.driver == "S4" and all(r.excluded for r in b.rows)
