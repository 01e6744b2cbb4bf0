"""The variables-chart kernels called directly, where the first suite reached them only through analyse():
statistics of 1, 2 and 8+ readings, the lower limits of R and S for larger subgroups, the individuals chart
with exclusions and known values, and what each chart is called.

Written against the mutants that survived the selection of tests/MUTATION.md; each test names the mutations
it kills.  References are computed here: numpy's own sample statistics (reference library), the printed
factors of Montgomery, *Introduction to SQC*, Appendix VI (3 dp) and the textbook formulas [definition].
"""
import numpy as np
import pytest

from workbench.core.charts import variables as V
from workbench.core.model import WorkbenchError

# Montgomery, Introduction to SQC, Appendix VI [printed, 3-4 dp]: n -> (d2, D3, D4, c4, B3, B4)
PRINTED = {7: (2.704, 0.076, 1.924, 0.9594, 0.118, 1.882), 10: (3.078, 0.223, 1.777, 0.9727, 0.284, 1.716)}


def rows(k, m=6, seed=1):
    return np.random.default_rng(seed).normal(50.0, 2.0, (m, k))


@pytest.mark.parametrize("k", [1, 2, 3, 8, 12])
def test_subgroup_statistics_equal_numpy_for_every_width(k):
    """Mean, range and sample SD (ddof 1) of each row against numpy [reference library]; one reading has
    no range or SD.  Kills, in the 8-or-more path, ``ddof`` dropped or 2, ``max + min`` and a max or min
    over the whole array; ``k <= 2`` / ``k < 3`` (two readings then get no spread); and the one-reading
    path's range or SD filled with None."""
    x = rows(k)
    st = V.subgroup_stats(x)
    assert st.n.tolist() == [k] * 6
    assert st.mean == pytest.approx(x.mean(axis=1), rel=1e-13)
    if k == 1:
        assert np.all(np.isnan(st.range)) and np.all(np.isnan(st.sd))
        return
    assert st.range == pytest.approx(x.max(axis=1) - x.min(axis=1), rel=1e-13)
    assert st.sd == pytest.approx(x.std(axis=1, ddof=1), rel=1e-12)


def test_subgroup_statistics_with_missing_readings():
    """Rows with 1, 2 and 3 readings left (NaN for the missing ones): the mean of one reading is that
    reading; two readings have a range and an SD; one has neither [definition].  Kills ``mean[n == 1]``,
    and ``n <= 2`` / ``n < 3`` for the rows given no SD or range."""
    x = np.array([[4.0, np.nan, np.nan], [4.0, 7.0, np.nan], [1.0, 2.0, 6.0], [np.nan] * 3])
    st = V.subgroup_stats(x)
    assert st.n.tolist() == [1, 2, 3, 0]
    assert st.mean[:3] == pytest.approx([4.0, 5.5, 3.0]) and np.isnan(st.mean[3])
    assert np.isnan(st.range[0]) and np.isnan(st.sd[0])
    assert st.range[1:3] == pytest.approx([3.0, 5.0])
    assert st.sd[1:3] == pytest.approx([np.std([4.0, 7.0], ddof=1), np.std([1.0, 2.0, 6.0], ddof=1)])


@pytest.mark.parametrize("n", [7, 10])
def test_range_and_sd_lower_limits_for_subgroups_of_seven_and_more(n):
    """From n = 7 the R chart's lower limit is D3·R̄ > 0 and from n = 6 the S chart's is B3·S̄ > 0: with
    σ̂ = 1 the limits are (d2 − 3d3) = D3·d2 and (c4 − 3√(1−c4²)) = B3·c4 [printed factors, 3 dp].  Kills
    the lower limits' ``max(1, …)``, ``c + 3s``, ``3 / s`` and ``4 * s`` (below n = 6 they are all 0)."""
    d2, D3, D4, c4, B3, B4 = PRINTED[n]
    st = V.subgroup_stats(rows(n))
    r = V.range_chart(st, 1.0, np.zeros(6, bool))
    assert r.lcl == pytest.approx(np.full(6, D3 * d2), abs=2e-3)
    assert r.ucl == pytest.approx(np.full(6, D4 * d2), abs=2e-3)
    s = V.sd_chart(st, 1.0, np.zeros(6, bool))
    assert s.lcl == pytest.approx(np.full(6, B3 * c4), abs=2e-3)
    assert s.ucl == pytest.approx(np.full(6, B4 * c4), abs=2e-3)


