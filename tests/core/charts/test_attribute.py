"""Attribute charts (p, np, c, u) and Laney p′ / u′ against published examples and definitions."""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats
from scipy.optimize import brentq

from workbench.core.charts.attribute import RUN_RULES_NOTE, attribute_chart, rules_warning
from workbench.core.model import WorkbenchError

# NIST/SEMATECH e-Handbook of Statistical Methods, p chart example (section 6.3.3.2): 30 wafers of 50
# chips, defective fractions [from memory; p̄ = 0.2313 printed]
NIST_FRACTIONS = np.array([.24, .30, .16, .20, .08, .14, .32, .18, .28, .20, .10, .12, .34, .24, .44, .16, .20,
                           .10, .26, .22, .40, .36, .48, .30, .18, .24, .14, .26, .18, .12])


def none(m: int) -> np.ndarray:
    return np.zeros(m, bool)


def beyond(chart) -> np.ndarray:
    return np.flatnonzero((chart.values > chart.ucl) | (chart.values < chart.lcl))


def test_nist_p_chart():
    counts = np.round(NIST_FRACTIONS * 50)
    chart, info = attribute_chart("p", counts, np.full(30, 50), none(30), laney="off")
    # NIST/SEMATECH 6.3.3.2: p̄ = 0.2313 [printed], UCL 0.4102, LCL 0.0524 [from memory, arithmetic-checked]
    assert info.center == pytest.approx(0.2313, abs=1e-4)
    assert chart.ucl == pytest.approx(np.full(30, 0.4102), abs=1e-4)
    assert chart.lcl == pytest.approx(np.full(30, 0.0524), abs=1e-4)
    # same source: samples 15 and 23 (1-based) above the UCL [from memory]
    assert beyond(chart).tolist() == [14, 22]
    assert chart.name == "p" and chart.role == "location" and chart.flags == {} and not info.laney_used


def test_montgomery_runger_p_chart():
    # Montgomery & Runger, Applied Statistics and Probability for Engineers, p chart example: 20 samples
    # of 100, p̄ = 0.40 -> UCL 0.55, LCL 0.25 [printed, 2 dp]. The counts are constructed to give the
    # published p̄ (the printed counts are not reproduced); the limits are the check.
    counts = 40 + np.array([3, -2, 5, -4, 1, 0, -1, 2, -3, 4, -5, 2, 1, -2, 0, 3, -1, -3, 2, -2])
    assert counts.sum() == 800
    chart, info = attribute_chart("p", counts, np.full(20, 100), none(20), laney="off")
    assert info.center == pytest.approx(0.40, abs=1e-12)
    assert chart.ucl == pytest.approx(np.full(20, 0.55), abs=5e-3)
    assert chart.lcl == pytest.approx(np.full(20, 0.25), abs=5e-3)
    assert info.totals == (800.0, 2000.0)


@pytest.mark.parametrize("counts, lcl, ucl", [
    # c chart c̄ ± 3√c̄ [definition]; c̄ = 4: 4 − 6 < 0 -> LCL 0, UCL 10
    ([2, 6, 4, 3, 5], 0.0, 10.0),
    # c̄ = 16: 16 ± 12
    ([14, 18, 16, 15, 17, 16], 4.0, 28.0),
])
def test_c_chart_limits(counts, lcl, ucl):
    chart, info = attribute_chart("c", np.array(counts), None, none(len(counts)), laney="off")
    assert chart.lcl == pytest.approx(np.full(len(counts), lcl), abs=1e-12)
    assert chart.ucl == pytest.approx(np.full(len(counts), ucl), abs=1e-12)
    assert chart.sigma == pytest.approx(np.full(len(counts), np.sqrt(info.center)))
    assert info.totals == (float(sum(counts)), float(len(counts)))


def test_u_chart_per_point_limits():
    # u chart ū ± 3√(ū/n_i), negative LCL -> 0 [definition]; fractional sizes are allowed for u
    counts = np.array([5, 12, 3, 9, 20, 7])
    sizes = np.array([2.0, 4.0, 1.5, 3.0, 6.0, 2.5])
    chart, info = attribute_chart("u", counts, sizes, none(6), laney="off")
    u_bar = counts.sum() / sizes.sum()
    half = 3 * np.sqrt(u_bar / sizes)
    assert info.center == pytest.approx(u_bar)
    assert chart.values == pytest.approx(counts / sizes)
    assert chart.ucl == pytest.approx(u_bar + half)
    assert chart.lcl == pytest.approx(np.maximum(u_bar - half, 0.0))
    assert np.any(u_bar - half < 0) and np.any(u_bar - half > 0)  # both branches of the floor are exercised


