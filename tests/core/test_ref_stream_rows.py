"""Stream attribution field by field: each stream's row against its own history computed here, the count
data breakdown (no test reached it), summary data, the words of each verdict and of the comparison.

Written against the mutants that survived tests/core/test_streams.py and test_ref_breakdown_sides.py
(tests/MUTATION.md); each test names the mutations it kills.  References computed in the tests: numpy's
mean and sample SD (ddof 1) [reference library]; the binomial and Poisson standard errors of a rate,
√(p(1−p)/n) and √(u/n) [definition; Montgomery, *Introduction to SQC*, ch. 7]; the one-way random-effects
variance components (MSB − MSW)/n₀ [Montgomery, *Design and Analysis of Experiments*, ch. 3].
"""
import numpy as np
import pytest

from tests.conftest import make_dataset, make_summary
from workbench.core.analysis import analyse, comparison_of
from workbench.core.model import Dataset, Exclusion, Layout, Settings
from workbench.core.streams import breakdown


def readings(seed=4):
    return np.random.default_rng(seed).normal(10, 0.3, (40, 4)).round(2)


def test_each_row_against_the_streams_own_history():
    """z = (x − mean of the stream) / its sample SD over the readings not excluded; the row carries that
    mean and SD; the reading inside the range has role "" and share 0, the lowest has role "min".

    Kills ``ss / (n + 1)`` and ``(n − 2)`` for the SD, ``(x − m)·sd`` and ``x + m`` in z, ``sd ≥ 0`` /
    ``> 1`` for a defined z, the stream mean or SD dropped from the row, and the default role ``"XXXX"``
    and share 1 of a reading inside the range."""
    v = readings()
    v[20] = [10.0, 10.3, 9.0, 10.1]
    a = analyse(make_dataset(v), Settings(), [Exclusion("3", "S2")])
    b = breakdown(a, 20)
    keep = np.ones(40, bool)
    keep[2] = False
    for j, row in enumerate(b.rows):
        hist = v[keep, j] if j == 1 else v[:, j]
        assert row.stream_mean == pytest.approx(hist.mean(), rel=1e-12)
        assert row.stream_sd == pytest.approx(hist.std(ddof=1), rel=1e-12)
        assert row.z == pytest.approx((v[20, j] - hist.mean()) / hist.std(ddof=1), rel=1e-10)
    assert [r.role for r in b.rows] == ["", "max", "min", ""]
    assert b.rows[0].range_share == 0.0 and b.rows[3].range_share == 0.0
    assert b.rows[2].range_share == pytest.approx((1.3 - 0.3) / 1.3)
    assert b.label == "21" and b.position == 20
    assert b.mean == pytest.approx(v[20].mean()) and b.range == pytest.approx(1.3)


def test_a_low_driver_that_sets_the_minimum_is_named_below():
    """One stream 1.0 below three others at 10.0 (σ̂ = R̄/d2 of the data): its gap is far past 2.5σ below,
    it sets the subgroup minimum and all of the range [share (R − R₋ⱼ)/R = 1].  Kills the verdict's
    ``"XXbelowXX"``, ``gap_z ≥ 0`` / ``> 1`` for the side, ``|gap| > 2.5``, the roles ``"XXminXX"`` and
    ``"MIN"``, the words for the minimum altered and the percentage as ``100 / share`` or ``101 · share``."""
    v = readings()
    v[15] = [10.0, 10.0, 9.0, 10.0]
    b = breakdown(analyse(make_dataset(v), Settings()), 15)
    low = b.rows[2]
    assert b.driver == "S3" and low.role == "min" and low.range_share == 1.0 and low.gap_z < -2.5
    assert b.verdict.startswith(f"stream S3 read {abs(low.gap_z):.1f}σ below the other streams")
    assert b.verdict.endswith(" and set the subgroup minimum — 100% of the range")


def test_two_readings_have_a_range_and_a_gap():
    """A subgroup with two readings left (two missing): the range is their difference and each reading's
    gap is set against the one other [definition, with m = 1: σ̂·√2].  Kills ``vals.size > 2`` / ``>= 3``
    for a defined range, ``others.size > 1`` / ``>= 2`` for a gap, the range without a stream as 1 and
    ``use = ~nan | ~cell_only``."""
    v = readings()
    v[10] = [10.0, np.nan, 11.0, np.nan]
    a = analyse(make_dataset(v), Settings())
    b = breakdown(a, 10)
    assert b.range == pytest.approx(1.0) and b.mean == pytest.approx(10.5)
    sw = a.sigma_within
    assert b.rows[2].gap_z == pytest.approx(1.0 / (sw * np.sqrt(2.0)), rel=1e-12)
    assert b.rows[0].gap_z == pytest.approx(-1.0 / (sw * np.sqrt(2.0)), rel=1e-12)
    assert b.rows[2].range_share == 1.0 and b.rows[2].role == "max"
    assert np.isnan(b.rows[1].gap_z) and b.rows[1].role == ""