def test_an_xbar_point_of_one_reading_has_limits_three_sigma_wide():
    """X̄ limits are μ̂ ± 3σ̂/√nᵢ [definition]: a subgroup with one reading left gets ±3σ̂, none gets no
    limits.  Kills ``r[n == 1] = nan`` in 1/√n."""
    x = np.array([[1.0, 2.0, 3.0, 4.0], [5.0, np.nan, np.nan, np.nan], [np.nan] * 4])
    st = V.subgroup_stats(x)
    ch = V.xbar_chart(st, 10.0, 2.0, np.zeros(3, bool))
    assert ch.ucl[:2] == pytest.approx([10 + 3 * 2 / 2, 10 + 3 * 2.0])
    assert ch.lcl[:2] == pytest.approx([10 - 3 * 2 / 2, 10 - 3 * 2.0]) and np.isnan(ch.ucl[2])


def test_each_chart_says_what_it_plots_and_whether_it_is_location_or_spread():
    """Titles and roles of the variables charts (the roles decide which panel shows a chart; the titles
    are shown above each chart and in the reports), each chart's sigma and exclusion marks passed on, and
    ``flags`` left empty for the rules module.  Kills each title or role set to None, ``XX…XX``, lower or
    upper case, the sigma or the exclusions set to None and ``flags=None``."""
    st = V.subgroup_stats(rows(5))
    ex = np.array([False, True, False, False, False, False])
    charts = [V.xbar_chart(st, 50.0, 2.0, ex), V.range_chart(st, 2.0, ex), V.sd_chart(st, 2.0, ex)]
    i, mr, _, _ = V.individuals_charts(rows(1)[:, 0], ex, None, None)
    charts += [i, mr]
    got = [(c.name, c.title, c.role) for c in charts]
    assert got == [("xbar", "Subgroup mean", "location"), ("r", "Subgroup range", "spread"),
                   ("s", "Subgroup standard deviation", "spread"), ("i", "Individual reading", "location"),
                   ("mr", "Moving range", "spread")]
    for c in charts:
        assert c.flags == {} and isinstance(c.sigma, np.ndarray) and c.sigma.shape == (6,)
        assert isinstance(c.excluded, np.ndarray) and c.excluded.shape == (6,)
    assert charts[0].excluded.tolist() == ex.tolist() and charts[1].excluded.tolist() == ex.tolist()


def test_individuals_chart_with_an_exclusion_and_with_known_values():
    """The I chart's centre is the mean of the readings not excluded; a moving range is left out when
    either of its two readings is excluded; σ̂ = MR̄/d2(2) with d2(2) = 2/√π [definition]; a known mean
    and sigma replace both estimates.  Kills ``~excluded | finite`` for the readings used, the moving
    range's exclusion taken from one side only (``=``, ``&=``, ``[:+1]``), the known sigma or mean set to
    None or ignored."""
    x = np.array([10.0, 12.0, 11.0, 30.0, 10.0, 13.0, 11.0])
    ex = np.array([False, False, False, True, False, False, False])
    i, mr, centre, sigma = V.individuals_charts(x, ex, None, None)
    keep = np.array([0, 1, 2, 4, 5, 6])
    assert centre == pytest.approx(x[keep].mean())
    assert mr.excluded.tolist() == [False, False, False, True, True, False, False]
    used = [2.0, 1.0, 3.0, 2.0]                       # |12−10|, |11−12|, |13−10|, |11−13|
    assert sigma == pytest.approx(np.mean(used) / (2 / np.sqrt(np.pi)), rel=1e-9)
    assert i.ucl == pytest.approx(np.full(7, centre + 3 * sigma))
    ki, _, kc, ks = V.individuals_charts(x, ex, 11.5, 0.8)
    assert (kc, ks) == (11.5, 0.8)
    assert ki.ucl == pytest.approx(np.full(7, 11.5 + 3 * 0.8)) and ki.lcl == pytest.approx(np.full(7, 11.5 - 2.4))