def test_p_chart_varying_sizes_and_np_chart():
    # p: p̄ ± 3√(p̄(1−p̄)/n_i); np: np̄ ± 3√(np̄(1−p̄)) [definition]
    counts = np.array([4, 9, 2, 7, 5, 12, 3])
    sizes = np.array([40, 80, 25, 60, 50, 90, 30])
    chart, _ = attribute_chart("p", counts, sizes, none(7), laney="off")
    p_bar = counts.sum() / sizes.sum()
    half = 3 * np.sqrt(p_bar * (1 - p_bar) / sizes)
    assert chart.ucl == pytest.approx(p_bar + half)
    assert chart.lcl == pytest.approx(np.maximum(p_bar - half, 0))
    assert not chart.limits_constant()
    np_chart, info = attribute_chart("np", counts, np.full(7, 60), none(7), laney="off")
    p_bar = counts.sum() / 420
    assert np_chart.center == pytest.approx(np.full(7, 60 * p_bar))
    assert np_chart.ucl == pytest.approx(np.full(7, 60 * p_bar + 3 * np.sqrt(60 * p_bar * (1 - p_bar))))
    assert np_chart.values.tolist() == counts.tolist() and info.center == pytest.approx(p_bar)


def test_p_chart_upper_limit_capped_at_one():
    # a proportion cannot exceed 1, so a UCL above 1 is shown as 1 [definition]
    chart, _ = attribute_chart("p", np.array([1, 0, 1, 1]), np.array([2, 2, 2, 2]), none(4), laney="off")
    assert np.all(chart.ucl == 1.0) and np.all(chart.lcl == 0.0)


def test_excluded_subgroups_left_out_of_centre_but_plotted():
    counts = np.array([4, 9, 30, 7, 5])
    sizes = np.full(5, 50)
    ex = np.array([False, False, True, False, False])
    chart, info = attribute_chart("p", counts, sizes, ex, laney="off")
    assert info.center == pytest.approx((4 + 9 + 7 + 5) / 200)  # [definition]
    assert chart.values[2] == pytest.approx(0.6) and chart.excluded.tolist() == ex.tolist()
    other, other_info = attribute_chart("p", np.array([4, 9, 0, 7, 5]), sizes, ex, laney="off")
    assert other_info.center == info.center and other_info.sigma_z == info.sigma_z
    assert other.ucl == pytest.approx(chart.ucl)


def test_sigma_z_is_laney_moving_range_ratio():
    # Laney (2002): z_i = (p_i − p̄)/σ_pi, sigma_z = MR̄(z)/1.128; p′ limits p̄ ± 3·σ_pi·sigma_z [definition]
    rng = np.random.default_rng(7)
    sizes = rng.integers(800, 1200, 25)
    counts = rng.binomial(sizes, rng.uniform(0.05, 0.09, 25))
    ex = none(25)
    ex[[3, 10]] = True
    chart, info = attribute_chart("p", counts, sizes, ex, laney="on")
    keep = ~ex
    p_bar = counts[keep].sum() / sizes[keep].sum()
    s = np.sqrt(p_bar * (1 - p_bar) / sizes)
    z = (counts / sizes - p_bar)[keep] / s[keep]
    sigma_z = np.mean(np.abs(np.diff(z))) / 1.128
    assert info.sigma_z == pytest.approx(sigma_z, rel=1e-12)
    assert info.dispersion_p == pytest.approx(stats.chi2.sf(np.sum(z ** 2), keep.sum() - 1))
    assert chart.ucl == pytest.approx(p_bar + 3 * s * sigma_z)
    assert chart.lcl == pytest.approx(np.maximum(p_bar - 3 * s * sigma_z, 0))
    assert info.laney_used and "Laney p′" in chart.title and "on request" in info.warnings[0]


