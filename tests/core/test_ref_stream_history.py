"""Stream attribution: the history left after excluding whole subgroups, missing readings, the verdicts'
other sides, and count data without sizes or on an np chart.

Written against the mutants that survived tests/core/test_ref_stream_rows.py (tests/MUTATION.md); each test
names the mutations it kills.  References computed here: numpy's mean and sample SD of the readings kept
[reference library]; binomial and Poisson standard errors [definition; Montgomery, *Introduction to SQC*,
ch. 7].
"""
import numpy as np
import pytest

from tests.conftest import make_dataset
from workbench.core.analysis import analyse
from workbench.core.model import Dataset, Exclusion, Layout, Settings
from workbench.core.streams import breakdown


def readings(seed=4):
    return np.random.default_rng(seed).normal(10, 0.3, (40, 4)).round(2)


def test_whole_subgroups_excluded_leave_each_streams_history():
    """Two whole subgroups excluded (one far off): each stream's mean and SD come from the other 38 rows,
    and a missing reading is left out of its stream's history.  Kills the excluded rows kept
    (``keep_rows = None`` or ``… and False``), the mask inverted (the history then is the excluded rows),
    and the missing readings kept (``nan.any() or True`` is harmless, ``col[nan]`` is not)."""
    v = readings()
    v[5] += 3.0
    v[17, 2] = np.nan
    a = analyse(make_dataset(v), Settings(), [Exclusion("6"), Exclusion("12")])
    b = breakdown(a, 20)
    keep = np.ones(40, bool)
    keep[[5, 11]] = False
    for j, row in enumerate(b.rows):
        hist = v[keep, j]
        hist = hist[~np.isnan(hist)]
        assert row.stream_mean == pytest.approx(hist.mean(), rel=1e-12), j
        assert row.stream_sd == pytest.approx(hist.std(ddof=1), rel=1e-12), j


def test_all_streams_high_together_is_a_common_cause_above():
    """Every stream 2.5 SDs above its history: the verdict says they moved together above it [the mean z
    times √k past 2.5].  Kills the common-cause side forced to "below" (``and False``), its words altered
    (``"XXaboveXX"``, ``"ABOVE"``) and ``|mean z|·√k > 2.5``."""
    v = readings()
    v[25] = v.mean(axis=0) + 2.5 * v.std(axis=0, ddof=1)
    b = breakdown(analyse(make_dataset(v), Settings()), 25)
    assert b.driver is None
    assert b.verdict.startswith("all 4 streams moved together, on average ")
    assert "σ above their own history" in b.verdict


def test_a_high_driver_names_the_maximum_and_its_share():
    """A stream 1.5 above three equal readings sets the maximum and all of the range [(R − R₋ⱼ)/R = 1]:
    "and set the subgroup maximum — 100% of the range".  Kills the words for the maximum altered and the
    percentage as ``100 / share``."""
    v = readings()
    v[15] = [10.0, 10.0, 11.5, 10.0]
    b = breakdown(analyse(make_dataset(v), Settings()), 15)
    assert b.driver == "S3" and b.verdict.endswith(" and set the subgroup maximum — 100% of the range")
    v[15] = [10.0, 10.2, 11.5, 10.0]  # share (1.5 − 0.2)/1.5 = 87 %
    b = breakdown(analyse(make_dataset(v), Settings()), 15)
    assert b.verdict.endswith(" and set the subgroup maximum — 87% of the range")


def test_a_subgroup_with_every_reading_missing_has_nothing_to_compare():
    """No readings in the subgroup: mean and range are NaN, no driver, and the verdict says so.  Kills the
    NaN fallbacks of the mean and range replaced (``float(None)``, ``"XXnanXX"``, the conditions forced)
    and the verdict's words altered."""
    v = readings()
    v[9] = np.nan
    b = breakdown(analyse(make_dataset(v), Settings()), 9)
    assert np.isnan(b.mean) and np.isnan(b.range) and b.driver is None
    assert b.verdict == "no readings to compare in this subgroup"


