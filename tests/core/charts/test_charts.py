"""Variables charts against published worked examples."""
import numpy as np
import pytest

from tests.conftest import make_dataset, make_summary
from workbench.core.charts import constants as K
from workbench.core.analysis import analyse
from workbench.core.model import Exclusion, Settings, WorkbenchError

# Montgomery & Runger, Applied Statistics and Probability for Engineers (3rd ed.), individuals chart
# example, Table 16-3 [printed]: x̄ = 99.1, MR̄ = 2.59, UCL 105.99, LCL 92.21 (exact 99.095, 2.589474,
# 105.9819, 92.2081); MR chart UCL = 3.267·MR̄ = 8.46.
MR_READINGS = [102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1, 101.3, 98.7, 101.1, 98.4,
               97.0, 96.7, 100.3, 101.4, 97.2, 101.0]


def test_individuals_chart_worked_example():
    a = analyse(make_dataset(MR_READINGS), Settings())
    assert a.chart == "imr" and a.sigma_method == "mrbar"
    i, mr = a.chart_named("i"), a.chart_named("mr")
    assert i.center[0] == pytest.approx(99.095, abs=1e-6)
    assert mr.center[0] == pytest.approx(2.589474, abs=1e-6)
    # 105.9819 / 92.2081 use the tabled d2 = 1.128; with the exact d2(2) = 2/√π [definition] the limits
    # are 99.095 ± 3·MR̄·√π/2 = 105.9796 / 92.2104, inside the rounding of the tabled constant.
    assert i.ucl[0] == pytest.approx(105.9819, abs=3e-3)
    assert i.lcl[0] == pytest.approx(92.2081, abs=3e-3)
    exact = 3 * 2.589474 * np.sqrt(np.pi) / 2
    assert i.ucl[0] == pytest.approx(99.095 + exact, abs=1e-5)
    assert i.ucl[0] == pytest.approx(105.99, abs=0.011)  # printed, with E2 = 2.66
    assert mr.ucl[0] == pytest.approx(8.46, abs=5e-3)      # printed to 2 dp
    assert mr.lcl[0] == 0.0
    assert a.signals == ()  # the example is in control


def _summary(mean, rng, m=25, n=5):
    # Summary statistics constructed to give the published x̿ and R̄ (every subgroup at the average):
    # the limits are the check, the construction only reproduces the book's inputs.
    return make_summary([n] * m, [mean] * m, rng=[rng] * m)


def test_xbar_r_summary_example():
    # Montgomery & Runger, X̄-R example [printed]: x̿ = 33.32, R̄ = 5.80, n = 5 → X̄ UCL 36.67, LCL 29.97,
    # R UCL 12.27.
    a = analyse(_summary(33.32, 5.80), Settings())
    x, r = a.chart_named("xbar"), a.chart_named("r")
    assert x.ucl[0] == pytest.approx(36.67, abs=6e-3)
    assert x.lcl[0] == pytest.approx(29.97, abs=6e-3)
    assert r.ucl[0] == pytest.approx(12.27, abs=6e-3)
    assert r.center[0] == pytest.approx(5.80, abs=1e-9)
    # After removing the assignable-cause subgroups [printed]: x̿ = 33.21, R̄ = 5.0 → 36.10, 30.33, R UCL 10.57
    b = analyse(_summary(33.21, 5.0), Settings())
    assert b.chart_named("xbar").ucl[0] == pytest.approx(36.10, abs=6e-3)
    assert b.chart_named("xbar").lcl[0] == pytest.approx(30.33, abs=6e-3)
    assert b.chart_named("r").ucl[0] == pytest.approx(10.57, abs=6e-3)


def test_s_chart_summary_example():
    # Montgomery & Runger, S chart [printed]: s̄ = 2.345, n = 5 → UCL 4.899
    m = 25
    a = analyse(make_summary([5] * m, [33.32] * m, sd=[2.345] * m), Settings(chart="xbar-s"))
    assert a.sigma_method == "sbar"
    assert a.chart_named("s").ucl[0] == pytest.approx(4.899, abs=6e-4)


def test_equal_n_reduces_to_textbook_factors():
    # With equal n the σ̂ form equals x̿ ± A2·R̄ and D3·R̄ … D4·R̄ (Montgomery ch. 6 [definition]).
    rng = np.random.default_rng(7)
    v = rng.normal(10, 1, (30, 4))
    a = analyse(make_dataset(v), Settings(chart="xbar-r"))
    xbb, rbar = v.mean(axis=1).mean(), np.ptp(v, axis=1).mean()
    assert a.chart_named("xbar").ucl[0] == pytest.approx(xbb + K.a2(4) * rbar, rel=1e-12)
    assert a.chart_named("r").ucl[0] == pytest.approx(K.d4_factor(4) * rbar, rel=1e-12)
    s = analyse(make_dataset(v), Settings(chart="xbar-s"))
    sbar = v.std(axis=1, ddof=1).mean()
    assert s.chart_named("xbar").ucl[0] == pytest.approx(xbb + K.a3(4) * sbar, rel=1e-12)
    assert s.chart_named("s").ucl[0] == pytest.approx(K.b4(4) * sbar, rel=1e-12)


def test_pooled_sigma_with_c4_correction():
    # ASTM E2587 pooled SD: sp = sqrt(Σ(nᵢ−1)sᵢ² / Σ(nᵢ−1)), σ̂ = sp / c4(d+1) [definition]
    rng = np.random.default_rng(3)
    v = rng.normal(0, 2, (25, 5))
    v[::3, 4] = np.nan  # unequal sizes
    a = analyse(make_dataset(v), Settings(chart="xbar-s", sigma="pooled"))
    n = (~np.isnan(v)).sum(axis=1)
    s = np.nanstd(v, axis=1, ddof=1)
    d = (n - 1).sum()
    assert a.sigma_within == pytest.approx(np.sqrt(((n - 1) * s**2).sum() / d) / K.c4(d + 1), rel=1e-12)
    assert len(np.unique(a.chart_named("xbar").ucl)) == 2  # per-point limits for two sizes
    assert any("vary" in w for w in a.warnings)


