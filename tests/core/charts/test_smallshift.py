"""EWMA and tabular CUSUM against published examples, exact definitions and Markov-chain ARLs."""
from __future__ import annotations

import inspect

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import norm

from workbench.core.model import WorkbenchError
from workbench.core.charts.smallshift import EWMA_DESIGNS, _lindley, cusum_chart, ewma_chart, ewma_design

# Montgomery & Runger, Applied Statistics and Probability for Engineers (3rd ed.), individuals example
# readings (Table 16-3) [printed]
MR_READINGS = np.array([102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1, 101.3, 98.7, 101.1, 98.4,
                        97.0, 96.7, 100.3, 101.4, 97.2, 101.0])
# NIST/SEMATECH e-Handbook, EWMA example (section 6.3.2.4) readings [from memory]
NIST_EWMA = np.array([52.0, 47.0, 53.0, 49.3, 50.1, 47.0, 51.0, 50.1, 51.2, 50.5, 49.6, 47.6, 49.9, 51.3, 47.8,
                      51.2, 52.6, 52.4, 53.6, 52.1])
# Lucas & Crosier (1982), fast initial response CUSUM, standardized readings [printed]
LC_READINGS = np.array([0.8, 1.9, 1.4, 2.0, 1.1, 0.7, 2.6])


def none(m: int) -> np.ndarray:
    return np.zeros(m, bool)


def cusum_loop(d: np.ndarray, c0: float) -> np.ndarray:
    out, c = np.empty(d.size), c0
    for i, di in enumerate(d):
        c = max(0.0, c + di)
        out[i] = c
    return out


# ---- CUSUM ----------------------------------------------------------------------------------------

def test_montgomery_runger_tabular_cusum():
    # Montgomery & Runger, Example 16-6: mu0 = 99, K = 1, H = 10 (sigma 2, k = 0.5, h = 5) [printed, 0.1]
    c_plus = [2.0, 0, 0, 0, 2.0, 0.5, 0, 0, 0, 0, 1.3, 0, 1.1, 0, 0, 0, 0.3, 1.7, 0, 1.0]
    c_minus = [0, 3.2, 2.9, 2.5, 0, 0, 0, 0.3, 0, 0, 0, 0, 0, 0, 1.0, 2.3, 0, 0, 0.8, 0]
    chart, info = cusum_chart(MR_READINGS, 99.0, 2.0, none(20), k=0.5, h=5.0)
    assert chart.values == pytest.approx(c_plus, abs=0.051)
    assert chart.extra["cusum-"] == pytest.approx(c_minus, abs=0.051)
    assert (info.K, info.H) == pytest.approx((1.0, 10.0))
    assert np.all(chart.ucl == 10.0) and np.all(chart.lcl == -10.0) and np.all(chart.center == 0)
    assert info.signals == () and chart.flags["beyond-limits"].size == 0 and not info.standardized


def test_lucas_crosier_fast_initial_response():
    # Lucas & Crosier (1982), k = 0.5, h = 5 [printed]: C⁺ = 0.3 … 7.0, signal at the 7th reading
    chart, info = cusum_chart(LC_READINGS, 0.0, 1.0, none(7), k=0.5, h=5.0)
    assert chart.values == pytest.approx([0.3, 1.7, 2.6, 4.1, 4.7, 4.9, 7.0], abs=1e-9)
    assert chart.flags["beyond-limits"].tolist() == [6]
    (sig,) = info.signals
    assert (sig.side, sig.position, sig.change_point, sig.run_length) == ("upper", 6, 0, 7)
    # Montgomery's estimate mu0 + K + C⁺/N⁺ = 0.5 + 7.0/7 [definition] = mean of the 7 readings
    assert sig.mean == pytest.approx(1.5) and sig.shift == pytest.approx(1.5)
    # same source, head start 2.5 [printed]: 2.8, 4.2, 5.1, signal at the 3rd
    fir, fir_info = cusum_chart(LC_READINGS, 0.0, 1.0, none(7), k=0.5, h=5.0, head_start=2.5)
    assert fir.values[:3] == pytest.approx([2.8, 4.2, 5.1], abs=1e-9)
    assert fir_info.signals[0].position == 2 and fir.flags["beyond-limits"][0] == 2
    # the head start is not data: the estimate is the mean of the three readings, 4.1/3 [definition]
    assert fir_info.signals[0].mean == pytest.approx(4.1 / 3)