def counts(streams=("L1", "L2"), sizes=True, seed=3):
    rng = np.random.default_rng(seed)
    n = np.full((20, len(streams)), 50.0)
    c = rng.binomial(50, 0.2, (20, len(streams))).astype(float)
    return c, (n if sizes else None)


def dataset(c, n, streams):
    return Dataset(path="c.csv", sha256="0" * 64, rows=c.shape[0], size_bytes=0, layout=Layout("wide"),
                   labels=np.array([f"B{i + 1:02d}" for i in range(c.shape[0])]), streams=streams, values=None,
                   counts=c, sizes=n)


def test_count_data_on_an_np_chart_uses_the_binomial_error():
    """An np chart is binomial like a p chart: the error of a stream's rate is √(p(1−p)/n), not the Poisson
    √(p/n) [definition].  Kills ``("p", "XXnpXX")`` and ``("p", "NP")`` for the binomial charts."""
    c, n = counts()
    a = analyse(dataset(c, n, ("L1", "L2")), Settings(chart="np"))
    b = breakdown(a, 4)
    hist = c.sum(axis=0) / n.sum(axis=0)
    for j, row in enumerate(b.rows):
        assert row.stream_sd == pytest.approx(np.sqrt(hist[j] * (1 - hist[j]) / 50), rel=1e-12)


def test_count_data_without_sizes_takes_each_count_as_the_rate():
    """A c chart without sizes: each stream's rate is its count, its error the Poisson √(mean count)
    [definition].  Kills the missing sizes replaced by the data's sizes (``is not None or True``) or by
    ``ones_like(None)``."""
    c, _ = counts()
    a = analyse(dataset(c, None, ("L1", "L2")), Settings(chart="c"))
    b = breakdown(a, 4)
    hist = c.mean(axis=0)
    for j, row in enumerate(b.rows):
        assert row.reading == c[4, j] and row.stream_mean == pytest.approx(hist[j], rel=1e-12)
        assert row.stream_sd == pytest.approx(np.sqrt(hist[j]), rel=1e-12)


def test_count_breakdown_fields_when_nobody_stands_out_and_when_nothing_is_left():
    """An ordinary subgroup and a wholly excluded one: position, label and the subgroup's rate are kept and
    the range is NaN (counts have none).  Kills those fields set to None in both returns."""
    c, n = counts()
    a = analyse(dataset(c, n, ("L1", "L2")), Settings(chart="p"), [Exclusion("B03")])
    quiet = breakdown(a, 6)
    assert (quiet.position, quiet.label) == (6, "B07") and quiet.mean == pytest.approx(c[6].sum() / 100)
    assert np.isnan(quiet.range)
    gone = breakdown(a, 2)
    assert (gone.position, gone.label, gone.driver) == (2, "B03", None) and np.isnan(gone.range)
    assert gone.mean == pytest.approx(c[2].sum() / 100) and gone.verdict == "no counts in this subgroup"


def test_no_comparison_for_count_data_or_one_stream_and_too_few_readings():
    """The streams are compared on readings only, and only two or more streams: count data and a single
    stream have no comparison; streams with one reading each are too few to compare [one-way ANOVA needs
    two readings in a stream].  Kills ``values is None and k < 2``, the fields starting as "" instead of
    None, and the "too few" words altered."""
    from workbench.core.analysis import comparison_of
    c, n = counts()
    assert comparison_of(analyse(dataset(c, n, ("L1", "L2")), Settings(chart="p"))) is None
    assert comparison_of(analyse(make_dataset(readings()[:, 0]), Settings())) is None
    few = comparison_of(analyse(make_dataset([[1.0, 2.0, np.nan], [1.5, np.nan, 3.0], [1.2, np.nan, np.nan]]),
                                Settings(chart="xbar-r")))  # only S1 has two readings
    assert few.anova_p is None and few.anova_f is None and few.share_between is None and not few.differ
    assert few.advice == "too few readings per stream to compare the streams"