def test_unequal_sizes_xbar_r_warns_and_uses_per_subgroup_constants():
    rng = np.random.default_rng(5)
    v = rng.normal(0, 1, (30, 5))
    v[:10, 4] = np.nan
    a = analyse(make_dataset(v), Settings(chart="xbar-r"))
    r = a.chart_named("r")
    assert r.center[0] == pytest.approx(K.d2(4) * a.sigma_within)
    assert r.center[-1] == pytest.approx(K.d2(5) * a.sigma_within)
    assert any("X̄-S chart is preferred" in w for w in a.warnings)


def test_known_standard_values():
    v = np.random.default_rng(1).normal(10, 1, (25, 5))
    a = analyse(make_dataset(v), Settings(known_mean=10.0, known_sigma=1.0))
    assert a.sigma_method == "known"
    assert a.chart_named("xbar").ucl[0] == pytest.approx(10 + 3 / np.sqrt(5))
    assert a.chart_named("r").ucl[0] == pytest.approx(K.d2(5) + 3 * K.d3(5))


def test_advise_xbar_s_for_large_subgroups():
    v = np.random.default_rng(1).normal(0, 1, (25, 12))
    assert analyse(make_dataset(v), Settings()).chart == "xbar-s"  # auto picks X̄-S for n > 10
    a = analyse(make_dataset(v), Settings(chart="xbar-r"))
    assert any("X̄-S chart is advised" in w for w in a.warnings)


def test_exclusion_leaves_limits_and_stays_marked():
    rng = np.random.default_rng(11)
    v = rng.normal(50, 1, (30, 5))
    v[12] += 6
    base = analyse(make_dataset(v), Settings())
    assert 12 in base.chart_named("xbar").flags["beyond-limits"]
    a = analyse(make_dataset(v), Settings(), [Exclusion("13")])
    x = a.chart_named("xbar")
    assert x.excluded[12] and a.excluded_subgroups.sum() == 1
    assert 12 not in x.flags["beyond-limits"]
    assert x.values[12] == pytest.approx(v[12].mean())  # still shown
    keep = np.delete(v, 12, axis=0)
    assert x.center[0] == pytest.approx(keep.mean())
    # restore = analyse without the exclusion: back to the first limits exactly
    again = analyse(make_dataset(v), Settings(), [])
    assert np.array_equal(again.chart_named("xbar").ucl, base.chart_named("xbar").ucl)


def test_single_reading_exclusion_recomputes_the_subgroup():
    v = np.random.default_rng(2).normal(500, 0.5, (25, 6))
    v[7, 3] = 509.6
    a = analyse(make_dataset(v, streams=[f"H{i}" for i in range(1, 7)]), Settings(), [Exclusion("8", "H4")])
    assert a.excluded_cells[7, 3] and not a.excluded_subgroups[7]
    assert a.chart_named("xbar").values[7] == pytest.approx(np.delete(v[7], 3).mean())
    assert a.n[7] == 5


def test_sigma_zero_collapses_without_division_by_zero():
    a = analyse(make_dataset(np.full((25, 4), 3.0)), Settings())
    assert a.sigma_within == 0
    assert any("collapse" in w for w in a.warnings)
    assert a.chart_named("xbar").ucl[0] == 3.0


def test_one_subgroup_warns():
    a = analyse(make_dataset([[1.0, 2.0, 3.0]]), Settings())
    assert any("only one subgroup" in w for w in a.warnings)


def test_wrong_chart_for_data_is_refused():
    with pytest.raises(WorkbenchError):
        analyse(make_dataset(np.ones((5, 3))), Settings(chart="imr"))
    with pytest.raises(WorkbenchError):
        analyse(make_dataset(np.ones(5)), Settings(chart="xbar-r"))
    with pytest.raises(WorkbenchError):
        analyse(make_dataset(np.ones((5, 3))), Settings(sigma="mrbar"))


def test_overall_sd_with_few_exclusions_equals_numpy():
    # the cached-moments update must equal a direct sample SD (numpy.std, ddof=1, as the reference)
    rng = np.random.default_rng(21)
    v = rng.normal(3, 2, (400, 5))
    v[17, 2] = np.nan
    ex = [Exclusion("5"), Exclusion("300"), Exclusion("18", "S1")]
    a = analyse(make_dataset(v), Settings(), ex)
    keep = v.copy()
    keep[[4, 299]] = np.nan
    keep[17, 0] = np.nan
    assert a.sigma_overall == pytest.approx(np.nanstd(keep, ddof=1), rel=1e-12)


@pytest.mark.parametrize("chart,sigma", [("xbar-r", "rbar"), ("xbar-s", "sbar")])
def test_sigma_with_a_few_exclusions_equals_the_direct_mean(chart, sigma):
    # R̄/d2 and S̄/c4 over the remaining subgroups [definition], against numpy on the same readings
    rng = np.random.default_rng(13)
    v = rng.normal(0, 1, (200, 5))
    a = analyse(make_dataset(v), Settings(chart=chart, sigma=sigma), [Exclusion("7"), Exclusion("150")])
    keep = np.delete(v, [6, 149], axis=0)
    ref = (np.ptp(keep, axis=1).mean() / K.d2(5) if sigma == "rbar"
           else keep.std(axis=1, ddof=1).mean() / K.c4(5))
    assert a.sigma_within == pytest.approx(ref, rel=1e-12)