def test_individuals_chart_without_usable_readings_has_no_limits():
    """One reading has no moving range and no readings have no mean: sigma and centre are NaN, not an
    error.  Kills the NaN fallbacks replaced by ``float(None)`` or ``float("XXnanXX")``."""
    _, _, centre, sigma = V.individuals_charts(np.array([5.0]), np.zeros(1, bool), None, None)
    assert centre == 5.0 and np.isnan(sigma)
    _, _, centre, sigma = V.individuals_charts(np.array([np.nan, np.nan]), np.zeros(2, bool), None, None)
    assert np.isnan(centre) and np.isnan(sigma)


def test_sigma_estimates_from_subgroups_of_two_and_with_almost_everything_excluded():
    """R̄/d2 averages Rᵢ/d2(nᵢ) over the subgroups used [README "Sigma estimators"; Montgomery ch. 6],
    with d2(2) = 2/√π, d2(3) = 3/√π [closed forms]; the pooled SD is √(Σ(nᵢ−1)sᵢ²/Σ(nᵢ−1)) / c4(d+1)
    [ASTM E2587].  Subgroups of two count; with 97 of 100 subgroups excluded the estimate comes from the
    3 left.  Kills ``n > 2`` / ``n >= 3`` in the selection of subgroups (direct and cached paths) and the
    cached path subtracting the used subgroups instead of the excluded (``ok & use``)."""
    rng = np.random.default_rng(7)
    x = rng.normal(0, 1, (100, 3))
    x[::2, 2] = np.nan                                   # every other subgroup has two readings
    st = V.subgroup_stats(x)
    d2 = np.where(st.n == 2, 2 / np.sqrt(np.pi), 3 / np.sqrt(np.pi))
    use = np.ones(100, bool)
    use[10] = False
    assert V.estimate_sigma("rbar", st, use) == pytest.approx(np.mean((st.range / d2)[use]), rel=1e-12)
    few = np.zeros(100, bool)
    few[[3, 4, 50]] = True
    assert V.estimate_sigma("rbar", st, few) == pytest.approx(np.mean((st.range / d2)[few]), rel=1e-12)
    from scipy.special import gammaln
    n = st.n[use]
    dof = int(np.sum(n - 1))
    sp = np.sqrt(np.sum((n - 1) * st.sd[use] ** 2) / dof)
    c4 = np.sqrt(2 / dof) * np.exp(gammaln((dof + 1) / 2) - gammaln(dof / 2))   # c4(dof + 1) [definition]
    assert V.estimate_sigma("pooled", st, use) == pytest.approx(sp / c4, rel=1e-10)


def test_known_sigma_must_be_positive_and_no_subgroup_gives_nan():
    """``known`` sigma: missing or 0 is refused with the one-line error (README "Bad input"); a pooled
    estimate with no subgroup of two or more readings is NaN.  Kills ``known is None and …`` (None then
    fails with a TypeError), ``known >= 0`` and the NaN fallback replaced by ``float(None)`` or
    ``float("XXnanXX")``."""
    st = V.subgroup_stats(rows(3))
    for bad in (None, 0.0, -1.0):
        with pytest.raises(WorkbenchError, match="known sigma must be a positive number"):
            V.estimate_sigma("known", st, np.ones(6, bool), bad)
    assert V.estimate_sigma("known", st, np.ones(6, bool), 1.5) == 1.5
    single = V.subgroup_stats(rows(1))
    assert np.isnan(V.estimate_sigma("pooled", single, np.ones(6, bool)))


def test_one_subgroup_with_a_range_gives_sigma_from_it_alone():
    """Only one subgroup has two readings or more: R̄/d2 is that subgroup's R/d2(3) = R·√π/3 [closed form
    d2(3) = 3/√π].  Kills the cached path answering NaN for a single usable subgroup (``k > 1``)."""
    x = np.full((30, 3), np.nan)
    x[:, 0] = np.arange(30.0)
    x[7] = [4.0, 7.0, 5.0]
    st = V.subgroup_stats(x)
    assert V.estimate_sigma("rbar", st, np.ones(30, bool)) == pytest.approx(3.0 * np.sqrt(np.pi) / 3, rel=1e-12)