def test_all_streams_low_together_is_a_common_cause_below():
    """Every stream 2.5 SDs low: no stream stands out from the others, the mean z·√k passes 2.5, and the
    verdict says they moved together below their history.  Kills the common-cause side forced, tested
    with ``> 1`` or ``>= 0``, the side words altered or None, and the verdict's fixed words altered."""
    v = readings()
    v[25] = v.mean(axis=0) - 2.5 * v.std(axis=0, ddof=1)
    b = breakdown(analyse(make_dataset(v), Settings()), 25)
    assert b.driver is None
    assert b.verdict.startswith("all 4 streams moved together, on average ")
    assert "σ below their own history, and no stream stands out from the others: a common cause (material, " \
           "setting, environment) is more likely than one stream" in b.verdict


def test_no_single_stream_stands_out_names_the_largest_gap():
    """An ordinary subgroup: no driver, and the verdict names the largest |gap| with its sign.  Kills the
    words altered."""
    v = readings()
    a = analyse(make_dataset(v), Settings())
    b = breakdown(a, 5)
    top = max(b.rows, key=lambda r: abs(r.gap_z))
    assert b.driver is None
    assert b.verdict == (f"no single stream stands out (largest: {top.stream} at {top.gap_z:+.1f}σ against the "
                         "other streams)")


def counts_data(counts, sizes, streams=("L1", "L2", "L3")):
    counts, sizes = np.asarray(counts, float), np.asarray(sizes, float)
    m = counts.shape[0]
    return Dataset(path="c.csv", sha256="0" * 64, rows=m, size_bytes=0, layout=Layout("wide"),
                   labels=np.array([f"B{i + 1:02d}" for i in range(m)]), streams=streams, values=None,
                   counts=counts, sizes=sizes)


@pytest.mark.parametrize("chart", ["p", "u"])
def test_count_data_breakdown_against_each_streams_own_rate(chart):
    """Count data: each stream's rate count/size at the subgroup against its own rate over the cells not
    excluded, in binomial (p) or Poisson (u) standard errors of that subgroup's size [definition]; the
    stream far above its history is named with its rate and history.  Kills the 177 mutants of
    ``_count_breakdown`` that no test reached (each field, the variance, the side, the words) and the
    count data's route in ``breakdown``."""
    rng = np.random.default_rng(9)
    sizes = rng.integers(180, 220, (24, 3)).astype(float)
    counts = rng.binomial(sizes.astype(int), 0.05).astype(float)
    counts[12, 1] = 40.0                                          # line 2 runs far above its history
    a = analyse(counts_data(counts, sizes), Settings(chart=chart), [Exclusion("B04", "L3")])
    b = breakdown(a, 12)
    used = np.ones((24, 3), bool)
    used[3, 2] = False
    hist = np.where(used, counts, 0).sum(axis=0) / np.where(used, sizes, 0).sum(axis=0)
    rate = counts[12] / sizes[12]
    var = hist * (1 - hist) / sizes[12] if chart == "p" else hist / sizes[12]
    z = (rate - hist) / np.sqrt(var)
    sub = counts[12].sum() / sizes[12].sum()
    assert (b.position, b.label, b.driver) == (12, "B13", "L2")
    assert b.mean == pytest.approx(sub, rel=1e-12) and np.isnan(b.range)
    for j, row in enumerate(b.rows):
        assert row.stream == ("L1", "L2", "L3")[j]
        assert row.reading == pytest.approx(rate[j], rel=1e-12)
        assert row.deviation == pytest.approx(rate[j] - sub, rel=1e-9, abs=1e-15)
        assert row.stream_mean == pytest.approx(hist[j], rel=1e-12)
        assert row.stream_sd == pytest.approx(np.sqrt(var[j]), rel=1e-12)
        assert row.z == pytest.approx(z[j], rel=1e-10) and row.gap_z == pytest.approx(z[j], rel=1e-10)
        assert (row.role, row.range_share, row.excluded) == ("", 0.0, False)
    assert b.verdict == (f"stream L2 ran at {rate[1]:.4g}, {abs(z[1]):.1f} standard errors above its own "
                         f"history ({hist[1]:.4g})")
    assert breakdown(a, 3).rows[2].excluded
    # an ordinary subgroup: nobody stands out, the largest |z| is named with its sign
    quiet = breakdown(a, 5)
    top = max(quiet.rows, key=lambda r: abs(r.z))
    assert abs(top.z) < 2.5 and quiet.driver is None
    assert quiet.verdict == f"no single stream stands out (largest: {top.stream} at {top.z:+.1f} standard errors)"