def test_streams_without_spread_inside_and_a_small_variance():
    """Each stream constant (streams apart): no within-stream variance, so no F and no p [F = MSB/MSW
    undefined]; with readings of SD 0.3 the share between streams is still computed (variance below 1).
    Kills the F test and its p run when MSW = 0 (``or True``), the share's guards ``or True`` and ``> 1``,
    and the lowest mean not named."""
    from workbench.core.analysis import comparison_of
    flat = comparison_of(analyse(make_dataset(np.tile([10.0, 11.0, 12.0], (8, 1))), Settings()))
    assert flat.anova_f is None and flat.anova_p is None
    v = readings()
    v[:, 1] += 0.5
    small = comparison_of(analyse(make_dataset(v), Settings()))
    assert small.share_between is not None and 0 < small.share_between < 1
    lowest = ("S1", "S2", "S3", "S4")[int(np.argmin(v.mean(axis=0)))]
    assert small.differ and f"highest mean S2, lowest {lowest})" in small.advice


def test_a_stream_constant_over_time_has_no_z_and_a_subgroup_of_equal_readings_no_gap():
    """A stream that never varies has SD 0: its z against its own history is undefined (NaN), not ±∞.
    Readings equal within every subgroup give R̄ = 0, so σ̂ within is 0 and no gap can be scaled: no gap,
    no roles, "no single stream stands out" [definition: z and the gap divide by these].  Kills ``sd ≥ 0``
    and ``or True`` for z, the within-sigma guards (``or``, ``≥ 0``, forced, None, "XXnanXX"), the
    largest gap taken from an empty list, ``rng ≥ 0`` for the roles and the words of the verdict."""
    v = readings()
    v[:, 0] = 10.0
    b = breakdown(analyse(make_dataset(v), Settings()), 12)
    assert np.isnan(b.rows[0].z) and np.isfinite(b.rows[1].z)
    level = np.random.default_rng(1).normal(10, 0.3, 40)
    same = np.repeat(level[:, None], 4, axis=1)
    b = breakdown(analyse(make_dataset(same), Settings()), 12)
    assert all(np.isnan(r.gap_z) for r in b.rows) and all(r.role == "" for r in b.rows)
    assert b.driver is None and b.verdict == "no single stream stands out"


def test_rows_out_of_use_an_excluded_cell_one_reading_and_three():
    """A reading excluded on its own or missing is not set against the others and takes no share of the
    range; a subgroup left with one reading has no range, no roles, no shares; with three readings the
    maximum's share is (R − R₋ⱼ)/R over the other two [definition].  Kills the default share 1, the gap
    computed for a row out of use (``or``), the roles computed without two readings (``use or …``) and the
    range without a stream taken as 0 for two others (``> 2``, ``>= 3``)."""
    v = readings()
    v[30] = [10.0, 14.0, 10.4, 10.1]
    a = analyse(make_dataset(v), Settings(), [Exclusion("31", "S2")])
    b = breakdown(a, 30)
    cell = b.rows[1]
    assert cell.excluded and np.isnan(cell.gap_z) and cell.range_share == 0.0 and cell.role == ""
    assert b.range == pytest.approx(0.4) and b.rows[2].range_share == pytest.approx((0.4 - 0.1) / 0.4)
    v[31] = [10.0, np.nan, np.nan, np.nan]
    one = breakdown(analyse(make_dataset(v), Settings()), 31)
    assert np.isnan(one.range) and [r.role for r in one.rows] == [""] * 4
    assert [r.range_share for r in one.rows] == [0.0] * 4


def test_two_streams_moving_together():
    """Two streams both 2 SDs above their history: mean z·√2 = 2.8 ≥ 2.5, a common cause [the verdict's
    rule].  Kills the common cause requiring more than two streams (``> 2``, ``>= 3``)."""
    v = readings()[:, :2]
    v[10] = v.mean(axis=0) + 2.0 * v.std(axis=0, ddof=1)
    b = breakdown(analyse(make_dataset(v), Settings()), 10)
    assert b.driver is None and b.verdict.startswith("all 2 streams moved together")