def test_change_point_after_last_zero_and_no_reset():
    # Montgomery's change point: the next point after C⁺ was last zero [definition]; sums are not reset,
    # so one excursion above H is one signal while every point above H is flagged.
    x = np.array([0.0, -1.0, 0.2, 0.0, 2.0, 2.5, 2.0, 2.2, 2.4, 0.0, -3.0, -9.0])
    chart, info = cusum_chart(x, 0.0, 1.0, none(12), k=0.5, h=4.0)
    up = [s for s in info.signals if s.side == "upper"]
    assert len(up) == 1 and up[0].change_point == 4 and up[0].position == 6 and up[0].run_length == 3
    assert up[0].mean == pytest.approx(np.mean(x[4:7]))  # K + C⁺/N⁺ with C⁺ = Σ(x − K) [definition]
    above = np.flatnonzero(chart.values > 4.0).tolist()
    assert above == [6, 7, 8, 9, 10] and set(above) <= set(chart.flags["beyond-limits"].tolist())
    low = [s for s in info.signals if s.side == "lower"]
    assert low and low[0].side == "lower" and low[0].shift < 0 and low[0].mean < 0


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-5, 5, allow_nan=False), min_size=1, max_size=300),
       st.floats(0, 3), st.floats(0, 1.5))
def test_lindley_fast_path_equals_loop(d, c0, k):
    # Lindley recursion: the closed form S_i − min(0, min_j S_j) equals the max(0, …) loop [definition]
    d = np.array(d) - k
    assert _lindley(d, c0) == pytest.approx(cusum_loop(d, c0), abs=1e-9)


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**32 - 1), st.floats(0, 2), st.floats(0.0, 3.9))
def test_cusum_chart_equals_loop_with_exclusions(seed, k, head):
    rng = np.random.default_rng(seed)
    x = rng.normal(10, 2, 150) + np.where(np.arange(150) > 90, 3.0, 0.0)
    ex = rng.random(150) < 0.1
    chart, _ = cusum_chart(x, 10.0, 2.0, ex, k=k, h=4.0, head_start=head)
    y = np.where(ex, np.nan, x)
    up = cusum_loop(np.where(ex, 0.0, y - 10 - 2 * k), 2 * head)   # excluded points: the sum carries over
    lo = cusum_loop(np.where(ex, 0.0, 10 - 2 * k - y), 2 * head)
    assert chart.values == pytest.approx(up, abs=1e-9)
    assert chart.extra["cusum-"] == pytest.approx(lo, abs=1e-9)
    assert not set(chart.flags["beyond-limits"].tolist()) & set(np.flatnonzero(ex).tolist())


def test_cusum_standardized_when_sigma_varies():
    # standardized CUSUM on (x − mu0)/sigma_i with k, h in sigma units [definition]
    rng = np.random.default_rng(1)
    sig = 2.0 / np.sqrt(rng.integers(2, 6, 40))
    x = rng.normal(5.0, sig)
    chart, info = cusum_chart(x, 5.0, sig, none(40), k=0.5, h=4.0)
    ref, _ = cusum_chart((x - 5.0) / sig, 0.0, 1.0, none(40), k=0.5, h=4.0)
    assert info.standardized and info.H == 4.0 and "standardized" in chart.title
    assert chart.values == pytest.approx(ref.values) and chart.extra["cusum-"] == pytest.approx(ref.extra["cusum-"])


def cusum_arl_one_sided(k: float, h: float, states: int = 400) -> float:
    """Brook & Evans (1972) Markov-chain ARL of a one-sided CUSUM started at 0 (in-control N(0, 1))."""
    w = 2 * h / (2 * states - 1)
    c = np.arange(states) * w
    upper = norm.cdf(c[None, :] + w / 2 - c[:, None] + k)
    lower = norm.cdf(c[None, :] - w / 2 - c[:, None] + k)
    lower[:, 0] = 0.0
    return np.linalg.solve(np.eye(states) - (upper - lower), np.ones(states))[0]


@pytest.mark.parametrize("h, arl0", [
    # Montgomery, Introduction to SQC, tabular CUSUM, k = 0.5 [from memory]: h = 4 -> 168, h = 5 -> 465,
    # h = 4.77 -> 370. Checked against the Brook & Evans (1972) Markov chain; two-sided ARL = one-sided / 2
    # for a symmetric scheme (the usual combination 1/ARL = 1/ARL⁺ + 1/ARL⁻).
    (4.0, 168.0), (5.0, 465.0), (4.77, 370.0),
])
def test_cusum_in_control_arl(h, arl0):
    assert cusum_arl_one_sided(0.5, h) / 2 == pytest.approx(arl0, rel=0.01)


