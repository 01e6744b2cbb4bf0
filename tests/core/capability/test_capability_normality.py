"""Anderson–Darling statistic and p-value, Shapiro–Wilk and the probability-plot correlation."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from workbench.core.capability.normality import ad_pvalue, ad_statistic, normality


@pytest.mark.parametrize("seed, maker", [
    (1, lambda r: r.normal(10, 2, 40)),
    (2, lambda r: r.lognormal(0, 0.6, 120)),
    (3, lambda r: r.uniform(0, 1, 25)),
])
def test_ad_statistic_equals_scipy(seed, maker):
    # reference library: scipy.stats.anderson (normal, mean and SD estimated, ddof=1)
    x = maker(np.random.default_rng(seed))
    ref = stats.anderson(x, dist="norm", method="interpolate").statistic
    assert ad_statistic(x) == pytest.approx(ref, abs=1e-9)


def test_ad_statistic_vectorised_equals_one_at_a_time():
    x = np.random.default_rng(4).normal(size=(5, 30))
    assert np.allclose(ad_statistic(x, axis=1), [ad_statistic(row) for row in x], atol=1e-12)


@pytest.mark.parametrize("a_star, level", [
    # Stephens (1974) / D'Agostino & Stephens (1986) upper-tail critical points of the adjusted
    # A*² value for the normal case with estimated mean and variance [from memory; the same
    # figures are tabulated in scipy.stats.anderson's source]: 0.631 (10%), 0.752 (5%),
    # 0.873 (2.5%), 1.035 (1%)
    (0.631, 0.10), (0.752, 0.05), (0.873, 0.025), (1.035, 0.01),
])
def test_ad_pvalue_formulas_at_published_critical_points(a_star, level):
    # the formulas approximate the table; 3-dp critical values -> tolerance 8% of the level
    assert ad_pvalue(a_star) == pytest.approx(level, rel=0.08)


def test_ad_pvalue_pieces_decrease_and_nearly_meet_at_the_joins():
    # D'Agostino & Stephens (1986) piecewise formulas [definition]: each piece decreases; the
    # published pieces do not meet exactly (largest gap 0.0025 at A*² = 0.6) -> gap below 0.005
    for lo, hi in ((0.05, 0.2), (0.2, 0.34), (0.34, 0.6), (0.6, 3.0)):
        p = ad_pvalue(np.linspace(lo, hi - 1e-9, 500))
        assert np.all(np.diff(p) < 0)
    for join in (0.2, 0.34, 0.6):
        assert ad_pvalue(join - 1e-9) == pytest.approx(ad_pvalue(join), abs=0.005)


def test_ad_pvalue_stays_near_zero_for_huge_statistics():
    # the first formula's quadratic term would turn upward past A*² = 153.5; p must not rise
    assert ad_pvalue(np.array([20.0, 150.0, 1763.0, 1e6])).max() < 1e-20
    x = np.random.default_rng(10).lognormal(1.0, 0.3, 200_000)
    assert not normality(x).passed


def test_ad_pvalue_agrees_with_scipy_interpolation_inside_its_table():
    # reference library: scipy.stats.anderson(method="interpolate") interpolates Stephens' table
    # between 1% and 15%; both approximate the same distribution -> agree within 0.01
    rng = np.random.default_rng(5)
    checked = 0
    for _ in range(300):
        x = rng.standard_t(6, 60)
        ref = stats.anderson(x, dist="norm", method="interpolate").pvalue
        if 0.011 < ref < 0.14:
            n = x.size
            ours = ad_pvalue(ad_statistic(x) * (1 + 0.75 / n + 2.25 / n ** 2))
            assert ours == pytest.approx(ref, abs=0.01)
            checked += 1
    assert checked >= 10


def test_ad_rejection_rate_under_normality_is_the_level():
    # definition of a p-value: under H0, P(p < 0.05) = 0.05; 4000 seeded samples of n = 30;
    # tolerance 4 binomial standard errors (4 * sqrt(0.05 * 0.95 / 4000) = 0.0138)
    x = np.random.default_rng(6).normal(size=(4000, 30))
    a = ad_statistic(x, axis=1) * (1 + 0.75 / 30 + 2.25 / 900)
    rate = float(np.mean(ad_pvalue(a) < 0.05))
    assert abs(rate - 0.05) < 4 * np.sqrt(0.05 * 0.95 / 4000)


def test_shapiro_wilk_second_opinion_is_scipys():
    # reference library: scipy.stats.shapiro
    x = np.random.default_rng(7).gamma(2.0, 1.0, 80)
    res = normality(x)
    ref = stats.shapiro(x)
    assert res.sw_statistic == pytest.approx(ref.statistic, abs=1e-12)
    assert res.sw_p == pytest.approx(ref.pvalue, abs=1e-12)
    assert not res.passed and "rejects normality" in res.verdict and "Shapiro–Wilk agrees" in res.verdict
    assert "D'Agostino & Stephens (1986)" in res.ad_p_method


def test_large_samples_use_probability_plot_correlation():
    # Shapiro–Wilk's p-value is stated for n <= 5000 (scipy.stats.shapiro docs); above it the
    # probability-plot correlation (Filliben 1975) is reported; reference: scipy.stats.probplot
    x = np.random.default_rng(8).normal(size=6000)
    res = normality(x)
    assert res.sw_p is None and res.sw_statistic is None
    assert res.ppcc == pytest.approx(stats.probplot(x)[1][2], abs=1e-12)
    assert "probability-plot correlation" in res.verdict.lower()


def test_normal_data_pass_in_words():
    x = np.random.default_rng(9).normal(50, 3, 200)
    res = normality(x)
    assert res.passed and res.ad_p >= 0.05
    assert res.verdict.startswith("Consistent with a normal distribution")