def test_laney_reduces_to_plain_when_sigma_z_is_one():
    # Laney (2002): with sigma_z = 1 the u′ chart is the u chart [definition]. One u-chart sample size
    # (fractional sizes are allowed) is tuned until sigma_z is 1 to machine precision.
    counts = np.array([12, 9, 15, 10, 11, 14, 8, 13, 10, 12])
    sizes = np.array([10, 10, 12, 9, 11, 10, 10, 12, 10, 11.0])

    def with_size(s):
        sz = sizes.copy()
        sz[4] = s
        return sz

    root = brentq(lambda s: attribute_chart("u", counts, with_size(s), none(10), laney="off")[1].sigma_z - 1,
                  11.0, 20.0, xtol=1e-14)
    plain, _ = attribute_chart("u", counts, with_size(root), none(10), laney="off")
    laney, info = attribute_chart("u", counts, with_size(root), none(10), laney="on")
    assert info.sigma_z == pytest.approx(1.0, abs=1e-10) and info.laney_used
    assert laney.ucl == pytest.approx(plain.ucl, abs=1e-9)
    assert laney.lcl == pytest.approx(plain.lcl, abs=1e-9)
    assert laney.sigma == pytest.approx(plain.sigma, abs=1e-9)


def test_laney_recommended_on_overdispersed_large_samples():
    # Laney (2002): with large samples and a proportion that varies between subgroups (beta-binomial,
    # simulated) the plain p limits are far too tight; p′ widens them by sigma_z.
    rng = np.random.default_rng(11)
    sizes = rng.integers(4000, 6000, 40)
    counts = rng.binomial(sizes, rng.beta(50, 450, 40))  # p around 0.10, between-subgroup SD ≈ 0.013
    plain, plain_info = attribute_chart("p", counts, sizes, none(40), laney="off")
    offer, offer_info = attribute_chart("p", counts, sizes, none(40), laney="auto")
    auto, info = attribute_chart("p", counts, sizes, none(40), laney="on")
    # auto offers the correction (a warning) and keeps the plain limits; on applies it
    assert offer_info.laney_recommended and not offer_info.laney_used and "offered" in offer_info.warnings[0]
    assert np.array_equal(offer.ucl, plain.ucl)
    assert info.sigma_z > 2 and info.laney_used
    assert plain_info.laney_recommended and not plain_info.laney_used and not plain_info.warnings
    assert "Laney p′ limits used on request" in info.warnings[0]
    assert np.all(auto.ucl - auto.center == pytest.approx((plain.ucl - plain.center) * info.sigma_z))
    assert beyond(plain).size > 10 > beyond(auto).size


@pytest.mark.parametrize("kind", ["np", "c"])
def test_laney_not_offered_for_np_and_c(kind):
    rng = np.random.default_rng(3)
    counts = rng.binomial(5000, rng.beta(50, 450, 30))
    sizes = np.full(30, 5000)
    chart, info = attribute_chart(kind, counts, sizes, none(30), laney="on")
    assert not info.laney_used and not info.laney_recommended and info.sigma_z > 2.5
    assert any("not offered" in w for w in info.warnings) and "Laney" not in chart.title


def test_in_control_data_not_recommended_for_laney():
    rng = np.random.default_rng(5)
    sizes = rng.integers(3000, 5000, 30)
    counts = rng.binomial(sizes, 0.08)
    _, info = attribute_chart("p", counts, sizes, none(30))
    assert not info.laney_recommended and not info.laney_used and 0.6 < info.sigma_z < 1.4


@pytest.mark.parametrize("kind", ["p", "u"])
def test_plain_chart_false_alarm_rate_matches_exact_tail(kind):
    # In-control binomial (p) / Poisson (u) data with varying sample sizes: the share of points beyond the
    # chart's own limits must match the exact tail probability from scipy.stats at the true rate
    # [definition; scipy.stats as the reference], within 4 standard errors.
    rng = np.random.default_rng(2024)
    m, rate = 20000, 0.1
    sizes = rng.integers(50, 151, m)
    counts = rng.binomial(sizes, rate) if kind == "p" else rng.poisson(rate * sizes)
    chart, _ = attribute_chart(kind, counts, sizes.astype(float), none(m), laney="off")
    upper = np.floor(chart.ucl * sizes + 1e-9)   # count > n·UCL  <=>  count > upper
    lower = np.ceil(chart.lcl * sizes - 1e-9)    # count < n·LCL  <=>  count < lower
    dist = stats.binom(sizes, rate) if kind == "p" else stats.poisson(rate * sizes)
    prob = dist.sf(upper) + dist.cdf(lower - 1)
    expected, se = prob.sum(), np.sqrt(np.sum(prob * (1 - prob)))
    assert 20 < expected < 200
    assert abs(beyond(chart).size - expected) < 4 * se