def test_count_data_stream_far_below_and_a_subgroup_wholly_excluded():
    """A stream with no defectives where its history has 10 %: z = −0.1/√(0.1·0.9/200) = −4.7, named below;
    with each of its cells excluded a subgroup has no counts to compare [definition]."""
    sizes = np.full((20, 2), 200.0)
    counts = np.full((20, 2), 20.0)
    counts[::2, 0] = 18.0
    counts[1::2, 0] = 22.0
    counts[7, 1] = 0.0
    a = analyse(counts_data(counts, sizes, ("L1", "L2")), Settings(chart="p"), [Exclusion("B10")])
    b = breakdown(a, 7)
    hist = (counts[:, 1].sum() - counts[9, 1]) / (sizes[:, 1].sum() - 200)
    assert b.driver == "L2" and b.rows[1].z == pytest.approx((0 - hist) / np.sqrt(hist * (1 - hist) / 200))
    assert " standard errors below its own history " in b.verdict
    gone = breakdown(a, 9)
    assert gone.driver is None and gone.verdict == "no counts in this subgroup" and all(r.excluded for r in gone.rows)


def test_summary_data_with_and_without_the_readings_of_the_subgroup():
    """Summary data (n, mean per subgroup) hold no readings: the breakdown says so and shows the plotted
    mean; given the subgroup's readings from where the data live it compares them (no history there).
    Kills the summary route's fields dropped or set to None, its words altered, the readings' names taken
    from the values, and the exclusion of a wholly excluded subgroup not marked on the rows."""
    rng = np.random.default_rng(2)
    n = np.full(30, 4.0)
    mean = rng.normal(10, 0.5, 30)
    a = analyse(make_summary(n, mean, rng=np.full(30, 1.2)), Settings(), [Exclusion("8")])
    b = breakdown(a, 4)
    assert (b.position, b.label, b.rows, b.driver) == (4, "5", (), None)
    assert b.mean == pytest.approx(mean[4]) and np.isnan(b.range)
    assert b.verdict == "summary data hold no readings per stream"
    got = breakdown(a, 4, (("A", "B", "C"), [10.0, 10.4, 9.8]))
    assert [r.stream for r in got.rows] == ["A", "B", "C"]
    assert [r.reading for r in got.rows] == [10.0, 10.4, 9.8]
    assert got.mean == pytest.approx(10.0 + 0.2 / 3) and got.range == pytest.approx(0.6)
    assert all(np.isnan(r.z) and np.isnan(r.stream_mean) for r in got.rows) and not any(r.excluded for r in got.rows)
    assert [r.role for r in got.rows] == ["", "max", "min"]
    excluded = breakdown(a, 7, (("A", "B"), [10.0, 10.4]))
    assert all(r.excluded for r in excluded.rows) and excluded.range == pytest.approx(0.4)


def test_the_comparison_words_and_the_share_between_streams():
    """The streams' comparison: with a shift the advice names the highest and lowest mean and the share of
    the variance between streams, vb/(vb + vw) as a whole percentage [random-effects components computed
    here]; without one it says charting together is reasonable; one reading per stream is too few; a
    single stream is not compared.  Kills the share's formula and conditions, ``p <= ALPHA``, the share not
    passed to the advice, the fields streams, sds, share and ranks dropped, ``size > 2`` / ``>= 3`` for a
    stream that can be compared, and each fixed part of the advice altered."""
    rng = np.random.default_rng(4)
    v = rng.normal(10, 1, (60, 3))
    v[:, 1] += 1.5
    c = comparison_of(analyse(make_dataset(v), Settings()))
    groups = v.T
    msw = np.mean([g.var(ddof=1) for g in groups])
    msb = 60 * np.var(groups.mean(axis=1), ddof=1)
    vb = (msb - msw) / 60
    assert c.share_between == pytest.approx(vb / (vb + msw), rel=1e-9)
    assert c.streams == ("S1", "S2", "S3") and c.sds == pytest.approx(tuple(g.std(ddof=1) for g in groups))
    assert c.kruskal_ranks is not None
    assert c.advice.startswith(f"the streams differ (ANOVA p = {c.anova_p:.3g}; {100 * c.share_between:.0f}% of the "
                               "variance lies between streams; highest mean S2, lowest ")
    assert c.advice.endswith("Subgroups taken across streams mix stream-to-stream differences into the "
                             "within-subgroup variation, which widens the X̄ limits and hides shifts: consider "
                             "setting the streams to a common aim, or charting each stream on its own")
    same = comparison_of(analyse(make_dataset(np.random.default_rng(2).normal(10, 1, (60, 3))), Settings()))
    assert not same.differ and same.advice == (f"no evidence that the streams differ (ANOVA p = {same.anova_p:.3g});"
                                               " charting them together in one subgroup is reasonable")
    # two readings per stream are enough to compare; three streams are compared
    two = comparison_of(analyse(make_dataset([[1.0, 2.0, 3.1], [1.2, 2.3, 3.0], [0.9, 2.2, 2.8]]), Settings()))
    assert two.anova_f is not None and two.counts == (3, 3, 3)
    few = np.array([[1.0, 2.0], [1.5, np.nan], [np.nan, 2.5]])
    tiny = comparison_of(analyse(make_dataset(few), Settings(chart="xbar-r")))
    assert tiny.anova_p is not None