def test_cusum_defaults_are_the_published_h5_design():
    # issue 6: k = 0.5 with h = 4 or 5; we default to h = 5, in-control ARL ≈ 465 (Montgomery, tabular CUSUM
    # chapter [from memory]; the Markov-chain test in this file recomputes that ARL)
    from workbench.core.model import Settings
    params = inspect.signature(cusum_chart).parameters
    assert (params["k"].default, params["h"].default) == (0.5, 5.0)
    assert (Settings().cusum_k, Settings().cusum_h) == (0.5, 5.0)


# ---- EWMA -----------------------------------------------------------------------------------------

def test_nist_ewma_example():
    # NIST/SEMATECH 6.3.2.4, lambda 0.3, L 3, target 50, s 2.0539 [from memory; limits arithmetic-checked]
    chart = ewma_chart(NIST_EWMA, 50.0, 2.0539, none(20), lam=0.3, L=3.0, asymptotic=True)
    assert chart.ucl == pytest.approx(np.full(20, 52.5884), abs=1e-4)
    assert chart.lcl == pytest.approx(np.full(20, 47.4115), abs=1e-4)
    assert chart.values[:3] == pytest.approx([50.60, 49.52, 50.56], abs=0.005)
    assert chart.flags["beyond-limits"].size == 0  # same source: no point outside
    exact = ewma_chart(NIST_EWMA, 50.0, 2.0539, none(20), lam=0.3, L=3.0)
    assert exact.flags["beyond-limits"].size == 0 and np.all(exact.ucl <= chart.ucl + 1e-12)


@pytest.mark.parametrize("lam", [0.05, 0.2, 0.5, 1.0])
def test_ewma_exact_limits_closed_form(lam):
    # target ± L·σ·sqrt(λ/(2−λ)·(1 − (1−λ)^{2i})) [definition, Lucas & Saccucci 1990]
    chart = ewma_chart(np.zeros(30), 0.0, 1.5, none(30), lam=lam, L=2.8)
    i = np.arange(1, 31)
    assert chart.ucl == pytest.approx(2.8 * 1.5 * np.sqrt(lam / (2 - lam) * (1 - (1 - lam) ** (2 * i))))
    assert chart.lcl == pytest.approx(-chart.ucl)


def test_ewma_exact_limits_with_varying_sigma():
    # Var(z_i) = λ² Σ_j (1−λ)^{2(i−j)} σ_j² [definition]
    lam, sig = 0.25, np.array([1.0, 0.5, 2.0, 1.2, 0.8])
    chart = ewma_chart(np.ones(5), 0.0, sig, none(5), lam=lam, L=3.0)
    var = [lam ** 2 * sum((1 - lam) ** (2 * (i - j)) * sig[j] ** 2 for j in range(i + 1)) for i in range(5)]
    assert chart.sigma == pytest.approx(np.sqrt(var))


def test_ewma_lambda_one_is_shewhart_and_beyond_is_strict():
    # λ = 1: z_i = x_i and the limits are target ± Lσ [definition]; a point exactly on a limit is not beyond
    x = np.array([0.0, 3.0, 3.0001, -3.0, -3.5])
    chart = ewma_chart(x, 0.0, 1.0, none(5), lam=1.0, L=3.0)
    assert chart.values == pytest.approx(x) and np.all(chart.ucl == 3.0)
    assert chart.flags["beyond-limits"].tolist() == [2, 4]


def test_ewma_excluded_points_are_skipped():
    # an excluded point is left out of the recursion and of i: the used points match the chart of the
    # series without it [definition of skipping]
    rng = np.random.default_rng(4)
    x = rng.normal(0, 1, 25)
    x[9] = 8.0
    ex = none(25)
    ex[9] = True
    chart = ewma_chart(x, 0.0, 1.0, ex, lam=0.2, L=2.962)
    ref = ewma_chart(np.delete(x, 9), 0.0, 1.0, none(24), lam=0.2, L=2.962)
    keep = ~ex
    assert chart.values[keep] == pytest.approx(ref.values) and chart.ucl[keep] == pytest.approx(ref.ucl)
    assert chart.values[9] == chart.values[8] and 9 not in chart.flags["beyond-limits"]
    assert chart.excluded.tolist() == ex.tolist()