def test_all_zero_counts_give_no_limits():
    chart, info = attribute_chart("c", np.zeros(5), None, none(5))
    assert np.all(np.isnan(chart.ucl)) and np.all(np.isnan(chart.lcl)) and info.sigma_z is None
    assert "no defectives" in info.warnings[0]


def test_rules_warning():
    assert rules_warning(["beyond-limits"]) is None
    assert rules_warning(["beyond-limits", "zone-a"]) == RUN_RULES_NOTE


@pytest.mark.parametrize("kind, counts, sizes, excluded, message", [
    ("p", [3, 12], [10, 10], None, "subgroup B: more defectives than units"),
    ("np", [3, 12], [10, 10], None, "subgroup B: more defectives than units"),
    ("c", [3, -1], None, None, "subgroup B: a count cannot be negative"),
    ("u", [3, 2], [0, 4], None, "subgroup A: the sample size must be positive"),
    ("p", [3, 2], [10, np.nan], None, "subgroup B: the sample size is missing"),
    ("p", [3, 2], None, None, "needs the sample size"),
    ("p", [2.5, 2], [10, 10], None, "subgroup A: counts of defectives or defects are whole numbers"),
    ("c", [2.5, 2], None, None, "whole numbers"),
    ("u", [2.5, 2], [1, 1], None, "whole numbers"),
    ("p", [np.nan, 2], [10, 10], None, "subgroup A: the count is missing"),
    ("p", [2, 2], [10.5, 10], None, "whole number"),
    ("np", [2, 3], [10, 20], None, "subgroup B: the sample size varies, and a np chart needs a constant one; use a p"),
    ("c", [2, 3], [1, 2], None, "use a u chart"),
    ("p", [2], [10], None, "at least 2 subgroups"),
    ("p", [2, 3, 4], [10, 10, 10], [True, True, False], "at least 2 subgroups left after exclusions"),
    ("x", [2, 3], [10, 10], None, "unknown attribute chart"),
])
def test_bad_input(kind, counts, sizes, excluded, message):
    labels = np.array(["A", "B", "C"][:len(counts)])
    sizes = None if sizes is None else np.array(sizes, dtype=float)
    ex = None if excluded is None else np.array(excluded)
    with pytest.raises(WorkbenchError, match=message.replace("(", r"\(")) as err:
        attribute_chart(kind, np.array(counts, dtype=float), sizes, ex, labels_for_errors=labels)
    assert "\n" not in str(err.value)


def test_bad_laney_mode_and_positions_in_messages():
    with pytest.raises(WorkbenchError, match="Laney setting"):
        attribute_chart("p", np.array([1, 2]), np.array([5, 5]), none(2), laney="yes")
    with pytest.raises(WorkbenchError, match="subgroup 2: a count cannot be negative"):
        attribute_chart("c", np.array([1, -2]), None, none(2))


@settings(max_examples=60, deadline=None)
@given(st.sampled_from(["p", "u", "c"]), st.integers(0, 2**32 - 1), st.integers(2, 40), st.sampled_from(["auto", "on", "off"]))
def test_limits_bracket_centre(kind, seed, m, laney):
    # invariant: 0 ≤ LCL ≤ centre ≤ UCL wherever limits exist [definition]
    rng = np.random.default_rng(seed)
    sizes = rng.integers(1, 200, m).astype(float)
    counts = rng.binomial(sizes.astype(int), rng.uniform(0.01, 0.5)).astype(float)
    if kind == "c":
        sizes = None
    chart, _ = attribute_chart(kind, counts, sizes, none(m), laney=laney)
    ok = np.isfinite(chart.ucl)
    assert np.all(chart.lcl[ok] >= 0) and np.all(chart.lcl[ok] <= chart.center[ok] + 1e-12)
    assert np.all(chart.center[ok] <= chart.ucl[ok] + 1e-12)