def ewma_arl(lam: float, L: float, states: int = 201) -> float:
    """Brook & Evans / Lucas & Saccucci Markov-chain in-control ARL of an EWMA with asymptotic limits."""
    h = L * np.sqrt(lam / (2 - lam))
    w = 2 * h / states
    c = -h + w * (np.arange(states) + 0.5)
    edge = (c[None, :] - (1 - lam) * c[:, None]) / lam
    p = norm.cdf(edge + w / (2 * lam)) - norm.cdf(edge - w / (2 * lam))
    return np.linalg.solve(np.eye(states) - p, np.ones(states))[states // 2]


@pytest.mark.parametrize("lam, L, arl0", EWMA_DESIGNS)
def test_ewma_design_table(lam, L, arl0):
    # Lucas & Saccucci (1990) (λ, L) pairs for in-control ARL ≈ 500 [from memory]; recomputed here by the
    # Markov chain of Brook & Evans (1972) as used by Lucas & Saccucci
    assert ewma_arl(lam, L) == pytest.approx(arl0, rel=0.01)
    assert ewma_design(lam) == L


def test_ewma_design_unknown_lambda():
    with pytest.raises(WorkbenchError, match="no published EWMA design for lambda 0.3"):
        ewma_design(0.3)


# ---- bad input ------------------------------------------------------------------------------------

@pytest.mark.parametrize("kwargs, message", [
    ({"lam": 0.0}, "lambda must be in"), ({"lam": 1.5}, "lambda must be in"), ({"lam": -0.1}, "lambda"),
    ({"L": 0.0}, "L must be positive"), ({"L": -2.0}, "L must be positive"),
])
def test_ewma_bad_design(kwargs, message):
    with pytest.raises(WorkbenchError, match=message):
        ewma_chart(np.zeros(5), 0.0, 1.0, none(5), **kwargs)


@pytest.mark.parametrize("kwargs, message", [
    ({"h": 0.0}, "h must be positive"), ({"h": -1.0}, "h must be positive"), ({"k": -0.1}, "k must be zero"),
    ({"head_start": -1.0}, "head start"), ({"head_start": 5.0, "h": 5.0}, "head start"),
])
def test_cusum_bad_design(kwargs, message):
    with pytest.raises(WorkbenchError, match=message):
        cusum_chart(np.zeros(5), 0.0, 1.0, none(5), **kwargs)


@pytest.mark.parametrize("chart", [ewma_chart, cusum_chart])
@pytest.mark.parametrize("x, target, sigma, excluded, message", [
    (np.zeros(3), 0.0, 0.0, None, "sigma of point 1 must be a positive number"),
    (np.zeros(3), 0.0, np.array([1.0, np.nan, 1.0]), None, "sigma of point 2"),
    (np.zeros(3), 0.0, np.ones(2), None, "3 points but"),
    (np.zeros(3), 0.0, 1.0, np.ones(3, bool), "no points left"),
    (np.zeros(3), np.nan, 1.0, None, "target must be a number"),
])
def test_bad_series(chart, x, target, sigma, excluded, message):
    with pytest.raises(WorkbenchError, match=message):
        chart(x, target, sigma, excluded)


def test_missing_points_are_gaps_and_skipped():
    # a missing value (NaN) is skipped like an excluded point but plotted as a gap
    x = np.array([1.0, np.nan, 2.0, 0.5])
    ewma = ewma_chart(x, 0.0, 1.0, none(4), lam=0.5, L=3.0)
    ref = ewma_chart(np.array([1.0, 2.0, 0.5]), 0.0, 1.0, none(3), lam=0.5, L=3.0)
    assert np.isnan(ewma.values[1]) and ewma.values[[0, 2, 3]] == pytest.approx(ref.values)
    cusum, _ = cusum_chart(x, 0.0, 1.0, none(4), k=0.5, h=4.0)
    assert np.isnan(cusum.values[1]) and np.isnan(cusum.extra["cusum-"][1])
    assert cusum.values[[0, 2, 3]] == pytest.approx([0.5, 2.0, 2.0])  # Page's recursion [definition]
    lead = ewma_chart(np.array([5.0, 1.0]), 0.0, 1.0, np.array([True, False]))
    assert np.isnan(lead.ucl[0]) and lead.values[0] == 0.0 and lead.ucl[1] == pytest.approx(2.962 * 0.2)  # first exact limit Lσλ
